# Helpers shared by tests/cli/test_*.sh (sourced, not run): the PASS/FAIL/SKIP
# line convention that tests/run.sh counts, and a command runner.  The
# sourcing script sets T (its scratch directory) before calling run.
pass() { echo "PASS $1"; }
fail() { echo "FAIL $1: $2"; }
skip() { echo "SKIP $1: $2"; }
# check NAME WHY COMMAND...: PASS when COMMAND succeeds; returns its status.
check() {
    local check_name_=$1 check_why_=$2
    shift 2
    if "$@"; then pass "$check_name_"; else fail "$check_name_" "$check_why_"; return 1; fi
}
# holds 'A && B': a condition of several commands for check, evaluated here
# (check NAME WHY [ A ] && [ B ] would check A alone: && binds outside).  It
# sees the caller's variables, not its positional parameters.
holds() { eval "$1"; }
# run CMD...: runs with stdout/stderr to $T/out, $T/err; exit code in $RC.
run() {
    "$@" >"$T/out" 2>"$T/err"
    RC=$?
}
err_text() { tr '\n' '|' <"$T/err" | cut -c1-300; }
# jget SUMMARY EXPR: a Python expression over d, the info JSON of SUMMARY
# ("no-summary" when it cannot be read).
jget() {
    "$SHEAF" info --format json "$1" 2>/dev/null | "$PY" -c 'import json,sys
d = json.load(sys.stdin)
print(json.dumps(eval(sys.argv[1]), separators=(",", ":")))' "$2" 2>/dev/null || echo "no-summary"
}
# info_same NAME A B [COLUMN_KEY...]: PASS when the two summaries read the
# same through tests/cli/info_same.py (COLUMN_KEYs also left out per column).
info_same() {
    local name=$1 a=$2 b=$3 why
    shift 3
    why=$("$PY" tests/cli/info_same.py "$a" "$b" "$@" 2>&1)
    if [ -z "$why" ]; then pass "$name"; else fail "$name" "differs: ${why:0:400}"; fi
}
# first_diff A B: where two files first differ (for failure messages).
first_diff() { cmp "$1" "$2" 2>&1 | head -n 1; }

# cli_setup TAG [python]: the scratch directory $T (removed on exit), $SHEAF
# and $PY.  Returns 1 after a FAIL line when ./sheaf is not built, or (with
# "python") after a SKIP line when Debian's python3 is absent: call it as
# `cli_setup tag python || exit 0`.
cli_setup() {
    SHEAF=${SHEAF_BIN:-./sheaf}
    PY=/usr/bin/python3
    T=$(mktemp -d "${TMPDIR:-/tmp}/sheaf-$1.XXXXXX")
    trap 'rm -rf "$T"' EXIT
    if [ ! -x "$SHEAF" ]; then fail binary "$SHEAF not found (run make first)"; return 1; fi
    if [ "${2:-}" = python ] && [ ! -x "$PY" ]; then skip all "$PY not found"; return 1; fi
    return 0
}

# tsan_compiler DIR: sets CC_TSAN to the first compiler here whose
# -fsanitize=thread builds and runs a program (TSAN_CC first, then gcc,
# clang, cc); returns 1 when none does.  DIR holds the probe.
tsan_compiler() {
    CC_TSAN=
    local c
    for c in "${TSAN_CC:-}" gcc clang cc; do
        [ -n "$c" ] && command -v "$c" >/dev/null || continue
        if echo 'int main(void){return 0;}' |
            "$c" -fsanitize=thread -x c - -o "$1/probe" >/dev/null 2>&1 && "$1/probe"; then
            CC_TSAN=$c
            return 0
        fi
    done
    return 1
}

# no_tmpfile_shim: builds tests/cli/no_tmpfile_shim.c into $T and sets SHIM
# to it; 1 (SHIM empty, the reason in SHIM_WHY) when $SHEAF carries a
# sanitizer runtime (it must be the first library) or no compiler is there.
no_tmpfile_shim() {
    SHIM= SHIM_WHY=
    if ldd "$SHEAF" 2>/dev/null | grep -q -e libasan -e libtsan; then
        SHIM_WHY="a sanitizer runtime must be the first library: no LD_PRELOAD shim"
    elif ! command -v cc >/dev/null; then
        SHIM_WHY="no C compiler for the LD_PRELOAD shim"
    elif cc -shared -fPIC -O1 -o "$T/shim.so" tests/cli/no_tmpfile_shim.c -ldl 2>"$T/shim.err"; then
        SHIM=$T/shim.so
        return 0
    else
        SHIM_WHY="cannot build the LD_PRELOAD shim: $(tr '\n' '|' <"$T/shim.err" | cut -c1-200)"
    fi
    return 1
}

# expect_damaged_by PREFIX NAME FILE CMD...: every CMD (sheaf's arguments,
# one string each) exits 4 with one line naming FILE; PASS or FAIL
# PREFIX.NAME.
expect_damaged_by() {
    local prefix=$1 name=$2 f=$3 bad= c lines
    shift 3
    for c in "$@"; do
        # shellcheck disable=SC2086
        run $SHEAF $c
        lines=$(wc -l <"$T/err")
        if [ "$RC" -ne 4 ] || [ "$lines" -ne 1 ] || ! grep -qF "$f" "$T/err"; then
            bad="$bad; '${c%% *}' exit $RC ($lines lines: $(err_text))"
        fi
    done
    if [ -z "$bad" ]; then pass "$prefix.$name"; else fail "$prefix.$name" "${bad#; }"; fi
}

# expect_readers_refuse PREFIX NAME FILE PARTNER DATA: expect_damaged_by with
# every reader of a summary: info (text and JSON), screen, pca, corr, merge
# both ways with PARTNER (a good summary of the same kind), drift both ways,
# page (FILE alone and as the baseline), and trim and project of DATA.
expect_readers_refuse() {
    local f=$3 p=$4 d=$5
    expect_damaged_by "$1" "$2" "$f" "info $f" "info --format json $f" "screen $f" "pca $f" \
        "corr $f" "merge $f $p -o $T/merged.sheaf" "merge $p $f -o $T/merged.sheaf" "drift $p $f" \
        "drift $f $p" "page $f -o $T/page.html" "page $p --base $f -o $T/page.html" \
        "trim $d --summary $f -o $T/trim.csv" "project $d --summary $f -o $T/proj.csv"
}

# python_modules NAME MODULE...: 0 when $PY imports every module; else SKIP
# NAME (naming Debian's python3-MODULE packages) and 1.
python_modules() {
    local name=$1 m missing=
    shift
    for m in "$@"; do "$PY" -c "import $m" 2>/dev/null || missing="$missing python3-$m"; done
    [ -z "$missing" ] && return 0
    skip "$name" "not installed:$missing"
    return 1
}
