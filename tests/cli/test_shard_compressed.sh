#!/usr/bin/env bash
# Shards of one BGZF file (gzip written as independent members of at most
# 64 KiB, each naming its size in a 'BC' extra subfield; docs/shards.md):
# each shard takes the members that start in its compressed byte range,
# found from the bytes there, and reads on past its last member until the
# record that crosses it ends.
#
# The BGZF files are written here with Python's zlib (raw deflate, the BC
# subfield, CRC-32 and ISIZE trailer, the 28-byte empty member at the end),
# with members of a few hundred bytes so that quoted fields with delimiters
# and newlines cross member boundaries and one record spans several members.
# For N in 1..20: the merged shards equal the whole-file scan (info JSON) and
# count the records Python's csv module counts (standard library: the
# reference for the row totals).  Then: the bytes each shard of a 20 MB
# generated table read are bounded by its member range plus a fixed
# look-ahead; a wrong guess (the test hook SHEAF_TEST_SHARD_WORST) is refused
# by merge and its rescan from the top merges; a look-ahead too short to tell
# falls back to the prefix rule; plain gzip, multi-member non-BGZF gzip and
# zstd are refused with a message that names BGZF.  Prints PASS/FAIL lines;
# exits 0.
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
cli_setup shardbgzf python || exit 0
. tests/cli/shard_common.sh


# bgzf.py IN OUT MEMBER_BYTES [SEED]: IN as BGZF, members of MEMBER_BYTES
# uncompressed bytes (varied by up to half when SEED is given).
cat >"$T/bgzf.py" <<'PYEOF'
import random, struct, sys, zlib

def member(data):
    c = zlib.compressobj(6, zlib.DEFLATED, -15)
    body = c.compress(data) + c.flush()
    bsize = 12 + 6 + len(body) + 8 - 1
    head = (b"\x1f\x8b\x08\x04\0\0\0\0\x00\xff" + struct.pack("<H", 6) + b"BC" +
            struct.pack("<HH", 2, bsize))
    return head + body + struct.pack("<II", zlib.crc32(data) & 0xffffffff, len(data))

data = open(sys.argv[1], "rb").read()
size = int(sys.argv[3])
rnd = random.Random(int(sys.argv[4])) if len(sys.argv) > 4 else None
with open(sys.argv[2], "wb") as f:
    i = 0
    while i < len(data):
        n = size if rnd is None else rnd.randint(size // 2, size + size // 2)
        f.write(member(data[i:i + n]))
        i += n
    f.write(member(b""))
PYEOF

# ------------------------------------------------------------ the hard files
shard_hard_files "$T"

for f in quoted long plain crlf bom blank; do
    run "$SHEAF" scan -q "$T/$f.csv" -o "$T/$f.whole.sheaf"
    check "$f.whole_scan" "exit $RC: $(err_text)" [ "$RC" -eq 0 ] || continue
    want=$(nrec "$T/$f.csv")
    check "$f.whole_rows_vs_python_csv" "rows $(jget "$T/$f.whole.sheaf" 'd["rows"]'), csv module $want" \
        [ "$(jget "$T/$f.whole.sheaf" 'd["rows"]')" = "$want" ]
    "$PY" "$T/bgzf.py" "$T/$f.csv" "$T/$f.bgz" 400 7
    run "$SHEAF" scan -q "$T/$f.bgz" -o "$T/$f.bgz.whole.sheaf"
    why=$("$PY" tests/cli/info_same.py "$T/$f.bgz.whole.sheaf" "$T/$f.whole.sheaf" bytes 2>&1)
    check "$f.bgzf_whole_same_as_plain" "exit $RC, differs: ${why:0:300}" holds '[ "$RC" -eq 0 ] && [ -z "$why" ]'
    case $f in quoted|long) ns="1 2 3 7 13 20" ;; *) ns="5 17" ;; esac
    for n in $ns; do
        scan_shards "$T/$f.bgz" "$n" "$f.$n"
        check "$f.$n.scans" "$BAD" [ -z "$BAD" ] || continue
        merge_fixing "$f.$n" "$n" "$T/$f.$n.merged.sheaf"
        check "$f.$n.merge" "exit $RC: $(err_text)" [ "$RC" -eq 0 ] || continue
        rows=$(jget "$T/$f.$n.merged.sheaf" 'd["rows"]')
        check "$f.$n.every_record_once" "rows $rows, csv module $want" [ "$rows" = "$want" ]
        why=$("$PY" tests/cli/info_same.py "$T/$f.$n.merged.sheaf" "$T/$f.whole.sheaf" bytes 2>&1)
        check "$f.$n.same_as_whole" "differs: ${why:0:300}" [ -z "$why" ]
        v=$(jget "$T/$f.$n.merged.sheaf" 'sorted(set(s["shard"]["check"] for s in d["sources"]))')
        check "$f.$n.all_verified" "checks $v (rescanned $FIXED)" [ "$v" = '["verified"]' ]
        # The member ranges tile the compressed file.
        t=$(jget "$T/$f.$n.merged.sheaf" 'all(a["end_byte"] == b["start_byte"] for a, b in zip(sorted(d["sources"], key=lambda s: (s["start_byte"], s["end_byte"])), sorted(d["sources"], key=lambda s: (s["start_byte"], s["end_byte"]))[1:])) and max(s["end_byte"] for s in d["sources"]) == d["sources"][0]["size_bytes"]')
        check "$f.$n.ranges_tile" "tiling $t" [ "$t" = true ]
        [ "$FIXED" -gt 0 ] && echo "note: $f.$n: merge asked for $FIXED rescan(s) from the top"
    done
