#!/usr/bin/env bash
# `sheaf drift BASE NEW` end to end: exit codes (0 quiet, 7 drift found, 5
# incompatible, 2 usage, 4 damaged, 1 unwritable output), the three formats
# (CSV parsed by Python's csv module, JSON by json), drifting columns listed
# first and the rest counted, a summary of several targets, standard input,
# and text output within 60, 80 and 100 columns with colour on and off.
# The figures themselves are checked against numpy/scipy in
# tests/ref/test_drift.py and tests/test_drift.c.
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
cli_setup drift python || exit 0

# Two nights of a small table: `level` shifts by 3 sd in the second, `tag`
# gains a category, `gone` vanishes, `fresh` appears; `steady` is drawn the
# same way both nights.
"$PY" - "$T" <<'EOF'
import random, sys
d = sys.argv[1]
for night in (1, 2):
    r = random.Random(night)
    with open("%s/n%d.csv" % (d, night), "w") as f:
        f.write("level,steady,tag,%s,y\n" % ("gone" if night == 1 else "fresh"))
        for i in range(3000):
            lv = r.gauss(10 + (3 if night == 2 else 0), 1)
            tag = "new" if night == 2 and r.random() < 0.3 else r.choice("abc")
            f.write("%.4f,%.4f,%s,%.3f,%d\n" % (lv, r.gauss(0, 1), tag, r.random(), r.random() < 0.5))
EOF
$SHEAF scan -q "$T/n1.csv" -o "$T/n1.sheaf" -t y || fail setup "scan 1"
$SHEAF scan -q "$T/n2.csv" -o "$T/n2.sheaf" -t y || fail setup "scan 2"

run $SHEAF drift "$T/n1.sheaf" "$T/n1.sheaf"
check exit_0_when_quiet "exit $RC: $(err_text)" [ "$RC" = 0 ]
check quiet_counts_every_column "$(head -c 300 "$T/out")" grep -q "^5 columns quiet" "$T/out"
run $SHEAF drift "$T/n1.sheaf" "$T/n2.sheaf"
check exit_7_when_drift_found "exit $RC: $(err_text)" [ "$RC" = 7 ]
check text_names_drifting_columns "$(head -c 400 "$T/out")" \
    eval 'grep -q "^level .*psi, ks, mean_shift" "$T/out" && grep -q "^tag .*categories" "$T/out" &&
          grep -q "^gone .*vanished" "$T/out" && grep -q "^fresh .*appeared" "$T/out"'
check text_quiet_columns_counted "$(tail -n 4 "$T/out")" grep -q "^2 columns quiet" "$T/out"
check text_steady_not_listed "$(cat "$T/out" | head -c 400)" eval '! grep -q "^steady" "$T/out"'
check text_lists_appeared_category "$(grep -A2 categories: "$T/out")" grep -q "tag: 1 appeared: 'new'" "$T/out"
check text_psi_reading_common_practice "" grep -q "common practice (no source)" "$T/out"
check help_lists_exit_7 "" eval '$SHEAF --help | grep -q "^  7  drift found"'

run $SHEAF drift "$T/n1.sheaf" "$T/n2.sheaf" -f csv
check csv_exit_7 "exit $RC" [ "$RC" = 7 ]
"$PY" - "$T/out" >"$T/csv.txt" <<'EOF'
import csv, sys
rows = list(csv.DictReader(open(sys.argv[1])))
widths = {len(r) for r in rows}
print(";".join("%s:%s:%s" % (r["column"], r["drifts"], r["flags"]) for r in rows), widths)
EOF
check csv_drifting_first_then_quiet "$(cat "$T/csv.txt")" \
    grep -q "^level:1:psi ks mean_shift;tag:1:categories.*;gone:1:vanished;fresh:1:appeared;steady:0:;y:0: {31}" "$T/csv.txt"

