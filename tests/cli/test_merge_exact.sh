#!/usr/bin/env bash
# "Summaries of any number of shards or nights merge exactly" (from a fresh
# audit of merge): merge(scan(A), scan(B), ...) against one scan of the
# concatenated table, for info, screen, corr and pca (--format json), in
# several merge orders, and against exact references (Python's fractions
# for means, variances and Pearson r; numpy's 'linear' quantiles; pandas
# value counts: tests/cli/merge_reference.py).  Refusals must be exit 5
# with one line.  The last two checks failed before their fixes: a far
# value of a column in rows where its partner is missing cost r its third
# digit, and screen tested r of a column that the exact sums find constant.
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup merge-exact python || exit 0
python_modules merge_exact pandas numpy scipy || exit 0
export SHEAF_BIN=$SHEAF

# cmp_sum NAME A B: A and B read the same through info/screen/corr/pca at
# 1e-9 (tests/cli/merge_compare.py), non-numeric examples aside (documented order-dependent).
cmp_sum() {
    local why
    why=$("$PY" tests/cli/merge_compare.py "$2" "$3" 1e-9 | grep -v non_numeric_examples | head -n 3 | tr '\n' '|')
    if [ -z "$why" ]; then pass "$1"; else fail "$1" "differs: ${why:0:400}"; fi
}
# ref_ok NAME CSV SUMMARY [TARGET]: the summary's figures are the exact ones.
ref_ok() {
    local why
    why=$("$PY" tests/cli/merge_reference.py "$2" "$3" "${4:-}" 2>&1 | head -n 3 | tr '\n' '|')
    if [ -z "$why" ]; then pass "$1"; else fail "$1" "${why:0:400}"; fi
}

# ---- merges that must equal one scan -----------------------------------------
"$PY" tests/cli/merge_nights.py "$T/cases" || { fail gen "merge_nights.py failed"; exit 0; }
exact_case() { # NAME TARGET SCAN_OPTIONS...
    local name=$1 tgt=$2 d=$T/cases/$1 f nights
    shift 2
    nights=$(ls "$d"/n*.csv | sort -V)
    head -n 1 "$d/n1.csv" >"$d/all.csv"
    for f in $nights; do
        tail -n +2 "$f" >>"$d/all.csv"
        "$SHEAF" scan -q "$@" "$f" -o "${f%.csv}.sheaf" 2>"$T/err" ||
            { fail "merge.exact.$name" "scan $f: $(err_text)"; return; }
    done
    "$SHEAF" scan -q "$@" "$d/all.csv" -o "$d/all.sheaf" 2>"$T/err" ||
        { fail "merge.exact.$name" "scan all: $(err_text)"; return; }
    # shellcheck disable=SC2046
    "$SHEAF" merge $(for f in $nights; do echo "${f%.csv}.sheaf"; done) -o "$d/fwd.sheaf" 2>"$T/err" ||
        { fail "merge.exact.$name" "merge: $(err_text)"; return; }
    # shellcheck disable=SC2046
    "$SHEAF" merge $(for f in $nights; do echo "${f%.csv}.sheaf"; done | tac) -o "$d/rev.sheaf" 2>"$T/err" ||
        { fail "merge.exact.$name" "reversed merge: $(err_text)"; return; }
    cmp_sum "merge.exact.$name.forward" "$d/fwd.sheaf" "$d/all.sheaf"
    cmp_sum "merge.exact.$name.reversed" "$d/rev.sheaf" "$d/all.sheaf"
    ref_ok "merge.exact.$name.reference" "$d/all.csv" "$d/fwd.sheaf" "$tgt"
}
exact_case mixed cls -t cls                          # numeric/text by night, empty column, class in one night
exact_case dropcls t -t t --max-classes 8            # classes dropped in one night only
exact_case regress t -t t                            # continuous target, 3 nights
exact_case cells t -t t --task regress               # target cells at different levels per night
exact_case unite t -t t --max-classes 8              # classes kept in each night, dropped together
exact_case tiny t -t t                               # 50 nights of 0..3 rows
exact_case overflow t -t t --max-levels 16           # value table overflows in one night only
exact_case big "" # 1e15 offsets with small spreads

