#!/usr/bin/env bash
# The command line a shell user expects: '-' for standard output (-o) and
# standard input (summaries), options parsed as getopt parses them (bundled
# flags, -oFILE, --output=FILE), `sheaf help COMMAND`, -V, examples ending
# every --help, suggestions for typos (commands, options, column names), and
# a one-line message with exit 1 for every write failure (/dev/full).
# The reference for the option forms is POSIX getopt / glibc getopt_long as
# documented (getopt(3)); the expected outputs are sheaf's own file forms.
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
cli_setup shell || exit 0
S=$(cd "$(dirname "$SHEAF")" && pwd)/$(basename "$SHEAF")
# holds CONDITION: a shell condition (with && ...) for check, evaluated there.

# Invented telemetry of a fleet of delivery drones.
{
    echo 'drone_id,battery_v,motor_temp_c,altitude_m,payload_kg,status'
    for i in $(seq 1 60); do
        if [ $((i % 3)) -eq 0 ]; then st=fault; b=9.$((i % 7)); else st=ok; b=11.$((i % 9)); fi
        echo "$i,$b,$((40 + i % 13)).5,$((100 + (i * 7) % 50)),$((i % 4)).25,$st"
    done
} >"$T/fly.csv"
printf 'battery_v\nmotor_temp_c\n' >"$T/keep.txt"
# Every command runs in an empty directory of its own: nothing may land there.
mkdir "$T/cwd" && cd "$T/cwd" || exit 0
"$S" scan -q "$T/fly.csv" -t status -o "$T/fly.sheaf" || { fail setup "scan failed"; exit 0; }

# ---- '-' as standard output and input -------------------------------------
"$S" scan -q "$T/fly.csv" -t status -o - >../piped.sheaf 2>../err
RC=$?
check stdout.scan_dash_writes_stdout "exit $RC, $(first_diff ../piped.sheaf ../fly.sheaf)" \
    cmp -s ../piped.sheaf ../fly.sheaf
# A header name with a control byte (a lone CR before the CR LF is data by
# the rule) is shown escaped in the suggestion, not as the name asked for;
# one field is "1 field" (quote audit of 2026-12-05).
printf 'h1,h2,h3\r\r\n1,2,3\r\n' >"$T/cr_name.csv"
run "$S" scan "$T/cr_name.csv" --target h3 -o "$T/cr_name.sheaf"
check messages.control_byte_escaped "$(err_text)" \
    holds '[ "$RC" = 2 ] && grep -qF "'"'"'h3\r'"'"'" "$T/err"'
printf 'a,b\n1\n' >"$T/one_field.csv"
run "$S" scan --strict "$T/one_field.csv" -o "$T/one_field.sheaf"
check messages.one_field_singular "$(err_text)" \
    holds '[ "$RC" = 3 ] && grep -q "line 2: 1 field, the header" "$T/err"'
left=$(ls -A . | tr '\n' ' ')
check stdout.scan_dash_no_file_in_cwd "left in the current directory: $left" [ -z "$left" ]
"$S" scan -q "$T/fly.csv" -t status -o - | cat >../pipe2.sheaf
check stdout.scan_dash_into_pipe "$(first_diff ../pipe2.sheaf ../fly.sheaf)" cmp -s ../pipe2.sheaf ../fly.sheaf
printf 'a,b\n1,"open\n' >../bad.csv
"$S" scan -q ../bad.csv -o - >../bad.out 2>../err
RC=$?
check stdout.failed_scan_writes_nothing "exit $RC, $(wc -c <../bad.out) bytes" \
    holds '[ "$RC" -eq 3 ] && [ ! -s ../bad.out ]'
"$S" merge ../fly.sheaf -o - >../m.sheaf 2>../err
check stdout.merge_dash "$(first_diff ../m.sheaf ../fly.sheaf)" cmp -s ../m.sheaf ../fly.sheaf
"$S" trim ../fly.csv --columns-from ../keep.txt -o - >../trim.out 2>../err
"$S" trim ../fly.csv --columns-from ../keep.txt >../trim.ref 2>>../err
check stdout.trim_dash "$(first_diff ../trim.out ../trim.ref)" cmp -s ../trim.out ../trim.ref
"$S" project ../fly.csv --summary ../fly.sheaf -k 1 -o - >../proj.out 2>../err
"$S" project ../fly.csv --summary ../fly.sheaf -k 1 >../proj.ref 2>>../err
check stdout.project_dash "$(first_diff ../proj.out ../proj.ref)" \
    holds '[ -s ../proj.out ] && cmp -s ../proj.out ../proj.ref'
