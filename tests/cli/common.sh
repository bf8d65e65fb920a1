# Helpers shared by tests/cli/test_*.sh (sourced, not run): the PASS/FAIL/SKIP
# line convention that tests/run.sh counts, and a command runner.  The
# sourcing script sets T (its scratch directory) before calling run.
pass() { echo "PASS $1"; }
fail() { echo "FAIL $1: $2"; }
skip() { echo "SKIP $1: $2"; }
# check NAME WHY COMMAND...: PASS when COMMAND succeeds; returns its status.
check() {
    local name=$1 why=$2
    shift 2
    if "$@"; then pass "$name"; else fail "$name" "$why"; return 1; fi
}
# run CMD...: runs with stdout/stderr to $T/out, $T/err; exit code in $RC.
run() {
    "$@" >"$T/out" 2>"$T/err"
    RC=$?
}
err_text() { tr '\n' '|' <"$T/err" | cut -c1-300; }
# first_diff A B: where two files first differ (for failure messages).
first_diff() { cmp "$1" "$2" 2>&1 | head -n 1; }