# tree merge of the tiny nights, groups in a shuffled order
d=$T/cases/tiny
L=$(ls "$d"/n*.sheaf | sort -V)
for g in 0 1 2 3 4; do
    # shellcheck disable=SC2046
    "$SHEAF" merge $(echo "$L" | sed -n "$((g * 10 + 1)),$((g * 10 + 10))p") -o "$d/g$g.sheaf"
done
"$SHEAF" merge "$d/g3.sheaf" "$d/g0.sheaf" "$d/g4.sheaf" "$d/g2.sheaf" "$d/g1.sheaf" -o "$d/tree.sheaf"
cmp_sum merge.exact.tiny.tree "$d/tree.sheaf" "$d/all.sheaf"

# ---- refusals: exit 5, one line ------------------------------------------------
refuse() { # NAME A B
    run "$SHEAF" merge "$2" "$3" -o "$T/refused.sheaf"
    if [ "$RC" -eq 5 ] && [ "$(wc -l <"$T/err")" -eq 1 ] && [ ! -e "$T/refused.sheaf" ]; then
        pass "merge.refuse.$1"
    else
        fail "merge.refuse.$1" "exit $RC, $(wc -l <"$T/err") lines: $(err_text)"
    fi
}
mkdir -p "$T/r"
printf 'a,b,c\n1,2,3\n4,5,6\n' >"$T/r/n1.csv"
printf 'a,b\n1,2\n7,8\n' >"$T/r/n2.csv"
printf 'a,c,b\n1,3,2\n7,9,8\n' >"$T/r/n3.csv"
for n in 1 2 3; do "$SHEAF" scan -q "$T/r/n$n.csv" -o "$T/r/n$n.sheaf"; done
"$SHEAF" scan -q "$T/r/n1.csv" --max-levels 100 -o "$T/r/lv.sheaf"
"$SHEAF" scan -q "$T/r/n1.csv" -t c -o "$T/r/tc.sheaf"
"$SHEAF" scan -q "$T/r/n1.csv" -t b -o "$T/r/tb.sheaf"
"$SHEAF" scan -q "$T/r/n1.csv" --missing NA,x -o "$T/r/ms.sheaf"
refuse column_missing "$T/r/n1.sheaf" "$T/r/n2.sheaf"
refuse column_moved "$T/r/n1.sheaf" "$T/r/n3.sheaf"
refuse max_levels "$T/r/n1.sheaf" "$T/r/lv.sheaf"
refuse target_vs_none "$T/r/tc.sheaf" "$T/r/n1.sheaf"
refuse other_target "$T/r/tc.sheaf" "$T/r/tb.sheaf"
refuse missing_list "$T/r/n1.sheaf" "$T/r/ms.sheaf"
d=$T/cases/unitetext
"$SHEAF" scan -q -t t --max-classes 8 "$d/n1.csv" -o "$d/n1.sheaf"
"$SHEAF" scan -q -t t --max-classes 8 "$d/n2.csv" -o "$d/n2.sheaf"
refuse text_classes_over_limit "$d/n1.sheaf" "$d/n2.sheaf"

