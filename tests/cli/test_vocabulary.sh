#!/usr/bin/env bash
# One vocabulary across commands, and a library that names no flags.
#
#   lib.*      the library (src/io, acc, summary, stats, out, pass) has no
#              string literal with a command-line option ("--max-classes"):
#              it names a setting by a key in braces ("{max_classes}"), every
#              key it uses has an option in src/cli/vocabulary.c, and the CLI
#              prints the option ("raise --max-classes").
#   renamed.*  every old spelling (the "renamed" section of each --help)
#              still works, gives the same output as its new spelling and
#              warns once on stderr naming it; the new spelling does not warn.
#   names.*    no long option name means two things: the table below gives
#              each name one meaning and the commands it is on, and every
#              --help must agree with it; one long name has one short letter
#              and one letter one long name on every command.
# The references are sheaf's own: the same command with the old and the new
# spelling must write the same bytes.
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
cli_setup vocabulary python || exit 0
COMMANDS="scan info merge corr screen trim pca project page"

# ---- lib.*: no option names in the library's messages ---------------------
# flag_literals FILE...: "file:line: literal" for each C string literal with
# "--" and a letter (comments skipped).
flag_literals() {
    "$PY" - "$@" <<'EOF'
import re, sys
tok = re.compile(r'/\*.*?\*/|//[^\n]*|"(?:\\.|[^"\\\n])*"|\'(?:\\.|[^\'\\\n])*\'', re.S)
for path in sys.argv[1:]:
    text = open(path, encoding="utf-8", errors="replace").read()
    for m in tok.finditer(text):
        s = m.group(0)
        if s.startswith('"') and re.search(r'--[a-z]', s):
            print("%s:%d: %s" % (path, text.count("\n", 0, m.start()) + 1, s[:80]))
EOF
}
LIB=$(ls src/io/*.[ch] src/acc/*.[ch] src/summary/*.[ch] src/stats/*.[ch] src/out/*.[ch] src/pass/*.[ch])
found=$(flag_literals $LIB)
check lib.no_option_names_in_messages "$(echo "$found" | head -n 5 | tr '\n' '|')" [ -z "$found" ]
# The check itself can fail: a literal with a flag is found, one in a comment is not.
printf '/* "--quiet" */\nconst char *m = "raise --max-classes";\n' >"$T/probe.c"
found=$(flag_literals "$T/probe.c")
check lib.checker_finds_a_flag "found: $found" [ "$found" = "$T/probe.c:2: \"raise --max-classes\"" ]
# Every {key} the library uses has an option in the CLI's table.
keys=$(cat $LIB | grep -o '"[^"]*{[a-z_]*\(=[a-z]*\)\?}' | grep -o '{[a-z_]*\(=[a-z]*\)\?}' | sort -u)
missing=""
for k in $keys; do
    bare=${k#\{}; bare=${bare%\}}
    grep -q "{\"$bare\", \"--" src/cli/vocabulary.c || missing="$missing $k"
done
check lib.every_key_has_an_option "keys without an option:$missing (keys: $(echo $keys))" \
    [ -z "$missing" -a -n "$keys" ]
# And a call of the C library's (src/api/api_options.c, SETTING_CALLS): a
# message read through the library names no key in braces.
missing=""
for k in $keys; do
    bare=${k#\{}; bare=${bare%\}}
    grep -q "{\"$bare\", \"" src/api/api_options.c || missing="$missing $k"
done
check lib.every_key_has_a_library_call "keys without a call:$missing" [ -z "$missing" ]

# Invented data: a small greenhouse log.
{
    echo 'bed_id,soil_ph,moisture_pct,light_lux,yield_grade'
    for i in $(seq 1 40); do
        g=$(( (i * 7) % 5 )); echo "$i,$((5 + i % 3)).$((i % 10)),$((20 + (i * 3) % 17)),$((900 + (i * 37) % 400)),g$g"
    done
} >"$T/d.csv"
printf 'soil_ph\nmoisture_pct\n' >"$T/keep.txt"
"$SHEAF" scan -q "$T/d.csv" -t yield_grade -o "$T/s.sheaf" || { fail setup "scan failed"; exit 0; }

# The printed messages name the options.
run "$SHEAF" scan -q "$T/d.csv" -t yield_grade --max-classes 2 -o "$T/x.sheaf"
check lib.cli_names_max_classes "exit $RC: $(err_text)" \
    grep -q "more than 2 classes (the class limit); raise --max-classes, or read the target as a measure with --task regress" "$T/err"
check lib.cli_leaves_no_key "$(err_text)" eval '! grep -q "[{}]" "$T/err"'
printf 'a,b\n1,2\n"%0200d",3\n' 0 >"$T/long.csv"
run "$SHEAF" scan -q "$T/long.csv" --max-record 64 --chunk-size 64 -o "$T/x.sheaf"
check lib.cli_names_max_record "exit $RC: $(err_text)" grep -q "raise --max-record" "$T/err"
run "$SHEAF" scan -q "$T/d.csv" --exclude no_such -o "$T/x.sheaf"
check lib.cli_names_exclude "exit $RC: $(err_text)" grep -q "^sheaf scan: --exclude: no column named 'no_such'" "$T/err"
run "$SHEAF" pca "$T/s.sheaf" --columns soil_ph,no_such
check lib.cli_names_columns_in_pca "exit $RC: $(err_text)" grep -q -- "--columns: .*no_such" "$T/err"
run "$SHEAF" project -q "$T/d.csv" --summary "$T/s.sheaf" --carry no_such
check lib.cli_names_carry "exit $RC: $(err_text)" grep -q -- "line 1: --carry: no column named 'no_such'" "$T/err"
# The key translation itself: a known key becomes its option, an unknown
# brace text (a column named "{x}") is left alone.
printf 'a,{x}\n1,2\n' >"$T/brace.csv"
run "$SHEAF" scan -q "$T/brace.csv" --columns '{x},nope' -o "$T/x.sheaf"
check lib.unknown_brace_text_kept "exit $RC: $(err_text)" grep -q "no column named 'nope'" "$T/err"

# ---- renamed.*: old spellings work, warn, and equal the new ----------------
# One line per renamed option: COMMAND|OLD ARGS|NEW ARGS|FILE the command
# writes besides standard output (or -).  @D data, @S summary, @K keep list,
# @O the output file of this run.
CASES=(
    "info|--json|--format json|-"
    "info|--top 1|--top-values 1|-"
    "scan|@D -q --ignore bed_id -t yield_grade -o @O|@D -q --exclude bed_id -t yield_grade -o @O|@O"
    "trim|@D -q --from @S -o @O|@D -q --summary @S -o @O|@O"
    "project|@D -q --pca @S -o @O|@D -q --summary @S -o @O|@O"
    "trim|@D -q --keep-list @K -o @O|@D -q --columns-from @K -o @O|@O"
    "pca|--keep-list @K|--columns-from @K|-"
    "project|@D -q --summary @S --keep-list @K -o @O|@D -q --summary @S --columns-from @K -o @O|@O"
    "screen|--keep-list @O|--write-kept @O|@O"
    "screen|--top 1|--max-kept 1|-"
    "trim|@D -q --summary @S --top 1 -o @O|@D -q --summary @S --max-kept 1 -o @O|@O"
    "screen|--q 0.5|--fdr 0.5|-"
    "trim|@D -q --summary @S --q 0.5 -o @O|@D -q --summary @S --fdr 0.5 -o @O|@O"
    "pca|--k 1|--components 1|-"
    "project|@D -q --summary @S --k 1 -o @O|@D -q --summary @S --components 1 -o @O|@O"
    "corr|--covariance|--basis covariance|-"
)
# expand ARGS TAG: the words of ARGS with the placeholders filled in (a
# command that names no @D or @S reads the summary first).
expand() {
    local a=$1
    case "$a" in *@D* | *@S*) ;; *) a="@S $a" ;; esac
    a=${a//@D/$T/d.csv}; a=${a//@S/$T/s.sheaf}; a=${a//@K/$T/keep.txt}; a=${a//@O/$T/out.$2}
    echo "$a"
}
# only_in A B: the first option word of A that is not a word of B.
only_in() {
    local w v
    for w in $1; do
        case "$w" in --*) ;; *) continue ;; esac
        for v in $2; do [ "$w" = "$v" ] && continue 2; done
        echo "$w"
        return
    done
}
declare -A covered
n=0
for c in "${CASES[@]}"; do
    IFS='|' read -r cmd old new file <<<"$c"
    n=$((n + 1))
    # The old option of the case: its first word not among the new words.
    oldname=$(only_in "$old" "$new")
    newname=$(only_in "$new" "$old")
    covered["$cmd $oldname"]=1
    tag="$cmd${oldname}"
    rm -f "$T"/out.*
    # shellcheck disable=SC2046
    "$SHEAF" "$cmd" $(expand "$old" old) >"$T/old.stdout" 2>"$T/old.err"; rc_old=$?
    # shellcheck disable=SC2046
    "$SHEAF" "$cmd" $(expand "$new" new) >"$T/new.stdout" 2>"$T/new.err"; rc_new=$?
    check "renamed.$tag.both_succeed" "exit $rc_old (old), $rc_new (new): $(tr '\n' '|' <"$T/old.err")" \
        [ "$rc_old" = 0 -a "$rc_new" = 0 ]
    # The file name of the output differs between the runs (out.old, out.new):
    # it shows in the screen's next-step line, so stdout is compared without it.
    sed "s|$T/out.old|OUT|g" "$T/old.stdout" >"$T/old.cmp"
    sed "s|$T/out.new|OUT|g" "$T/new.stdout" >"$T/new.cmp"
    check "renamed.$tag.same_stdout" "$(first_diff "$T/old.cmp" "$T/new.cmp")" cmp -s "$T/old.cmp" "$T/new.cmp"
    if [ "$file" != - ]; then
        check "renamed.$tag.same_file" "$(first_diff "$T/out.old" "$T/out.new")" \
            cmp -s "$T/out.old" "$T/out.new"
    fi
    want="sheaf $cmd: warning: $oldname is renamed $newname"
    check "renamed.$tag.warns_once" "stderr: $(tr '\n' '|' <"$T/old.err") (want '$want')" \
        [ "$(grep -c "^$want" "$T/old.err")" = 1 -a "$(grep -c warning "$T/old.err")" = 1 ]
    check "renamed.$tag.new_does_not_warn" "stderr: $(tr '\n' '|' <"$T/new.err")" [ ! -s "$T/new.err" ]