left=$(ls -A . | tr '\n' ' ')
check stdout.no_file_in_cwd_any_command "left: $left" [ -z "$left" ]

# A summary on a terminal is refused (script(1) gives the command a terminal).
if command -v script >/dev/null; then
    for c in "scan -q $T/fly.csv -o -" "merge $T/fly.sheaf -o -"; do
        script -qec "$S $c" /dev/null >"$T/tty.out" 2>&1
        RC=$?
        check "stdout.terminal_refused.${c%% *}" "exit $RC: $(head -c 200 "$T/tty.out")" \
            holds '[ "$RC" -eq 2 ] && grep -q '\''refusing to write a binary summary to a terminal'\'' "$T/tty.out" &&
            ! grep -q '\''SHF'\'' "$T/tty.out"'
    done
else
    skip stdout.terminal_refused "script(1) not installed"
fi

# Summaries from standard input: the same output as from the file.
for c in "info" "info --format json" "corr" "screen" "screen -f json" "pca -f csv"; do
    "$S" $c "$T/fly.sheaf" 2>&1 | sed "s|$T/fly.sheaf|X|" >"$T/a"
    "$S" $c - <"$T/fly.sheaf" 2>&1 | sed 's|standard input|X|; s|--summary SUMMARY.sheaf|--summary X|' >"$T/b"
    check "stdin.${c// /_}" "$(first_diff "$T/a" "$T/b")" cmp -s "$T/a" "$T/b"
done
"$S" merge "$T/fly.sheaf" - --allow-duplicates -o "$T/m2.sheaf" <"$T/fly.sheaf" 2>"$T/err"
"$S" merge "$T/fly.sheaf" "$T/fly.sheaf" --allow-duplicates -o "$T/m3.sheaf" 2>>"$T/err"
check stdin.merge_input "$(err_text)" cmp -s "$T/m2.sheaf" "$T/m3.sheaf"
"$S" project "$T/fly.csv" --summary - -k 1 <"$T/fly.sheaf" >"$T/p2" 2>"$T/err"
"$S" project "$T/fly.csv" --summary "$T/fly.sheaf" -k 1 >"$T/p3" 2>>"$T/err"
check stdin.project_pca "$(err_text)" cmp -s "$T/p2" "$T/p3"
"$S" scan -q "$T/fly.csv" -t status -o - | "$S" screen - >"$T/a" 2>"$T/err"
check stdin.scan_pipe_screen "$(err_text)" grep -q 'kept' "$T/a"
head -c 200 "$T/fly.sheaf" | "$S" info - >/dev/null 2>"$T/err"
RC=$?
check stdin.truncated_is_damaged "exit $RC: $(err_text)" \
    holds '[ "$RC" -eq 4 ] && grep -q '\''^sheaf info: standard input: '\'' "$T/err" && [ "$(wc -l <"$T/err")" -eq 1 ]'
run "$S" info - </dev/null
check stdin.empty_is_damaged "exit $RC: $(err_text)" [ "$RC" -eq 4 ]
run "$S" merge - - -o "$T/x.sheaf" <"$T/fly.sheaf"
check stdin.named_twice_refused "exit $RC: $(err_text)" holds '[ "$RC" -eq 2 ] && [ ! -e "$T/x.sheaf" ]'
run "$S" trim - --summary - <"$T/fly.csv"
check stdin.trim_data_and_summary_refused "exit $RC: $(err_text)" [ "$RC" -eq 2 ]

