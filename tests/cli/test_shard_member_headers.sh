#!/usr/bin/env bash
# Shards of files of members (found by a fresh audit of the quote rule
# across every reader): the same bytes must give the same records, and the
# same error, whichever path reads them.
#
#  1. shard_repeated_header.*: a file of two pieces compressed apart and
#     concatenated, each piece with its header line (two bgzip outputs joined
#     with cat; `zstd -c part1 > f.zst; zstd -c part2 >> f.zst`, the recipe
#     docs/shards.md gives).  A whole-file scan drops the second header line
#     (a repeated header at a member / frame start: repeated_headers 1); the
#     --shard I/N scans, merged, must count the same rows and hold no header
#     name as a cell.  Row count referenced to Python's csv module over the
#     decompressed bytes, less the one repeated header line.
#  2. shard_error_offset.*: a record longer than --max-record in the second
#     half of a plain file.  The whole-file scan names it "line L: record at
#     byte B"; the --shard 2/2 scan that meets it counts lines and bytes from
#     its first record and must say so, with that record's byte F: F plus
#     the byte it names is B.  (It used to say that only its lines were
#     counted from there.)
#
# Invented data (a bee-yard log).  Prints PASS/FAIL/SKIP lines; exits 0.
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
cli_setup shard-member-headers python || exit 0
command -v zstd >/dev/null || { skip all "zstd not found"; exit 0; }

# ------------------------------------------------------------ the tables
"$PY" - "$T" <<'EOF'
import os, struct, sys, zlib
t = sys.argv[1]
H = "hive,weight,note,temp\n"

def part(lo, hi):
    return (H + "".join('%d,%.2f,"calm, ""%d""\nrechecked",%.1f\n' % (i, 30 + i % 7, i % 3, 33 + i % 4)
                        for i in range(lo, hi))).encode()

def bgzf_member(chunk):
    """One BGZF member (gzip with the BC extra subfield giving its size)."""
    co = zlib.compressobj(6, zlib.DEFLATED, -15)
    body = co.compress(chunk) + co.flush()
    head = (b"\x1f\x8b\x08\x04\0\0\0\0\x00\xff" + struct.pack("<H", 6) + b"BC"
            + struct.pack("<HH", 2, 18 + len(body) + 8 - 1))
    return head + body + struct.pack("<II", zlib.crc32(chunk), len(chunk) & 0xFFFFFFFF)

def bgzf(data):  # as bgzip writes a file: 65,280-byte members, then the empty one
    return b"".join(bgzf_member(data[a:a + 65280]) for a in range(0, len(data), 65280)) + bgzf_member(b"")

a, b = part(1, 15001), part(15001, 30001)
open(os.path.join(t, "parta.csv"), "wb").write(a)
open(os.path.join(t, "partb.csv"), "wb").write(b)
open(os.path.join(t, "joined.csv"), "wb").write(a + b)  # the decompressed bytes
open(os.path.join(t, "two.csv.bgz"), "wb").write(bgzf(a) + bgzf(b))

# A plain table with one 3,000-byte record (quoted, doubled quotes and
# newlines inside) at about 1.5 MB of 2.4 MB, all other records short.
rows, n = [H], len(H)
i = 0
while n < 1500000:
    i += 1
    r = "%d,%.2f,calm,%.1f\n" % (i, 30 + i % 5, 33.0)
    rows.append(r); n += len(r)
long_at = n
note = ('long, ""note""\n' * 250)[:2900]
rows.append('%d,31.00,"%s",33.0\n' % (i + 1, note))
i += 1
n += len(rows[-1])
while n < 2400000:
    i += 1
    r = "%d,%.2f,calm,%.1f\n" % (i, 30 + i % 5, 33.0)
    rows.append(r); n += len(r)
open(os.path.join(t, "long.csv"), "w", newline="").write("".join(rows))
open(os.path.join(t, "long.at"), "w").write(str(long_at))
EOF
zstd -q -c "$T/parta.csv" >"$T/two.csv.zst" && zstd -q -c "$T/partb.csv" >>"$T/two.csv.zst"