done
# An old flag that stands for a value takes none itself.
run "$SHEAF" info "$T/s.sheaf" --json=yes
check renamed.old_flag_refuses_a_value "exit $RC: $(err_text)" \
    [ "$RC" = 2 -a "$(cat "$T/err")" = "sheaf info: --json takes no value" ]
# An old spelling without its value: one line, naming both spellings.
run "$SHEAF" info "$T/s.sheaf" --top
check renamed.old_option_without_value_one_line "exit $RC: $(err_text)" \
    [ "$RC" = 2 -a "$(cat "$T/err")" = "sheaf info: --top (renamed --top-values) needs a value (N)" ]
# --help takes no value, in every command (it was 'unknown option --help').
for cmd in $COMMANDS; do
    run "$SHEAF" "$cmd" --help=yes
    check "help.$cmd.takes_no_value" "exit $RC: $(err_text)" \
        [ "$RC" = 2 -a "$(cat "$T/err")" = "sheaf $cmd: --help takes no value" ]
done
# A list of column names (A,B,..) with an empty name is refused by every
# command alike: scan read '' as every column, corr as none, pca refused it.
for c in "scan $T/d.csv --columns= -o $T/x.sheaf" "scan $T/d.csv --exclude ,a -o $T/x.sheaf" \
         "pca $T/s.sheaf --columns=" "corr $T/s.sheaf --columns a," \
         "project $T/d.csv --summary $T/s.sheaf --carry a,,b" "trim $T/d.csv --summary $T/s.sheaf --carry="; do
    set -- $c
    run "$SHEAF" "$@"
    check "lists.empty_name_refused.$1.$(echo "$c" | grep -o -- '--[a-z]*[= ][^ ]*' | tail -n 1 | tr -c 'a-z\n' _)" \
        "exit $RC: $(err_text)" holds '[ "$RC" = 2 ] && grep -q "an empty name in" "$T/err" && [ ! -e "$T/x.sheaf" ]'
