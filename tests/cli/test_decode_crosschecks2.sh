#!/usr/bin/env bash
# Summaries the decoder must refuse, from a second audit of the decoder:
# damage that tests/cli/test_decode_crosschecks.sh does not reach (co-moments
# of constant columns and of pairs of no or one row, exact pair sums against
# the co-moments, examples, the table's byte count).  Each case rewrites a
# real summary (checksums recomputed: tests/cli/summary_craft.py, and
# tests/cli/summary_craft3.py for the pair sums) so that only the decoder can
# find the damage.  Every reading command must exit exactly 4 with one line
# naming the file; on the build before the fix each case failed, the
# commands exiting 0 (7 for drift) with wrong figures.  The last block checks
# that a version-1 rewrite of a regression summary reads as the original.
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup decode-crosschecks2 python || exit 0
CRAFT="$PY tests/cli/summary_craft.py"
CRAFT3="$PY tests/cli/summary_craft3.py"
export SHEAF_TREE=$PWD
export OPENBLAS_NUM_THREADS=1

# Data (tests/cli/decode_vans.py): a.csv and b.csv, a night log of parcel vans
# (a constant column 'gauge', a column 'probe' with one number, columns
# 'early' and 'late' never present together in a.csv but in 20 rows of
# b.csv), and c.csv for the version-1 rewrite.
$PY tests/cli/decode_vans.py "$T" || { fail setup "decode_vans.py failed"; exit 0; }
for x in a b; do
    $SHEAF scan "$T/$x.csv" --target stops --task regress -o "$T/$x-reg.sheaf" -q ||
        { fail setup "scans failed"; exit 0; }
done
$SHEAF scan "$T/c.csv" --target crew --task regress -o "$T/c-reg.sheaf" -q ||
    { fail setup "scan of c.csv failed"; exit 0; }
D=$T/a.csv
get() { $CRAFT get "$T/$1.sheaf" "$2"; }

# expect_damaged NAME FILE PARTNER: every reader exits 4 with one line
# naming FILE (PARTNER: a good summary of the same kind, for merge and drift).
expect_damaged() { expect_readers_refuse audit2 "$1" "$2" "$3" "$D"; }

# crafted NAME FIELD=VALUE...: summary_craft.py set on a-reg, then expect_damaged.
crafted() {
    local name=$1
    shift
    if ! $CRAFT set "$T/a-reg.sheaf" "$T/$name.sheaf" "$@" 2>"$T/craft.err"; then
        fail "audit2.$name" "could not craft: $(tr '\n' ' ' <"$T/craft.err")"
        return
    fi
    expect_damaged "$name" "$T/$name.sheaf" "$T/b-reg.sheaf"
}

# The good summaries read.
for b in a-reg b-reg c-reg; do
    run $SHEAF info "$T/$b.sheaf"
    check "audit2.good.$b" "info exit $RC: $(err_text)" [ "$RC" -eq 0 ]
done
# Co-moment columns: route 0, load 1, stops 2, gauge 3, probe 4, early 5,
# late 6, tag 7 (every column not declared categorical).
check audit2.layout "N[early][late] $(get a-reg 'COMO.N[5][6]'), N[probe][probe] $(get a-reg 'COMO.N[4][4]')" \
    holds '[ "$(get a-reg "COMO.N[5][6]")" = 0 ] && [ "$(get a-reg "COMO.N[4][4]")" = 1 ]'

# 1. A constant column (gauge = 7 in every row): none of its co-moment
#    entries is checked, and a partner's C is not bounded against it.  corr
#    prints r(load, gauge) = 0.491 (truly undefined); a covariance PCA of
#    load and gauge has total variance 8.020 (truly 7.020), and project's
#    scores move with it.
crafted como_constant_pair "COMO.M2[3][1]=1" "COMO.C[3][1]=10" "COMO.C[1][3]=10"
crafted como_constant_diag "COMO.M2[3][3]=59" "COMO.C[3][3]=59" "COMO.M2[3][1]=59" \
    "COMO.C[3][1]=100" "COMO.C[1][3]=100"

