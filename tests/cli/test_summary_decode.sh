#!/usr/bin/env bash
# Damaged summaries that a checksum cannot catch (docs/summary-format.md,
# "Invariants"): each crafted case below rewrites fields of a real summary
# with tests/cli/summary_craft.py, which recomputes every checksum, so that
# the decoder itself must find the damage.  Every command that reads a
# summary must exit exactly 4 with one line naming the file, never die by a
# signal.  Then a bit-flip campaign: single-bit flips of a small summary's
# payloads (fixed seed, checksums recomputed) must each exit 0 or 4.
cd "$(dirname "$0")/../.."
. tests/cli/common.sh
cli_setup decode python || exit 0
CRAFT="$PY tests/cli/summary_craft.py"
export OPENBLAS_NUM_THREADS=1 # sheaf would re-execute itself to set it: half the time of a read

# Data: a text class target, a numeric target kept as classes, a regression
# target, no target; one short row so the table has a ragged line.
$PY - "$T" <<'EOF'
import random, sys
random.seed(7)
with open(sys.argv[1] + "/t.csv", "w") as f:
    f.write("kind,size,weight,note\n")
    for i in range(40):
        k = random.choice(["red", "blue", "green"])
        s = "" if i % 9 == 0 else "%.2f" % random.uniform(1, 10)
        w = 0 if i == 5 else random.randint(1, 50)
        f.write("%s,%s,%d,%s\n" % (k, s, w, random.choice(["x", "y", "NA", "z z"])))
    f.write("blue,2.5\n")
EOF
D=$T/t.csv
$SHEAF scan "$D" --target kind -o "$T/cls.sheaf" -q 2>/dev/null &&
    $SHEAF scan "$D" --target size -o "$T/numcls.sheaf" -q 2>/dev/null &&
    $SHEAF scan "$D" --target weight --task regress -o "$T/reg.sheaf" -q 2>/dev/null &&
    $SHEAF scan "$D" -o "$T/none.sheaf" -q 2>/dev/null &&
    { head -n 5 "$D" | gzip -c; head -n 5 "$D" | gzip -c; } >"$T/rep.csv.gz" &&
    $SHEAF scan "$T/rep.csv.gz" -o "$T/rep.sheaf" -q 2>/dev/null &&
    $SHEAF scan "$D" --shard 2/3 -o "$T/shd.sheaf" -q 2>/dev/null ||
    { fail setup "scans failed"; exit 0; }

get() { $CRAFT get "$T/$1.sheaf" "$2"; }

# expect_damaged NAME FILE: every reader exits 4 with one line naming FILE.
expect_damaged() {
    expect_damaged_by decode "$1" "$2" "info $2" "info --format json $2" "screen $2" "pca $2" \
        "corr $2" "merge $2 $T/none.sheaf -o $T/merged.sheaf" "trim $D --summary $2 -o $T/trim.csv" \
        "project $D --summary $2 -o $T/proj.csv"
}

# crafted NAME BASE FIELD=VALUE...: rewrites BASE.sheaf and expects rejection.
crafted() {
    local name=$1 base=$2
    shift 2
    if ! $CRAFT set "$T/$base.sheaf" "$T/$name.sheaf" "$@" 2>"$T/craft.err"; then
        fail "decode.$name" "could not craft: $(tr '\n' ' ' <"$T/craft.err")"
        return
    fi
    expect_damaged "$name" "$T/$name.sheaf"
}

# The good summaries are read by every command.
for b in cls numcls reg none rep shd; do
    run $SHEAF info "$T/$b.sheaf"
    check "decode.good.$b" "info exit $RC: $(err_text)" [ "$RC" -eq 0 ]
done

# A section header in the last 28 bytes claiming 2^30 bytes: the bounds
# check once underflowed and every reader died with SIGBUS.
$CRAFT long-section "$T/cls.sheaf" "$T/long.sheaf"
expect_damaged section_length_after_schema "$T/long.sheaf"
$CRAFT long-section "$T/cls.sheaf" "$T/long0.sheaf" empty
expect_damaged section_length_underflow "$T/long0.sheaf"

