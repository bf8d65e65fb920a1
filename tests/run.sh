#!/usr/bin/env bash
# Runs every suite and prints one summary line "N passed, N failed".
#   Criterion binaries (arguments), then tests/ref/*.py (reference checks with
#   Debian's numpy/scipy/pandas/statsmodels) and tests/cli/test_*.sh (end to end; tests/cli/common.sh holds their shared helpers).
# Reference and CLI scripts print one line per check: "PASS name" or
# "FAIL name: why".
# Environment: SHEAF_BIN, the sheaf binary the scripts run (./sheaf; the
# sanitized build sets build/asan/sheaf); SHEAF_TEST_SCRIPTS, the scripts to
# run instead of all of them; SHEAF_TEST_LOGS, the log directory
# (build/test-logs).
set -u
cd "$(dirname "$0")/.."
passed=0 failed=0
log=${SHEAF_TEST_LOGS:-build/test-logs}; mkdir -p "$log"
export SHEAF_BIN=${SHEAF_BIN:-./sheaf}

for bin in "$@"; do
    name=$(basename "$bin")
    "$bin" --jobs 2 >"$log/$name.out" 2>&1
    rc=$?
    line=$(grep -a 'Synthesis:' "$log/$name.out" | tail -n 1)
    t=$(sed -n 's/.*Tested: \([0-9]*\).*/\1/p' <<<"$line")
    p=$(sed -n 's/.*Passing: \([0-9]*\).*/\1/p' <<<"$line")
    if [ -z "$t" ]; then t=1; p=0; fi
    f=$((t - p))
    [ "$rc" -ne 0 ] && [ "$f" -eq 0 ] && f=1
    passed=$((passed + p)); failed=$((failed + f))
    printf '%-28s %4d passed, %d failed\n' "$name" "$p" "$f"
    [ "$f" -ne 0 ] && grep -a -E '\[(FAIL|----)\]|CRASH|signal' "$log/$name.out" | head -n 20
done

# shellcheck disable=SC2086
for script in ${SHEAF_TEST_SCRIPTS:-tests/ref/*.py tests/cli/test_*.sh}; do
    [ -e "$script" ] || continue
    name=$(basename "$script")
    case "$script" in
        *.py) /usr/bin/python3 "$script" >"$log/$name.out" 2>&1 ;;
        *.sh) bash "$script" >"$log/$name.out" 2>&1 ;;
    esac
    rc=$?
    p=$(grep -c '^PASS' "$log/$name.out")
    f=$(grep -c '^FAIL' "$log/$name.out")
    if [ "$rc" -ne 0 ] && [ "$f" -eq 0 ]; then f=1; echo "FAIL $name exited $rc" >>"$log/$name.out"; fi
    passed=$((passed + p)); failed=$((failed + f))
    printf '%-28s %4d passed, %d failed\n' "$name" "$p" "$f"
    [ "$f" -ne 0 ] && grep -a '^FAIL' "$log/$name.out" | head -n 20 && tail -n 5 "$log/$name.out"
done

echo "$passed passed, $failed failed"
[ "$failed" -eq 0 ]
