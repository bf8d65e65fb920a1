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

# all 'CMD' 'CMD'...: every command (a shell string each) succeeds.
all() {
    local c
    for c in "$@"; do eval "$c" || return 1; done
}

# cmp.py A B TARGET: the info JSON of target TARGET of A and of B without
# "sources", numbers to 1e-12 (refcheck.tree_differences); prints the first
# differences, nothing when equal.
cat >"$T/cmp.py" <<'EOF'
import json, os, subprocess, sys
sys.path.insert(0, "tests")
from refcheck import tree_differences

def info(p, t):
    r = subprocess.run([os.environ.get("SHEAF_BIN", "./sheaf"), "info", "--format", "json", "--top-values", "1000",
                        "--target", t, p], stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    if r.returncode:
        sys.exit("info %s exit %d: %s" % (p, r.returncode, r.stderr.decode().strip()))
    d = json.loads(r.stdout)
    d.pop("sources")
    return d

d = tree_differences(info(sys.argv[1], sys.argv[3]), info(sys.argv[2], sys.argv[3]), 1e-12)
print("; ".join(d[:4]))
EOF

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
    local ds=$1 csv=$2 a=$3 b=$4 j ok
    cp "$csv" "$T/$ds.csv" && touch -d @1700000000 "$T/$ds.csv"
    csv=$T/$ds.csv
    for j in 1 2 3; do
        $SHEAF scan -q -j$j "$csv" --target "$a,$b" -o "$T/$ds.j$j.sheaf" ||
            { fail "targets_${ds}_scan" "scan --target $a,$b -j$j failed"; return; }
    done
    $SHEAF scan -q -j1 "$csv" --target "$a" -o "$T/$ds.a.sheaf" &&
        $SHEAF scan -q -j1 "$csv" --target "$b" -o "$T/$ds.b.sheaf" ||
        { fail "targets_${ds}_scan" "single-target scans failed"; return; }
    check "targets_${ds}_same_file_for_j1_j2_j3" "$(first_diff "$T/$ds.j1.sheaf" "$T/$ds.j3.sheaf")" \
        all 'cmp -s "$T/$ds.j1.sheaf" "$T/$ds.j2.sheaf"' 'cmp -s "$T/$ds.j1.sheaf" "$T/$ds.j3.sheaf"' 
    parts "$T/$ds.j2.sheaf"
    check "targets_${ds}_part_${a}_is_the_scan_with_${a}_alone" \
        "$(first_diff "$T/$ds.j2.sheaf.part0" "$T/$ds.a.sheaf")" \
        cmp -s "$T/$ds.j2.sheaf.part0" "$T/$ds.a.sheaf"
    check "targets_${ds}_part_${b}_is_the_scan_with_${b}_alone" \
        "$(first_diff "$T/$ds.j2.sheaf.part1" "$T/$ds.b.sheaf")" \
        cmp -s "$T/$ds.j2.sheaf.part1" "$T/$ds.b.sheaf"
    for t in a b; do
        local tgt=$a
        [ $t = b ] && tgt=$b
        $SHEAF screen "$T/$ds.j1.sheaf" --target "$tgt" --format json >"$T/$ds.m$t.json" 2>"$T/err"
        $SHEAF screen "$T/$ds.$t.sheaf" --format json >"$T/$ds.s$t.json"
        check "targets_${ds}_screen_${tgt}_equals_the_single_target_screen" \
            "$(first_diff "$T/$ds.m$t.json" "$T/$ds.s$t.json") $(err_text)" \
            cmp -s "$T/$ds.m$t.json" "$T/$ds.s$t.json"
    done
    # Three shards merged: each part is the merge of the single-target
    # shards, byte for byte, and the whole file's summary to 1e-12 apart
    # from the sources (merged moments round differently from one scan's,
    # as in tests/cli/test_merge_shard.sh).
    ok=1
    for i in 1 2 3; do
        $SHEAF scan -q "$csv" --shard $i/3 --target "$a,$b" -o "$T/$ds.s$i.sheaf" &&
            $SHEAF scan -q "$csv" --shard $i/3 --target "$a" -o "$T/$ds.a$i.sheaf" &&
            $SHEAF scan -q "$csv" --shard $i/3 --target "$b" -o "$T/$ds.b$i.sheaf" || ok=0
    done
    $SHEAF merge "$T/$ds.s1.sheaf" "$T/$ds.s2.sheaf" "$T/$ds.s3.sheaf" -o "$T/$ds.merged.sheaf" &&
        $SHEAF merge "$T/$ds.a1.sheaf" "$T/$ds.a2.sheaf" "$T/$ds.a3.sheaf" -o "$T/$ds.amerged.sheaf" &&
        $SHEAF merge "$T/$ds.b1.sheaf" "$T/$ds.b2.sheaf" "$T/$ds.b3.sheaf" -o "$T/$ds.bmerged.sheaf" || ok=0
    [ $ok = 1 ] && parts "$T/$ds.merged.sheaf"
    check "targets_${ds}_three_shards_merge_part_by_part" \
        "$(first_diff "$T/$ds.merged.sheaf.part0" "$T/$ds.amerged.sheaf") $(first_diff "$T/$ds.merged.sheaf.part1" "$T/$ds.bmerged.sheaf")" \
        all 'test $ok = 1' 'cmp -s "$T/$ds.merged.sheaf.part0" "$T/$ds.amerged.sheaf"' \
        'cmp -s "$T/$ds.merged.sheaf.part1" "$T/$ds.bmerged.sheaf"'
    for t in "$a" "$b"; do
        why=$("$PY" "$T/cmp.py" "$T/$ds.merged.sheaf" "$T/$ds.j1.sheaf" "$t" 2>&1)
        check "targets_${ds}_three_shards_merge_to_the_whole_${t}" "${why:0:400}" test -z "$why"
    done
    # Another target set, or the same in another order: incompatible.
    $SHEAF scan -q "$csv" --target "$b,$a" -o "$T/$ds.ba.sheaf"
    run $SHEAF merge --allow-duplicates "$T/$ds.j1.sheaf" "$T/$ds.ba.sheaf" -o "$T/$ds.bad.sheaf"
    check "targets_${ds}_merge_of_other_targets_exits_5" "exit $RC: $(err_text)" \
        all 'test $RC = 5 -a "$(wc -l <"$T/err")" = 1 -a ! -e "$T/$ds.bad.sheaf"' \
        'grep -q "$ds.j1.sheaf and .*$ds.ba.sheaf cannot be merged: targets $a, $b vs $b, $a" "$T/err"' 
    run $SHEAF merge --allow-duplicates "$T/$ds.j1.sheaf" "$T/$ds.a.sheaf" -o "$T/$ds.bad.sheaf"
    check "targets_${ds}_merge_with_a_single_target_summary_exits_5" "exit $RC: $(err_text)" \
        all 'test $RC = 5' 'grep -q "targets $a, $b vs $a " "$T/err"' 
    # Without --target: a usage error naming the targets.
    run $SHEAF screen "$T/$ds.j1.sheaf"
    check "targets_${ds}_screen_without_target_exits_2_naming_them" "exit $RC: $(err_text)" \
        all 'test $RC = 2 -a "$(wc -l <"$T/err")" = 1' \
        'grep -q "holds 2 targets ($a, $b): choose one with --target" "$T/err"' 
}