# Python's csv module (standard library): records of the decompressed bytes,
# less the header and the one repeated header line.
want=$("$PY" -c 'import csv,sys
with open(sys.argv[1], newline="") as f:
    rs = [r for r in csv.reader(f) if r]
print(sum(1 for r in rs[1:] if r != rs[0]))' "$T/joined.csv")

# --------------------------------------- 1. repeated headers and shards
info_of() { "$SHEAF" info -f json "$1" | "$PY" -c 'import json,sys
d = json.load(sys.stdin)
print(d["rows"], sum(c.get("non_numeric", 0) for c in d["columns"] if c["name"] in ("hive", "weight", "temp")))'; }
for f in two.csv.bgz two.csv.zst; do
    run "$SHEAF" scan -q "$T/$f" -o "$T/$f.whole.sheaf"
    check "shard_repeated_header.$f.whole_scan" "exit $RC: $(err_text)" [ "$RC" -eq 0 ] || continue
    read -r rows bad <<<"$(info_of "$T/$f.whole.sheaf")"
    check "shard_repeated_header.$f.whole_rows" "whole scan rows $rows, csv module $want" [ "$rows" = "$want" ]
    for n in 2 3; do
        parts=() why=""
        for i in $(seq 1 "$n"); do
            run "$SHEAF" scan -q "$T/$f" --shard "$i/$n" -o "$T/$f.$i.$n.sheaf"
            [ "$RC" -eq 0 ] || why+=" shard $i/$n exit $RC: $(err_text);"
            parts+=("$T/$f.$i.$n.sheaf")
        done
        [ -z "$why" ] && { run "$SHEAF" merge "${parts[@]}" -o "$T/$f.m$n.sheaf"; [ "$RC" -eq 0 ] || why="merge exit $RC: $(err_text)"; }
        check "shard_repeated_header.$f.N$n.scans" "$why" [ -z "$why" ] || continue
        read -r rows bad <<<"$(info_of "$T/$f.m$n.sheaf")"
        check "shard_repeated_header.$f.N$n.rows" \
            "merged shards count $rows rows, the whole scan and the csv module $want (the repeated header line counted as a row)" \
            [ "$rows" = "$want" ]
        check "shard_repeated_header.$f.N$n.no_header_cells" \
            "$bad non-numeric cells in the numeric columns (the header names read as data)" [ "$bad" = 0 ]
    done
done

# ------------------------------------ 2. the byte offset of a shard's error
f="$T/long.csv"
at=$(cat "$T/long.at")
# exit_and_byte RC BYTE WANT: exit 3 and the byte named is WANT.
exit_and_byte() { [ "$1" -eq 3 ] && [ "$2" = "$3" ]; }
run "$SHEAF" scan -q --max-record 2000 "$f" -o "$T/l.sheaf"
whole=$(grep -o 'record at byte [0-9]*' "$T/err" | grep -o '[0-9]*$')
check shard_error_offset.whole "exit $RC, byte '$whole', want 3 and $at (by construction): $(err_text)" \
    exit_and_byte "$RC" "$whole" "$at"
for extra in "" --shard-from-top; do
    run "$SHEAF" scan -q --max-record 2000 "$f" --shard 2/2 $extra -o "$T/l2.sheaf"
    got=$(grep -o 'record at byte [0-9]*' "$T/err" | grep -o '[0-9]*$')
    base=$(grep -o 'lines and bytes counted from its first record, at byte [0-9]*' "$T/err" | grep -o '[0-9]*$')
    check "shard_error_offset.shard_2_of_2${extra:+.from_top}" \
        "exit $RC, the shard names byte '$got' from its first record at '$base', the whole scan $at: $(err_text)" \
        exit_and_byte "$RC" "$((${base:-0} + ${got:-0}))" "$at"
done
exit 0
