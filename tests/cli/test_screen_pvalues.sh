#!/usr/bin/env bash
# screen on a table where every relevant column has p far below the double
# range (1e-308): the p- and q-values are printed as distinct numbers (the
# exponent from log10 p, never a "<" before a machine floor), the JSON and
# CSV outputs carry log10 p and log10 q, and the ranking follows log10 q.
# Before log-space p-values every such column had p = q = 0 and the ranking
# fell back to mutual information, which puts `boxed` (MI 1.000) before
# `sharp`.  `sharp` and `boxed` predict the class so well that screen flags
# them mirrors_target; --keep-mirrors keeps them in the ranking.
# Reference: mpmath 1.2.1 (Debian's python3-mpmath) at 40 digits, betainc for
# the ANOVA F tail and gammainc for the chi-squared tail, on the statistics
# and df sheaf reports (log10 p to 6 significant digits).
# The table: 3,000 rows from a fixed seed, target `outcome` (two classes);
# `sharp` is N(0,1) against N(6,1), `boxed` U(0,1) against U(1,2) (perfectly
# separated, so its normalized MI is 1, but its F is smaller), `level` a
# label matching the class in 99% of rows, `noise` N(0,1) in both classes.
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
cli_setup screen-pvalues python || exit 0

"$PY" - "$T/sep.csv" <<'EOF'
import random, sys
rnd = random.Random(2024)
with open(sys.argv[1], "w") as f:
    f.write("sharp,boxed,level,noise,outcome\n")
    for i in range(3000):
        g = i % 2
        sharp = rnd.gauss(6 * g, 1)
        boxed = g + rnd.random()
        level = ("lo", "hi")[g] if rnd.random() < 0.99 else ("hi", "lo")[g]
        f.write("%.5f,%.5f,%s,%.5f,%s\n" % (sharp, boxed, level, rnd.gauss(0, 1), ("pass", "fail")[g]))
EOF
if ! "$SHEAF" scan -q "$T/sep.csv" --target outcome -o "$T/sep.sheaf" 2>"$T/err"; then
    fail scan "$(err_text)"
    exit 0
fi
run "$SHEAF" screen "$T/sep.sheaf" --keep-mirrors
cp "$T/out" "$T/text"
run "$SHEAF" screen "$T/sep.sheaf" --keep-mirrors --format json
cp "$T/out" "$T/json"
run "$SHEAF" screen "$T/sep.sheaf" --keep-mirrors --format csv
cp "$T/out" "$T/csv"

# Each check script prints what is wrong (a traceback counts), nothing when
# all is right.
# Text: the kept columns' p and q cells are distinct numbers below 1e-308.
"$PY" - "$T/text" >"$T/check" 2>&1 <<'EOF'
import re, sys
rows = [l.split() for l in open(sys.argv[1]).read().splitlines()[2:] if l.strip()]
kept = [r for r in rows if len(r) > 7 and r[3] == "keep"]
bad = []
for r in kept:
    for cell in (r[6], r[7]):
        m = re.fullmatch(r"([1-9](?:\.\d+)?)e-(\d+)", cell)
        if not m or int(m.group(2)) <= 308:
            bad.append("%s: %s" % (r[1], cell))
ps = [r[6] for r in kept]
if len(kept) != 3 or len(set(ps)) != 3:
    bad.append("kept %s with p %s" % ([r[1] for r in kept], ps))
if bad:
    print("; ".join(bad))
EOF
check text.p_and_q_below_1e_308_printed_as_distinct_numbers "$(cat "$T/check")" [ ! -s "$T/check" ]
check text.no_less_than_sign_before_a_floor "$(grep -n '<' "$T/text" | head -n 2)" \
    sh -c "! grep -q '<' '$T/text'"

# JSON: log10 p of each primary test against mpmath; p and q are 0 there;
# the ranks follow log10 q; reasons name q in the same form.
"$PY" - "$T/json" >"$T/check" 2>&1 <<'EOF'
import json, sys
try:
    import mpmath as mp
except ImportError:
    print("SKIP mpmath")
    sys.exit(0)
mp.mp.dps = 40
doc = json.load(open(sys.argv[1]))
byname = {f["name"]: f for f in doc["features"]}
bad = []
for name, test in (("sharp", "anova_f"), ("boxed", "anova_f"), ("level", "chi2")):
    t = byname[name]["tests"][test]
    if test == "anova_f":
        a, b = mp.mpf(t["df1"]) / 2, mp.mpf(t["df2"]) / 2
        v = mp.mpf(t["df2"]) / (mp.mpf(t["df2"]) + mp.mpf(t["df1"]) * mp.mpf(t["stat"]))
        ref = mp.log10(mp.betainc(b, a, 0, v, regularized=True))
    else:
        ref = mp.log10(mp.gammainc(mp.mpf(t["df"]) / 2, mp.mpf(t["stat"]) / 2, mp.inf,
                                   regularized=True))
    got = t.get("log10_p")
    if got is None or abs(got - float(ref)) > 5e-7 * abs(float(ref)):
        bad.append("%s: log10_p %r, mpmath %s" % (name, got, mp.nstr(ref, 12)))
    if t["p"] != 0 or byname[name]["q"] != 0 or "p_is_upper_bound" in t:
        bad.append("%s: p %r, q %r, keys %s" % (name, t["p"], byname[name]["q"], sorted(t)))
    if ref > -308:
        bad.append("%s: mpmath gives %s, not below 1e-308" % (name, mp.nstr(ref, 6)))
kept = sorted((f for f in doc["features"] if f["rank"]), key=lambda f: f["rank"])
order = [f["name"] for f in kept]
by_q = [f["name"] for f in sorted(kept, key=lambda f: f["log10_q"])]
if order != by_q or order != ["sharp", "boxed", "level"]:
    bad.append("rank order %s, by log10 q %s" % (order, by_q))
for f in kept:
    r = f["reasons"][-1]
    if not r.startswith("relevant (q = ") or "e-" not in r or "<" in r:
        bad.append("%s: reason %r" % (f["name"], r))
if bad:
    print("; ".join(bad))
EOF
if [ "$(cat "$T/check")" = "SKIP mpmath" ]; then
    skip json.log10_p_matches_mpmath "python3-mpmath not installed (make deps)"
else
    check json.log10_p_matches_mpmath_and_ranks_follow_log10_q "$(cat "$T/check")" [ ! -s "$T/check" ]
fi

# CSV: the log10 columns hold the JSON's values.
"$PY" - "$T/csv" "$T/json" >"$T/check" 2>&1 <<'EOF'
import csv, json, sys
rows = {r["column"]: r for r in csv.DictReader(open(sys.argv[1]))}
doc = json.load(open(sys.argv[2]))
bad = []
for f in doc["features"]:
    r = rows[f["name"]]
    t = f["tests"]["chi2" if f["name"] == "level" else "anova_f"]
    if abs(float(r["log10_p"]) - t["log10_p"]) > 1e-9 * abs(t["log10_p"]) or \
       abs(float(r["log10_q"]) - f["log10_q"]) > 1e-9 * abs(f["log10_q"]):
        bad.append("%s: csv %s %s, json %r %r" % (f["name"], r["log10_p"], r["log10_q"],
                                                  t["log10_p"], f["log10_q"]))
if bad:
    print("; ".join(bad))
EOF
check csv.log10_columns_equal_json "$(cat "$T/check")" [ ! -s "$T/check" ]
exit 0