# 2. Pairs of no rows (N = 0) and of one row (N = 1) hold any MEAN, M2, C;
#    readers ignore them, but merge adds them in: early/late C = -2 x b's
#    flips merged r 0.178 -> -0.178; load/probe C = 3.7575 (truly 0) makes
#    the merged r 0.500 (truly -1.000 over the 2 rows).
cb=$(get b-reg 'COMO.C[5][6]')
x=$($PY -c "print(-2 * $cb)")
crafted como_empty_pair "COMO.C[5][6]=$x" "COMO.C[6][5]=$x"
crafted como_single_row "COMO.C[1][4]=3.7575" "COMO.C[4][1]=3.7575"

# 3. Exact pair sums with the target against the co-moments: Sxy of 'load'
#    rewritten for r = 0.95 (Cauchy-Schwarz holds): screen keeps load with
#    r +0.950, q 1.05e-30 (truly r +0.176, q 0.301, dropped) while corr
#    still prints 0.176.
if $CRAFT3 pairs-r "$T/a-reg.sheaf" "$T/pairs_r_vs_comoments.sheaf" 1 0.95 2>"$T/craft.err"; then
    expect_damaged pairs_r_vs_comoments "$T/pairs_r_vs_comoments.sheaf" "$T/b-reg.sheaf"
else
    fail audit2.pairs_r_vs_comoments "could not craft: $(tr '\n' ' ' <"$T/craft.err")"
fi

# 4. Examples of text cells that are numbers ('12.50', '7'), a non-finite
#    cell ('-inf') or a missing-value spelling ('?'), none of them in the
#    column's exact value table: info --format json lists them as
#    non_numeric_examples, merge passes them on.
crafted example_number "COLS[0].example[0].text=12.50" "COLS[0].example[2].text=-inf" \
    "COLS[7].example[0].text=7" "COLS[7].example[1].text=?"

# 5. TABL.bytes: 2^62 bytes for 60 rows of a 1569-byte plain file (info:
#    '4611686.0 TB of text').  (0 bytes cannot be refused: a checkpoint
#    counts a source's bytes only once it is read to its end.)
crafted table_bytes_huge "TABL.bytes=$((1 << 62))"

# Not a finding: a version-1 rewrite of a regression summary (legacy cells,
# no pair sums) screens as the version-5 file does (to 1e-9).
if $CRAFT3 legacy "$T/c-reg.sheaf" "$T/legacy.sheaf" 2>"$T/craft.err" &&
    [ "$(get legacy version)" = 1 ]; then
    $SHEAF screen --format json "$T/c-reg.sheaf" >"$T/s5.json" 2>/dev/null
    run $SHEAF screen --format json "$T/legacy.sheaf"
    # version 1 keeps no exact pair sums: r comes from the co-moments, equal
    # to about 1e-15
    if [ "$RC" -eq 0 ] && $PY -c 'import json, math, sys
def same(x, y):
    if isinstance(x, float) or isinstance(y, float):
        return math.isclose(x, y, rel_tol=1e-9, abs_tol=1e-12)
    if isinstance(x, dict):
        return x.keys() == y.keys() and all(same(x[k], y[k]) for k in x)
    if isinstance(x, list):
        return len(x) == len(y) and all(map(same, x, y))
    return x == y
a = json.load(open(sys.argv[1]))["features"]
b = json.load(open(sys.argv[2]))["features"]
sys.exit(not same(a, b))' "$T/s5.json" "$T/out"; then
        pass audit2.legacy_round_trip
    else
        fail audit2.legacy_round_trip "screen exit $RC or results differ: $(err_text)"
    fi
else
    fail audit2.legacy_round_trip "could not craft: $(tr '\n' ' ' <"$T/craft.err")"
fi