one_dataset penguins "$OPEN/penguins.csv" species body_mass_g
one_dataset tips "$OPEN/tips.csv" day tip

P=$T/penguins.csv
run $SHEAF scan -q "$P" --target species,sex,species -o "$T/x.sheaf"
check targets_named_twice_exits_2 "exit $RC: $(err_text)" \
    all 'test $RC = 2 -a ! -e "$T/x.sheaf"' 'grep -q "'"'species' is named twice"'" "$T/err"' 
run $SHEAF scan -q "$P" --target species,wingspan -o "$T/x.sheaf"
check targets_not_a_column_exits_2 "exit $RC: $(err_text)" \
    all 'test $RC = 2 -a ! -e "$T/x.sheaf"' 'grep -q "no column named '"'wingspan'"'" "$T/err"' 
run $SHEAF scan -q "$P" --target species, -o "$T/x.sheaf"
check targets_empty_name_exits_2 "exit $RC: $(err_text)" all 'test $RC = 2' 'grep -q "an empty name" "$T/err"' 
run $SHEAF scan -q "$P" --target island,body_mass_g --task regress -o "$T/x.sheaf"
check targets_regress_on_a_text_target_exits_2 "exit $RC: $(err_text)" \
    all 'test $RC = 2 -a ! -e "$T/x.sheaf"' 'grep -q "'"'island' is text"'" "$T/err"' 

