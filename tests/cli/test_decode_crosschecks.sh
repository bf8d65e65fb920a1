#!/usr/bin/env bash
# The decoder's cross-checks between accumulators: summaries whose damage
# only they find.  Each case rewrites a real summary (checksums recomputed:
# tests/cli/summary_craft.py, and summary_craft2.py for rewrites that change
# a section's length) so that only the decoder can find the damage.  Every
# reading command must exit exactly 4 with one line naming the file (as in
# tests/cli/test_summary_decode.sh).  Before these checks every case below
# read with exit 0 (7 for drift) and wrong figures: a class value that is
# not its label's number, an exact value table outside the moments' range,
# a distinct-count sketch that no table could give, per-value or per-cell
# counts over a class's or a target cell's rows, per-value target moments
# and class spreads outside the range, and a merge that wrapped its counts.
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup decode-crosschecks python || exit 0
CRAFT="$PY tests/cli/summary_craft.py"
CRAFT2="$PY tests/cli/summary_craft2.py"
export OPENBLAS_NUM_THREADS=1

# Data: a text target, a numeric target kept as classes, a regression
# target, none; a second night (b) for merge and drift.
$PY - "$T" <<'EOF'
import random, sys
def make(path, seed, n):
    random.seed(seed)
    with open(path, "w") as f:
        f.write("kind,size,weight,note,level\n")
        for i in range(n):
            k = random.choice(["red", "blue", "green"])
            s = "" if i % 9 == 0 else "%.2f" % random.uniform(1, 10)
            w = 0 if i == 5 else random.randint(1, 50)
            lv = random.choice(["lo", "mid", "hi"])
            f.write("%s,%s,%d,%s,%s\n" % (k, s, w, random.choice(["x", "y", "NA", "z z"]), lv))
        f.write("blue,2.5\n")
make(sys.argv[1] + "/a.csv", 7, 60)
make(sys.argv[1] + "/b.csv", 8, 50)
EOF
for x in a b; do
    $SHEAF scan "$T/$x.csv" --target kind -o "$T/$x-cls.sheaf" -q &&
        $SHEAF scan "$T/$x.csv" --target size -o "$T/$x-numcls.sheaf" -q &&
        $SHEAF scan "$T/$x.csv" --target weight --task regress -o "$T/$x-reg.sheaf" -q &&
        $SHEAF scan "$T/$x.csv" -o "$T/$x-none.sheaf" -q &&
        $SHEAF scan "$T/$x.csv" --max-levels 4 -o "$T/$x-ml4.sheaf" -q ||
        { fail setup "scans failed"; exit 0; }
done
D=$T/a.csv
get() { $CRAFT get "$T/$1.sheaf" "$2"; }

# expect_damaged NAME FILE PARTNER: every reader exits 4 with one line
# naming FILE (PARTNER: a good summary of the same kind, for merge and drift).
expect_damaged() { expect_readers_refuse crosscheck "$1" "$2" "$3" "$D"; }

# crafted NAME BASE PARTNER FIELD=VALUE...: summary_craft.py set, then expect_damaged.
crafted() {
    local name=$1 base=$2 partner=$3
    shift 3
    if ! $CRAFT set "$T/$base.sheaf" "$T/$name.sheaf" "$@" 2>"$T/craft.err"; then
        fail "crosscheck.$name" "could not craft: $(tr '\n' ' ' <"$T/craft.err")"
        return
    fi
    expect_damaged "$name" "$T/$name.sheaf" "$T/$partner.sheaf"
}

# crafted2 NAME BASE PARTNER OP ARGS...: craft2.py OP, then expect_damaged.
crafted2() {
    local name=$1 base=$2 partner=$3 op=$4
    shift 4
    if ! $CRAFT2 "$op" "$T/$base.sheaf" "$T/$name.sheaf" "$@" 2>"$T/craft.err"; then
        fail "crosscheck.$name" "could not craft: $(tr '\n' ' ' <"$T/craft.err")"
        return
    fi
    expect_damaged "$name" "$T/$name.sheaf" "$T/$partner.sheaf"
}

# The good summaries read.
for b in a-cls a-numcls a-reg a-none a-ml4; do
    run $SHEAF info "$T/$b.sheaf"
    check "crosscheck.good.$b" "info exit $RC: $(err_text)" [ "$RC" -eq 0 ]
done