# ---- option forms ---------------------------------------------------------
forms() { # NAME COMMAND...: the command writes $T/f.sheaf equal to fly.sheaf
    local name=$1
    shift
    rm -f "$T/f.sheaf"
    run "$@"
    check "options.$name" "exit $RC: $(err_text)" holds '[ "$RC" -eq 0 ] && cmp -s "$T/f.sheaf" "$T/fly.sheaf"'
}
forms scan_o_attached "$S" scan -q "$T/fly.csv" -t status "-o$T/f.sheaf"
forms scan_output_equals "$S" scan -q "$T/fly.csv" -t status "--output=$T/f.sheaf"
forms scan_bundled_qo "$S" scan "$T/fly.csv" -t status -qo "$T/f.sheaf"
forms scan_bundled_qj2 "$S" scan "$T/fly.csv" --target=status -qj2 -o "$T/f.sheaf"
forms scan_bundled_qt "$S" scan "$T/fly.csv" -qtstatus -j1 -o "$T/f.sheaf"
forms merge_o_attached "$S" merge "$T/fly.sheaf" "-o$T/f.sheaf"
run "$S" trim "$T/fly.csv" --columns-from="$T/keep.txt" -j2 -qo "$T/t.csv"
check options.trim_bundled "exit $RC: $(err_text)" holds '[ "$RC" -eq 0 ] && cmp -s "$T/t.csv" "$T/trim.ref"'
run "$S" project "$T/fly.csv" "--summary=$T/fly.sheaf" -qk1 "-o$T/p.csv"
check options.project_bundled "exit $RC: $(err_text)" holds '[ "$RC" -eq 0 ] && cmp -s "$T/p.csv" "$T/proj.ref"'
"$S" info --top-values 2 --format json "$T/fly.sheaf" >"$T/a"
run "$S" info --top-values=2 --format json "$T/fly.sheaf"
check options.info_equals "exit $RC" cmp -s "$T/out" "$T/a"
"$S" screen --format json "$T/fly.sheaf" >"$T/a"
run "$S" screen -fjson "$T/fly.sheaf"
check options.screen_attached "exit $RC" cmp -s "$T/out" "$T/a"
"$S" corr --format csv "$T/fly.sheaf" >"$T/a"
run "$S" corr -fcsv "$T/fly.sheaf"
check options.corr_attached "exit $RC" cmp -s "$T/out" "$T/a"
"$S" pca --components 1 --format csv "$T/fly.sheaf" >"$T/a"
run "$S" pca -k1 -fcsv "$T/fly.sheaf"
check options.pca_attached "exit $RC" cmp -s "$T/out" "$T/a"
run "$S" scan -q "$T/fly.csv" -qo
check options.missing_value_after_bundle "exit $RC: $(err_text)" holds '[ "$RC" -eq 2 ] && grep -q '\''needs a value'\'' "$T/err"'
run "$S" scan "$T/fly.csv" --quiet=1 -o "$T/f.sheaf"
check options.flag_with_value_refused "exit $RC" [ "$RC" -eq 2 ]
run "$S" info -- "$T/fly.sheaf"
check options.double_dash "exit $RC" [ "$RC" -eq 0 ]

# ---- help, version, examples ------------------------------------------------
for c in scan info merge corr screen trim pca project page; do
    "$S" "$c" --help >"$T/a" 2>&1
    run "$S" help "$c"
    check "help.$c.same_as_dash_help" "exit $RC, $(first_diff "$T/out" "$T/a")" \
        holds '[ "$RC" -eq 0 ] && cmp -s "$T/out" "$T/a"'
    n=$(sed -n '/^examples:$/,$p' "$T/a" | grep -c '^  \$ sheaf \|^  \$ .*| sheaf ')
    last=$(tail -n 1 "$T/a")
    check "help.$c.ends_with_examples" "$n examples, last line '$last'" \
        holds '[ "$n" -ge 2 ] && [ "$n" -le 3 ] && [ "${last#  \$ }" != "$last" ]'
done
run "$S" -V
check version.short "exit $RC: $(cat "$T/out")" holds '[ "$RC" -eq 0 ] && grep -q '\''^sheaf [0-9]'\'' "$T/out"'
"$S" --version >"$T/a"
check version.long_same "$(cat "$T/a")" cmp -s "$T/a" "$T/out"
run "$S" help
check help.no_command "exit $RC" holds '[ "$RC" -eq 0 ] && grep -q "sheaf help COMMAND" "$T/out"'

# ---- suggestions ----------------------------------------------------------
suggest() { # NAME WANT COMMAND...: exit 2 and one line on stderr containing WANT
    local name=$1 want=$2
    shift 2
    run "$@"
    check "suggest.$name" "exit $RC: $(err_text)" \
        holds '[ "$RC" -eq 2 ] && grep -qF -- "$want" "$T/err" && [ "$(wc -l <"$T/err")" -eq 1 ]'
}
suggest command_swap "did you mean 'scan'?" "$S" sacn x
suggest command_drop "did you mean 'merge'?" "$S" merg
suggest help_command "did you mean 'screen'?" "$S" help screne
suggest option_swap "did you mean '--output'?" "$S" scan "$T/fly.csv" --outptu x
suggest option_prefix "did you mean '--basis'?" "$S" corr "$T/fly.sheaf" --basi
suggest option_case "did you mean '--rank-by'?" "$S" screen "$T/fly.sheaf" --Rank-By q
suggest short_letters "(short options: -o -d -t -j -q -h)" "$S" scan "$T/fly.csv" -qx
run "$S" scan "$T/fly.csv" --zzzzzz
check suggest.none_when_far "exit $RC: $(err_text)" holds '[ "$RC" -eq 2 ] && ! grep -q '\''did you mean'\'' "$T/err"'

