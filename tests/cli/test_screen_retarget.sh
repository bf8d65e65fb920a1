#!/usr/bin/env bash
# screen --target COL on a summary scanned without that target: the F test
# of Pearson r from the co-moment matrix the summary already holds.
#
# On open datasets (/work/shared/data/open, or ../shared/data/open), every
# numeric column's F test of r against COL must agree with what a scan that
# named COL gives: df2 equal, r and F to 1e-13 relative and p to 1e-10 (a
# relative error e of F moves p by about e times log p; the scan with the
# target forms r and F from its exact pair sums, the retarget from the
# co-moments), and r and p must agree with scipy.stats.pearsonr (Debian python3-scipy) on
# the rows where both cells are present.  Text columns get no test, and a
# text or unknown target is refused with exit 2.
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup retarget python || exit 0
OPEN=""
for d in ../shared/data/open /work/shared/data/open; do [ -s "$d/mpg.csv" ] && OPEN=$d && break; done
[ -n "$OPEN" ] || { skip retarget "no open datasets (shared/data/open)"; exit 0; }

compare() { # NAME CSV TARGET
    local name=$1 csv=$2 tgt=$3
    $SHEAF scan -q "$csv" -o "$T/$name.plain.sheaf" &&
        $SHEAF scan -q "$csv" --target "$tgt" --task regress -o "$T/$name.t.sheaf" ||
        { fail "retarget_${name}_setup" "scan failed"; return; }
    $SHEAF screen "$T/$name.plain.sheaf" --target "$tgt" -f json >"$T/$name.a.json" &&
        $SHEAF screen "$T/$name.t.sheaf" -f json >"$T/$name.b.json" ||
        { fail "retarget_${name}_setup" "screen failed"; return; }
    check "retarget_${name}_equals_a_scan_with_the_target" "the comparison failed (traceback above)" \
        "$PY" - "$T/$name.a.json" "$T/$name.b.json" "$csv" "$tgt" <<'PY'
import json, math, sys
import pandas as pd
from scipy import stats
a = json.load(open(sys.argv[1])); b = json.load(open(sys.argv[2]))
df = pd.read_csv(sys.argv[3]); tgt = sys.argv[4]
assert a["target"]["name"] == tgt and a["target"]["from_comoments"] is True, a["target"]
assert b["target"]["from_comoments"] is False
fb = {f["name"]: f for f in b["features"]}
tested = 0
for f in a["features"]:
    g = fb[f["name"]]
    if "corr_f" not in f["tests"]:
        # no test from the co-moments: only text columns
        assert not pd.api.types.is_numeric_dtype(df[f["name"]]), f["name"]
        continue
    x, y = f["tests"]["corr_f"], g["tests"]["corr_f"]
    assert x["df2"] == y["df2"], (f["name"], x["df2"], y["df2"])
    for k, tol in (("stat", 1e-13), ("r", 1e-13), ("p", 1e-10)):
        assert abs(x[k] - y[k]) <= tol * abs(y[k]), (f["name"], k, x[k], y[k])
    # scipy.stats.pearsonr on the pairwise-complete rows (outside reference)
    d = df[[f["name"], tgt]].dropna()
    r, p = stats.pearsonr(d[f["name"]], d[tgt])
    assert abs(x["r"] - r) <= 1e-12 * max(1, abs(r)), (f["name"], x["r"], r)
    assert abs(x["p"] - p) <= 1e-9 * p, (f["name"], x["p"], p)
    tested += 1
assert tested >= 2, tested
PY
}
compare mpg "$OPEN/mpg.csv" mpg
compare penguins "$OPEN/penguins.csv" body_mass_g
compare tips "$OPEN/tips.csv" tip

run $SHEAF screen "$T/mpg.plain.sheaf" --target name
check retarget_text_target_refused "exit $RC: $(err_text)" \
    bash -c "[ $RC = 2 ] && grep -q 'not a numeric column' '$T/err' && [ ! -s '$T/out' ]"
run $SHEAF screen "$T/mpg.plain.sheaf" --target nope
check retarget_unknown_target_refused "exit $RC: $(err_text)" \
    bash -c "[ $RC = 2 ] && grep -q -e 'target nope: no such column' '$T/err'"
run $SHEAF screen "$T/mpg.plain.sheaf" --target mpg
check retarget_text_output_says_so "exit $RC" \
    bash -c "[ $RC = 0 ] && grep -q 'regression from the co-moments' '$T/out' &&
             grep -q 'no test from this summary against mpg' '$T/out'"
