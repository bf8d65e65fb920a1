#!/usr/bin/env bash
# scan --target A,B,..: several targets in one pass, a file that holds them
# all, the reading commands choosing one with --target, and merge.
#
# The reference is sheaf's own single-target scan (whose statistics the
# reference suites hold against scipy and pandas): on the open datasets
# penguins and tips (shared/data/open), every target's part of the file is
# the summary `scan --target X` writes, byte for byte, and `screen --target
# X` on the file prints what screen prints on that summary.  Also: the file
# is the same for -j1, -j2 and -j3; three shards merged equal the whole;
# merge refuses another target set (exit 5); screen without --target, a
# target named twice and a target that is no column are usage errors (exit 2).
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup targets python || exit 0
OPEN=""
for d in ../shared/data/open /work/shared/data/open; do [ -s "$d/penguins.csv" ] && OPEN=$d && break; done
[ -n "$OPEN" ] || { skip targets "no open datasets (shared/data/open)"; exit 0; }

# parts FILE: writes FILE.part0, FILE.part1 .. (the PART payloads of a file of
# several targets, docs/summary-format.md "Several targets").
parts() {
    "$PY" - "$1" <<'PY'
import struct, sys
d = open(sys.argv[1], 'rb').read()
assert d[:8] == b'\x89SHF\r\n\x1a\n' and struct.unpack('<I', d[8:12])[0] == 4
pos, k = 12, 0
while d[pos:pos + 4] != b'END.':
    n = struct.unpack('<Q', d[pos + 4:pos + 12])[0]
    if d[pos:pos + 4] == b'PART':
        open('%s.part%d' % (sys.argv[1], k), 'wb').write(d[pos + 12:pos + 12 + n])
        k += 1
    pos += 12 + n + 8
PY
}