# 1. A numeric class's value is not the number its label spells (only its
#    finiteness is checked): screen's regression over the classes uses it.
crafted class_value_vs_label a-numcls b-numcls \
    "TRGT.class[1].value.value=1e6" "TRGT.class[2].value.value=1e6" "TRGT.class[3].value.value=1e6"

# 2. An exact value table whose numbers lie outside the moments' [min, max]:
#    info's quantiles come from the labels (99th percentile 52 with max 9.89).
crafted2 value_label_past_max a-none b-none relabel 1 "$(get a-none 'COLS[1].moments.max')" 99.8

# 3. The distinct-count sketch against the value table: an overflowed table's
#    keys are not in an empty sketch (distinct ~0 of a full table), and
#    16384 non-empty registers cannot come from 60 cells (distinct ~1e16).
crafted2 sketch_empty_overflowed a-ml4 b-ml4 hll-empty 2
crafted2 sketch_full_registers a-ml4 b-ml4 hll-full 2 40

# 4. A per-value table whose cells of one class add up to more rows than the
#    class has (each entry alone is within bounds): chi-squared changes.
e0=$(get a-cls 'COLS[4].cross.entry[0].n') e1=$(get a-cls 'COLS[4].cross.entry[1].n')
if [ "$(get a-cls 'COLS[4].cross.entry[0].key')" = "$(get a-cls 'COLS[4].cross.entry[1].key')" ] && [ "$e1" -gt 1 ]; then
    # every count of entry 1 but one moves to entry 0 (same value, other
    # class): with this data class 1 ('blue', 19 rows) then counts 21 rows
    # in column 'level' (2 + 9 + 7 before).
    crafted cross_class_total a-cls b-cls "COLS[4].cross.entry[0].n=$((e0 + e1 - 1))" \
        "COLS[4].cross.entry[1].n=1"
else
    skip crosscheck.cross_class_total "entries 0 and 1 of COLS[4].cross are not one value's"
fi

# 5. A regression target: a column's bucket store puts 52 numbers in target
#    cell 1, which holds 1 row of the target (no per-cell total is checked).
crafted2 regression_cell_total a-reg b-reg cells 1 1

# 6. Values no row could give: a per-value target mean 1e9 (the target lies
#    in 0..50) and a class's M2 of 1e12 (the column spreads over 8.35).
crafted cross_values_mean_range a-reg b-reg "COLS[0].cross.entry[0].mean=1e9" "COLS[0].cross.entry[0].m2=1e20"
crafted class_m2_range a-cls b-cls "COLS[1].cls[1].m2=1e12"

# 7. merge adds counts: four summaries of 2^62 + r rows each (each read then)
#    once merged with exit 0 into a file whose counts had wrapped and that
#    every reader refused.  Now merge refuses (past 2^53 rows the
#    co-moments' counts stop being exact), or writes a summary that reads;
#    and since the decode audit (session 25) a file of more than 2^53 rows,
#    which neither a scan nor a merge writes, is itself refused as damaged.
big() {
    local f=$1 a
    a="TABL.rows=$(($(get "$f" TABL.rows) + (1 << 62)))"
    a="$a SRCS.source[0].rows=$(($(get "$f" 'SRCS.source[0].rows') + (1 << 62)))"
    for i in 0 1 2 3 4; do a="$a COLS[$i].missing=$(($(get "$f" "COLS[$i].missing") + (1 << 62)))"; done
    # shellcheck disable=SC2086
    $CRAFT set "$T/$f.sheaf" "$T/$f-big.sheaf" $a
}
big a-none && big b-none
run $SHEAF info "$T/a-none-big.sheaf"
check crosscheck.rows_2e62_refused "info exit $RC: $(err_text)" \
    holds '[ "$RC" -eq 4 ] && grep -q "rows, more than 2^53" "$T/err"'
run $SHEAF merge "$T/a-none-big.sheaf" "$T/b-none-big.sheaf" "$T/a-none-big.sheaf" \
    "$T/b-none-big.sheaf" --allow-duplicates -o "$T/big-merged.sheaf"
mrc=$RC
run $SHEAF info "$T/big-merged.sheaf"
if [ "$mrc" -eq 4 ] || [ "$mrc" -eq 5 ] || { [ "$mrc" -eq 0 ] && [ "$RC" -eq 0 ]; }; then
    pass crosscheck.merge_count_overflow
else
    fail crosscheck.merge_count_overflow "merge exit $mrc, then info exit $RC: $(err_text)"
fi