run $SHEAF drift "$T/n1.sheaf" "$T/n2.sheaf" -f json
"$PY" - "$T/out" >"$T/json.txt" <<'EOF'
import json, sys
d = json.load(open(sys.argv[1]))
c = {x["name"]: x for x in d["columns"]}
print(d["drift_found"], d["columns_drifting"], d["columns_quiet"], d["relevance"]["target"],
      c["level"]["numeric"]["psi"] > 0.25, c["steady"]["flags"], c["fresh"]["base"],
      [x["value"] for x in c["tag"]["text"]["appeared"]["listed"]])
EOF
check json_fields "$(cat "$T/json.txt")" grep -qx "True 4 2 y True \[\] None \['new'\]" "$T/json.txt"

# Standard input for one of the two, never both.
run sh -c "$SHEAF drift - '$T/n2.sheaf' < '$T/n1.sheaf'"
check stdin_as_baseline "exit $RC: $(err_text)" [ "$RC" = 7 ]
run $SHEAF drift - -
check stdin_twice_refused "exit $RC: $(err_text)" [ "$RC" = 2 ]

# Usage errors: one line each, exit 2.
for args in "$T/n1.sheaf" "$T/n1.sheaf $T/n2.sheaf $T/n2.sheaf" "$T/n1.sheaf $T/n2.sheaf --max-psi 0" \
    "$T/n1.sheaf $T/n2.sheaf --max-ks 2" "$T/n1.sheaf $T/n2.sheaf --max-rank-change x" \
    "$T/n1.sheaf $T/n2.sheaf -f yaml" "$T/n1.sheaf $T/n2.sheaf --max-pis 1"; do
    run $SHEAF drift $args
    check "usage.$(echo "${args#*sheaf}" | tr -c 'a-z0-9\n' _)" "exit $RC: $(err_text)" \
        [ "$RC" = 2 -a "$(wc -l <"$T/err")" = 1 ]
done
run $SHEAF drift "$T/n1.sheaf" "$T/n2.sheaf" --max-psi 100 --max-ks 1 --max-shift 100 \
    --max-share-change 1 --max-tv 1 --max-r-change 2 --fdr 0.05 --max-rank-change 0
check thresholds_raised_planted_columns_remain "exit $RC: $(err_text)" \
    eval '[ "$RC" = 7 ] && grep -q "^gone" "$T/out" && ! grep -q "^level" "$T/out"'

# Incompatible scans: exit 5, one line naming the difference.
$SHEAF scan -q "$T/n2.csv" -o "$T/b512.sheaf" -t y --bucket-budget 512
run $SHEAF drift "$T/n1.sheaf" "$T/b512.sheaf"
check refuse_bucket_budget "exit $RC: $(err_text)" \
    eval '[ "$RC" = 5 ] && [ "$(wc -l <"$T/err")" = 1 ] && grep -q "bucket budgets differ (2048 vs 512)" "$T/err" && [ ! -s "$T/out" ]'
$SHEAF scan -q "$T/n2.csv" -o "$T/cat.sheaf" -t y --categorical steady
run $SHEAF drift "$T/n1.sheaf" "$T/cat.sheaf"
check refuse_declared_mode "exit $RC: $(err_text)" \
    eval '[ "$RC" = 5 ] && grep -q "column .steady. declared undeclared vs categorical" "$T/err"'

# A damaged summary: exit 4.
head -c 200 "$T/n2.sheaf" >"$T/cut.sheaf"
run $SHEAF drift "$T/n1.sheaf" "$T/cut.sheaf"
check damaged_summary_exit_4 "exit $RC: $(err_text)" [ "$RC" = 4 ]

# An output that cannot be written wins over the drift status.
if [ -w /dev/full ]; then
    run sh -c "$SHEAF drift '$T/n1.sheaf' '$T/n2.sheaf' >/dev/full"
    check unwritable_output_exit_1 "exit $RC: $(err_text)" [ "$RC" = 1 ]
else skip unwritable_output_exit_1 "no /dev/full"; fi

# Several targets: --target picks the same one in both.
$SHEAF scan -q "$T/n1.csv" -o "$T/m1.sheaf" -t y,steady
$SHEAF scan -q "$T/n2.csv" -o "$T/m2.sheaf" -t y,steady
run $SHEAF drift "$T/m1.sheaf" "$T/m2.sheaf" -t steady -f json
check several_targets_choose_one "exit $RC: $(err_text)" grep -q '"target": "steady"' "$T/out"
run $SHEAF drift "$T/m1.sheaf" "$T/m2.sheaf" -t nope
check several_targets_unknown "exit $RC: $(err_text)" [ "$RC" = 2 ]

# A merge of shards as the baseline: the same figures as the whole.
head -n 1501 "$T/n1.csv" >"$T/p1.csv"
{ head -n 1 "$T/n1.csv"; tail -n +1502 "$T/n1.csv"; } >"$T/p2.csv"
$SHEAF scan -q "$T/p1.csv" -o "$T/p1.sheaf" -t y && $SHEAF scan -q "$T/p2.csv" -o "$T/p2.sheaf" -t y &&
    $SHEAF merge "$T/p1.sheaf" "$T/p2.sheaf" -o "$T/merged.sheaf" || fail setup "merge"
run $SHEAF drift "$T/merged.sheaf" "$T/n1.sheaf"
check merged_shards_vs_whole_quiet "exit $RC: $(err_text) $(head -c 300 "$T/out")" [ "$RC" = 0 ]
$SHEAF drift "$T/merged.sheaf" "$T/n2.sheaf" -f csv | cut -d, -f1-9 >"$T/a.csv"
$SHEAF drift "$T/n1.sheaf" "$T/n2.sheaf" -f csv | cut -d, -f1-9 >"$T/b.csv"
check merged_baseline_same_flags_psi_ks "$(first_diff "$T/a.csv" "$T/b.csv")" cmp -s "$T/a.csv" "$T/b.csv"

# Text within the terminal's width, colour on and off.
widths() {
    "$PY" - "$1" <<'EOF2'
import re, sys
try:
    text = open(sys.argv[1], encoding="utf-8").read()
except UnicodeDecodeError:
    print("bad"); sys.exit()
print(max((len(re.sub(r"\x1b\[[0-9;]*[A-Za-z]", "", l)) for l in text.split("\n")), default=0))
EOF2
}
for cols in 60 80 100; do
    for col in never always; do
        name="narrow_${cols}_color_${col}"
        COLUMNS=$cols $SHEAF drift "$T/n1.sheaf" "$T/n2.sheaf" --color $col >"$T/out" 2>"$T/err"
        rc=$?
        w=$(widths "$T/out")
        if [ $rc -ne 7 ]; then fail "$name" "exit $rc: $(err_text)"
        elif [ "$w" = bad ]; then fail "$name" "not valid UTF-8"
        elif [ "$w" -le "$cols" ]; then pass "$name"
        else fail "$name" "a line of $w columns at COLUMNS=$cols"; fi
    done
done

# Relevance: four features whose strength order reverses between nights
# move by 3 places (flag rank); a summary without the target says why
# relevance was not compared.
"$PY" - "$T" <<'EOF2'
import math, random, sys
d = sys.argv[1]
for night, w in ((1, (2.0, 1.4, 0.9, 0.5)), (2, (0.5, 0.9, 1.4, 2.0))):
    r = random.Random(10 + night)
    with open("%s/r%d.csv" % (d, night), "w") as f:
        f.write("f1,f2,f3,f4,noise,y\n")
        for i in range(4000):
            x = [r.gauss(0, 1) for _ in range(5)]
            s = sum(a * b for a, b in zip(w, x))
            f.write("%s,%d\n" % (",".join("%.4f" % v for v in x), r.random() < 1 / (1 + math.exp(-s))))
EOF2
$SHEAF scan -q "$T/r1.csv" -o "$T/r1.sheaf" -t y && $SHEAF scan -q "$T/r2.csv" -o "$T/r2.sheaf" -t y &&
    $SHEAF scan -q "$T/r2.csv" -o "$T/r2none.sheaf" || fail setup "relevance scans"
run $SHEAF drift "$T/r1.sheaf" "$T/r2.sheaf" -f csv
check relevance.rank_moved_3 "$(cut -d, -f1-3,26-29 "$T/out" | tr '\n' '|')" \
    eval 'grep -q "^f1,1,.*rank" "$T/out" && grep -q "^f4,1,.*rank" "$T/out" && ! grep -q "^noise,1" "$T/out"'
run $SHEAF drift "$T/r1.sheaf" "$T/r2.sheaf" --max-rank-change 0 -f csv
check relevance.rank_check_off "$(cut -d, -f1-3 "$T/out" | tr '\n' '|')" eval '! grep -q "rank" <(cut -d, -f3 "$T/out" | tail -n +2)'
run $SHEAF drift "$T/r1.sheaf" "$T/r2none.sheaf"
check relevance.note_without_target "exit $RC: $(tail -n 3 "$T/out" | tr '\n' '|')" \
    grep -q "relevance not compared: only one summary has a target" "$T/out"

# The vocabulary: the names drift shares with other commands keep their letters.
$SHEAF drift --help >"$T/help"
check vocabulary.shared_letters "$(grep -- '--format\|--target' "$T/help" | tr '\n' '|')" \
    eval 'grep -q "^  -f, --format" "$T/help" && grep -q "^  -t, --target" "$T/help" &&
          grep -q "^      --numeric-share" "$T/help" && grep -q "^      --fdr" "$T/help"'

# The drift audit's findings (each failed before; references by construction
# or pandas value_counts where named):
# duplicate column names are matched by occurrence: a summary against
# itself is quiet (the second 'temp' was compared with the first, exit 7);
printf 'temp,temp\n1,10\n2,20\n3,30\n4,45\n5,50\n' >"$T/dup.csv"
$SHEAF scan -q "$T/dup.csv" -o "$T/dup.sheaf" 2>/dev/null
run $SHEAF drift "$T/dup.sheaf" "$T/dup.sheaf"
check audit.duplicate_names_against_itself "exit $RC: $(head -n 1 "$T/out")" [ "$RC" = 0 ]
# a category on 40% of the new night, past its full table (the baseline's
# whole): pandas value_counts finds 'surge' on 40 of 100 cells; the column
# drifts and the appeared list is not called complete;
{ echo code; for i in $(seq 20); do echo a; done; } >"$T/ca.csv"
{ echo code; for i in 1 2 3 4 5; do echo id$i; done; for i in $(seq 40); do echo surge; done
  for i in $(seq 55); do echo a; done; } >"$T/cb.csv"
$SHEAF scan -q --max-levels 4 "$T/ca.csv" -o "$T/ca.sheaf" 2>/dev/null
$SHEAF scan -q --max-levels 4 "$T/cb.csv" -o "$T/cb.sheaf" 2>/dev/null
run $SHEAF drift "$T/ca.sheaf" "$T/cb.sheaf" -f json
check audit.category_past_a_full_table "exit $RC" \
    holds '[ "$RC" = 7 ] && "$PY" -c "
import json, sys
c = json.load(open(sys.argv[1]))[\"columns\"][0]
sys.exit(0 if \"categories\" in c[\"flags\"] and c[\"text\"][\"appeared\"][\"known\"] is False else 1)" "$T/out"'
# a night of no rows against one with rows drifts, either way round;
printf 'flow,temp\n' >"$T/e0.csv"
printf 'flow,temp\n1.5,20\n2.5,21\n3.5,22\n4.5,23\n' >"$T/e4.csv"
$SHEAF scan -q "$T/e0.csv" -o "$T/e0.sheaf" && $SHEAF scan -q "$T/e4.csv" -o "$T/e4.sheaf"
run $SHEAF drift "$T/e4.sheaf" "$T/e0.sheaf"
rc1=$RC
run $SHEAF drift "$T/e0.sheaf" "$T/e4.sheaf"
check audit.empty_night_drifts "exits $rc1 and $RC" holds '[ "$rc1" = 7 ] && [ "$RC" = 7 ]'
# a baseline of one number is constant: the shift is infinite and flags;
printf 'flow\n20\n' >"$T/n1.csv"
printf 'flow\n20\n20\n20\n20\n1000\n' >"$T/n5.csv"
$SHEAF scan -q "$T/n1.csv" -o "$T/n1.sheaf" 2>/dev/null && $SHEAF scan -q "$T/n5.csv" -o "$T/n5.sheaf" 2>/dev/null
run $SHEAF drift "$T/n1.sheaf" "$T/n5.sheaf" -f csv
check audit.one_number_baseline_shift "$(tail -n 1 "$T/out" | cut -d, -f1-3,10)" \
    holds 'tail -n 1 "$T/out" | cut -d, -f3,10 | grep -q "mean_shift.*,inf$"'
# a text column that becomes all missing drifts by its missing share, not as
# a change of kind;
printf 'zone,x\nnorth,1\nsouth,2\nnorth,3\n' >"$T/k1.csv"
printf 'zone,x\n,1\n,2\n,3\n' >"$T/k2.csv"
$SHEAF scan -q "$T/k1.csv" -o "$T/k1.sheaf" && $SHEAF scan -q "$T/k2.csv" -o "$T/k2.sheaf"
run $SHEAF drift "$T/k1.sheaf" "$T/k2.sheaf" -f csv
check audit.all_missing_is_no_kind_change "$(grep '^zone' "$T/out" | cut -d, -f1-3)" \
    holds 'grep "^zone" "$T/out" | cut -d, -f3 | grep -q missing && ! grep "^zone" "$T/out" | cut -d, -f3 | grep -q kind'
# a night whose first value lies far from the rest leaves screen's F tests
# out (imprecise classes) and ranks by chi-squared: drift says the q-values
# came from different tests (text, CSV, JSON) instead of comparing them silently
"$PY" - "$T" <<'PY'
import random, sys
random.seed(5)
for name, far in (("fb", False), ("fn", True)):
    with open("%s/%s.csv" % (sys.argv[1], name), "w") as f:
        f.write("x,y,label\n")
        if far:
            f.write("8e15,1,a\n")
        for i in range(3000):
            c = random.choice("abc")
            f.write("%.4f,%.3f,%s\n" % (1 + random.random() + (0.3 if c == "a" else 0), random.random(), c))
PY
$SHEAF scan -q "$T/fb.csv" --target label -o "$T/fb.sheaf" && $SHEAF scan -q "$T/fn.csv" --target label -o "$T/fn.sheaf"
run $SHEAF drift "$T/fb.sheaf" "$T/fn.sheaf"
check q_tests_differ.text "$(grep 'different tests' "$T/out")" \
    grep -q '^q from different tests.*: x (ANOVA F > chi-squared)$' "$T/out"
run $SHEAF drift "$T/fb.sheaf" "$T/fn.sheaf" -f csv
check q_tests_differ.csv "$(grep '^x,' "$T/out" | cut -d, -f26-)" \
    holds 'head -n 1 "$T/out" | grep -q ",base_q_test,new_q_test$" && grep -q "^x,.*,anova_f,chi2$" "$T/out" && grep -q "^y,.*,anova_f,anova_f$" "$T/out"'
run $SHEAF drift "$T/fb.sheaf" "$T/fn.sheaf" -f json
check q_tests_differ.json "exit $RC" \
    holds '"$PY" -c "
import json, sys
c = {x[\"name\"]: x for x in json.load(open(sys.argv[1]))[\"columns\"]}
sys.exit(0 if (c[\"x\"][\"base\"][\"q_test\"], c[\"x\"][\"new\"][\"q_test\"], c[\"label\"][\"base\"][\"q_test\"]) == (\"anova_f\", \"chi2\", None) else 1)" "$T/out"'