one_dataset() { # NAME CSV A B
    local name=$1 csv=$2 a=$3 b=$4 j ok
    cp "$csv" "$T/$name.csv" && touch -d @1700000000 "$T/$name.csv"
    csv=$T/$name.csv
    for j in 1 2 3; do
        $SHEAF scan -q -j$j "$csv" --target "$a,$b" -o "$T/$name.j$j.sheaf" ||
            { fail "targets_${name}_scan" "scan --target $a,$b -j$j failed"; return; }
    done
    $SHEAF scan -q -j1 "$csv" --target "$a" -o "$T/$name.a.sheaf" &&
        $SHEAF scan -q -j1 "$csv" --target "$b" -o "$T/$name.b.sheaf" ||
        { fail "targets_${name}_scan" "single-target scans failed"; return; }
    check "targets_${name}_same_file_for_j1_j2_j3" "$(first_diff "$T/$name.j1.sheaf" "$T/$name.j3.sheaf")" \
        cmp -s "$T/$name.j1.sheaf" "$T/$name.j2.sheaf" && cmp -s "$T/$name.j1.sheaf" "$T/$name.j3.sheaf"
    parts "$T/$name.j2.sheaf"
    check "targets_${name}_part_${a}_is_the_scan_with_${a}_alone" \
        "$(first_diff "$T/$name.j2.sheaf.part0" "$T/$name.a.sheaf")" \
        cmp -s "$T/$name.j2.sheaf.part0" "$T/$name.a.sheaf"
    check "targets_${name}_part_${b}_is_the_scan_with_${b}_alone" \
        "$(first_diff "$T/$name.j2.sheaf.part1" "$T/$name.b.sheaf")" \
        cmp -s "$T/$name.j2.sheaf.part1" "$T/$name.b.sheaf"
    for t in a b; do
        local tgt=$a
        [ $t = b ] && tgt=$b
        $SHEAF screen "$T/$name.j1.sheaf" --target "$tgt" --format json >"$T/$name.m$t.json" 2>"$T/err"
        $SHEAF screen "$T/$name.$t.sheaf" --format json >"$T/$name.s$t.json"
        check "targets_${name}_screen_${tgt}_equals_the_single_target_screen" \
            "$(first_diff "$T/$name.m$t.json" "$T/$name.s$t.json") $(err_text)" \
            cmp -s "$T/$name.m$t.json" "$T/$name.s$t.json"
    done
    # Three shards merged: the whole file's bytes.
    ok=1
    for i in 1 2 3; do
        $SHEAF scan -q "$csv" --shard $i/3 --target "$a,$b" -o "$T/$name.s$i.sheaf" || ok=0
    done
    $SHEAF merge "$T/$name.s1.sheaf" "$T/$name.s2.sheaf" "$T/$name.s3.sheaf" -o "$T/$name.merged.sheaf" || ok=0
    check "targets_${name}_three_shards_merge_to_the_whole" \
        "$(first_diff "$T/$name.merged.sheaf" "$T/$name.j1.sheaf")" \
        test $ok = 1 -a -s "$T/$name.merged.sheaf" && cmp -s "$T/$name.merged.sheaf" "$T/$name.j1.sheaf"
    # Another target set, or the same in another order: incompatible.
    $SHEAF scan -q "$csv" --target "$b,$a" -o "$T/$name.ba.sheaf"
    run $SHEAF merge "$T/$name.j1.sheaf" "$T/$name.ba.sheaf" -o "$T/$name.bad.sheaf"
    check "targets_${name}_merge_of_other_targets_exits_5" "exit $RC: $(err_text)" \
        test $RC = 5 -a "$(wc -l <"$T/err")" = 1 -a ! -e "$T/$name.bad.sheaf" &&
        grep -q "$name.j1.sheaf and .*$name.ba.sheaf cannot be merged: targets $a, $b vs $b, $a" "$T/err"
    run $SHEAF merge "$T/$name.j1.sheaf" "$T/$name.a.sheaf" -o "$T/$name.bad.sheaf"
    check "targets_${name}_merge_with_a_single_target_summary_exits_5" "exit $RC: $(err_text)" \
        test $RC = 5 && grep -q "targets $a, $b vs $a" "$T/err"
    # Without --target: a usage error naming the targets.
    run $SHEAF screen "$T/$name.j1.sheaf"
    check "targets_${name}_screen_without_target_exits_2_naming_them" "exit $RC: $(err_text)" \
        test $RC = 2 -a "$(wc -l <"$T/err")" = 1 && grep -q "holds 2 targets ($a, $b): choose one with --target" "$T/err"
}

one_dataset penguins "$OPEN/penguins.csv" species body_mass_g
one_dataset tips "$OPEN/tips.csv" day tip

P=$T/penguins.csv
run $SHEAF scan -q "$P" --target species,sex,species -o "$T/x.sheaf"
check targets_named_twice_exits_2 "exit $RC: $(err_text)" \
    test $RC = 2 -a ! -e "$T/x.sheaf" && grep -q "'species' is named twice" "$T/err"
run $SHEAF scan -q "$P" --target species,wingspan -o "$T/x.sheaf"
check targets_not_a_column_exits_2 "exit $RC: $(err_text)" \
    test $RC = 2 -a ! -e "$T/x.sheaf" && grep -q "no column named 'wingspan'" "$T/err"
run $SHEAF scan -q "$P" --target species, -o "$T/x.sheaf"
check targets_empty_name_exits_2 "exit $RC: $(err_text)" test $RC = 2 && grep -q "an empty name" "$T/err"
run $SHEAF scan -q "$P" --target island,body_mass_g --task regress -o "$T/x.sheaf"
check targets_regress_on_a_text_target_exits_2 "exit $RC: $(err_text)" \
    test $RC = 2 -a ! -e "$T/x.sheaf" && grep -q "island" "$T/err"

