#!/bin/bash
# Reading the files users have, and saying what was read: space-delimited
# files (two statsmodels datasets from Debian's python3-statsmodels), the
# one-column warning, --delim words, missing spellings in any letter case,
# the warnings at the end of a scan (an unlisted token among numbers, ragged
# rows, mixed columns), merge naming its schema differences, and the closing
# line on a terminal.
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup reading python || exit 0

SM=/usr/lib/python3/dist-packages/statsmodels/datasets
SPECTOR=$SM/spector/spector.csv
E6=$SM/interest_inflation/E6_jmulti.csv

# --- space-delimited files -----------------------------------------------------

# moments_match SUMMARY PYTHON_EXPR_FOR_FRAME: every numeric column's count,
# mean and sample sd against pandas on the frame (columns in file order).
moments_match() {
    "$SHEAF" info --format json "$1" >"$T/info.json" || return 1
    "$PY" - "$T/info.json" "$2" <<'EOF'
import json, sys
import pandas as pd
info = json.load(open(sys.argv[1]))
frame = eval(sys.argv[2])
cols = info["columns"]
if len(cols) != frame.shape[1]:
    sys.exit("columns: sheaf %d, pandas %d" % (len(cols), frame.shape[1]))
for c, (name, ref) in zip(cols, frame.items()):
    for key, want in (("n", len(ref)), ("mean", ref.mean()), ("sd", ref.std())):
        got = c[key]
        if abs(got - want) > 1e-12 * max(1.0, abs(want)):
            sys.exit("%s %s: sheaf %r, pandas %r" % (c["name"], key, got, want))
EOF
}

if [ -r "$SPECTOR" ] && [ -r "$E6" ]; then
    run "$SHEAF" scan "$SPECTOR" -o "$T/spector.sheaf"
    check spector_space_detected "rc $RC: $(err_text)" holds '[ "$RC" = 0 ] && [ ! -s "$T/err" ]'
    # reference: pandas.read_csv(sep=' '), as statsmodels' loader reads it (sep=r'\s')
    check spector_moments_match_pandas "differs" moments_match "$T/spector.sheaf" \
        "pd.read_csv('$SPECTOR', sep=' ')"
    "$SHEAF" info --format json "$T/spector.sheaf" >"$T/sp.json"
    check spector_names_keep_their_single_quotes "names differ from pandas'" \
        "$PY" -c "import json,sys,pandas as pd; n=[c['name'] for c in json.load(open('$T/sp.json'))['columns']]; sys.exit(n != list(pd.read_csv('$SPECTOR', sep=' ').columns) or n[0] != \"'OBS'\")"
    run "$SHEAF" scan --no-header "$E6" -o "$T/e6.sheaf"
    check e6_jmulti_space_detected "rc $RC: $(err_text)" holds '[ "$RC" = 0 ] && [ ! -s "$T/err" ]'
    # reference: pandas.read_csv(sep=' ', header=None)
    check e6_jmulti_moments_match_pandas "differs" moments_match "$T/e6.sheaf" \
        "pd.read_csv('$E6', sep=' ', header=None)"
    run "$SHEAF" scan --no-header --delim space "$E6" -o "$T/e6w.sheaf"
    check delim_space_word_gives_the_detected_summary "rc $RC" cmp -s "$T/e6.sheaf" "$T/e6w.sheaf"
else
    skip spector_and_e6_jmulti "python3-statsmodels datasets not installed"
fi

# A run of spaces is several delimiters: "1  2" is 1, an empty (missing) field, 2.
printf 'a b c\n1  2\n3 4 5\n' >"$T/runs.txt"
run "$SHEAF" scan --delim space "$T/runs.txt" -o "$T/runs.sheaf"
"$SHEAF" info --format json "$T/runs.sheaf" >"$T/runs.json" 2>/dev/null
check run_of_spaces_is_an_empty_field "$(head -c 300 "$T/runs.json")" \
    "$PY" -c "import json,sys; c=json.load(open('$T/runs.json'))['columns']; sys.exit([(x['n'],x['missing']) for x in c] != [(2,0),(1,1),(2,0)])"
# An aligned file (runs of spaces of different lengths) is not detected as
# space-delimited: one column, and the warning says so.
printf 'fan_rpm  temp\n1200     41.5\n980      39\n' >"$T/aligned.txt"
run "$SHEAF" scan "$T/aligned.txt" -o "$T/aligned.sheaf"
check one_column_warns "rc $RC: $(err_text)" grep -q "warning: .*aligned.txt: one column only" "$T/err"
run "$SHEAF" scan -q "$T/aligned.txt" -o "$T/aligned.sheaf"
check one_column_warns_even_when_quiet "$(err_text)" grep -q "one column only" "$T/err"

