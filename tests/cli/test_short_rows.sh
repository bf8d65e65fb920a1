#!/usr/bin/env bash
# A scan's memory stays bounded when rows are much shorter than the header.
#
# A chunk's tasks hold 8 bytes for every field of every row up to the last
# scanned field, short rows too: a 500-column header over 300,000 rows of
# `1` (600 kB) once made one 256 KiB chunk hold 131,072 rows x 500 fields
# and peaked at 1.15 GB (13.4 s).  Such a chunk now goes to the tasks in
# pieces of whole records cut by its bytes alone (chunks_push).  Checked here:
#   - peak memory of the scan under 160 MiB at -j1 and -j2 (measured 56 and
#     78 MiB when this was written);
#   - the summary is the same bytes at -j1, -j2 and -j3;
#   - the numbers are right where pieces are cut: a 60-column table of short
#     and full rows, blank lines and a quoted field holding 20,000 newlines
#     (all the newlines a piece may hold are quoted), against Python's csv
#     module: rows, short rows, per column the cells, missing and the mean,
#     and the counts of the quoted notes, at three chunk sizes.
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup shortrows python || exit 0

"$PY" - "$T" <<'EOF'
import random, sys
t = sys.argv[1]
with open(f"{t}/wide.csv", "w") as f:
    f.write(",".join(f"c{i}" for i in range(500)) + "\n")
    f.write("1\n" * 300000)
random.seed(11)
cols = 60
with open(f"{t}/mixed.csv", "w", newline="") as f:
    f.write(",".join(f"v{i}" for i in range(cols)) + ",note\n")
    for r in range(120000):
        u = random.random()
        if r == 50000:  # a quoted field that holds more newlines than a piece
            f.write(",".join("7" for _ in range(cols)) + ",\"" + "x\n" * 20000 + "\"\n")
        elif u < 0.02:
            f.write("\n")
        elif u < 0.9:  # short: one to three fields
            k = random.randint(1, 3)
            f.write(",".join(str(random.randint(-50, 50)) for _ in range(k)) + "\n")
        else:  # full, a quoted note with a comma and a newline in it
            f.write(",".join(f"{random.random():.3f}" for _ in range(cols)))
            f.write(",\"a,b\nc\"\n")
EOF

# Peak memory of one scan (its children's max RSS, in KiB), or "fail".
peak() {
    "$PY" - "$@" <<'EOF'
import resource, subprocess, sys
r = subprocess.run(sys.argv[1:], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss if r.returncode == 0 else "fail")
EOF
}
for j in 1 2; do
    if [ -n "${ASAN_OPTIONS:-}" ]; then # a sanitized build's shadow memory is no measure
        $SHEAF scan -q -j$j "$T/wide.csv" -o "$T/wide$j.sheaf"
        skip "wide_peak_j$j" "sanitized build"
        continue
    fi
    kb=$(peak $SHEAF scan -q -j$j "$T/wide.csv" -o "$T/wide$j.sheaf")
    if [ "$kb" = fail ]; then
        fail "wide_peak_j$j" "scan failed"
    elif [ "$kb" -lt $((160 * 1024)) ]; then
        pass "wide_peak_j$j"
    else
        fail "wide_peak_j$j" "peak $((kb / 1024)) MiB, over 160 MiB"
    fi
done
check wide_same_j1_j2 "summaries differ: $(first_diff "$T/wide1.sheaf" "$T/wide2.sheaf")" \
    cmp -s "$T/wide1.sheaf" "$T/wide2.sheaf"

for j in 1 2 3; do
    $SHEAF scan -q -j$j "$T/mixed.csv" -o "$T/mixed$j.sheaf" 2>"$T/err" ||
        fail "mixed_scan_j$j" "exit $?: $(err_text)"
done
for j in 2 3; do
    check "mixed_same_j1_j$j" "summaries differ: $(first_diff "$T/mixed1.sheaf" "$T/mixed$j.sheaf")" \
        cmp -s "$T/mixed1.sheaf" "$T/mixed$j.sheaf"
done
# 64 KiB chunks: no piece but the quoted field's; 2 MiB chunks: pieces of
# 17,152 lines in every chunk (the limit for 61 kept fields).
for cs in 64k 2M; do
    $SHEAF scan -q -j2 --chunk-size $cs "$T/mixed.csv" -o "$T/mixed$cs.sheaf" 2>"$T/err" ||
        fail "mixed_scan_$cs" "exit $?: $(err_text)"
done

