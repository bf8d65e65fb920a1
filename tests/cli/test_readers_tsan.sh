#!/usr/bin/env bash
# Readers on threads under ThreadSanitizer: builds tests/test_readers_threads.c
# (standalone, -DREADERS_STANDALONE) with the library sources, all compiled
# with -fsanitize=thread, and runs it.  Four threads run screen, PCA,
# quantiles, top values, ordered walks and summary_write on one summary at
# once; any write to the shared summary by a reader is a data race that
# ThreadSanitizer reports (reference: ThreadSanitizer's happens-before race
# detection; the results themselves are checked against a single-thread run
# of sheaf's own code).
#
# Prints the program's "PASS readers_threads.NAME" lines and
# "PASS readers_tsan.no_race_report", or FAIL with the first lines of the
# report; SKIP when no compiler here supports -fsanitize=thread.  The build
# goes to build/tsan/ and is redone when a source is newer than it.
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh

OUT=build/tsan
BIN=$OUT/readers_threads
mkdir -p "$OUT"

if ! tsan_compiler "$OUT"; then
    skip readers_tsan "no compiler with a working -fsanitize=thread"
    exit 0
fi

SRC=$(ls src/io/*.c src/acc/*.c src/summary/*.c src/stats/*.c src/out/*.c)
LIBS="-lgsl $(pkg-config --libs libisal libzstd libxxhash openblas lapacke 2>/dev/null ||
    echo -lisal -lzstd -lxxhash -lopenblas -llapacke) -lz -lm -lpthread"
stale=0
[ -x "$BIN" ] || stale=1
if [ $stale = 0 ] && [ -n "$(find src tests/test_readers_threads.c tests/testutil.h -newer "$BIN" \
    \( -name '*.c' -o -name '*.h' \) -print -quit)" ]; then
    stale=1
fi
if [ $stale = 1 ]; then
    # One compiler call: fewer processes than a make, and -O1 keeps it quick.
    if ! $CC_TSAN -std=c11 -D_GNU_SOURCE -O1 -g -fsanitize=thread -Iinclude -Isrc -Itests \
        -DREADERS_STANDALONE tests/test_readers_threads.c $SRC -o "$BIN" $LIBS \
        >"$OUT/build.log" 2>&1; then
        fail readers_tsan.build "$CC_TSAN -fsanitize=thread failed: $(head -n 3 "$OUT/build.log" | tr '\n' '|')"
        exit 0
    fi
fi

# OpenBLAS would start a thread pool of its own, outside the sanitizer's view.
OPENBLAS_NUM_THREADS=1 TSAN_OPTIONS="halt_on_error=0 exitcode=66 history_size=4" \
    SHEAF_DATA="${SHEAF_DATA:-../shared/data}" "$BIN" >"$OUT/run.out" 2>"$OUT/run.err"
rc=$?
grep -E '^(PASS|FAIL|SKIP) ' "$OUT/run.out"
races=$(grep -c 'WARNING: ThreadSanitizer' "$OUT/run.err")
if [ "$races" -gt 0 ]; then
    fail readers_tsan.no_race_report "$races ThreadSanitizer reports, the first: $(grep -A 12 -m 1 'WARNING: ThreadSanitizer' "$OUT/run.err" | tr '\n' '|')"
elif [ $rc -ne 0 ]; then
    fail readers_tsan.no_race_report "exit $rc: $(tail -n 3 "$OUT/run.err" | tr '\n' '|')"
else
    pass readers_tsan.no_race_report
fi
exit 0
