#!/usr/bin/env bash
# The scan on threads (summary/chunks.h): the summary file is the same, byte
# for byte, for every -j and every scheduling, on plain, gzip and zstd input,
# without a target, with a class target and with a continuous target, at
# several chunk sizes, over several files and for a shard; an error anywhere
# gives the one-line message and exit code of -j1 and leaves no file; the
# golden fingerprints hold at -j1 as at the default; the co-moments are the
# same for every chunk size.  The continuous target's
# own column is checked against pandas (Debian python3-pandas), the outside
# reference for a column mean.
set -u
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup scan-threads || exit 0
GEN=build/demo/generate
[ -x "$GEN" ] || { fail threads.setup "build/demo/generate is not built"; exit 0; }

$GEN --profile bench --rows 40000 -o "$T/t.csv" 2>/dev/null
gzip -6 -c "$T/t.csv" >"$T/t.csv.gz"
zstd -q -c "$T/t.csv" >"$T/t.csv.zst"
sha() { sha256sum <"$1" | cut -c1-16; }

# Runs `sheaf scan ARGS -j N` for each N in JS (the first is 1) and passes
# NAME when every summary has the bytes of the first.
same_bytes_for_j() {
    local name=$1 js=$2 want= bad= h j
    shift 2
    for j in $js; do
        run "$SHEAF" scan "$@" -j "$j" -q -o "$T/s$j.sheaf"
        if [ "$RC" -ne 0 ]; then bad="-j$j exit $RC: $(err_text)"; break; fi
        h=$(sha "$T/s$j.sheaf")
        [ -z "$want" ] && want=$h
        [ "$h" != "$want" ] && bad="-j$j gives $h, -j1 $want"
    done
    if [ -z "$bad" ]; then pass "$name"; else fail "$name" "$bad"; fi
}

# 1. The matrix: every -j gives the -j1 bytes.
for f in t.csv t.csv.gz t.csv.zst; do
    # digit3: a numeric target past --max-classes, whose classes are dropped mid-chunk.
    for tgt in none label price digit3; do
        case $tgt in
            none) topt=() ;;
            digit3) topt=(--target digit --max-classes 3) ;;
            *) topt=(--target "$tgt") ;;
        esac
        for cs in default 64K 300K; do
            copt=(); [ "$cs" != default ] && copt=(--chunk-size "$cs")
            same_bytes_for_j "threads.same_bytes.$f.$tgt.$cs" "1 2 3 8" "$T/$f" "${topt[@]}" "${copt[@]}"
        done
    done
done

# 1b. A wide table: from 8 columns a group (-j2: 64, -j8: 256) a group takes
# a run of neighbouring columns instead of columns dealt out in turn
# (chunks.c, group_columns); the bytes are still those of -j1.  300 columns,
# some cells missing, a class target in the middle, and two targets at once.
/usr/bin/python3 - "$T/w.csv" <<'PY'
import random, sys
random.seed(11)
with open(sys.argv[1], "w") as f:
    names = ["c%03d" % j for j in range(300)]
    names[150] = "kind"
    f.write(",".join(names) + "\n")
    for r in range(3000):
        row = []
        for j in range(300):
            if j == 150:
                row.append(random.choice(["ash", "elm", "yew"]))
            elif random.random() < 0.03:
                row.append("")
            else:
                row.append("%.3f" % random.gauss(j % 7, 1 + j % 5))
        f.write(",".join(row) + "\n")
PY
for tgt in none kind two; do
    case $tgt in
        none) topt=() ;;
        kind) topt=(--target kind) ;;
        two) topt=(--target kind,c010) ;; # a class target and a continuous one
    esac
    same_bytes_for_j "threads.same_bytes.wide.$tgt" "1 2 3 8" "$T/w.csv" "${topt[@]}" --chunk-size 64K
done