# Two nights of a header alone (the same bytes, no rows) merge with a third:
# nothing can be counted twice, so no refusal (exit 5 before).
mkdir -p "$T/e"
printf 'x,y\n' >"$T/e/e1.csv"
printf 'x,y\n' >"$T/e/e2.csv"
printf 'x,y\n1,2\n3,5\n' >"$T/e/full.csv"
for n in e1 e2 full; do "$SHEAF" scan -q "$T/e/$n.csv" -o "$T/e/$n.sheaf"; done
run "$SHEAF" merge "$T/e/full.sheaf" "$T/e/e1.sheaf" "$T/e/e2.sheaf" -o "$T/e/m.sheaf"
check merge.header_only_nights "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
cmp_sum merge.header_only_nights.same "$T/e/m.sheaf" "$T/e/full.sheaf"
run "$SHEAF" merge "$T/e/full.sheaf" "$T/e/full.sheaf" -o "$T/e/m2.sheaf"
check merge.same_rows_twice_refused "exit $RC: $(err_text)" [ "$RC" -eq 5 ]

# ---- fixed after the audit --------------------------------------------------------
mkdir -p "$T/f"
"$PY" - "$T/f" <<'EOF'
import sys
d = sys.argv[1]
# Far value: x, y; every 20th row (from row 7) has y missing; in row 47 x is 1e8
with open(d + "/far.csv", "w") as f:
    f.write("x,y\n")
    for i in range(200):
        x = ((i * 37) % 101 - 50) / 10
        y = x + ((i * 53) % 41 - 20) / 10
        if i % 20 == 7:
            f.write("%s,\n" % ("100000000" if i == 47 else x))
        else:
            f.write("%s,%s\n" % (x, y))
# Far value, many missing: y missing in 2 rows of 5 (the dense path of the
# block sums), x = 999999999999 in some of them
import random
rng = random.Random(5)
with open(d + "/far2.csv", "w") as f:
    f.write("x,y,z\n")
    for i in range(1000):
        x = round(rng.gauss(3, 1), 3)
        y = round(x * 0.5 + rng.gauss(0, 1), 3)
        z = round(rng.gauss(0, 1), 2)
        if i % 5 in (1, 3):
            f.write("%s,,%s\n" % ("999999999999" if i % 97 == 1 else x, z))
        else:
            f.write("%s,%s,%s\n" % (x, y, z))
# Constant over the pairs: c is 4.1 wherever the target t is present, 2 where it is missing
with open(d + "/undef.csv", "w") as f:
    f.write("c,x,t\n")
    for i in range(30):
        x = ((i * 13) % 17 - 8) / 4
        t = ((i * 7) % 11 - 5) / 2 + x / 3
        f.write("2,%s,\n" % x if i % 7 == 3 else "4.1,%s,%s\n" % (x, t))
EOF
F=$T/f
halves() { # CSV: CSV's rows split in two halves, F/h1.csv F/h2.csv
    local n
    n=$(($(wc -l <"$1") / 2 + 1))
    head -n "$n" "$1" >"$F/h1.csv"
    { head -n 1 "$1"; tail -n +$((n + 1)) "$1"; } >"$F/h2.csv"
}