done

# ------------------------------------------------- zstd of many frames
# The same files cut into pieces of 200..900 bytes at arbitrary bytes, each
# compressed by the zstd command and concatenated (with a skippable frame
# between two of them), for N in 1..20: shards walk frame and block headers
# from the top and take the frames that start in their range.
if command -v zstd >/dev/null; then
    for f in quoted long crlf bom; do
        "$PY" - "$T/$f.csv" "$T/zparts.$f" <<'PYEOF'
import os, random, sys
data = open(sys.argv[1], "rb").read()
os.makedirs(sys.argv[2], exist_ok=True)
rnd = random.Random(11)
i = k = 0
while i < len(data):
    n = rnd.randint(200, 900)
    open("%s/p%05d" % (sys.argv[2], k), "wb").write(data[i:i + n])
    i += n
    k += 1
PYEOF
        : >"$T/$f.zst"
        k=0
        for p in "$T/zparts.$f"/p*; do
            zstd -q -c "$p" >>"$T/$f.zst"
            k=$((k + 1))
            [ "$k" -eq 3 ] && printf '\x50\x2a\x4d\x18\x05\x00\x00\x00skip!' >>"$T/$f.zst"
        done
        want=$(nrec "$T/$f.csv")
        case $f in quoted|long) ns="1 2 5 11 20" ;; *) ns="3 17" ;; esac
        for n in $ns; do
            scan_shards "$T/$f.zst" "$n" "z$f.$n"
            check "zstd.$f.$n.scans" "$BAD" [ -z "$BAD" ] || continue
            merge_fixing "z$f.$n" "$n" "$T/z$f.$n.merged.sheaf"
            check "zstd.$f.$n.merge" "exit $RC: $(err_text)" [ "$RC" -eq 0 ] || continue
            rows=$(jget "$T/z$f.$n.merged.sheaf" 'd["rows"]')
            check "zstd.$f.$n.every_record_once" "rows $rows, csv module $want" [ "$rows" = "$want" ]
            why=$("$PY" tests/cli/info_same.py "$T/z$f.$n.merged.sheaf" "$T/$f.whole.sheaf" bytes 2>&1)
            check "zstd.$f.$n.same_as_whole" "differs: ${why:0:300}" [ -z "$why" ]
            v=$(jget "$T/z$f.$n.merged.sheaf" 'sorted(set(s["shard"]["check"] for s in d["sources"]))')
            check "zstd.$f.$n.all_verified" "checks $v (rescanned $FIXED)" [ "$v" = '["verified"]' ]
        done
    done
else
    skip zstd_frames "no zstd command"
fi

