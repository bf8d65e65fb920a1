#!/usr/bin/env bash
# End-to-end checks of `sheaf scan --shard I/N` and `sheaf merge` through the
# command line: the N byte-range shards of a plain file, merged, give the
# summary of the whole file (quoted fields with newlines, delimiters and
# doubled quotes that straddle the range boundaries; every byte offset as a
# boundary); --shard refuses compressed files, several files and pipes; a
# real GNU parallel fan-out over shards of one file and over several gzip
# files equals the single scan.
#
# Reference: sheaf's own whole-file scan (counts exact, floating-point
# values to 1e-12 relative, absolute near 0), and the records counted by
# Python's csv module for the row totals.  Run from the repository root after make
# (tests/run.sh does both).  Prints one "PASS name" or "FAIL name: why" line
# per check, "SKIP name: reason" when a tool is absent, and exits 0.  JSON is
# read with Debian's /usr/bin/python3 (json module).  All inputs are made
# here; the gzip parts come from build/demo/generate.
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
cli_setup shard python || exit 0

# cmp.py A.sheaf B.sheaf [IGNORED_KEY...]: compares the info JSON of two
# summaries without "sources" (and the keys given, at the top level and in
# each column); prints the
# differences, nothing when equal.  Integers and strings must be equal,
# floats agree to 1e-12 relative (absolute below 1).  Top-value lists are
# compared as count-ordered sets (ties may be listed in either order) and
# only for exact value tables: an overflowed table (distinct_exact false)
# keeps the first values it met, which depends on the grouping of the rows.
cat >"$T/cmp.py" <<'EOF'
import json, os, subprocess, sys
sys.path.insert(0, "tests")
from refcheck import tree_differences