printf 'a\tb\n1\t2\n' >"$T/tab.txt"
for cmd in scan trim project; do
    case $cmd in
    scan) args=("$T/tab.txt" -o "$T/w.sheaf") ;;
    trim) args=("$T/tab.txt" --summary "$T/w.sheaf" -o "$T/w.csv") ;;
    project) args=("$T/tab.txt" --summary "$T/w.sheaf" -o "$T/w.csv") ;;
    esac
    run "$SHEAF" "$cmd" --delim blank "${args[@]}"
    check "delim_word_refused_${cmd}" "rc $RC: $(err_text)" \
        grep -q "'tab' or 'space'" "$T/err"
done
run "$SHEAF" scan --delim tab "$T/tab.txt" -o "$T/tab.sheaf"
check delim_tab_word "rc $RC: $(err_text)" [ "$RC" = 0 ]

# --- missing spellings in any letter case ----------------------------------------

# reference: counted by hand from the rows written here (a one-column file
# would also get the one-column warning, hence the second column)
printf 'reading,unit\n1,V\nna,V\nN/a,V\nNULL,V\nnone,V\nNone,V\nnull,V\n2,V\nnA,V\n"NA ",V\n' >"$T/case.csv"
run "$SHEAF" scan "$T/case.csv" -o "$T/case.sheaf"
"$SHEAF" info --format json "$T/case.sheaf" >"$T/case.json" 2>/dev/null
check missing_spellings_any_case "$(err_text)" "$PY" -c "
import json, sys
c = json.load(open('$T/case.json'))['columns'][0]
sys.exit(not (c['missing'] == 7 and c['n'] == 2 and c['non_numeric'] == 1))"
printf 'reading,unit\n1,V\nERR,V\nerr,V\n2,V\n' >"$T/case2.csv"
run "$SHEAF" scan "$T/case2.csv" --missing ERR -o "$T/case2.sheaf"
"$SHEAF" info --format json "$T/case2.sheaf" >"$T/case2.json" 2>/dev/null
check missing_option_spellings_any_case "$(err_text)" "$PY" -c "
import json, sys
c = json.load(open('$T/case2.json'))['columns'][0]
sys.exit(not (c['missing'] == 2 and c['n'] == 2))"

# --- what the scan says at its end ----------------------------------------------

# fan_rpm: 190 numbers and 10 'ERR' (5%); cycles: numbers and two words;
# two ragged rows at lines 202 and 203 (the header is line 1).
"$PY" - "$T/tok.csv" <<'EOF2'
import sys
with open(sys.argv[1], "w") as f:
    f.write("fan_rpm,temp_c,cycles\n")
    for i in range(200):
        cyc = ("idle", "stall")[i % 2] if i % 3 == 0 else str(i)
        f.write("%s,%d,%s\n" % ("ERR" if i % 20 == 0 else str(1000 + i), 20 + i % 7, cyc))
    f.write("1,2\n1,2,3,4\n")
EOF2
run "$SHEAF" scan "$T/tok.csv" -o "$T/tok.sheaf"
check token_warning_names_column_token_count \
    "rc $RC: $(err_text)" grep -q "^sheaf scan: warning: column 'fan_rpm': 10 of its 202 present cells (5.0%) are 'ERR' .*--missing 'NA,N/A,null,NULL,None,-,?,ERR'$" "$T/err"
check mixed_column_reported "$(err_text)" \
    grep -q "^sheaf scan: column 'cycles' holds 134 numbers and 67 text cells (e.g. 'idle', 'stall'); read as categorical$" "$T/err"
check mixed_note_not_for_the_token_column "$(err_text)" \
    test "$(grep -c "'fan_rpm'" "$T/err")" = 1
check ragged_rows_reported "$(err_text)" \
    grep -q "^sheaf scan: ragged rows: 1 with too few fields .*, 1 with too many .*first at lines 202, 203" "$T/err"
check each_note_one_line "$(err_text)" test "$(wc -l <"$T/err")" = 3
# The suggested list reads the token as missing: the column becomes numeric.
run "$SHEAF" scan "$T/tok.csv" --missing 'NA,N/A,null,NULL,None,-,?,ERR' -o "$T/tok2.sheaf"
check token_warning_gone_with_suggested_missing "$(err_text)" bash -c "! grep -q fan_rpm '$T/err'"
run "$SHEAF" scan -q "$T/tok.csv" -o "$T/tok.sheaf"
check quiet_keeps_the_token_warning_only "$(err_text)" \
    bash -c "[ \$(wc -l <'$T/err') = 1 ] && grep -q 'warning: column .fan_rpm.' '$T/err'"
# The advice can be followed as written, whatever the token holds: a comma
# (commas separate the spellings; '1\,5' names it), a quote, a backslash, a
# trailing space.  The list is taken from the warning and given to a shell
# (a comma token once could not be named: following the advice made the
# cells 1 and 5 missing and left '1,5' as text).
i=0
for tok in '1,5' "it's" 'a\b' 'n/a ' '*?'; do
    i=$((i + 1))
    "$PY" - "$T/adv$i.csv" "$tok" <<'EOF2'