# A header name with commas is one target when the value is that whole name.
printf 'x,"a,b",a,b\n1,u,2,3\n2,v,3,4\n3,u,5,1\n4,v,1,2\n' >"$T/comma.csv"
$SHEAF scan -q "$T/comma.csv" --target a,b -o "$T/comma1.sheaf" &&
    $SHEAF info --format json "$T/comma1.sheaf" >"$T/out"
check targets_a_header_name_with_a_comma_is_one_target "$(head -c 200 "$T/out")" \
    grep -q '"targets": \[ *"a,b" *\]' <(tr -d '\n' <"$T/out")
$SHEAF scan -q "$T/comma.csv" --target a,x -o "$T/comma2.sheaf" && $SHEAF info --format json "$T/comma2.sheaf" >"$T/out"
check targets_otherwise_split_at_commas "$(head -c 200 "$T/out")" \
    grep -q '"targets": \[ *"a", *"x" *\]' <(tr -d '\n' <"$T/out")

# info lists the targets and describes the first, or the one chosen.
M=$T/penguins.j1.sheaf
run $SHEAF info "$M"
check targets_info_lists_them "exit $RC: $(head -c 300 "$T/out")" \
    all 'test $RC = 0' 'grep -q "^targets: species, body_mass_g (2; shown: species" "$T/out"' \
    'grep -q "^target: species" "$T/out"' 
run $SHEAF info "$M" --target body_mass_g --format json
JSON_CHECK='import json,sys; d=json.load(open(sys.argv[1])); assert d["format_version"] == 4 and d["targets"] == ["species", "body_mass_g"] and d["target"]["name"] == "body_mass_g", d["targets"]'
check targets_info_json_chooses "exit $RC" all 'test $RC = 0' '"$PY" -c "$JSON_CHECK" "$T/out"'
run $SHEAF info "$M" --target island
check targets_info_other_target_exits_2 "exit $RC: $(err_text)" \
    all 'test $RC = 2' 'grep -q "not one of its targets (species, body_mass_g)" "$T/err"' 
# screen --target on a column that is not one of the targets: the F test of r
# from the co-moments, as on a summary scanned without a target.
$SHEAF scan -q "$P" -o "$T/plain.sheaf"
$SHEAF screen "$T/plain.sheaf" --target flipper_length_mm -f json >"$T/a.json"
$SHEAF screen "$M" --target flipper_length_mm -f json >"$T/b.json"
check targets_screen_other_column_is_the_retarget "$(first_diff "$T/a.json" "$T/b.json")" \
    all 'test -s "$T/b.json"' 'cmp -s "$T/a.json" "$T/b.json"' 
# pca, corr and trim --summary.
run $SHEAF pca "$M"
check targets_pca_without_target_exits_2 "exit $RC: $(err_text)" \
    all 'test $RC = 2' 'grep -q "choose one with --target" "$T/err"' 
$SHEAF pca "$M" --target body_mass_g -f json >"$T/a.json"
$SHEAF pca "$T/penguins.b.sheaf" -f json >"$T/b.json"
check targets_pca_chooses "$(first_diff "$T/a.json" "$T/b.json")" \
    all 'test -s "$T/a.json"' 'cmp -s "$T/a.json" "$T/b.json"' 
$SHEAF corr "$M" -f csv >"$T/a.csv"
$SHEAF corr "$T/penguins.a.sheaf" -f csv >"$T/b.csv"
check targets_corr_needs_no_choice "$(first_diff "$T/a.csv" "$T/b.csv")" \
    all 'test -s "$T/a.csv"' 'cmp -s "$T/a.csv" "$T/b.csv"' 
$SHEAF trim "$P" --summary "$M" --target species -o "$T/a.trim.csv" 2>/dev/null
$SHEAF trim "$P" --summary "$T/penguins.a.sheaf" -o "$T/b.trim.csv" 2>/dev/null
check targets_trim_from_chooses "$(first_diff "$T/a.trim.csv" "$T/b.trim.csv")" \
    all 'test -s "$T/a.trim.csv"' 'cmp -s "$T/a.trim.csv" "$T/b.trim.csv"' 
run $SHEAF trim "$P" --summary "$M" -o "$T/c.trim.csv"
check targets_trim_without_target_exits_2 "exit $RC: $(err_text)" test $RC = 2 -a ! -e "$T/c.trim.csv"
