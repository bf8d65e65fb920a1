#!/usr/bin/env bash
# trim and project on threads: the output is the same bytes for every thread
# count, and a failure is the same failure.
#   - a 60,000-row bench table (build/demo/generate --profile bench), plain,
#     gzip and zstd, and a summary of it with the class target `label`;
#   - trim --summary the summary and project --summary with --carry: the sha256 of
#     the output at -j2, -j3 and -j8 equals that at -j1, at the default chunk
#     size and at --chunk-size 64K (about 190 chunks), on each input, written
#     plain and as .gz (the gzip stream depends on where the sink drains, so
#     this also holds the order and sizes of the writes); the same for trim
#     --summary with --max-kept and --carry, and trim --columns-from, on the plain
#     input at 64K;
#   - the -j1 outputs against an outside reference: Python's csv module
#     (Debian's /usr/bin/python3, standard library) reads the input and the
#     outputs; trim's rows are the input's rows restricted to its header's
#     columns, and project writes one row per input row with the carried
#     `seq` column in input order;
#   - an unterminated quote on line 30001 (worked by hand: the header and
#     30,000 rows before it, no quote after it), plain and gzip, at the
#     default chunk size and at 64K: the same message and exit code (3) at
#     -j1 and -j4, naming line 30001, and no output file left;
#   - --help of both commands mentions --threads and --quiet, -j0 is a usage
#     error, and nothing is printed on standard error when it is not a
#     terminal (the progress line is for terminals).
# Prints one "PASS name" / "FAIL name: why" line per check and exits 0.
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
cli_setup passes-threads python || exit 0

GEN=build/demo/generate
if [ ! -x "$GEN" ]; then make -s "$GEN" >/dev/null 2>&1; fi
if [ ! -x "$GEN" ]; then fail generate "$GEN not built (make $GEN)"; exit 0; fi

# ------------------------------------------------------------------- inputs
"$GEN" --profile bench --rows 60000 --threads 1 -o "$T/t.csv" || { fail generate "exit $?"; exit 0; }
gzip -c "$T/t.csv" >"$T/t.csv.gz"
if command -v zstd >/dev/null; then zstd -q -c "$T/t.csv" >"$T/t.csv.zst"; fi
run $SHEAF scan "$T/t.csv" --target label -o "$T/t.sheaf" -q
check scan.summary "exit $RC: $(err_text)" [ "$RC" = 0 ] || exit 0
printf 'seq\ndigit\nlabel\nwords\nprice\n' >"$T/keep.txt"

INPUTS="t.csv t.csv.gz"
if [ -f "$T/t.csv.zst" ]; then INPUTS="$INPUTS t.csv.zst"; else skip zstd_input "zstd not found"; fi

# ------------------------------------------------- the same bytes at any -j
# same NAME COMMAND...: runs COMMAND -j1 and -j2/-j3/-j8 with "-o OUT" for a
# plain and a .gz OUT; PASS when the sha256 agree.  Keeps the -j1 plain
# output as $T/NAME.ref.
same() {
    local name=$1 ext ref j got bad=""
    shift
    for ext in csv csv.gz; do
        run "$@" -j1 -o "$T/out.$ext"
        if [ "$RC" != 0 ]; then bad="-j1 to .$ext: exit $RC: $(err_text)"; break; fi
        ref=$(sha256sum <"$T/out.$ext")
        [ "$ext" = csv ] && cp "$T/out.csv" "$T/$name.ref"
        for j in 2 3 8; do
            run "$@" -j$j -o "$T/out.$ext"
            got=$(sha256sum <"$T/out.$ext")
            if [ "$RC" != 0 ] || [ "$got" != "$ref" ]; then
                bad="-j$j to .$ext differs from -j1 (exit $RC)"
                break 2
            fi
        done
    done
    if [ -z "$bad" ]; then pass "$name"; else fail "$name" "$bad"; fi
}

for in in $INPUTS; do
    for cs in default 64K; do
        opt=""
        [ "$cs" = 64K ] && opt="--chunk-size 64K"
        tag="$in.$cs"
        same "trim_from.$tag" $SHEAF trim "$T/$in" --summary "$T/t.sheaf" $opt
        same "project.$tag" $SHEAF project "$T/$in" --summary "$T/t.sheaf" --carry seq,label $opt
    done
done
same trim_from_top_carry.t.csv.64K $SHEAF trim "$T/t.csv" --summary "$T/t.sheaf" --max-kept 5 \
    --carry seq,stamp_ms --chunk-size 64K
same trim_keep_list.t.csv.64K $SHEAF trim "$T/t.csv" --columns-from "$T/keep.txt" --chunk-size 64K