# A header name with commas is one target when the value is that whole name.
printf 'x,"a,b",a,b\n1,u,2,3\n2,v,3,4\n3,u,5,1\n4,v,1,2\n' >"$T/comma.csv"
$SHEAF scan -q "$T/comma.csv" --target a,b -o "$T/comma1.sheaf" &&
    $SHEAF info --json "$T/comma1.sheaf" >"$T/out"
check targets_a_header_name_with_a_comma_is_one_target "$(head -c 200 "$T/out")" \
    grep -q '"targets": \[ *"a,b" *\]' <(tr -d '\n' <"$T/out")
$SHEAF scan -q "$T/comma.csv" --target a,x -o "$T/comma2.sheaf" && $SHEAF info --json "$T/comma2.sheaf" >"$T/out"
check targets_otherwise_split_at_commas "$(head -c 200 "$T/out")" \
    grep -q '"targets": \[ *"a", *"x" *\]' <(tr -d '\n' <"$T/out")

# info lists the targets and describes the first, or the one chosen.
M=$T/penguins.j1.sheaf
run $SHEAF info "$M"
check targets_info_lists_them "exit $RC: $(head -c 300 "$T/out")" \
    test $RC = 0 && grep -q "^targets: 2, species, body_mass_g (shown: species" "$T/out" &&
    grep -q "^target: species" "$T/out"
run $SHEAF info "$M" --target body_mass_g --json
check targets_info_json_chooses "exit $RC" test $RC = 0 &&
    "$PY" -c 'import json,sys; d=json.load(open(sys.argv[1])); assert d["format_version"] == 4 and d["targets"] == ["species", "body_mass_g"] and d["target"]["name"] == "body_mass_g", d["targets"]' "$T/out"
run $SHEAF info "$M" --target island
check targets_info_other_target_exits_2 "exit $RC: $(err_text)" \
    test $RC = 2 && grep -q "not one of its targets (species, body_mass_g)" "$T/err"
# screen --target on a column that is not one of the targets: the F test of r
# from the co-moments, as on a summary scanned without a target.
$SHEAF scan -q "$P" -o "$T/plain.sheaf"
$SHEAF screen "$T/plain.sheaf" --target flipper_length_mm -f json >"$T/a.json"
$SHEAF screen "$M" --target flipper_length_mm -f json >"$T/b.json"
check targets_screen_other_column_is_the_retarget "$(first_diff "$T/a.json" "$T/b.json")" \
    cmp -s "$T/a.json" "$T/b.json"
# pca, corr and trim --from.
run $SHEAF pca "$M"
check targets_pca_without_target_exits_2 "exit $RC: $(err_text)" \
    test $RC = 2 && grep -q "choose one with --target" "$T/err"
$SHEAF pca "$M" --target body_mass_g -f json >"$T/a.json"
$SHEAF pca "$T/penguins.b.sheaf" -f json >"$T/b.json"
check targets_pca_chooses "$(first_diff "$T/a.json" "$T/b.json")" cmp -s "$T/a.json" "$T/b.json"
$SHEAF corr "$M" -f csv >"$T/a.csv"
$SHEAF corr "$T/penguins.a.sheaf" -f csv >"$T/b.csv"
check targets_corr_needs_no_choice "$(first_diff "$T/a.csv" "$T/b.csv")" cmp -s "$T/a.csv" "$T/b.csv"
$SHEAF trim "$P" --from "$M" --target species -o "$T/a.trim.csv" 2>/dev/null
$SHEAF trim "$P" --from "$T/penguins.a.sheaf" -o "$T/b.trim.csv" 2>/dev/null
check targets_trim_from_chooses "$(first_diff "$T/a.trim.csv" "$T/b.trim.csv")" \
    test -s "$T/a.trim.csv" && cmp -s "$T/a.trim.csv" "$T/b.trim.csv"
run $SHEAF trim "$P" --from "$M" -o "$T/c.trim.csv"
check targets_trim_without_target_exits_2 "exit $RC: $(err_text)" test $RC = 2 -a ! -e "$T/c.trim.csv"
