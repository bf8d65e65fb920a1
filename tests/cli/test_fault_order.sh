#!/usr/bin/env bash
# One error for one input, whatever the thread count and the chunk size.
#
# A damaged compressed stream holds good data up to its damage: the records
# before it are read first, and an error in them (a ragged row under
# --strict) is the error reported, as one thread with small reads always
# found it.  Before: from -j3 (where a thread decodes ahead in 1 MiB reads)
# the bytes decoded in the read that met the damage were dropped, so the
# decoder's error replaced the row's, and a zstd error's byte offset moved
# with the read sizes (zstd reports neither the output nor the input of a
# call that fails: it is now always given the same room).  A record past
# --max-record named its line only when it was shorter than about two
# chunks, and hinted at an unterminated quote in a file without one.  A
# summary of a pipe recorded the pipe's creation time, so the same bytes
# piped in twice gave two different files.  On a terminal, the progress
# line of trim and project was drawn over the rows they print there.
#
# Inputs are made here with Python's gzip/zlib and the zstd command; the
# expected lines are where the script put the faults.
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup fault-order python || exit 0

# rows.py OUT ROWS BAD: a 6-column table, row BAD (1-based data row) with 7
# fields; header line 1, so the bad row is line BAD + 1.
cat >"$T/rows.py" <<'EOF'
import sys
out, rows, bad = sys.argv[1], int(sys.argv[2]), int(sys.argv[3])
with open(out, "w") as f:
    f.write("pump,zone,bar,temp_c,hours,state\n")
    for i in range(1, rows + 1):
        extra = ",x" if i == bad else ""
        f.write("p%d,z%d,%.2f,%.1f,%d,%s%s\n" % (i % 97, i % 7, 1 + (i % 50) / 10,
                                                  15 + (i % 30) / 3, i % 500,
                                                  ("ok", "warn", "stop")[i % 3], extra))
EOF
# members.py IN OUT PER: gzip members of PER lines each; the member holding
# the bad row gets one byte flipped 90% of the way through its compressed
# bytes (after the bad row, which starts it).
cat >"$T/members.py" <<'EOF'
import sys, zlib
src, out, per = sys.argv[1], sys.argv[2], int(sys.argv[3])
lines = open(src, "rb").read().split(b"\n")[:-1]
head, body = lines[0], lines[1:]
bad = next(i for i, l in enumerate(body) if l.count(b",") == 6)
blobs = []
for k in range(0, len(body), per):
    part = (b"\n".join(([head] if k == 0 else []) + body[k:k + per]) + b"\n")
    c = zlib.compressobj(6, zlib.DEFLATED, 31)
    g = bytearray(c.compress(part) + c.flush())
    if k <= bad < k + per:
        assert bad == k, "the bad row must start its member"
        g[int(len(g) * 0.9)] ^= 0x55
    blobs.append(bytes(g))
open(out, "wb").write(b"".join(blobs))
EOF
"$PY" "$T/rows.py" "$T/t.csv" 60000 30001
"$PY" "$T/members.py" "$T/t.csv" "$T/t.csv.gz" 10000

# same_error NAME WANT_REGEX CMD...: the command, at -j1, 3 and 8 and chunk
# sizes 4K, 64K and 1M, always exits 3 with one and the same message, which
# matches WANT_REGEX; no output file.
same_error() {
    local name=$1 want=$2 first="" msg j c bad=""
    shift 2
    for j in 1 3 8; do
        for c in 4K 64K 1M; do
            rm -f "$T/o.out"
            run "$@" -j$j --chunk-size $c -o "$T/o.out"
            msg=$(head -n 1 "$T/err")
            [ -z "$first" ] && first=$msg
            if [ "$RC" != 3 ] || [ "$msg" != "$first" ] || [ -e "$T/o.out" ]; then
                bad="-j$j --chunk-size $c: exit $RC, '$msg' (first '$first')"
                break 2
            fi
        done
    done
    check "fault_order.$name" "${bad:-$first}" holds '[ -z "$bad" ] && echo "$first" | grep -Eq "$want"'
}

same_error gzip_row_before_damage "t.csv.gz: line 30002: 7 fields, the header has 6" \
    "$SHEAF" scan "$T/t.csv.gz" --strict -q
if command -v zstd >/dev/null; then
    zstd -q -19 --long=27 -f "$T/t.csv" -o "$T/t.csv.zst" 2>/dev/null ||
        zstd -q -f "$T/t.csv" -o "$T/t.csv.zst"
    # One byte flipped near the end of the single frame: after the bad row.
    "$PY" -c "