# ------------------------------------------- bytes read: range plus bounded
# A 20 MB table of the benchmark profile as BGZF (members of 65280 bytes, as
# bgzip writes them) in 10 shards.  Each shard reads the file's first 64 KiB
# (its identity), the search for its first member (64 KiB and a few
# headers), a header and a trailer per member it owns (68 bytes), the header
# pass from byte 0 (the reader's first pull: at most 1 MiB + a chunk
# decoded, so at most that compressed plus a member), the look-ahead (at
# most 1 MiB decoded plus a member), its members, and past its end the record
# that crosses it plus the reader's pull ahead (at most 1 MiB + a 256 KiB
# chunk decoded plus a member).
GEN=build/demo/generate
if [ -x "$GEN" ] || make -s "$GEN" >/dev/null 2>&1; then
    "$GEN" --profile bench --rows 100000 -o "$T/bench.csv" 2>/dev/null
    "$PY" "$T/bgzf.py" "$T/bench.csv" "$T/bench.bgz" 65280
    size=$(stat -c %s "$T/bench.bgz")
    bad="" total=0 max=0
    for i in $(seq 1 10); do
        run "$SHEAF" scan -q -j1 "$T/bench.bgz" --shard "$i/10" -o "$T/b.$i.sheaf"
        [ "$RC" -eq 0 ] || { bad+=" $i exit $RC;"; continue; }
        read -r lo hi rb rule <<<"$(jget "$T/b.$i.sheaf" '"%d %d %d %s" % (d["sources"][0]["start_byte"], d["sources"][0]["end_byte"], d["sources"][0]["shard"]["read_bytes"], d["sources"][0]["shard"]["start_rule"])' | tr -d '"')"
        m=65536
        bound=$(( (hi - lo) + (hi - lo) / 900 + 65536 + (m + 4096) + (1048576 + 262144 + m) + (1048576 + m) + (1048576 + 262144 + m) ))
        [ "$rb" -le "$bound" ] || bad+=" shard $i read $rb > $bound;"
        [ "$rule" = prefix ] && bad+=" shard $i fell back to the prefix rule;"
        total=$((total + rb))
        [ "$rb" -gt "$max" ] && max=$rb
    done
    check bytes.each_shard_bounded "$bad" [ -z "$bad" ]
    run "$SHEAF" merge $(for i in $(seq 1 10); do echo "$T/b.$i.sheaf"; done) -o "$T/b.merged.sheaf"
    check bytes.merge "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
    check bytes.total_bounded "total $total of $size bytes, largest shard $max" \
        [ "$total" -lt "$((size + 10 * 4 * 1048576))" ]
    echo "note: 10 shards of a $size-byte BGZF file read $total in all, at most $max each"
    # The same table as zstd frames of 256 KiB each: a shard walks the frame
    # and block headers before its range (26 bytes a frame, 3 a block of up
    # to 128 KiB: under 64 KiB here), then reads as a BGZF shard does.
    if command -v zstd >/dev/null; then
        mkdir -p "$T/bparts"
        split -b 262144 -a 4 "$T/bench.csv" "$T/bparts/p"
        for p in "$T/bparts"/p*; do zstd -q -1 -c "$p"; done >"$T/bench.zst"
        zsize=$(stat -c %s "$T/bench.zst")
        bad="" total=0 max=0
        for i in $(seq 1 10); do
            run "$SHEAF" scan -q -j1 "$T/bench.zst" --shard "$i/10" -o "$T/z.$i.sheaf"
            [ "$RC" -eq 0 ] || { bad+=" $i exit $RC: $(err_text);"; continue; }
            read -r lo hi rb <<<"$(jget "$T/z.$i.sheaf" '"%d %d %d" % (d["sources"][0]["start_byte"], d["sources"][0]["end_byte"], d["sources"][0]["shard"]["read_bytes"])' | tr -d '"')"
            m=262144
            bound=$(( (hi - lo) + 65536 + 65536 + (1048576 + 262144 + m) + (1048576 + m) + (1048576 + 262144 + m) ))
            [ "$rb" -le "$bound" ] || bad+=" shard $i read $rb > $bound;"
            total=$((total + rb))
            [ "$rb" -gt "$max" ] && max=$rb
        done
        check bytes.zstd_each_shard_bounded "$bad" [ -z "$bad" ]
        run "$SHEAF" merge $(for i in $(seq 1 10); do echo "$T/z.$i.sheaf"; done) -o "$T/z.merged.sheaf"
        check bytes.zstd_merge "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
        check bytes.zstd_rows "rows $(jget "$T/z.merged.sheaf" 'd["rows"]')" [ "$(jget "$T/z.merged.sheaf" 'd["rows"]')" = 100000 ]
        echo "note: 10 shards of a $zsize-byte zstd file of 256 KiB frames read $total in all, at most $max each"
    fi
else
    skip bytes "build/demo/generate could not be built"
fi

