#!/bin/bash
# Writes the seed corpus of fuzz_summary_decode (tests/fuzz/corpus/summary_decode/):
# small summaries of invented tables (every kind of target, merged shards)
# and crafted files that once crashed readers.  Run from the project root
# after `make sheaf`; the files are committed, so this runs only when the
# format changes (then commit what it wrote).
set -eu
OUT=tests/fuzz/corpus/summary_decode
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT
S=./sheaf
CRAFT="/usr/bin/python3 tests/cli/summary_craft.py"
SMALL=(--max-levels 8 --bucket-budget 16 -q -j1)
rm -f "$OUT"/*
# A shop's sensor log: a class, a measure, a count, a text code, a flag, gaps.
/usr/bin/python3 - "$T/t.csv" <<'PY'
import random, sys
r = random.Random(7)
with open(sys.argv[1], "w") as f:
    f.write("temp,load,code,hits,state,grade\n")
    for i in range(60):
        temp = "" if i % 11 == 0 else "%.2f" % r.gauss(20, 3)
        load = "%.3f" % r.uniform(0, 1)
        code = r.choice(["a1", "b2", "c3", "d4", "NA"])
        hits = str(r.randint(0, 40))
        state = r.choice(["ok", "warn", "fail"])
        grade = "%.1f" % (r.gauss(5, 1) + 0.3 * float(load))
        f.write(",".join([temp, load, code, hits, state, grade]) + "\n")
PY
$S scan "$T/t.csv" -o "$OUT/no_target.sheaf" "${SMALL[@]}"
$S scan "$T/t.csv" -o "$OUT/class_target.sheaf" -t state "${SMALL[@]}"
$S scan "$T/t.csv" -o "$OUT/numeric_as_classes.sheaf" -t hits --task classify "${SMALL[@]}"
$S scan "$T/t.csv" -o "$OUT/continuous_target.sheaf" -t grade --task regress "${SMALL[@]}"
$S scan "$T/t.csv" -o "$T/s1.sheaf" --shard 1/2 -t state "${SMALL[@]}"
$S scan "$T/t.csv" -o "$T/s2.sheaf" --shard 2/2 -t state "${SMALL[@]}"
$S merge "$T/s1.sheaf" "$T/s2.sheaf" -o "$OUT/merged_shards.sheaf"
# Several targets in one file (format version 4).
$S scan "$T/t.csv" -o "$OUT/several_targets.sheaf" -t state,code --columns temp,load,code,state "${SMALL[@]}"
printf 'a,b\n' >"$T/empty.csv"
$S scan "$T/empty.csv" -o "$OUT/header_only.sheaf" "${SMALL[@]}"
# The 2^30-byte section header at the end (once SIGBUS in every reader).
$CRAFT long-section "$OUT/class_target.sheaf" "$OUT/crafted_long_section.sheaf"
$CRAFT long-section "$OUT/class_target.sheaf" "$OUT/crafted_long_section_empty.sheaf" empty
ls -l "$OUT" | awk 'NR > 1 { print $5, $9 }'
