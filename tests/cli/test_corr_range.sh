#!/usr/bin/env bash
# Pearson r from the co-moments at the ends of the double range.  r is
# C / sqrt(M2_a M2_b) (src/acc/comoment.c, comoment_correlation): the product
# M2_a M2_b overflows for columns whose spread times sqrt(n) passes about
# 1e77 (r becomes 0, the diagonal too, and pca decomposes a wrong matrix with
# a warning that blames missing cells) and underflows below about 1e-77 (r
# loses digits, the diagonal is no longer 1).  Further down, the decoder's
# Cauchy-Schwarz check (src/summary/format.c, check_comoment_sums) takes the
# same product, gets 0, and calls a summary that scan itself just wrote
# "damaged": corr, pca, info and merge all refuse it.
#
# Reference: numpy.corrcoef and numpy.linalg.eigh (Debian's python3-numpy) of
# the same values rescaled into the middle of the double range (r is
# invariant under scaling a column; the scaling by a power of ten moves each
# value by at most one rounding), to 1e-9.
# Now r is C / (sqrt(M2_a) sqrt(M2_b)) where the product is not a normal
# double, and the decoder takes the roots one by one and leaves sums of squares
# of spreads below 2^-460 unchecked.  At a spread of 1e-300 the sums
# themselves vanish in doubles: r is undefined there (empty in corr's CSV),
# never a wrong number.  Every check but the controls failed on the build
# before (found by a fresh audit of the matrix outputs against numpy).
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup corr-range python || exit 0
python_modules corr_range numpy || exit 0

# gen.py SCALE OUT: 50 rows of a, b (scaled by SCALE) and c (= b unscaled),
# r(a, b) about 0.54.
cat >"$T/gen.py" <<'PYEOF'
import sys
import numpy as np
rng = np.random.default_rng(3)
x = rng.normal(0, 1, 50); y = 0.5 * x + rng.normal(0, 1, 50)
s = float(sys.argv[1])
with open(sys.argv[2], "w") as f:
    f.write("a,b,c\n")
    for i in range(50):
        f.write("%r,%r,%r\n" % (x[i] * s, y[i] * s, y[i]))
PYEOF
# check.py CSV SCALE CORR_CSV: prints the entries of sheaf's r matrix that
# differ from numpy.corrcoef of the rescaled columns.
cat >"$T/check.py" <<'PYEOF'
import sys
import numpy as np
d = np.genfromtxt(sys.argv[1], delimiter=",", names=True)
s = float(sys.argv[2])
X = np.vstack([d["a"] / s, d["b"] / s, d["c"]])
ref = np.corrcoef(X)
rows = [l.rstrip("\n").split(",") for l in open(sys.argv[3])][1:]
got = np.array([[float(v) if v else np.nan for v in r[1:]] for r in rows])
vanish = len(sys.argv) > 4  # a and b's sums of squares vanish: undefined, not wrong
for i in range(3):
    for j in range(3):
        if vanish and (i < 2 or j < 2) and np.isnan(got[i, j]):
            continue
        if not abs(got[i, j] - ref[i, j]) <= 1e-9:
            print("r[%s][%s] sheaf %r numpy %r" % ("abc"[i], "abc"[j], got[i, j], ref[i, j]))
PYEOF
# eig.py CSV SCALE PCA_JSON: sheaf's eigenvalues against numpy.linalg.eigh.
cat >"$T/eig.py" <<'PYEOF'
import json, sys
import numpy as np
d = np.genfromtxt(sys.argv[1], delimiter=",", names=True)
s = float(sys.argv[2])
ref = np.linalg.eigh(np.corrcoef(np.vstack([d["a"] / s, d["b"] / s, d["c"]])))[0][::-1]
got = json.load(open(sys.argv[3]))["eigenvalues"]
if not np.allclose(got, np.clip(ref, 0, None), rtol=0, atol=1e-9):
    print("eigenvalues sheaf %s numpy %s" % (got, list(ref)))
PYEOF

# r_matches NAME SCALE: scan, corr -f csv, compare with numpy.
r_matches() {
    local name=$1 scale=$2 vanish=${3:-}
    "$PY" "$T/gen.py" "$scale" "$T/$name.csv"
    if ! "$SHEAF" scan -q "$T/$name.csv" -o "$T/$name.sheaf" 2>"$T/err"; then
        fail "corr_range.$name" "scan: $(err_text)"
        return
    fi
    if ! "$SHEAF" corr "$T/$name.sheaf" -f csv >"$T/$name.r" 2>"$T/err"; then
        fail "corr_range.$name" "corr refuses the summary scan wrote: $(err_text)"
        return
    fi
    "$PY" "$T/check.py" "$T/$name.csv" "$scale" "$T/$name.r" $vanish >"$T/check" 2>&1
    check "corr_range.$name" "$(tr '\n' '|' <"$T/check")" test ! -s "$T/check"
}

r_matches r_middle 1           # control: passes
r_matches r_spread_1e75 1e75   # control: passes
r_matches r_spread_1e78 1e78   # M2_a M2_b overflows: r(a,b) and the diagonal are 0
r_matches r_spread_1e150 1e150
r_matches r_spread_1e-80 1e-80 # M2_a M2_b subnormal: diagonal 1.0000000037
r_matches r_spread_1e-90 1e-90 # product 0: the summary is called damaged
r_matches r_spread_1e-300 1e-300 vanish

# pca of the 1e150 table (named columns: every such number is an integer,
# so the automatic choice calls a and b ID-like).
"$PY" "$T/gen.py" 1e150 "$T/p.csv"
if "$SHEAF" scan -q "$T/p.csv" -o "$T/p.sheaf" 2>"$T/err" &&
    "$SHEAF" pca "$T/p.sheaf" --columns a,b,c -k 3 -f json >"$T/p.json" 2>"$T/err"; then
    "$PY" "$T/eig.py" "$T/p.csv" 1e150 "$T/p.json" >"$T/check" 2>&1
    check corr_range.pca_spread_1e150 "$(tr '\n' '|' <"$T/check")" test ! -s "$T/check"
else
    fail corr_range.pca_spread_1e150 "scan or pca: $(err_text)"
fi

# A 4-row table whose second column is near 1e-300: the summary scan wrote
# must read back (info).
printf 'a,b\n1,1e-300\n2,3e-300\n3,2e-300\n4,5e-300\n' >"$T/tiny.csv"
if "$SHEAF" scan -q "$T/tiny.csv" -o "$T/tiny.sheaf" 2>"$T/err"; then
    run "$SHEAF" info "$T/tiny.sheaf"
    check corr_range.tiny_summary_reads_back "info exit $RC: $(err_text)" test "$RC" = 0
else
    fail corr_range.tiny_summary_reads_back "scan: $(err_text)"
fi