def info(p):
    r = subprocess.run([os.environ.get("SHEAF_BIN", "./sheaf"), "info", "--format", "json", "--top-values", "1000", p],
                       stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    if r.returncode:
        sys.exit("info %s exit %d: %s" % (p, r.returncode, r.stderr.decode().strip()))
    return json.loads(r.stdout)

def norm(d, ignore):
    d = {k: v for k, v in d.items() if k not in ignore}
    d["columns"] = [{k: v for k, v in c.items() if k not in ignore} for c in d.get("columns", [])]
    for c in d["columns"]:
        if c.get("distinct_exact"):
            c["top"] = sorted(c["top"], key=lambda e: (-e["count"], e["value"]))
        else:
            c.pop("top", None)
    if d.get("target"):
        d["target"]["levels"] = sorted(d["target"]["levels"], key=lambda e: e["value"])
    for c in d.get("columns", []):
        if c.get("by_class"):
            c["by_class"] = sorted(c["by_class"], key=lambda e: e["class"])
    return d

# format_version too: a shard's summary is version 6 (its start record,
# docs/shards.md), a whole scan's 5.
ignore = {"sources", "format_version"} | set(sys.argv[3:])
d = tree_differences(norm(info(sys.argv[1]), ignore), norm(info(sys.argv[2]), ignore), 1e-12)
print("; ".join(d[:4]))
EOF
# same_summary NAME A B [IGNORED_KEY...]
same_summary() {
    local name=$1 a=$2 b=$3 why
    shift 3
    why=$("$PY" "$T/cmp.py" "$a" "$b" "$@" 2>&1)
    if [ -z "$why" ]; then pass "$name"; else fail "$name" "differs: ${why:0:400}"; fi
}

# ------------------------------------------------------------ the quoted file
# Quoted fields hold delimiters, doubled quotes and newlines; several hold
# text that looks like a record ("7,1.5,...") after a newline, so a reader
# that resyncs on the next newline would count a phantom record.
"$PY" - "$T/quoted.csv" "$T/small.csv" <<'EOF'
import random, sys
rnd = random.Random(5)
notes = ['"a, b"', '"two\nlines"', '"say ""hi"", then go"', 'plain',
         '"fake\n7,1.5,""x"",w,3\nstill the note"', '""', '"\n"', '"x""\n""y"',
         '"ends, with newline\n"', '"""quoted"" start"', 'na', '"1,2,3"',
         '"\n\n\n"', '"a\nb,c\nd"']
groups = ["red", "green", "blue", '"sky, blue"']
def row(i):
    amount = "" if i % 9 == 4 else "%.3f" % rnd.uniform(-50, 150)
    score = "NA" if i % 11 == 6 else str(rnd.randint(0, 40))
    return ",".join([str(i), amount, rnd.choice(notes), rnd.choice(groups), score])
with open(sys.argv[1], "w", newline="") as f:
    f.write('id,amount,note,grp,score\n')
    for i in range(60):
        f.write(row(i) + "\n")
with open(sys.argv[2], "w", newline="") as f:
    f.write('id,amount,note,grp,score\n')
    size, i = 25, 0
    while True:
        r = row(100 + i) + "\n"
        if size + len(r) > 300:
            break
        f.write(r)
        size += len(r)
        i += 1
EOF
# records: python's csv module (standard library) over the same bytes
nrec() { "$PY" -c 'import csv,sys; print(sum(1 for _ in csv.reader(open(sys.argv[1], newline=""))) - 1)' "$1"; }
QROWS=$(nrec "$T/quoted.csv")
SROWS=$(nrec "$T/small.csv")
check quoted_file.made "rows $QROWS, physical lines $(wc -l <"$T/quoted.csv")" \
    [ "$QROWS" -eq 60 -a "$(wc -l <"$T/quoted.csv")" -gt 70 ]

run "$SHEAF" scan -q "$T/quoted.csv" -o "$T/whole.sheaf"
check quoted_whole.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
check quoted_whole.rows_vs_python_csv "rows $(jget "$T/whole.sheaf" 'd["rows"]'), csv module $QROWS" \
    [ "$(jget "$T/whole.sheaf" 'd["rows"]')" = "$QROWS" ]
for c in 1K 4M; do
    run "$SHEAF" scan -q --target grp --chunk-size "$c" "$T/quoted.csv" -o "$T/whole_t$c.sheaf"
done

for n in 1 2 3 4 5 6 7; do
    bad="" parts=() tparts=()
    for i in $(seq 1 "$n"); do
        run "$SHEAF" scan -q "$T/quoted.csv" --shard "$i/$n" -o "$T/q$i.$n.sheaf"
        [ "$RC" -eq 0 ] || bad+=" $i/$n exit $RC: $(err_text);"
        parts+=("$T/q$i.$n.sheaf")
        run "$SHEAF" scan -q "$T/quoted.csv" --shard "$i/$n" --target grp --chunk-size 1K \
            -o "$T/qt$i.$n.sheaf"
        [ "$RC" -eq 0 ] || bad+=" target $i/$n exit $RC: $(err_text);"
        tparts+=("$T/qt$i.$n.sheaf")
    done
    if ! check "shard_${n}_quoted.scans" "$bad" [ -z "$bad" ]; then continue; fi
    run "$SHEAF" merge "${parts[@]}" -o "$T/qm$n.sheaf"
    check "shard_${n}_quoted.merge_exit_0" "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
    rows=0
    for p in "${parts[@]}"; do rows=$((rows + $(jget "$p" 'd["rows"]'))); done
    check "shard_${n}_quoted.rows_sum" "shard rows sum to $rows, want $QROWS" [ "$rows" -eq "$QROWS" ]
    same_summary "shard_${n}_quoted.same_as_whole" "$T/qm$n.sheaf" "$T/whole.sheaf" bytes
    check "shard_${n}_quoted.sources" "sources $(jget "$T/qm$n.sheaf" '[(s["start_byte"], s["end_byte"], s["rows"]) for s in d["sources"]]')" \
        [ "$(jget "$T/qm$n.sheaf" 'len(d["sources"])')" = "$n" ]
    run "$SHEAF" merge "${tparts[@]}" -o "$T/qtm$n.sheaf"
    same_summary "shard_${n}_quoted.target_same_as_whole" "$T/qtm$n.sheaf" "$T/whole_t4M.sheaf" bytes
done
# The byte count of a merged set of shards is the byte count of the file
# (merge: "as if one scan had read all their sources").
check shard_3_quoted.bytes_equal_whole \
    "merged bytes $(jget "$T/qm3.sheaf" 'd["bytes"]'), whole-file bytes $(jget "$T/whole.sheaf" 'd["bytes"]'), file $(stat -c %s "$T/quoted.csv")" \
    [ "$(jget "$T/qm3.sheaf" 'd["bytes"]')" = "$(jget "$T/whole.sheaf" 'd["bytes"]')" ]

# ------------------------------------------------------- every byte offset
# --shard I/N splits at size*(I-1)/N: with N = size every shard is one byte
# and every offset is a boundary; N = size + 1 gives an empty shard, 37 and
# 13 shards of several records.  (N = size - 1 and size / 2 + 1, dropped in
# session 25 for make test's time, moved boundaries N = size already has.)
size=$(stat -c %s "$T/small.csv")
run "$SHEAF" scan -q "$T/small.csv" -o "$T/small.sheaf"
check small_whole.rows "rows $(jget "$T/small.sheaf" 'd["rows"]'), csv module $SROWS (file $size bytes)" \
    [ "$(jget "$T/small.sheaf" 'd["rows"]')" = "$SROWS" ]
for n in "$size" 37 13 $((size + 1)); do
    bad="" rows=0 parts=()
    for i in $(seq 1 "$n"); do
        p="$T/o$i.sheaf"
        "$SHEAF" scan -q "$T/small.csv" --shard "$i/$n" -o "$p" 2>"$T/err"
        rc=$?
        if [ "$rc" -ne 0 ]; then bad+=" $i/$n exit $rc: $(err_text);"; continue; fi
        parts+=("$p")
    done
    if ! check "every_offset_$n.scans" "${bad:0:300}" [ -z "$bad" ]; then continue; fi
    rows=$(for p in "${parts[@]}"; do "$SHEAF" info --format json "$p"; done | "$PY" -c '
import json, sys
dec = json.JSONDecoder()
s = sys.stdin.read()
i = tot = empty = 0
while True:
    while i < len(s) and s[i].isspace():
        i += 1
    if i >= len(s):
        break
    d, i = dec.raw_decode(s, i)
    tot += d["rows"]
    empty += d["rows"] == 0
print(tot, empty)')
    set -- $rows
    check "every_offset_$n.each_record_once" "shard rows sum to ${1:-?}, want $SROWS" \
        [ "${1:-x}" = "$SROWS" ]
    check "every_offset_$n.most_shards_empty" "${2:-?} of $n shards empty, $SROWS records" \
        [ "${2:-0}" -ge $((n - SROWS)) ]
    run "$SHEAF" merge "${parts[@]}" -o "$T/om$n.sheaf"
    if check "every_offset_$n.merge_exit_0" "exit $RC: $(err_text)" [ "$RC" -eq 0 ]; then
        same_summary "every_offset_$n.same_as_whole" "$T/om$n.sheaf" "$T/small.sheaf" bytes
    fi
    rm -f "$T"/o[0-9]*.sheaf
done
set --

# CRLF records with quoted CR LF inside fields, split at every third byte.
sed 's/$/\r/' "$T/small.csv" >"$T/small_crlf.csv"
run "$SHEAF" scan -q "$T/small_crlf.csv" -o "$T/crlf.sheaf"
n=$(( $(stat -c %s "$T/small_crlf.csv") / 3 ))
parts=() bad=""
for i in $(seq 1 "$n"); do
    "$SHEAF" scan -q "$T/small_crlf.csv" --shard "$i/$n" -o "$T/c$i.sheaf" 2>"$T/err" ||
        bad+=" $i/$n: $(err_text);"
    parts+=("$T/c$i.sheaf")
done
if check "crlf_shards_$n.scans" "${bad:0:300}" [ -z "$bad" ]; then
    run "$SHEAF" merge "${parts[@]}" -o "$T/cm.sheaf"
    check "crlf_shards_$n.merge_exit_0" "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
    [ "$RC" -eq 0 ] && same_summary "crlf_shards_$n.same_as_whole" "$T/cm.sheaf" "$T/crlf.sheaf" bytes
fi

# Tiny files, also with more shards than bytes: a header-only file (4 bytes)
# and a file of two records (12 bytes).
printf 'a,b\n' >"$T/head.csv"
printf 'a,b\n1,"x\ny"\n2,z\n' >"$T/two.csv"
for fn in head:5 head:9 two:5 two:12 two:13 two:20; do
    f=${fn%%:*} n=${fn#*:}
    parts=() bad="" rows=0
    for i in $(seq 1 "$n"); do
        "$SHEAF" scan -q "$T/$f.csv" --shard "$i/$n" -o "$T/$f$i.sheaf" 2>"$T/err" ||
            bad+=" $i/$n: $(err_text);"
        parts+=("$T/$f$i.sheaf")
        rows=$((rows + $(jget "$T/$f$i.sheaf" 'd["rows"]')))
    done
    want=$([ "$f" = head ] && echo 0 || echo 2)
    run "$SHEAF" scan -q "$T/$f.csv" -o "$T/$f.sheaf"
    t="tiny_${f}_$(stat -c %s "$T/$f.csv")_bytes_${n}_shards"
    if check "$t.scans" "$bad" [ -z "$bad" ]; then
        check "$t.each_record_once" "shard rows sum to $rows, want $want" [ "$rows" -eq "$want" ]
        run "$SHEAF" merge "${parts[@]}" -o "$T/${f}m.sheaf"
        check "$t.merge_exit_0" "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
        [ "$RC" -eq 0 ] && same_summary "$t.same_as_whole" "$T/${f}m.sheaf" "$T/$f.sheaf" bytes
    fi
    rm -f "$T/$f"[0-9]*.sheaf
done

# ------------------------------------------------------------- refusals
gzip -c "$T/quoted.csv" >"$T/quoted.csv.gz"
run "$SHEAF" scan -q "$T/quoted.csv.gz" --shard 1/2 -o "$T/x.sheaf"
check shard_gzip.exit_2 "exit $RC" [ "$RC" -eq 2 ]
check shard_gzip.suggests_several_files "stderr: $(err_text)" grep -q -i "several compressed files" "$T/err"
check shard_gzip.no_output "output exists" [ ! -e "$T/x.sheaf" ]
if command -v zstd >/dev/null; then
    zstd -q -f "$T/quoted.csv" -o "$T/quoted.csv.zst"
    run "$SHEAF" scan -q "$T/quoted.csv.zst" --shard 2/2 -o "$T/x.sheaf"
    check shard_zstd.exit_2 "exit $RC" [ "$RC" -eq 2 ]
    check shard_zstd.suggests_several_files "stderr: $(err_text)" grep -q -i "several compressed files" "$T/err"
else
    skip shard_zstd "zstd command not found"
fi
# a gzip file without the .gz name is still refused (detected from its bytes)
cp "$T/quoted.csv.gz" "$T/disguised.csv"
run "$SHEAF" scan -q "$T/disguised.csv" --shard 1/2 -o "$T/x.sheaf"
check shard_gzip_by_content.exit_2 "exit $RC: $(err_text)" [ "$RC" -eq 2 ]
run "$SHEAF" scan -q "$T/quoted.csv" "$T/small.csv" --shard 1/2 -o "$T/x.sheaf"
check shard_two_files.exit_2 "exit $RC" [ "$RC" -eq 2 ]
check shard_two_files.no_output "output exists" [ ! -e "$T/x.sheaf" ]
run "$SHEAF" scan -q - --shard 1/2 -o "$T/x.sheaf" <"$T/quoted.csv"
check shard_stdin.exit_2 "exit $RC" [ "$RC" -eq 2 ]
cat "$T/quoted.csv" | "$SHEAF" scan -q /dev/stdin --shard 1/2 -o "$T/x.sheaf" 2>"$T/err"
RC=$?
check shard_pipe.exit_2 "exit $RC" [ "$RC" -eq 2 ]
for bad in 0/2 3/2 1/0 2 a/b 1/2/3 -1/2; do
    run "$SHEAF" scan -q "$T/quoted.csv" --shard "$bad" -o "$T/x.sheaf"
    check "shard_bad_spec_$bad.exit_2" "exit $RC" [ "$RC" -eq 2 ]
done

# ------------------------------------------------------------- GNU parallel
if ! command -v parallel >/dev/null; then
    skip parallel "GNU parallel not found"
    exit 0
fi
if ! make -s build/demo/generate >"$T/make.out" 2>&1 || [ ! -x build/demo/generate ]; then
    skip parallel_demo "build/demo/generate did not build: $(tail -n 1 "$T/make.out")"
    exit 0
fi
mkdir "$T/par"
build/demo/generate --rows 50000 -o "$T/par/BIG.csv"
check parallel.demo_table "generate wrote $(stat -c %s "$T/par/BIG.csv" 2>/dev/null) bytes" \
    [ -s "$T/par/BIG.csv" ]
parallel --will-cite -j2 "$SHEAF" scan -q "$T/par/BIG.csv" --shard {}/4 -o "$T/par/s{}.sheaf" \
    ::: 1 2 3 4 >"$T/out" 2>"$T/err"
RC=$?
check parallel_shards.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
run "$SHEAF" merge "$T"/par/s{1,2,3,4}.sheaf -o "$T/par/merged.sheaf"
check parallel_shards.merge_exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
run "$SHEAF" scan -q "$T/par/BIG.csv" -o "$T/par/single.sheaf"
check parallel_shards.single_exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
same_summary parallel_shards.same_as_single "$T/par/merged.sheaf" "$T/par/single.sheaf" bytes
check parallel_shards.rows "rows $(jget "$T/par/merged.sheaf" 'd["rows"]')" \
    [ "$(jget "$T/par/merged.sheaf" 'd["rows"]')" = 50000 ]
# the same with a target, merged out of order: per-class moments and levels
# merge too (non-numeric examples are the first ones met, so they follow the
# merge order and are not compared)
parallel --will-cite -j2 "$SHEAF" scan -q "$T/par/BIG.csv" --shard {}/4 --target arrival_condition \
    -o "$T/par/t{}.sheaf" ::: 1 2 3 4 >"$T/out" 2>"$T/err"
run "$SHEAF" merge "$T"/par/t{4,2,3,1}.sheaf -o "$T/par/tmerged.sheaf"
run "$SHEAF" scan -q "$T/par/BIG.csv" --target arrival_condition -o "$T/par/tsingle.sheaf"
same_summary parallel_shards_target.same_as_single "$T/par/tmerged.sheaf" "$T/par/tsingle.sheaf" \
    bytes non_numeric_examples
"$SHEAF" corr --format csv "$T/par/tmerged.sheaf" >"$T/par/c1.csv" 2>/dev/null
"$SHEAF" corr --format csv "$T/par/tsingle.sheaf" >"$T/par/c2.csv" 2>/dev/null
why=$("$PY" -c 'import csv,sys
a = list(csv.reader(open(sys.argv[1]))); b = list(csv.reader(open(sys.argv[2])))
bad = []
if not a or len(a) != len(b) or a[0] != b[0]: bad.append("header or size")
for ra, rb in zip(a[1:], b[1:]):
    for x, y in zip(ra[1:], rb[1:]):
        if (x == "") != (y == "") or (x and abs(float(x) - float(y)) > 1e-12): bad.append("%s: %s vs %s" % (ra[0], x, y))
print("; ".join(bad[:3]))' "$T/par/c1.csv" "$T/par/c2.csv")
check parallel_shards_target.corr_same "$why" [ -z "$why" ]

# 4 gzip files scanned in parallel and merged vs one scan of all four
build/demo/generate --shards 4 --prefix "$T/par/part" --rows 20000 >"$T/out" 2>"$T/err"
gz=("$T"/par/part*.csv.gz)
if check parallel_gzip.made_4_files "files: ${gz[*]##*/}; $(err_text)" [ "${#gz[@]}" -eq 4 -a -s "${gz[0]}" ]; then
    parallel --will-cite -j2 "$SHEAF" scan -q "{}" -o "{.}.sheaf" ::: "${gz[@]}" >"$T/out" 2>"$T/err"
    RC=$?
    check parallel_gzip.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
    sh=()
    for g in "${gz[@]}"; do sh+=("${g%.gz}.sheaf"); done
    run "$SHEAF" merge "${sh[3]}" "${sh[1]}" "${sh[0]}" "${sh[2]}" -o "$T/par/gzmerged.sheaf"
    check parallel_gzip.merge_exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
    run "$SHEAF" scan -q "${gz[@]}" -o "$T/par/gzsingle.sheaf"
    check parallel_gzip.single_exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
    # whole files: the byte counts agree too; merged out of order, so the
    # non-numeric examples are not compared (see above)
    same_summary parallel_gzip.same_as_one_scan "$T/par/gzmerged.sheaf" "$T/par/gzsingle.sheaf" \
        non_numeric_examples
    run "$SHEAF" merge "${sh[@]}" -o "$T/par/gzinorder.sheaf"
    same_summary parallel_gzip.in_order_same_as_one_scan "$T/par/gzinorder.sheaf" "$T/par/gzsingle.sheaf"
    check parallel_gzip.rows "rows $(jget "$T/par/gzmerged.sheaf" 'd["rows"]')" \
        [ "$(jget "$T/par/gzmerged.sheaf" 'd["rows"]')" = 20000 ]
    check parallel_gzip.sources "sources $(jget "$T/par/gzmerged.sheaf" '[(s["format"], s["size_bytes"]) for s in d["sources"]]')" \
        [ "$(jget "$T/par/gzmerged.sheaf" 'sorted(s["size_bytes"] for s in d["sources"] if s["format"] == "gzip")')" = \
          "$(stat -c %s "${gz[@]}" | sort -n | tr '\n' ',' | sed 's/,$//; s/^/[/; s/$/]/')" ]
    # the parts are the 20000 rows in order: scanning them is the one table
    zcat "${gz[0]}" >"$T/par/cat.csv"
    for g in "${gz[@]:1}"; do zcat "$g" | tail -n +2 >>"$T/par/cat.csv"; done
    run "$SHEAF" scan -q "$T/par/cat.csv" -o "$T/par/cat.sheaf"
    same_summary parallel_gzip.same_as_concatenated "$T/par/gzinorder.sheaf" "$T/par/cat.sheaf" bytes
fi

# A merge of some of a file's shards (a lost job) is not silent: a note on
# standard error names the file and how many of its N shards it holds
# (exit 0, as one level of a tree merge must); all N merge without one.
# The fan-out audit's case: 7 of 8 shards merged with exit 0 and no word.
"$PY" -c "
print('a,b')
for i in range(4000): print('%d,%d' % (i, i % 7))" >"$T/part.csv"
for i in 1 2 3 4; do "$SHEAF" scan -q "$T/part.csv" --shard $i/4 -o "$T/part$i.sheaf"; done
run "$SHEAF" merge "$T/part1.sheaf" "$T/part2.sheaf" "$T/part4.sheaf" -o "$T/part124.sheaf"
check partial.note_names_missing_shards "exit $RC: $(err_text)" \
    holds '[ "$RC" = 0 ] && grep -q "^sheaf merge: note: .*part.csv: 3 of its 4 shards" "$T/err"'
run "$SHEAF" merge "$T/part1.sheaf" "$T/part2.sheaf" "$T/part3.sheaf" "$T/part4.sheaf" -o "$T/part1234.sheaf"
check partial.whole_set_says_nothing "exit $RC: $(err_text)" holds '[ "$RC" = 0 ] && [ ! -s "$T/err" ]'

exit 0