# 2. Several files (read ahead on threads of their own), and a shard, at every -j.
same_bytes_for_j threads.same_bytes.files "1 2 5" "$T/t.csv.gz" "$T/t.csv" "$T/t.csv.zst" --target label
same_bytes_for_j threads.same_bytes.shard "1 2 5" "$T/t.csv" --shard 2/3 --chunk-size 64K --target label

# 2b. Co-moments in blocks of 256 rows of the stream, whatever the chunks:
# the covariance and correlation matrices (JSON, every digit) are the same
# for every chunk size and -j (before, blocks ended at chunk ends and the
# last bits moved with --chunk-size).  The table has columns with 5%, 10%
# and 50% missing cells, so the sparse and dense paths of the missing-cell
# sums are in it.
want=
bad=
for cs in 16K 64K 300K 1M; do
    for j in 1 2; do
        run "$SHEAF" scan "$T/t.csv" --chunk-size "$cs" -j "$j" -q -o "$T/c.sheaf"
        [ "$RC" -ne 0 ] && { bad="--chunk-size $cs -j$j exit $RC: $(err_text)"; break 2; }
        h=$({ "$SHEAF" corr "$T/c.sheaf" --format json --basis covariance
              "$SHEAF" corr "$T/c.sheaf" --format json; } | sha256sum | cut -c1-16)
        [ -z "$want" ] && want=$h
        [ "$h" != "$want" ] && bad="--chunk-size $cs -j$j gives $h, 16K -j1 $want"
    done
done
if [ -z "$bad" ]; then pass threads.comoments_same_for_any_chunk_size; else fail threads.comoments_same_for_any_chunk_size "$bad"; fi

# 3. Errors: the same message and exit code as -j1, and no file left.
# A quote opened on line 30001 and never closed (the quotes after it dropped).
{ head -n 30000 "$T/t.csv"; tail -n +30001 "$T/t.csv" | tr -d '"' |
    awk 'NR == 1 { sub(/,/, ",\"never closed,") } { print }'; } >"$T/quote.csv"