# Far value: Pearson r of a pair whose rows exclude a far value of one column.
# Reference: exact r from Python's fractions over the rows where both are
# present (pandas DataFrame.corr gives the same to 1e-15).
halves "$F/far.csv"
"$SHEAF" scan -q "$F/far.csv" -o "$F/far.sheaf"
"$SHEAF" scan -q "$F/h1.csv" -o "$F/h1.sheaf"
"$SHEAF" scan -q "$F/h2.csv" -o "$F/h2.sheaf"
"$SHEAF" merge "$F/h1.sheaf" "$F/h2.sheaf" -o "$F/farm.sheaf"
why=$("$PY" - "$F/far.csv" "$F/far.sheaf" "$F/farm.sheaf" <<'EOF'
import csv, json, math, os, subprocess, sys
from fractions import Fraction as Q
rows = [(Q(a), Q(b)) for a, b in list(csv.reader(open(sys.argv[1])))[1:] if b != ""]
n = len(rows); mx = sum(r[0] for r in rows) / n; my = sum(r[1] for r in rows) / n
sxy = sum((a - mx) * (b - my) for a, b in rows)
sxx = sum((a - mx) ** 2 for a, _ in rows); syy = sum((b - my) ** 2 for _, b in rows)
ref = float(sxy) / math.sqrt(float(sxx) * float(syy))
out = []
for name, p in (("scan", sys.argv[2]), ("merge of halves", sys.argv[3])):
    r = json.loads(subprocess.run([os.environ["SHEAF_BIN"], "corr", "--format", "json", p],
                                  capture_output=True).stdout)["matrix"][0][1]
    if r is None or abs(r - ref) > 1e-12:
        out.append("%s r(x,y) %r" % (name, r))
if out:
    print("; ".join(out) + ", exact %r (Python fractions)" % ref)
EOF
)
if [ -z "$why" ]; then pass merge.far_value_other_rows; else fail merge.far_value_other_rows "$why"; fi
# The same with 40% of y missing (r was 10.56 before the fix).
"$SHEAF" scan -q "$F/far2.csv" -o "$F/far2.sheaf"
why=$("$PY" - "$F/far2.csv" "$F/far2.sheaf" <<'EOF'
import csv, json, math, os, subprocess, sys
from fractions import Fraction as Q
rows = [(Q(a), Q(b)) for a, b, _ in list(csv.reader(open(sys.argv[1])))[1:] if b != ""]
n = len(rows); mx = sum(r[0] for r in rows) / n; my = sum(r[1] for r in rows) / n
sxy = sum((a - mx) * (b - my) for a, b in rows)
sxx = sum((a - mx) ** 2 for a, _ in rows); syy = sum((b - my) ** 2 for _, b in rows)
ref = float(sxy) / math.sqrt(float(sxx) * float(syy))
r = json.loads(subprocess.run([os.environ["SHEAF_BIN"], "corr", "--format", "json", sys.argv[2]],
                              capture_output=True).stdout)["matrix"][0][1]
if r is None or abs(r - ref) > 1e-12:
    print("scan r(x,y) %r, exact %r (Python fractions)" % (r, ref))
EOF
)
if [ -z "$why" ]; then pass merge.far_value_many_missing; else fail merge.far_value_many_missing "$why"; fi

# Constant over the pairs: a column constant over the rows where the target is present has
# no defined r with it (pandas: its variance there is 0), so no corr_f test,
# and the other column's q is its p (one test).  The merge of the two halves
# says so; one scan of the table tests it (r = -0.000) and doubles x's q.
halves "$F/undef.csv"
"$SHEAF" scan -q -t t "$F/undef.csv" -o "$F/undef.sheaf"
"$SHEAF" scan -q -t t "$F/h1.csv" -o "$F/u1.sheaf"
"$SHEAF" scan -q -t t "$F/h2.csv" -o "$F/u2.sheaf"
"$SHEAF" merge "$F/u1.sheaf" "$F/u2.sheaf" -o "$F/undefm.sheaf"
why=$("$PY" - "$F/undef.csv" "$F/undef.sheaf" "$F/undefm.sheaf" <<'EOF'
import json, os, subprocess, sys
import pandas as pd
d = pd.read_csv(sys.argv[1])
assert d.dropna(subset=["t"])["c"].var() == 0
out = []
for name, p in (("scan", sys.argv[2]), ("merge of halves", sys.argv[3])):
    s = json.loads(subprocess.run([os.environ["SHEAF_BIN"], "screen", "--format", "json", p],
                                  capture_output=True).stdout)
    f = {x["name"]: x for x in s["features"]}
    if "corr_f" in f["c"]["tests"]:
        out.append("%s: c has a corr_f test (r %r) and x q %r (p %r)" % (
            name, f["c"]["tests"]["corr_f"].get("r"), f["x"]["q"], f["x"]["tests"]["corr_f"]["p"]))
if out:
    print("; ".join(out) + "; pandas: c constant (variance 0) where t is present, r undefined")
EOF
)
if [ -z "$why" ]; then pass merge.constant_where_target; else fail merge.constant_where_target "$why"; fi