# Every count against the csv module; sums to 1e-9 relative.
for s in mixed1 mixed64k mixed2M; do
    $SHEAF info --format json "$T/$s.sheaf" >"$T/$s.json" || fail "${s}_info" "exit $?"
    if out=$("$PY" - "$T/mixed.csv" "$T/$s.json" <<'EOF'
import csv, json, math, sys
with open(sys.argv[1], newline="") as f:
    rows = [r for r in csv.reader(f) if r]
head, rows = rows[0], rows[1:]
d = json.load(open(sys.argv[2]))
bad = []
if d["rows"] != len(rows): bad.append(f"rows {d['rows']} != {len(rows)}")
short = sum(len(r) < len(head) for r in rows)
if d["short_rows"] != short: bad.append(f"short_rows {d['short_rows']} != {short}")
for i, c in enumerate(d["columns"]):
    cells = [r[i] for r in rows if i < len(r) and r[i] != ""]
    if c["n"] + c["non_numeric"] != len(cells): bad.append(f"{c['name']}: {c['n']} + {c['non_numeric']} cells != {len(cells)}")
    if c["missing"] != len(rows) - len(cells): bad.append(f"{c['name']}: missing")
    if c["kind"] == "numeric" and cells:
        ref = math.fsum(float(x) for x in cells) / len(cells)
        if abs(c["mean"] - ref) > 1e-9 * max(1, abs(ref)): bad.append(f"{c['name']}: mean {c['mean']} != {ref}")
top = {t["value"]: t["count"] for t in d["columns"][-1]["top"]}
want = {v: sum(r[-1] == v for r in rows if len(r) > len(head) - 1) for v in ("a,b\nc", "x\n" * 20000)}
if top.get("a,b\nc") != want["a,b\nc"] or sorted(top.values()) != sorted(want.values()): bad.append(f"note's values: {sorted(top.values())} != {sorted(want.values())}")
print("; ".join(bad[:4])[:300])
EOF
    ) && [ -z "$out" ]; then pass "${s}_against_csv_module"; else fail "${s}_against_csv_module" "$out"; fi
done

# Pieces meet the other chunk rules: two gzip members whose second repeats
# the header (skipped once, in whichever piece it falls), and byte-range
# shards of a short-row file with quoted newlines (each row counted once).
"$PY" - "$T" <<'EOF2'
import sys
t = sys.argv[1]
h = ",".join(f"c{i}" for i in range(500)) + "\n"
open(f"{t}/m1.csv", "w").write(h + "".join(f"{i % 7}\n" for i in range(3000)))
open(f"{t}/m2.csv", "w").write(h + "".join(f"{i % 5},{i}\n" for i in range(3000)))
open(f"{t}/sh.csv", "w").write(h + "".join(f"{i % 7},\"q\n{i}\"\n" if i % 11 == 0 else f"{i % 7}\n"
                                          for i in range(50000)))
EOF2
{ gzip -c "$T/m1.csv"; gzip -c "$T/m2.csv"; } >"$T/mm.csv.gz"
for j in 1 2; do $SHEAF scan -q -j$j "$T/mm.csv.gz" -o "$T/mm$j.sheaf" || fail "members_scan_j$j" "exit $?"; done
check members_same_j1_j2 "summaries differ" cmp -s "$T/mm1.sheaf" "$T/mm2.sheaf"
got=$($SHEAF info --format json "$T/mm1.sheaf" | "$PY" -c 'import json, sys
d = json.load(sys.stdin)
print(d["rows"], d["repeated_headers"], d["columns"][0]["n"], d["columns"][1]["n"])')
check members_counts "rows, repeated headers, cells: $got (want 6000 1 6000 3000)" [ "$got" = "6000 1 6000 3000" ]
$SHEAF scan -q "$T/sh.csv" -o "$T/sh_all.sheaf"
want=$($SHEAF info --format json "$T/sh_all.sheaf" | "$PY" -c 'import json, sys
d = json.load(sys.stdin)
print(d["rows"], d["columns"][0]["n"], d["columns"][1]["non_numeric"])')
check shards_whole_counts "whole file: $want (want 50000 50000 4546)" [ "$want" = "50000 50000 4546" ]
for n in 3 7; do
    rm -f "$T"/shp*.sheaf
    for i in $(seq 1 $n); do $SHEAF scan -q "$T/sh.csv" --shard $i/$n -o "$T/shp$i.sheaf" || fail "shard_${i}_of_$n" "exit $?"; done
    $SHEAF merge "$T"/shp*.sheaf -o "$T/shm.sheaf" || fail "shards_merge_$n" "exit $?"
    got=$($SHEAF info --format json "$T/shm.sheaf" | "$PY" -c 'import json, sys
d = json.load(sys.stdin)
print(d["rows"], d["columns"][0]["n"], d["columns"][1]["non_numeric"])')
    check "shards_${n}_counts" "merged $n shards: $got, whole file: $want" [ "$got" = "$want" ]
done