# Indices: bucket and per-value cells naming classes that do not exist
# (the first once crashed screen and trim --summary with SIGSEGV).
crafted bucket_cell_past_classes numcls "COLS[2].bins.entry[0].cell=100000"
crafted bucket_cell_class_k_plus_1 cls "COLS[1].bins.entry[0].cell=4"
crafted bucket_cell_regression_range reg "COLS[1].bins.entry[0].cell=$(($(get reg TRGT.tcells.n) + 1))"
# A continuous target's cells (summary/tcells.h): ascending keys within the
# level's range, none while classes are kept, cells within the table.
crafted target_cells_unordered reg "TRGT.tcells.key[1]=$(get reg 'TRGT.tcells.key[0]')"
crafted target_cells_level reg "TRGT.tcells.level=64"
crafted target_cells_key_range reg "TRGT.tcells.level=63" "TRGT.tcells.key[0]=-5"
crafted target_cells_with_classes cls "TRGT.tcells.level=3"
crafted cross_cell_past_target_cells reg "COLS[0].cross.entry[0].cell=$(($(get reg TRGT.tcells.n) + 1))"
crafted bucket_cell_without_target none "COLS[1].bins.entry[0].cell=1"
crafted cross_cell_past_classes cls "COLS[3].cross.entry[0].cell=9"
crafted cross_cell_zero cls "COLS[3].cross.entry[0].cell=0"

# SCHM, SRCS, TABL.
crafted source_format cls "SRCS.source[0].format.text=plaix"
crafted source_range cls "SRCS.source[0].start_byte=10" "SRCS.source[0].end_byte=5"
crafted rows_vs_sources cls "TABL.rows=$(($(get cls TABL.rows) + 1))"
crafted ragged_more_than_rows cls "TABL.short_rows=1000"
crafted ragged_lines_without_rows cls "TABL.short_rows=0"
crafted ragged_line_zero cls "TABL.bad_line[0]=0"

# TRGT: the class table.
crafted class_hash cls "TRGT.class[1].hash=1"
crafted class_numeric_flag numcls "TRGT.class[1].numeric=0"
crafted class_no_rows cls "TRGT.class[1].rows=0"
crafted class_rows_vs_target cls "TRGT.class[1].rows=$(($(get cls 'TRGT.class[1].rows') + 1))"
crafted class_dropped_while_kept cls "TRGT.classes_dropped=1"
# A co-moment pair flagged imprecise by a merge (the top bit of N[i][j] and
# N[j][i]): read with no r; refused on the diagonal, on one half only, or
# with no rows.
nij=$(get none 'COMO.N[1][2]')
crafted pair_lost_diagonal none "COMO.N[0][0]=$(( (1 << 63) | $(get none 'COMO.N[0][0]') ))"
crafted pair_lost_one_half none "COMO.N[1][2]=$(( (1 << 63) | nij ))"
if [ "$nij" -gt 0 ]; then
    $CRAFT set "$T/none.sheaf" "$T/pairlost.sheaf" "COMO.N[1][2]=$(( (1 << 63) | nij ))" \
        "COMO.N[2][1]=$(( (1 << 63) | nij ))" 2>/dev/null
    run $SHEAF corr "$T/pairlost.sheaf" -f csv
    check decode.pair_lost_read "exit $RC: $(err_text)" \
        holds '[ "$RC" = 0 ] && grep -q "1 pair has no figure" "$T/err" && [ "$(sed -n 2p "$T/out" | cut -d, -f3)" = "" ]'
else
    skip decode.pair_lost_read "size and weight share no row"
fi
# A class flagged imprecise by a merge (the top bit of its count, 2^63):
# read as its count with no mean and variance; never on an empty class.
n1=$(get cls 'COLS[1].cls[1].n')
crafted class_imprecise_empty cls "COLS[1].cls[1].n=$((1 << 63))"
$CRAFT set "$T/cls.sheaf" "$T/flagged.sheaf" "COLS[1].cls[1].n=$(( (1 << 63) | n1 ))" 2>/dev/null
run $SHEAF info --format json "$T/flagged.sheaf"
check decode.class_imprecise_flag_read "exit $RC: $(err_text)" \
    holds '[ "$RC" = 0 ] && $PY -c "import json,sys; k=json.load(open(sys.argv[1]))[\"columns\"][1][\"by_class\"][0]; sys.exit(not (k[\"imprecise\"] and k[\"n\"] == $n1 and k[\"mean\"] is None))" "$T/out"'