done
# Every renaming a --help lists has a case above, and every case is listed.
listed=0
for cmd in $COMMANDS; do
    while read -r old _; do
        listed=$((listed + 1))
        check "renamed.$cmd$old.has_a_case" "not in CASES" [ -n "${covered["$cmd $old"]:-}" ]
    done < <("$SHEAF" "$cmd" --help | sed -n '/^renamed/,/^$/p' | grep '^  --')
done
check renamed.every_case_listed_in_help "$listed listed, $n cases" [ "$listed" = "$n" ]

# ---- names.*: one meaning per long name ------------------------------------
# NAME|MEANING|COMMANDS it is on.  A new option, or an old name on another
# command, needs a line here (or its commands added to the line of the same
# meaning): a name is never given a second meaning.
TABLE='
output|the file written (- : standard output)|scan merge trim project page
format|the output format (text, csv, json)|info corr screen pca
target|the outcome column (scan: which to record; later: which one to use)|scan info corr screen trim pca project page
columns|the columns to use (others left out)|scan corr pca project
exclude|columns to leave out|scan pca project
columns-from|a file of column names to use, one per line (read)|trim pca project
write-kept|a file the kept column names are written to|screen
summary|the summary of the data a pass over it uses|trim project
carry|columns copied unchanged in front of the result|trim project
numeric-share|share of parsing cells that makes a column numeric|info corr screen pca project page
color|colour and bold: auto, always, never|info corr screen pca
delim|the field delimiter|scan trim project
no-header|the first row is data|scan trim project
chunk-size|bytes read per chunk|scan trim project
max-record|the longest record accepted|scan trim project
threads|worker threads|scan trim project
quiet|no progress or closing lines|scan trim project
basis|correlation or covariance matrix|corr pca project
components|the number of principal components|pca project
share|the cumulative variance share that chooses the components|pca project
with-target|the target column may be a component input|pca project
leading|largest loadings listed per component|pca
top-values|most frequent values shown per column|info
max-kept|at most this many columns kept|screen trim
fdr|the false discovery rate level for q-values|screen trim page
rank-by|the key that ranks kept columns|screen
bins|equal-frequency bins for mutual information|screen
redundancy|the absolute r at which two kept columns are redundant|screen page
missing-share|share of missing cells that flags a column too sparse|screen
min-variance|variance below which a column has little information|screen
keep-mirrors|keep columns that mirror the target|screen
allow-duplicates|merge summaries of the same bytes|merge
strict|ragged rows are errors|scan
force|read a file that does not look like text|scan
numeric|columns declared numeric|scan
categorical|columns declared categorical|scan
task|classify or regress|scan
max-classes|target classes kept|scan
mem|memory the scan may add|scan
missing|spellings of a missing value|scan
max-levels|exact value counts per column|scan
bucket-budget|occupied value buckets per column|scan
shard|read one of N byte ranges|scan
shard-from-top|find the first record of a shard from the top of the file|scan
checkpoint|save the scan so far, to resume it after a kill|scan
checkpoint-every|decompressed input between checkpoints|scan
resume|go on from the checkpoint|scan
write-svg|a folder each chart is written to as an SVG file|page
base|a baseline summary whose drift a page shows|page
'
declare -A on
for cmd in $COMMANDS; do
    "$SHEAF" "$cmd" --help >"$T/help.$cmd"
    # the option lines (before "renamed" and "examples"): "  -x, --name" or
    # "      --name"; a wrapped help line goes on under column 30
    sed -n '/^options:/,/^$/p' "$T/help.$cmd" | grep -o '^      --[a-z-]*\|^  -[a-zA-Z], --[a-z-]*' |
        sed 's/^ *//' >"$T/opts.$cmd"
    while read -r line; do
        name=${line##*--}
        [ "$name" = help ] && continue
        on[$name]="${on[$name]:-} $cmd"
        letter=$(grep -o '^-[a-zA-Z]' <<<"$line")
        echo "$name ${letter:--}" >>"$T/letters"
    done <"$T/opts.$cmd"
done
while IFS='|' read -r name meaning cmds; do
    [ -n "$name" ] || continue
    got=$(echo ${on[$name]:-})
    check "names.$name.commands" "on '$got', the table says '$cmds'" [ "$got" = "$(echo $cmds)" ]
    unset "on[$name]"
done <<<"$TABLE"
check names.every_option_in_table "not in the table:$(for k in "${!on[@]}"; do printf ' --%s (%s)' "$k" "${on[$k]# }"; done)" \
    [ "${#on[@]}" = 0 ]
# One long name, one letter (or none) everywhere; one letter, one long name.
bad=$(sort -u "$T/letters" | awk '{print $1}' | uniq -d)
check names.one_letter_per_name "more than one letter for: $bad" [ -z "$bad" ]
bad=$(sort -u "$T/letters" | awk '$2 != "-" {print $2}' | sort | uniq -d)
check names.one_name_per_letter "a letter with two long names: $bad" [ -z "$bad" ]
# No old spelling is still an option anywhere (it would mean two things).
olds=$(grep -o '{"[a-z]*", "[a-z-]*", "[a-z-]*", ' src/cli/vocabulary.c | cut -d'"' -f4 | sort -u)
clash=""
for o in $olds; do grep -qx -- "--$o\|-., --$o" "$T"/opts.* 2>/dev/null && clash="$clash --$o"; done
for o in $olds; do cat "$T"/opts.* | grep -q -- "--$o\$" && clash="$clash --$o"; done
check names.no_old_spelling_is_an_option "still options:$clash" [ -z "$clash" ]
check names.old_spellings_read "no old spellings read from vocabulary.c" [ -n "$olds" ]