# ------------------------------------------------ a wrong guess is refused
# A shard scanned taking its worst candidate (the test hook) until one is
# wrong: merge refuses it with the command that rescans it from the top
# (decoding every member before its own), and that rescan merges.
f=$T/quoted.bgz
n=9
scan_shards "$f" "$n" wrong
merge_fixing wrong "$n" "$T/wrong.base.sheaf"
check wrong_guess.base_merges "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
found=""
for i in $(seq 2 "$n"); do
    cp "$T/wrong.$i.sheaf" "$T/keep.sheaf"
    SHEAF_TEST_SHARD_WORST=1 "$SHEAF" scan -q -j1 "$f" --shard "$i/$n" -o "$T/wrong.$i.sheaf" 2>/dev/null
    run "$SHEAF" merge $(for k in $(seq 1 "$n"); do echo "$T/wrong.$k.sheaf"; done) -o "$T/wrong.merged.sheaf"
    if [ "$RC" -eq 5 ]; then found=$i; break; fi
    cp "$T/keep.sheaf" "$T/wrong.$i.sheaf"
done
if check wrong_guess.refused "no shard's worst candidate was refused" [ -n "$found" ]; then
    i=$found
    check wrong_guess.prints_the_rescan "$(err_text)" \
        grep -qF "sheaf scan $f --shard $i/$n --shard-from-top -o NEW.sheaf" "$T/err"
    check wrong_guess.nothing_written "merged file exists" [ ! -e "$T/wrong.merged.sheaf" ]
    run "$SHEAF" scan -q "$f" --shard "$i/$n" --shard-from-top -o "$T/wrong.$i.sheaf"
    check wrong_guess.rescan_prefix_rule "rule $(jget "$T/wrong.$i.sheaf" 'd["sources"][0]["shard"]["start_rule"]')" \
        [ "$(jget "$T/wrong.$i.sheaf" 'd["sources"][0]["shard"]["start_rule"]')" = '"prefix"' ]
    run "$SHEAF" merge $(for k in $(seq 1 "$n"); do echo "$T/wrong.$k.sheaf"; done) -o "$T/wrong.merged.sheaf"
    check wrong_guess.rescan_merges "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
    why=$("$PY" tests/cli/info_same.py "$T/wrong.merged.sheaf" "$T/quoted.whole.sheaf" bytes 2>&1)
    check wrong_guess.rescan_same_as_whole "differs: ${why:0:300}" [ -z "$why" ]
fi

# ------------------------------------------ a look-ahead too short to tell
run env SHEAF_TEST_SHARD_WINDOW=16 "$SHEAF" scan -q "$T/long.bgz" --shard 2/3 -o "$T/short.2.sheaf"
check short_window.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
check short_window.prefix_rule "rule $(jget "$T/short.2.sheaf" 'd["sources"][0]["shard"]["start_rule"]')" \
    [ "$(jget "$T/short.2.sheaf" 'd["sources"][0]["shard"]["start_rule"]')" = '"prefix"' ]
cp "$T/long.3.1.sheaf" "$T/short.1.sheaf"
cp "$T/long.3.3.sheaf" "$T/short.3.sheaf"
run "$SHEAF" merge "$T/short.1.sheaf" "$T/short.2.sheaf" "$T/short.3.sheaf" -o "$T/short.merged.sheaf"
why=$("$PY" tests/cli/info_same.py "$T/short.merged.sheaf" "$T/long.whole.sheaf" bytes 2>&1)
check short_window.merges_same_as_whole "exit $RC, differs: ${why:0:300}" holds '[ "$RC" -eq 0 ] && [ -z "$why" ]'

# ------------------------------------------------------------- refusals
gzip -c "$T/quoted.csv" >"$T/quoted.csv.gz"
run "$SHEAF" scan -q "$T/quoted.csv.gz" --shard 1/2 -o "$T/x.sheaf"
check plain_gzip_refused "exit $RC: $(err_text)" [ "$RC" -eq 2 ]
check plain_gzip_names_bgzf "$(err_text)" grep -q "gzip as BGZF, e.g. by bgzip.*gzip in one piece" "$T/err"
cat "$T/quoted.csv.gz" "$T/quoted.csv.gz" >"$T/two.csv.gz"
run "$SHEAF" scan -q "$T/two.csv.gz" --shard 2/2 -o "$T/x.sheaf"
check two_member_gzip_refused "exit $RC: $(err_text)" holds '[ "$RC" -eq 2 ] && grep -q BGZF "$T/err"'
# BGZF then a plain member: the shard whose range holds the plain member
# finds no BGZF header there (the search) or where the BGZF part ends (the
# walk), and refuses.
cat "$T/quoted.bgz" "$T/quoted.csv.gz" >"$T/mixed.gz"
refused=0
for i in 1 2 3; do
    run "$SHEAF" scan -q "$T/mixed.gz" --shard "$i/3" -o "$T/x.sheaf"
    [ "$RC" -ne 0 ] && grep -q "BGZF" "$T/err" && refused=$((refused + 1))