crafted target_text_vs_column cls "TRGT.target_text=3"
l1=$(get numcls 'TRGT.class[1].label.text') h1=$(get numcls 'TRGT.class[1].hash')
l2=$(get numcls 'TRGT.class[2].label.len')
if [ "${#l1}" -eq "$l2" ]; then
    crafted class_twice numcls "TRGT.class[2].label.text=$l1" "TRGT.class[2].hash=$h1"
else
    skip decode.class_twice "first two class labels differ in length"
fi

# COLS: counts, moments, value table, bucket store, per-value table,
# per-class moments.
crafted cells_vs_rows cls "COLS[1].missing=$(($(get cls 'COLS[1].missing') + 1))"
crafted zeros_over_integers cls "COLS[2].zeros=1000"
crafted zeros_vs_buckets cls "COLS[2].zeros=$(($(get cls 'COLS[2].zeros') + 1))"
crafted categorical_with_numbers cls "SCHM.column[2].mode=2"
crafted example_repeated cls "COLS[3].example[2].text=$(get cls 'COLS[3].example[1].text')"
crafted moments_min_over_max cls "COLS[1].moments.min=100"
crafted moments_negative_m2 cls "COLS[1].moments.m2=-1"
crafted moments_negative_m4 cls "COLS[1].moments.m4=-1"
crafted moments_nan_mean cls "COLS[1].moments.mean=nan"
crafted moments_inf_m3 cls "COLS[1].moments.m3=inf"
crafted moments_mean_far cls "COLS[1].moments.mean=1e6"
crafted moments_frame_outside cls "COLS[1].moments.ref.value=1000"
crafted moments_empty_nonzero none "COLS[0].moments.m2=1"
crafted moments_no_frame cls "COLS[1].moments.has_ref=0"
crafted moments_frame_without_numbers cls "COLS[0].moments.ref.value=1"
crafted values_max_levels cls "COLS[1].values.max_levels=1000"
crafted values_label_bytes cls "COLS[1].values.label_bytes=64"
crafted values_label_bytes_target cls "COLS[0].values.label_bytes=8224"
crafted values_total cls "COLS[1].values.entry[0].count=$(($(get cls 'COLS[1].values.entry[0].count') + 1))"
crafted values_label cls "COLS[0].values.entry[0].label.text=$(get cls 'COLS[0].values.entry[0].label.text' | tr 'a-z' 'b-za')"
crafted values_overflow_with_room cls "COLS[1].values.overflowed=1" "COLS[1].values.overflow[0]=1" \
    "COLS[1].missing=$(($(get cls 'COLS[1].missing') - 1))"
crafted buckets_budget cls "COLS[1].bins.budget=100"
crafted buckets_total cls "COLS[1].bins.entry[0].count=$(($(get cls 'COLS[1].bins.entry[0].count') + 1))"
crafted cross_max_keys cls "COLS[3].cross.max_keys=5"
crafted cross_over_value_count cls "COLS[3].cross.entry[0].n=1000"
crafted class_moments_over_rows cls "COLS[1].cls[1].n=1000"
crafted class_moments_negative_m2 cls "COLS[1].cls[1].m2=-1"
crafted class_moments_vs_buckets cls "COLS[1].cls[1].n=$(($(get cls 'COLS[1].cls[1].n') - 1))"
# Version 3 (per-class sums in two doubles): the low part within half an
# ulp of the high one; version 3 only with a target (a file without one is
# written as version 1 or 2: oldrep.sheaf, a version-2 file with a repeated
# header written by an earlier build, tests/old/README.md).
crafted class_sum_low_over_half_ulp cls "COLS[1].cls[1].sum_low=1"
crafted class_sum_nan cls "COLS[1].cls[1].sum=nan"
cp tests/old/v2-exact-case.sheaf "$T/oldrep.sheaf"
crafted version3_without_target oldrep "version=3"
check decode.version3_without_target.message "$(err_text)" \
    grep -q 'a version-3 file without a target' "$T/err"