# -------------------------------------------- the -j1 outputs, read by Python
cat >"$T/ref.py" <<'EOF'
import csv, sys
mode, data, out = sys.argv[1:4]
rows = list(csv.reader(open(data, newline="")))
got = list(csv.reader(open(out, newline="")))
if mode == "trim":
    at = [rows[0].index(n) for n in got[0]]
    want = [[r[i] for i in at] for r in rows]
    bad = next((i for i, (a, b) in enumerate(zip(want, got)) if a != b), None)
    if len(want) != len(got) or bad is not None:
        sys.exit("rows %d vs %d, first difference at row %s" % (len(want), len(got), bad))
else:
    seq = [r[rows[0].index("seq")] for r in rows[1:]]
    if got[0][0] != "seq" or [r[0] for r in got[1:]] != seq:
        sys.exit("%d score rows for %d input rows, or seq out of order" % (len(got) - 1, len(seq)))
EOF
for name in trim_from.t.csv.64K trim_from_top_carry.t.csv.64K trim_keep_list.t.csv.64K; do
    [ -f "$T/$name.ref" ] || continue
    run "$PY" "$T/ref.py" trim "$T/t.csv" "$T/$name.ref"
    check "python_csv.$name" "$(err_text)" [ "$RC" = 0 ]
done
if [ -f "$T/project.t.csv.64K.ref" ]; then
    run "$PY" "$T/ref.py" project "$T/t.csv" "$T/project.t.csv.64K.ref"
    check python_csv.project.t.csv.64K "$(err_text)" [ "$RC" = 0 ]
fi

# ------------------------------------------ an unterminated quote, any -j
# Line 30001 opens a quote; the rest of the file holds no quote, so the
# field runs to the end of the input.
{ head -n 30000 "$T/t.csv"; echo '1,2,"open'; tail -n +30001 "$T/t.csv" | tr -d '"'; } >"$T/bad.csv"
gzip -c "$T/bad.csv" >"$T/bad.csv.gz"
for in in bad.csv bad.csv.gz; do
    for cs in default 64K; do
        opt=""
        [ "$cs" = 64K ] && opt="--chunk-size 64K"
        for cmd in trim project; do
            args="--summary $T/t.sheaf"
            name="unterminated.$cmd.$in.$cs"
            rm -f "$T/fail.csv.gz"
            run $SHEAF $cmd "$T/$in" $args $opt -j1 -o "$T/fail.csv.gz"
            rc1=$RC err1=$(cat "$T/err") left1=$(ls -A "$T" | grep -c '^fail\.csv')
            run $SHEAF $cmd "$T/$in" $args $opt -j4 -o "$T/fail.csv.gz"
            rc4=$RC err4=$(cat "$T/err") left4=$(ls -A "$T" | grep -c '^fail\.csv')
            want="sheaf $cmd: $T/$in: line 30001: unterminated quote"
            if [ "$rc1" != 3 ] || [ "$rc4" != 3 ]; then
                fail "$name" "exit $rc1 at -j1, $rc4 at -j4 (want 3)"
            elif [ "$err1" != "$err4" ]; then
                fail "$name" "-j1 said '$err1', -j4 said '$err4'"
            elif [ "${err1#"$want"}" = "$err1" ]; then
                fail "$name" "message '$err1' does not start with '$want'"
            elif [ "$left1" != 0 ] || [ "$left4" != 0 ]; then
                fail "$name" "an output (or its temporary) was left: $(ls -A "$T" | grep '^fail' | head -3)"
            else
                pass "$name"
            fi
        done
    done
done

# ---------------------------------------------------------- options, help
for cmd in trim project; do
    run $SHEAF $cmd --help
    check "help_mentions_threads.$cmd" "$(head -c 200 "$T/out")" \
        grep -q -- "--threads" "$T/out"
    check "help_mentions_quiet.$cmd" "$(head -c 200 "$T/out")" grep -q -- "--quiet" "$T/out"
    args="--summary $T/t.sheaf"
    run $SHEAF $cmd "$T/t.csv" $args -j0 -o "$T/j0.csv"
    check "threads_zero_is_usage.$cmd" "exit $RC: $(err_text)" [ "$RC" = 2 ]
    run $SHEAF $cmd "$T/t.csv.gz" $args --threads 2 -o "$T/quiet.csv"
    quiet_ok=0
    [ "$RC" = 0 ] && [ ! -s "$T/err" ] && quiet_ok=1
    check "no_progress_off_terminal.$cmd" "exit $RC, stderr: $(err_text)" [ $quiet_ok = 1 ]
    # trim's --fdr is the significance level; -q alone is --quiet.
    [ $cmd = trim ] && args="$args --fdr 0.05"
    run $SHEAF $cmd "$T/t.csv" $args -q -j2 -o "$T/quiet.csv"
    check "quiet_accepted.$cmd" "exit $RC: $(err_text)" [ "$RC" = 0 ]
done
exit 0