import sys
b = bytearray(open(sys.argv[1], 'rb').read()); b[int(len(b) * 0.9)] ^= 0x55
open(sys.argv[1], 'wb').write(bytes(b))" "$T/t.csv.zst"
    same_error zstd_row_before_damage "t.csv.zst: line 30002: 7 fields, the header has 6" \
        "$SHEAF" scan "$T/t.csv.zst" --strict -q
    # Without --strict the damage is the error, at one byte offset.
    same_error zstd_offset_of_damage "t.csv.zst: corrupt zstd stream: .* near byte [0-9]+" \
        "$SHEAF" scan "$T/t.csv.zst" -q
else
    skip fault_order.zstd "no zstd command"
fi

# A 20,000-byte record at line 30002 over --max-record 4K: named by its line
# for every chunk size, without a quote hint (there is none); the same for
# trim and project.
"$PY" - "$T/long.csv" <<'EOF'
import sys
with open(sys.argv[1], "w") as f:
    f.write("a,b\n")
    for i in range(1, 60001):
        f.write("%d,%s\n" % (i, "x" * 20000 if i == 30001 else str(i % 13)))
EOF
want="long.csv: line 30002: record at byte [0-9]+ is longer than the 4096-byte limit \(the record limit: raise --max-record\)$"
same_error long_record_scan "$want" "$SHEAF" scan "$T/long.csv" --max-record 4K -q
echo a >"$T/keep.txt"
same_error long_record_trim "$want" "$SHEAF" trim "$T/long.csv" --columns-from "$T/keep.txt" \
    --max-record 4K -q
"$SHEAF" scan -q "$T/t.csv" -o "$T/t.sheaf" 2>/dev/null
printf 'a,b\n1,2\n' >"$T/ab.csv"
"$SHEAF" scan -q "$T/long.csv" --max-record 1M -o "$T/long.sheaf" 2>/dev/null
same_error long_record_project "$want" "$SHEAF" project "$T/long.csv" --summary "$T/long.sheaf" \
    --basis covariance --max-record 4K -q

# The same bytes piped in twice: the same summary file (mtime 0 for a pipe).
cat "$T/t.csv" | "$SHEAF" scan - -q -o "$T/p1.sheaf"
sleep 1.1
cat "$T/t.csv" | "$SHEAF" scan - -q -j3 -o "$T/p2.sheaf"
check fault_order.pipe_twice_same_file "$(first_diff "$T/p1.sheaf" "$T/p2.sheaf")" \
    cmp -s "$T/p1.sheaf" "$T/p2.sheaf"

# Progress on a terminal: none drawn over rows printed to that terminal
# (a pass long enough for the line: 4 KiB chunks over 16 copies of the
# table, repeated headers and all).
if command -v script >/dev/null; then
    echo pump >"$T/keep2.txt"
    for i in $(seq 1 16); do cat "$T/t.csv"; done | tail -n +1 >"$T/big.csv"
    script -qc "'$SHEAF' trim '$T/big.csv' --columns-from '$T/keep2.txt' --chunk-size 4K -j2" \
        /dev/null >"$T/tty1.txt" 2>&1
    check fault_order.no_progress_over_rows "$(grep -a -c 'trim: ' "$T/tty1.txt") progress lines" \
        holds '! grep -aq "trim: .*left" "$T/tty1.txt" && grep -aq "^p1" "$T/tty1.txt"'
else
    skip fault_order.progress "no script command"
fi

# 43 bytes of gzip whose deflate data holds an invalid symbol, after which
# ISA-L reports 2^32 - 1 bytes of input left: the input pointer was moved
# past the buffer and the scan read out of bounds (exit 139 at --chunk-size
# 200).  Found by fuzz_scan_threads on compressed inputs (its corpus keeps
# the input).  Now the damage is the error, the same at every -j.
printf '\x1f\x8b\x08\x00\x00\x00\x00\x00\x00\x03\xcb\x4c\xd1\x29\x5f\x41\x32\x48\xcd\x4c\xcf\xa8\xd9\x49\x2a\xcd\xcc\x49\xd1\x49\x4c\x49\xe5\x02\x00\xaa\x20\xf2\x08\x46\x00\x00\x00' \
    >"$T/symbol.csv.gz"
same_error invalid_symbol_in_deflate "symbol.csv.gz: corrupt gzip stream near byte [0-9]+" \
    "$SHEAF" scan "$T/symbol.csv.gz" -q