# Version 5 records the missing-value case rule, 1 (any case) or refused.
crafted version5_rule_exact rep "SCHM.missing_any_case=0"
# Version 6: a byte-range shard's start record (docs/shards.md), every field
# checked: the rule, the modes (one for a start found from the top), I of N,
# the range inside the file, the bytes read; and a version-6 file must hold
# one such record.
for f in shard_rule shard_modes shard_map shard_index shard_count file_id read_bytes; do
    v=$(get shd "SRCS.source[0].$f")
    check "decode.shard_field.$f" "SRCS.source[0].$f is '$v'" [ -n "$v" ]
done
check decode.shard_version "version $(get shd version)" [ "$(get shd version)" = 7 ]
crafted shard_rule_unknown shd "SRCS.source[0].shard_rule=4"
crafted shard_modes_none shd "SRCS.source[0].shard_modes=0"
crafted shard_modes_past_four shd "SRCS.source[0].shard_modes=16"
crafted shard_prefix_two_modes shd "SRCS.source[0].shard_rule=3" "SRCS.source[0].shard_modes=3"
crafted shard_index_zero shd "SRCS.source[0].shard_index=0"
crafted shard_index_past_count shd "SRCS.source[0].shard_index=4"
crafted shard_count_zero shd "SRCS.source[0].shard_count=0"
crafted shard_range_past_file shd "SRCS.source[0].end_byte=$(($(get shd 'SRCS.source[0].size_bytes') + 1))"
crafted shard_read_less_than_data shd "SRCS.source[0].read_bytes=$(($(get shd 'SRCS.source[0].raw_bytes') - 1))"
crafted shard_fields_without_rule shd "SRCS.source[0].shard_rule=0"
# (Version 7 holds the shard fields of every source, zeros for one that is
# no shard; a version-6 file is version 7 without the copy prints.)
$PY tests/cli/summary_craft3.py no-prints "$T/shd.sheaf" "$T/shd6.sheaf" ||
    fail decode.version6_setup "summary_craft3.py no-prints failed"
check decode.version6_made "version $(get shd6 version)" [ "$(get shd6 version)" = 6 ]
run $SHEAF info "$T/shd6.sheaf"
check decode.good.version6 "info exit $RC: $(err_text)" [ "$RC" -eq 0 ]
crafted version6_without_shard shd6 "SRCS.source[0].shard_rule=0" "SRCS.source[0].shard_modes=0" \
    "SRCS.source[0].shard_map=0" "SRCS.source[0].shard_index=0" "SRCS.source[0].shard_count=0" \
    "SRCS.source[0].file_id=0" "SRCS.source[0].read_bytes=0"
check decode.version6_without_shard.message "$(err_text)" \
    grep -q 'a version-6 file without a shard' "$T/err"
# The map takes any value (every 2-bit mode is one); the file's identity too.
$CRAFT set "$T/shd.sheaf" "$T/shdmap.sheaf" "SRCS.source[0].shard_map=255" "SRCS.source[0].file_id=1"
run $SHEAF info "$T/shdmap.sheaf"
check decode.shard_any_map "info exit $RC: $(err_text)" [ "$RC" -eq 0 ]
crafted version5_rule_two rep "SCHM.missing_any_case=2"
# Exact pair sums with the target (acc/pairsum.h).
crafted pairs_exact_flag reg "COLS[1].pairs.exact=2"
crafted pairs_inexact_not_zero reg "COLS[1].pairs.exact=0"
crafted pairs_over_numbers reg "COLS[1].pairs.n=1000"
crafted pairs_vs_comoment_pairs reg "COLS[1].pairs.n=$(($(get reg 'COLS[1].pairs.n') - 1))"
crafted pairs_scale reg "COLS[1].pairs.scale_x=5000"
crafted pairs_cauchy_schwarz reg "COLS[1].pairs.sxy[2]=1"
crafted pairs_negative_squares reg "COLS[1].pairs.syy[3]=$((1 << 63))"
crafted pairs_flag_missing reg "COLS[1].has_pairs=0"
crafted bucket_cell_other_class cls "COLS[1].bins.entry[0].cell=$(($(get cls 'COLS[1].bins.entry[0].cell') % 3 + 1))"

