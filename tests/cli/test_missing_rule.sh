#!/usr/bin/env bash
# The missing-value case rule is part of a summary.
#
# Since 2026-12-03 a scan matches its missing-value spellings in any ASCII
# letter case (`na` is missing like `NA`); summaries written before matched
# them byte for byte.  A summary records its rule (format version 5, one
# byte in SCHM); files of versions 1 to 3 read as exact-case.  Checked here,
# with real files written by the earlier build (tests/old/README.md):
#   - a new scan writes version 5 with the rule byte 1;
#   - an old file still reads with its own numbers (the `na` cells stay values);
#   - merging an old and a new summary is refused (exit 5) with a message
#     naming both rules and the rescan, for version 1 and version 3 files;
#   - two old summaries still merge, and the merge stays in the old version;
#   - a version-5 file whose rule byte is 0 or 2 is refused as damaged (exit 4).
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup missingrule python || exit 0
OLD=tests/old
CRAFT=tests/cli/summary_craft.py
version() { od -A n -t u4 -j 8 -N 4 "$1" | tr -d ' '; }

cp "$OLD/lockers.csv" "$T/lockers.csv"
run "$SHEAF" scan "$T/lockers.csv" --target pickup_outcome -o "$T/new3.sheaf" -q
check scan.target "exit $RC: $(err_text)" test "$RC" = 0
run "$SHEAF" scan "$T/lockers.csv" -o "$T/new1.sheaf" -q
check scan.plain "exit $RC: $(err_text)" test "$RC" = 0
check new.version "version $(version "$T/new3.sheaf"), want 7" test "$(version "$T/new3.sheaf")" = 7
check new.version_no_target "version $(version "$T/new1.sheaf"), want 7" \
    test "$(version "$T/new1.sheaf")" = 7
rule=$("$PY" "$CRAFT" get "$T/new3.sheaf" SCHM.missing_any_case 2>&1)
check new.rule_byte "SCHM.missing_any_case is '$rule', want 1" test "$rule" = 1

# Missing counts of bay_temp_c (8 rows): the new rule reads na, N/A, NULL as
# missing (3); the old files counted N/A and NULL only (2), `na` a value.
# Counted by hand from lockers.csv.
missing_of() { # FILE COLUMN
    "$SHEAF" info "$1" --json 2>/dev/null | "$PY" -c '
import json, sys
for c in json.load(sys.stdin)["columns"]:
    if c["name"] == sys.argv[1]: print(c["missing"])' "$2"
}
m=$(missing_of "$T/new3.sheaf" bay_temp_c)
check new.missing "bay_temp_c missing '$m', want 3" test "$m" = 3
for v in 1 3; do
    f=$OLD/v$v-exact-case.sheaf
    check old$v.version "version $(version "$f"), want $v" test "$(version "$f")" = $v
    m=$(missing_of "$f" bay_temp_c)
    check old$v.reads "bay_temp_c missing '$m', want 2 (the old rule's count)" test "$m" = 2
    m=$(missing_of "$f" courier_note)
    check old$v.reads_text "courier_note missing '$m', want 1" test "$m" = 1
done

# Old and new: refused, both ways, naming the rules and the rescan.
for pair in "v3-exact-case.sheaf new3.sheaf" "v1-exact-case.sheaf new1.sheaf"; do
    set -- $pair
    cp "$OLD/$1" "$T/$1"
    for order in "$T/$1 $T/$2" "$T/$2 $T/$1"; do
        run "$SHEAF" merge $order -o "$T/m.sheaf" --allow-duplicates
        name=merge.refused.${1%%-*}.$( [ "${order%% *}" = "$T/$1" ] && echo old_first || echo new_first)
        check "$name.exit" "exit $RC, want 5: $(err_text)" test "$RC" = 5
        check "$name.message" "$(err_text)" grep -q 'exact case.*any letter case\|any letter case.*exact case' "$T/err"
        check "$name.rescan" "$(err_text)" grep -q 'rescan' "$T/err"
        check "$name.no_output" "m.sheaf written" test ! -e "$T/m.sheaf"
    done
done

# Two old summaries merge, in the old version.
run "$SHEAF" merge "$OLD/v3-exact-case.sheaf" "$OLD/v3-exact-case.sheaf" -o "$T/old2.sheaf" \
    --allow-duplicates
check merge.old_old "exit $RC: $(err_text)" test "$RC" = 0
check merge.old_old_version "version $(version "$T/old2.sheaf"), want 3" \
    test "$(version "$T/old2.sheaf")" = 3
m=$(missing_of "$T/old2.sheaf" bay_temp_c)
check merge.old_old_missing "bay_temp_c missing '$m', want 4" test "$m" = 4

# A file of version 5 or later must say its rule is any-case: 0 and 2 are damage.
for b in 0 2; do
    "$PY" "$CRAFT" set "$T/new3.sheaf" "$T/rule$b.sheaf" SCHM.missing_any_case=$b
    run "$SHEAF" info "$T/rule$b.sheaf"
    check "decode.rule$b.exit" "exit $RC, want 4: $(err_text)" test "$RC" = 4
    check "decode.rule$b.message" "$(err_text)" grep -q 'damaged summary (section 1 SCHM' "$T/err"
done
exit 0
