# Shared by tests/cli/test_shard_ranges.sh and test_shard_compressed.sh
# (sourced after common.sh, with $T, $PY and $SHEAF set): the hard files,
# and scanning and merging the N shards of one of them.

# nrec FILE: records after the header under Python's csv module (blank
# lines and a byte-order mark left out).
nrec() { "$PY" -c 'import csv,sys
rows = list(csv.reader(open(sys.argv[1], newline="", encoding="utf-8-sig")))
print(sum(1 for r in rows[1:] if r))' "$1"; }

# shard_hard_files DIR: writes quoted, long, plain, crlf, bom, blank and
# headonly .csv into DIR (fixed seed).
shard_hard_files() {
    "$PY" - "$1" <<'EOF'
import random, sys
d = sys.argv[1]
rnd = random.Random(17)
def write(name, text, bom=False):
    with open("%s/%s.csv" % (d, name), "wb") as f:
        f.write((b"\xef\xbb\xbf" if bom else b"") + text.encode())
head = "id,note,amount\n"
rows = []
for i in range(500):
    k = rnd.random()
    if k < 0.25:
        note = '"x,y\n%d,fake,%d\nend"' % (i, i)   # a whole fake record inside quotes
    elif k < 0.4:
        note = '"say ""hi"", then\n,,\n"'          # delimiters, newlines, doubled quotes
    elif k < 0.45:
        note = '"' + "".join("%d,%d,%d\n" % (j, j, j) for j in range(40)) + '"'  # a fake table
    else:
        note = "plain %d" % i
    rows.append("%d,%s,%.2f\n" % (i, note, rnd.uniform(-5, 5)))
write("quoted", head + "".join(rows))
long = ['%d,"%s",%d\n' % (i, ("field %d spans ranges, with commas,\n" % i) * 80 if i % 40 == 3 else "n%d" % i, i)
        for i in range(300)]
write("long", head + "".join(long))
write("plain", head + "".join("%d,n%d,%d\n" % (i, i % 7, i) for i in range(2000)))
write("crlf", head.replace("\n", "\r\n") + "".join('%d,"a\r\nb",%d\r\n' % (i, i) for i in range(800)))
write("bom", head + "".join("%d,\"q,%d\",%d\n" % (i, i, i) for i in range(800)), bom=True)
write("blank", head + "".join("%d,\"x\ny\",%d\n%s" % (i, i, "\n\n" if i % 3 == 0 else "") for i in range(800)))
write("headonly", head)
EOF
}

# scan_shards FILE N TAG: scans the N shards of FILE; leaves TAG.I.sheaf and
# the failures in $BAD.
scan_shards() {
    local f=$1 n=$2 tag=$3 i
    BAD=""
    for i in $(seq 1 "$n"); do
        run "$SHEAF" scan -q -j1 "$f" --shard "$i/$n" -o "$T/$tag.$i.sheaf"
        [ "$RC" -eq 0 ] || BAD+=" $i/$n exit $RC: $(err_text);"
    done
}

# merge_fixing TAG N OUT: merges the shards; where merge refuses a guess, runs
# the command it prints (writing that shard's file) and merges again.
# FIXED counts the rescans.
merge_fixing() {
    local tag=$1 n=$2 out=$3 tries=0 cmd
    FIXED=0
    while :; do
        run "$SHEAF" merge $(for i in $(seq 1 "$n"); do echo "$T/$tag.$i.sheaf"; done) -o "$out"
        [ "$RC" -eq 5 ] && grep -q -- '--shard-from-top' "$T/err" && [ "$tries" -lt "$n" ] || return
        cmd=$(sed -n 's/.*: \(sheaf scan .* -o\) NEW.sheaf.*/\1/p' "$T/err")
        local idx
        idx=$(sed -n 's/.*--shard \([0-9]*\)\/.*/\1/p' <<<"$cmd")
        [ -n "$cmd" ] && [ -n "$idx" ] || return
        ${cmd/sheaf/$SHEAF} "$T/$tag.$idx.sheaf" -q 2>/dev/null || return
        tries=$((tries + 1))
        FIXED=$((FIXED + 1))
    done
}