# COMO: frames and counts against the columns.
crafted como_frame cls "COMO.frame[1].value=$(get cls 'COLS[1].moments.max')"
crafted como_frame_without_numbers cls "COMO.frame[0].mantissa=1"
crafted como_count cls "COMO.N[1][1]=$(($(get cls 'COMO.N[1][1]') + 1))"
crafted como_asymmetric cls "COMO.N[1][2]=$(($(get cls 'COMO.N[1][2]') - 1))"
crafted como_m2_diagonal cls "COMO.M2[1][1]=1e12" "COMO.C[1][1]=1e12"
crafted como_m2_subset cls "COMO.M2[1][2]=1e6"
crafted como_m2_negative cls "COMO.M2[1][2]=-1"
crafted como_mean_outside cls "COMO.MEAN[1][2]=1e9"
crafted como_cauchy_schwarz cls "COMO.C[1][2]=1e12" "COMO.C[2][1]=1e12"
# (decode audit) A column's co-moment with itself is its M2: -M2 read as
# r(a, a) = -1 and a negative variance.
crafted como_c_diagonal cls "COMO.C[1][1]=-$(get cls 'COMO.M2[1][1]')"
# A pair within the decoder's rounding slack but past Cauchy-Schwarz (r =
# 5000, found by the decode audit) has no r: corr leaves it empty and warns.
$CRAFT set "$T/cls.sheaf" "$T/r5000.sheaf" "COMO.M2[1][2]=1e-6" "COMO.M2[2][1]=1e-6" \
    "COMO.C[1][2]=0.005" "COMO.C[2][1]=0.005" 2>"$T/craft.err"
run $SHEAF corr "$T/r5000.sheaf"
check decode.como_r_past_one_has_no_r "exit $RC: $(tr '\n' '|' <"$T/out" | cut -c1-300) $(err_text)" \
    holds '[ "$RC" = 0 ] && ! grep -q "5000" "$T/out" && grep -q "1 pair has no figure" "$T/err"'
# A regression target's cell keys, every one moved down by 2^52 (still in
# order): a merge put rows in the wrong target cells (every column's mutual
# information changed).  They must begin and end at the keys of min and max.
n=$(get reg 'TRGT.tcells.n')
sets=()
for ((k = 0; k < n; k++)); do sets+=("TRGT.tcells.key[$k]=$(( $(get reg "TRGT.tcells.key[$k]") - 4503599627370496 ))"); done
crafted tcells_keys_shifted reg "${sets[@]}"
# A bucket store whose level was changed: every quantile fell outside the
# column's numbers (6.5e-05 for a median of 0.87).  Its first and last keys
# must be those of min and max.
$PY - "$T/spread.csv" <<'PY'
import random, sys
random.seed(3)
with open(sys.argv[1], "w") as f:
    f.write("x\n")
    for i in range(3000):
        f.write("%.6g\n" % random.lognormvariate(0, 2))
PY
$SHEAF scan -q "$T/spread.csv" --bucket-budget 16 -o "$T/spread.sheaf"
lv=$(get spread 'COLS[0].bins.level')
check decode.bins_level_setup "level $lv" [ "${lv:-0}" -gt 1 ]
for to in 0 $((lv - 1)) $((lv + 1)); do
    $CRAFT set "$T/spread.sheaf" "$T/lv$to.sheaf" "COLS[0].bins.level=$to" 2>"$T/craft.err"
    run $SHEAF info "$T/lv$to.sheaf"
    check "decode.bins_level_$to" "exit $RC: $(err_text)" \
        holds '[ "$RC" = 4 ] && grep -q "damaged summary" "$T/err"'
done