done
check mixed_gzip_refused "$refused of 3 shards refused naming BGZF" [ "$refused" -ge 1 ]
run "$SHEAF" scan -q "$T/mixed.gz" --shard 3/3 -o "$T/x.sheaf"
check mixed_gzip_last_shard_refused "exit $RC: $(err_text)" [ "$RC" -ne 0 ]
if command -v zstd >/dev/null; then
    zstd -q -c "$T/quoted.csv" >"$T/quoted.csv.zst"
    run "$SHEAF" scan -q "$T/quoted.csv.zst" --shard 2/2 -o "$T/x.sheaf"
    check zstd_refused "exit $RC: $(err_text)" [ "$RC" -eq 2 ]
    check zstd_one_frame_says_how "$(err_text)" grep -q "only when it holds many frames.*compress pieces separately and concatenate" "$T/err"
else
    skip zstd_refused "no zstd command"
fi

# zstd frames (equivalence audit): a file that begins with a skippable
# frame (metadata some producers write first) still has a first shard, at
# the top: it reads the header and starts the chain (shard 1 was taken for
# a middle one: the header's bytes went uncounted and it stayed unverified);
# a one-frame file without its size (compressed from standard input) is
# refused as one frame, exit 2, as documented (it said exit 3, "does not say
# its decompressed size"); a missing file under --shard is "cannot open",
# exit 3, as without it (it said "needs a regular file (not a pipe)", exit 2).
if command -v zstd >/dev/null; then
    split -n l/5 "$T/quoted.csv" "$T/zpart_"
    : >"$T/frames.zst"
    for f in "$T"/zpart_*; do zstd -q -c "$f" >>"$T/frames.zst"; done
    printf '\x50\x2a\x4d\x18\x0c\x00\x00\x00metadata....' >"$T/skipfirst.zst"
    cat "$T/frames.zst" >>"$T/skipfirst.zst"
    run "$SHEAF" scan -q "$T/skipfirst.zst" -o "$T/skw.sheaf"
    for i in 1 2 3; do "$SHEAF" scan -q "$T/skipfirst.zst" --shard "$i/3" -o "$T/sk$i.sheaf"; done
    run "$SHEAF" merge "$T/sk1.sheaf" "$T/sk2.sheaf" "$T/sk3.sheaf" -o "$T/sk.sheaf"
    got=$("$SHEAF" info "$T/sk.sheaf" --format json | python3 -c 'import json,sys; d=json.load(sys.stdin); print(d["rows"], d["bytes"], d["sources"][0]["shard"]["start_rule"])' 2>&1)
    want=$("$SHEAF" info "$T/skw.sheaf" --format json | python3 -c 'import json,sys; d=json.load(sys.stdin); print(d["rows"], d["bytes"], "certain")' 2>&1)
    check zstd_skippable_first_frame "merged: $got; whole: $want" [ "$got" = "$want" ]
    zstd -q -c <"$T/quoted.csv" >"$T/pipe.zst"
    run "$SHEAF" scan -q "$T/pipe.zst" --shard 1/2 -o "$T/x.sheaf"
    check zstd_one_frame_without_size_refused "exit $RC: $(err_text)" [ "$RC" -eq 2 ] &&
        check zstd_one_frame_without_size_says_one_frame "$(err_text)" grep -q "this one is one frame" "$T/err"
else
    skip zstd_skippable_first_frame "no zstd command"
fi
run "$SHEAF" scan -q "$T/no-such-file.csv" --shard 1/2 -o "$T/x.sheaf"
check shard_missing_file_cannot_open "exit $RC: $(err_text)" [ "$RC" -eq 3 ] &&
    check shard_missing_file_says_so "$(err_text)" grep -q "cannot open: No such file or directory" "$T/err"
