#!/usr/bin/env bash
# Runs every suite and prints one summary line "N passed, N failed".
#   Criterion binaries (arguments), then tests/ref/*.py (reference checks with
#   Debian's numpy/scipy/pandas/statsmodels) and tests/cli/test_*.sh (end to end; tests/cli/common.sh holds their shared helpers).
# Reference and CLI scripts print one line per check: "PASS name" or
# "FAIL name: why".
# Suites run SHEAF_TEST_JOBS at a time (default: the CPUs, nproc), each in
# its own temporary directory; their lines are printed in the order above,
# with each suite's wall time.  The suites that run make in the tree
# (SERIAL below) run alone, after the others; the longest (FIRST below,
# about a third of the whole) start first, so that the last minutes do not
# run one long suite on one core.
# Environment: SHEAF_BIN, the sheaf binary the scripts run (./sheaf; the
# sanitized build sets build/asan/sheaf); SHEAF_TEST_SCRIPTS, the scripts to
# run instead of all of them; SHEAF_TEST_LOGS, the log directory
# (build/test-logs); SHEAF_TEST_JOBS, suites at once.
set -u
cd "$(dirname "$0")/.."
log=${SHEAF_TEST_LOGS:-build/test-logs}; mkdir -p "$log"
export SHEAF_BIN=${SHEAF_BIN:-./sheaf}
# sheaf sets OPENBLAS_NUM_THREADS=1 by starting itself again when it is
# unset (src/cli/main.c): 20 ms of every run here, half of a small command's
# time and minutes of the suite's.  test_scan_threads.sh checks the
# re-execution itself.
export OPENBLAS_NUM_THREADS=${OPENBLAS_NUM_THREADS:-1}
jobs_max=${SHEAF_TEST_JOBS:-$(nproc 2>/dev/null || echo 1)}
SERIAL=" test_install.sh test_make_targets.sh "
# (test_fuzz_bounded.sh runs make too, but only for its own build/fuzz/
# targets, which nothing else builds.)
FIRST=" test_fuzz_bounded.sh test_scan_threads.sh test_merge_shard.sh test_threads_tsan.sh "
FIRST+=" test_summary_decode.sh test_scan_info.sh test_checkpoint_restart.sh "

# One suite: runs it, leaves its log in $log/NAME.out and "passed failed
# seconds" in $log/NAME.res (written last: its presence means done).
run_one() {
    local item=$1 name rc p f t start
    name=$(basename "$item")
    start=$(date +%s%N)
    case "$item" in
        *.py) /usr/bin/python3 "$item" >"$log/$name.out" 2>&1 ;;
        *.sh) bash "$item" >"$log/$name.out" 2>&1 ;;
        *) "$item" --jobs 2 >"$log/$name.out" 2>&1 ;;
    esac
    rc=$?
    case "$item" in
        *.py | *.sh)
            p=$(grep -c '^PASS' "$log/$name.out")
            f=$(grep -c '^FAIL' "$log/$name.out")
            if [ "$rc" -ne 0 ] && [ "$f" -eq 0 ]; then f=1; echo "FAIL $name exited $rc" >>"$log/$name.out"; fi ;;
        *)
            local line
            line=$(grep -a 'Synthesis:' "$log/$name.out" | tail -n 1)
            t=$(sed -n 's/.*Tested: \([0-9]*\).*/\1/p' <<<"$line")
            p=$(sed -n 's/.*Passing: \([0-9]*\).*/\1/p' <<<"$line")
            if [ -z "$t" ]; then t=1; p=0; fi
            f=$((t - p))
            [ "$rc" -ne 0 ] && [ "$f" -eq 0 ] && f=1 ;;
    esac
    echo "$p $f $(( ($(date +%s%N) - start) / 1000000 ))" >"$log/$name.res.tmp"
    mv "$log/$name.res.tmp" "$log/$name.res"
}

items=("$@")
# shellcheck disable=SC2086
for script in ${SHEAF_TEST_SCRIPTS:-tests/ref/*.py tests/cli/test_*.sh}; do
    [ -e "$script" ] && items+=("$script")
done
for item in "${items[@]}"; do rm -f "$log/$(basename "$item").res"; done

passed=0 failed=0 next=0
# Prints the finished suites at the head of the list, in order.
print_ready() {
    while [ "$next" -lt "${#items[@]}" ]; do
        local item=${items[$next]} name p f ms
        name=$(basename "$item")
        [ -e "$log/$name.res" ] || return 0
        read -r p f ms <"$log/$name.res"
        passed=$((passed + p)); failed=$((failed + f))
        printf '%-28s %4d passed, %d failed  (%d.%d s)\n' "$name" "$p" "$f" $((ms / 1000)) $((ms % 1000 / 100))
        if [ "$f" -ne 0 ]; then
            case "$item" in
                *.py | *.sh) grep -a '^FAIL' "$log/$name.out" | head -n 20; tail -n 5 "$log/$name.out" ;;
                *) grep -a -E '\[(FAIL|----)\]|CRASH|signal' "$log/$name.out" | head -n 20 ;;
            esac
        fi
        next=$((next + 1))
    done
}

serial=() first=() rest=()
for item in "${items[@]}"; do
    case "$SERIAL" in *" $(basename "$item") "*) serial+=("$item"); continue ;; esac
    case "$FIRST" in *" $(basename "$item") "*) first+=("$item") ;; *) rest+=("$item") ;; esac
done
for item in ${first[@]+"${first[@]}"} ${rest[@]+"${rest[@]}"}; do
    while [ "$(jobs -rp | wc -l)" -ge "$jobs_max" ]; do wait -n; print_ready; done
    run_one "$item" &
done
wait
print_ready
for item in "${serial[@]}"; do run_one "$item"; print_ready; done
print_ready

echo "$passed passed, $failed failed"
[ "$failed" -eq 0 ]