# A file of several targets (format version 4, docs/summary-format.md
# "Several targets"): the list against the parts, the parts against each
# other in everything that does not depend on the target, every part
# checked as a summary of its own.
$SHEAF scan "$D" --target kind,weight -o "$T/sev.sheaf" -q 2>/dev/null &&
    head -n 20 "$D" >"$T/t20.csv" && $SHEAF scan "$T/t20.csv" --target weight -o "$T/w20.sheaf" -q ||
    fail decode.several_setup "scan --target kind,weight failed"
run $SHEAF info "$T/sev.sheaf"
check decode.good.several "info exit $RC: $(err_text)" [ "$RC" -eq 0 ]
# several NAME OP ARGS...: rewrites sev.sheaf (summary_craft.py several) and
# expects rejection naming what broke.
several() {
    local name=$1 want=$2
    shift 2
    if ! $CRAFT several "$T/sev.sheaf" "$T/$name.sheaf" "$@" 2>"$T/craft.err"; then
        fail "decode.$name" "could not craft: $(tr '\n' ' ' <"$T/craft.err")"
        return
    fi
    expect_damaged "$name" "$T/$name.sheaf"
    run $SHEAF info "$T/$name.sheaf"
    grep -qF "$want" "$T/err" || fail "decode.$name.message" "no '$want' in: $(err_text)"
}
several several_target_twice "target 'kind' is listed twice" names kind,kind
several several_list_vs_part "the list names 'size', its summary 'weight'" names kind,size
several several_one_target "1 targets (2 to 1024" names kind
several several_parts_swapped "target 1: the list names 'kind', its summary 'weight'" parts 1,0
several several_part_missing "section 3 PART (target 'weight'): missing" parts 0
several several_sources_differ "its sources differ from target 1's" part-set 1 "SRCS.source[0].mtime=5"
# (Each change is one a part alone could hold: the examples in another
# order, a co-moment within its rounding of the exact pair sums.)
several several_column_differs "column 4 'note' differs from target 1's" \
    part-set 1 "COLS[3].example[1].text=y" "COLS[3].example[2].text=x"
several several_comoments_differ "its co-moments differ from target 1's" \
    part-set 1 "COMO.C[1][2]=-134.83142857" "COMO.C[2][1]=-134.83142857"
several several_part_of_another_table "target 2 'weight': its sources differ" part-from 1 "$T/w20.sheaf"
several several_part_damaged "target 2 'weight': damaged summary" part-set 1 "TRGT.target_text=3"
several several_nested "target 2 'weight': a summary of several targets inside one" part-from 1 "$T/sev.sheaf"
head -c 400 "$T/sev.sheaf" >"$T/several_cut.sheaf"
expect_damaged several_truncated "$T/several_cut.sheaf"

# Bit flips with the checksums recomputed: every reader exits 0 or 4.
flips=${SHEAF_DECODE_FLIPS:-100}
mkdir -p "$T/flips"
$CRAFT flips "$T/cls.sheaf" "$T/flips" "$flips" 12 >"$T/flips.list"
$SHEAF info --format json "$T/cls.sheaf" >"$T/info.ref" 2>/dev/null
rejected=0 accepted=0 changed=0 signals=
while read -r k bit; do
    f=$T/flips/flip-$k.sheaf
    rcs=
    for c in "info --format json" "screen --format json" corr pca; do
        # shellcheck disable=SC2086
        $SHEAF $c "$f" >"$T/flip.out" 2>"$T/flip.err"
        rc=$?
        rcs="$rcs $rc"
        [ "$c" = "info --format json" ] && [ "$rc" -eq 0 ] && ! cmp -s "$T/flip.out" "$T/info.ref" &&
            changed=$((changed + 1))
        if { [ "$rc" -ne 0 ] && [ "$rc" -ne 4 ]; } || grep -q 'Sanitizer\|runtime error' "$T/flip.err"; then
            signals="$signals bit $bit '$c' exit $rc;"
        fi
    done
    case "$rcs" in *4*) rejected=$((rejected + 1)) ;; *) accepted=$((accepted + 1)) ;; esac
done <"$T/flips.list"
echo "bit flips: $flips, rejected $rejected, accepted $accepted, accepted flips that changed info --format json: $changed"
check decode.bit_flips "${signals:-}" [ -z "$signals" ]