awk 'NR == 25001 { $0 = $0 ",extra" } { print }' "$T/t.csv" >"$T/ragged.csv"
# Two gzip members; the second has bytes overwritten in its middle.
head -n 20000 "$T/t.csv" | gzip -6 >"$T/bad.csv.gz"
tail -n +20001 "$T/t.csv" | gzip -6 >"$T/second.gz"
size=$(stat -c %s "$T/second.gz")
printf 'XXXXXXXXXXXXXXXX' | dd of="$T/second.gz" bs=1 seek=$((size / 2)) conv=notrunc 2>/dev/null
cat "$T/second.gz" >>"$T/bad.csv.gz"
err_case() { # name, then the scan's arguments after the input list ($OUT: the output)
    local name=$1 out=${OUT:-$T/e.sheaf}
    shift
    local want_rc= want_err= bad=
    for j in 1 2 4; do
        rm -f "$T"/e.sheaf "$T"/.e.sheaf* "$T"/*.tmp* 2>/dev/null
        run "$SHEAF" scan "$@" -j "$j" -q -o "$out"
        local e
        e=$(cat "$T/err")
        if [ -z "$want_rc" ]; then want_rc=$RC; want_err=$e; fi
        [ "$RC" -eq 0 ] && bad="-j$j succeeded"
        [ "$RC" -ne "$want_rc" ] && bad="-j$j exit $RC, -j1 $want_rc"
        [ "$e" != "$want_err" ] && bad="-j$j says '$e', -j1 '$want_err'"
        [ -n "$(ls -A "$T" | grep -E '^(e\.sheaf|\.e\.sheaf)')" ] && bad="-j$j left $(ls -A "$T" | grep e.sheaf)"
        [ -n "$bad" ] && break
    done
    if [ -z "$bad" ]; then pass "threads.error.$name"; else fail "threads.error.$name" "$bad"; fi
}
err_case unterminated_quote "$T/quote.csv" --chunk-size 64K
err_case strict_ragged "$T/ragged.csv" --strict --chunk-size 64K
err_case corrupt_gzip_member "$T/bad.csv.gz"
err_case too_many_classes "$T/t.csv" --target label --max-classes 3 --chunk-size 64K
OUT=$T/no/such/dir/x.sheaf err_case unwritable_output "$T/t.csv"
# Two records over --max-record: the first (line 5) inside one chunk, found
# by the worker that tokenizes it; the second (1,000 bytes) longer than any
# chunk can grow, found by the reading thread.  The first in the stream is
# the error at every -j (found by fuzz_scan_threads: the reading thread's
# error used to win when it ran ahead of the workers).
{
    echo "id,note,v"
    for i in 1 2 3; do echo "$i,ok,$i"; done
    printf '4,"%s",4\n' "$(head -c 100 /dev/zero | tr '\0' x)"
    for i in $(seq 5 40); do echo "$i,ok,$i"; done
    printf '41,%s,41\n' "$(head -c 1000 /dev/zero | tr '\0' y)"
    echo "42,ok,42"
} >"$T/two_long.csv"
err_case first_of_two_long_records "$T/two_long.csv" --chunk-size 256 --max-record 64
run "$SHEAF" scan "$T/two_long.csv" --chunk-size 256 --max-record 64 -j 2 -q -o "$T/e.sheaf"
check threads.error.first_long_record "no 'line 5: record at byte 31' in: $(err_text)" \
    grep -q "two_long.csv: line 5: record at byte 31 is longer" "$T/err"
# Files read ahead (the next one opened and decompressed while this one is
# scanned) still fail in turn, with the same message.
head -c 300000 "$T/t.csv.gz" >"$T/short.csv.gz"
err_case second_file_missing "$T/t.csv" "$T/no-such.csv"
err_case second_file_truncated "$T/t.csv.zst" "$T/short.csv.gz"
err_case fourth_file_unterminated "$T/t.csv" "$T/t.csv.gz" "$T/ragged.csv" "$T/quote.csv"
# The messages name the place.
run "$SHEAF" scan "$T/quote.csv" --chunk-size 64K -j 4 -q -o "$T/e.sheaf"
check threads.error.names_line "no 'line 30001' in: $(err_text)" grep -q "quote.csv: line 30001: unterminated quote" "$T/err"
run "$SHEAF" scan "$T/ragged.csv" --strict -j 4 -q -o "$T/e.sheaf"
check threads.error.names_ragged_line "no 'line 25001' in: $(err_text)" grep -q "line 25001: " "$T/err"

# 4. A continuous target's own column: its mean and sd against pandas.
"$SHEAF" scan "$T/t.csv" --target price -j 2 -q -o "$T/r.sheaf" &&
    "$SHEAF" info "$T/r.sheaf" --format json >"$T/r.json"
if [ -x "$PY" ] && "$PY" -c 'import pandas' 2>/dev/null; then
    if out=$("$PY" - "$T/t.csv" "$T/r.json" <<'PY' 2>&1
import json, sys
import pandas as pd
col = pd.read_csv(sys.argv[1], usecols=["price"])["price"]
info = json.load(open(sys.argv[2]))
cols = info["columns"] if isinstance(info, dict) and "columns" in info else info
c = next(c for c in cols if c["name"] == "price")
for key, want in (("mean", col.mean()), ("sd", col.std())):
    got = c[key]
    if abs(got - want) > 1e-12 * abs(want):
        sys.exit("%s: sheaf %r, pandas %r" % (key, got, want))
PY
    ); then pass threads.regression_target_column_vs_pandas
    else fail threads.regression_target_column_vs_pandas "$out"; fi
else
    skip threads.regression_target_column_vs_pandas "Debian python3-pandas not installed"
fi

# 5. Options.
run "$SHEAF" scan "$T/t.csv" -j 0 -o "$T/z.sheaf"
check threads.option.zero_is_usage "exit $RC" test "$RC" -eq 2
run "$SHEAF" scan --help
check threads.option.help "--threads missing from --help" grep -q -- "--threads" "$T/out"
run env SHEAF_THREADS=3 "$SHEAF" scan "$T/t.csv" -q -o "$T/env.sheaf"
"$SHEAF" scan "$T/t.csv" -j 1 -q -o "$T/one.sheaf"
check threads.option.environment "SHEAF_THREADS=3 gives other bytes" cmp -s "$T/env.sheaf" "$T/one.sheaf"

# 6. Every golden fingerprint at -j1 as at the default thread count.
SHEAF_THREADS=1 bash tests/cli/test_golden.sh >"$T/golden1" 2>&1
g_fail=$(grep -c '^FAIL' "$T/golden1")
g_pass=$(grep -c '^PASS' "$T/golden1")
if [ "$g_fail" -eq 0 ] && [ "$g_pass" -gt 0 ]; then pass "threads.golden_at_j1 ($g_pass fingerprints)"
else fail threads.golden_at_j1 "$g_fail of $((g_pass + g_fail)) differ: $(grep '^FAIL' "$T/golden1" | head -n 2 | tr '\n' '|')"; fi

# An empty -j is an error (it was taken as the default), and a bad
# SHEAF_THREADS is named as such (it was reported as --threads); an empty
# SHEAF_THREADS is unset.
printf 'a,b\n1,2\n3,4\n' >"$T/tiny.csv"
run "$SHEAF" scan "$T/tiny.csv" -j '' -q -o "$T/tiny.sheaf"
check threads.empty_option_refused "exit $RC: $(err_text)" holds '[ "$RC" = 2 ] && [ ! -e "$T/tiny.sheaf" ]'
run env SHEAF_THREADS=abc "$SHEAF" scan "$T/tiny.csv" -q -o "$T/tiny.sheaf"
check threads.bad_environment_named "exit $RC: $(err_text)" \
    holds '[ "$RC" = 2 ] && grep -q "^sheaf scan: SHEAF_THREADS must be" "$T/err"'
run env SHEAF_THREADS= "$SHEAF" scan "$T/tiny.csv" -q -o "$T/tiny.sheaf"
check threads.empty_environment_unset "exit $RC: $(err_text)" [ "$RC" = 0 ]
# Without OPENBLAS_NUM_THREADS (tests/run.sh sets it for speed), sheaf starts
# itself again with it set to 1: the same summary, and OpenBLAS started no
# pool of its own (one thread at -j1 then, read from /proc while it runs).
OPENBLAS_NUM_THREADS=1 "$SHEAF" scan "$T/t.csv" -q -j2 -o "$T/withenv.sheaf"
run env -u OPENBLAS_NUM_THREADS "$SHEAF" scan "$T/t.csv" -q -j2 -o "$T/noenv.sheaf"
check openblas.reexec_same_summary "exit $RC" \
    holds '[ "$RC" = 0 ] && cmp -s "$T/noenv.sheaf" "$T/withenv.sheaf"'
mkfifo "$T/hold"
env -u OPENBLAS_NUM_THREADS "$SHEAF" scan "$T/hold" -q -j1 -o "$T/hold.sheaf" &
pid=$!
exec 7>"$T/hold"
printf 'a,b\n1,2\n' >&7
sleep 0.5
threads=$(awk '/^Threads:/ {print $2}' "/proc/$pid/status" 2>/dev/null)
env_set=$(tr '\0' '\n' <"/proc/$pid/environ" 2>/dev/null | grep -c '^OPENBLAS_NUM_THREADS=1$')
exec 7>&-
wait "$pid"
check openblas.reexec_one_thread "threads $threads, OPENBLAS_NUM_THREADS=1 in its environment: $env_set" \
    [ "${threads:-0}" = 1 -a "${env_set:-0}" = 1 ]