# Column names: the nearest (and a few that exist) wherever a command takes them.
column() { # NAME WANT COMMAND...: a non-zero exit, one line with WANT and the column list
    local name=$1 want=$2
    shift 2
    run "$@"
    check "suggest.column.$name" "exit $RC: $(err_text)" \
        holds '[ "$RC" -ne 0 ] && grep -qF -- "$want" "$T/err" && grep -q "(.*columns: drone_id, battery_v" "$T/err" && [ "$(wc -l <"$T/err")" -eq 1 ]'
}
column scan_target "did you mean 'status'?" "$S" scan -q "$T/fly.csv" -t stats -o "$T/x.sheaf"
column scan_ignore "did you mean 'battery_v'?" "$S" scan -q "$T/fly.csv" --exclude batery_v -o "$T/x.sheaf"
column scan_columns "did you mean 'payload_kg'?" "$S" scan -q "$T/fly.csv" --columns payload,status -o "$T/x.sheaf"
column scan_numeric "did you mean 'altitude_m'?" "$S" scan -q "$T/fly.csv" --numeric Altitude_M -o "$T/x.sheaf"
column screen_target "did you mean 'motor_temp_c'?" "$S" screen "$T/fly.sheaf" -t motor_tmp_c
column corr_columns "did you mean 'battery_v'?" "$S" corr "$T/fly.sheaf" --columns batteryv,motor_temp_c
column pca_columns "did you mean 'altitude_m'?" "$S" pca "$T/fly.sheaf" --columns battery_v,altitud_m
column pca_exclude "did you mean 'payload_kg'?" "$S" pca "$T/fly.sheaf" --exclude paylod_kg
printf 'battery_v\nmotortemp_c\n' >"$T/typo.txt"
column pca_keep_list "did you mean 'motor_temp_c'?" "$S" pca "$T/fly.sheaf" --columns-from "$T/typo.txt"
column project_carry "did you mean 'drone_id'?" "$S" project "$T/fly.csv" --summary "$T/fly.sheaf" -k 1 --carry droneid
column trim_keep_list "did you mean 'motor_temp_c'?" "$S" trim "$T/fly.csv" --columns-from "$T/typo.txt"
column trim_carry "did you mean 'drone_id'?" "$S" trim "$T/fly.csv" --columns-from "$T/keep.txt" --carry drone
run "$S" screen "$T/fly.sheaf" -t zzzzzzzzz
check suggest.column.far_lists_some "exit $RC: $(err_text)" \
    holds '[ "$RC" -eq 2 ] && ! grep -q "did you mean" "$T/err" && grep -q "columns: drone_id, battery_v, motor_temp_c, altitude_m, payload_kg, ... 6 in all" "$T/err"'
"$S" scan -q "$T/fly.csv" -t status,altitude_m -o "$T/two.sheaf"
run "$S" info "$T/two.sheaf" -t altitude
check suggest.target_of_several "exit $RC: $(err_text)" \
    holds '[ "$RC" -eq 2 ] && grep -qF "did you mean '\''altitude_m'\''?" "$T/err"'

# ---- write failures ---------------------------------------------------------
if [ -w /dev/full ]; then
    for c in "info @X" "info --format json @X" "corr @X" "corr -f json @X" "corr -f csv @X" "screen @X" \
        "screen -f json @X" "screen -f csv @X" "pca @X" "pca -f json @X" "pca -f csv @X" \
        "trim @D --summary @X" "project @D --summary @X -k 1" "scan -q @D -o -" "merge @X -o -" \
        "--help" "help scan" "scan --help" "-V" "info - <@X"; do
        cmd=${c//@X/$T/fly.sheaf}
        cmd=${cmd//@D/$T/fly.csv}
        eval "\"\$S\" $cmd" >/dev/full 2>"$T/err"
        RC=$?
        name=${c//@/}
        check "write_failure.${name// /_}" "exit $RC: $(err_text)" \
            holds '[ "$RC" -eq 1 ] && [ "$(wc -l <"$T/err")" -eq 1 ] && grep -q '\''No space left on device'\'' "$T/err"'
    done
else
    skip write_failure "/dev/full not writable"
fi
left=$(ls -A . | tr '\n' ' ')
check no_file_in_cwd_at_the_end "left in the current directory: $left" [ -z "$left" ]
exit 0