import csv, sys
with open(sys.argv[1], "w", newline="") as f:
    w = csv.writer(f, lineterminator="\n")
    w.writerow(["x", "a"])
    for k in range(200):
        w.writerow([sys.argv[2] if k % 10 == 0 else str(k % 9), str(k % 7)])
EOF2
    run "$SHEAF" scan "$T/adv$i.csv" -o "$T/adv$i.sheaf"
    list=$(sed -n "s/^sheaf scan: warning: column 'x'.*scan again with --missing //p" "$T/err")
    if [ -z "$list" ]; then
        fail "token_advice_followed_$i" "no list for '$tok': $(err_text)"
        continue
    fi
    eval "\"\$SHEAF\" scan -q \"\$T/adv$i.csv\" -o \"\$T/adv$i.b.sheaf\" --missing $list" 2>"$T/err"
    check "token_advice_followed_$i" "'$tok' with --missing $list: $(err_text)" \
        holds '[ "$(jget "$T/adv$i.b.sheaf" "[d[\"columns\"][0][k] for k in (\"kind\", \"n\", \"missing\", \"non_numeric\")]")" = "[\"numeric\",180,20,0]" ]'
done
# A column that stays numeric by the kind rule (1 token in 200 cells) gets
# the mixed note, not the warning; a column of numbers alone, nothing.
"$PY" -c "
print('fan_rpm,temp_c')
for i in range(200): print('%s,%d' % ('ERR' if i == 7 else str(1000 + i), i))" >"$T/one.csv"
run "$SHEAF" scan "$T/one.csv" -o "$T/one.sheaf"
check numeric_column_with_one_token_is_a_note "$(err_text)" \
    bash -c "[ \$(wc -l <'$T/err') = 1 ] && grep -q \"column 'fan_rpm' holds 199 numbers and 1 text cells (e.g. 'ERR'); read as numeric\" '$T/err'"
run "$SHEAF" scan "$T/case2.csv" --missing ERR -o "$T/case2.sheaf"
check clean_file_says_nothing "$(err_text)" test ! -s "$T/err"

# --- the closing line, on a terminal only ----------------------------------------

if command -v script >/dev/null 2>&1; then
    script -qec "$SHEAF scan '$T/case2.csv' --missing ERR -o '$T/tty.sheaf'" /dev/null >"$T/tty.txt" 2>&1
    check closing_line_on_a_terminal "$(tr '\r\n' '||' <"$T/tty.txt" | cut -c1-200)" \
        grep -Eq "^sheaf scan: 4 rows, 2 columns, 33 B in [0-9.]+ s \([0-9.]+ [kMG]?B/s\)" "$T/tty.txt"
    script -qec "$SHEAF scan -q '$T/case2.csv' --missing ERR -o '$T/tty.sheaf'" /dev/null >"$T/tty.txt" 2>&1
    check closing_line_not_when_quiet "$(tr '\r\n' '||' <"$T/tty.txt" | cut -c1-200)" test ! -s "$T/tty.txt"
else
    skip closing_line_on_a_terminal "script (util-linux) not found"
fi
run "$SHEAF" scan "$T/case2.csv" --missing ERR -o "$T/case2.sheaf"
check closing_line_not_when_stderr_is_captured "$(err_text)" test ! -s "$T/err"

# --- merge names its schema differences -------------------------------------------

printf 'id,fan_rpm,temp,rssi_dbm\n1,2,3,4\n5,6,7,8\n' >"$T/ma.csv"
printf 'id,temp,rssi_dbm\n1,3,4\n9,7,8\n' >"$T/mb.csv"
printf 'id,rssi_dbm,temp,fan_rpm\n1,3,4,5\n9,7,8,6\n' >"$T/mc.csv"
for x in a b c; do "$SHEAF" scan -q "$T/m$x.csv" -o "$T/m$x.sheaf" 2>/dev/null; done
run "$SHEAF" merge "$T/ma.sheaf" "$T/mb.sheaf" -o "$T/m.sheaf"
check merge_names_missing_column "rc $RC: $(err_text)" \
    grep -qx "sheaf merge: $T/ma.sheaf and $T/mb.sheaf cannot be merged: 4 columns vs 3; column 'fan_rpm' is missing from $T/mb.sheaf" "$T/err"
check merge_schema_difference_exit_5 "rc $RC" [ "$RC" = 5 ]
run "$SHEAF" merge "$T/ma.sheaf" "$T/mc.sheaf" -o "$T/m.sheaf"
check merge_names_moved_columns "rc $RC: $(err_text)" \
    grep -q "cannot be merged: column 'fan_rpm' moved from 2 to 4; column 'rssi_dbm' moved from 4 to 2$" "$T/err"
