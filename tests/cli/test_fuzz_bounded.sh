#!/usr/bin/env bash
# The differential fuzz target tests/fuzz/fuzz_scan_split.c, bounded: every
# committed corpus file is replayed on its own (a whole scan, scans with other
# chunk sizes and merged shard scans must agree; see the harness's header),
# then libFuzzer mutates the corpus files that passed.  Under `make test`
# the mutation is reproducible: a fixed seed (FUZZ_SEED, 1) and a fixed
# number of inputs (FUZZ_RUNS, 400), so the same inputs run on every machine
# and a CI run cannot fail by luck; `make fuzz` sets FUZZ_SECONDS (900) and
# explores with a random seed for that long.  Without clang's libFuzzer the corpus is
# replayed by the plain driver (built with $CC) and the fuzzing is skipped.
#
# Reference: sheaf's own whole-file scan with the default chunk size (the
# harness compares the other runs with it).  Built objects go to build/fuzz/
# (reused across runs); a failing input is kept in build/fuzz/artifacts/.
# Prints "PASS name", "FAIL name: why" or "SKIP name: reason" lines and exits 0.
set -u
cd "$(dirname "$0")/../.." || exit 0
T=$(mktemp -d "${TMPDIR:-/tmp}/sheaf-fuzz.XXXXXX")
trap 'rm -rf "$T"' EXIT

. tests/cli/common.sh

if [ -n "${FUZZ_SECONDS:-}" ]; then
    LIMIT="-max_total_time=$FUZZ_SECONDS"; SHOWN="$FUZZ_SECONDS s"
else
    LIMIT="-seed=${FUZZ_SEED:-1} -runs=${FUZZ_RUNS:-400} -max_total_time=300"
    SHOWN="seed ${FUZZ_SEED:-1}"
fi
CORPUS=tests/fuzz/corpus/scan_split
ART=build/fuzz/artifacts
mkdir -p "$ART"
export OPENBLAS_NUM_THREADS=1
# The harness writes its input file under TMPDIR: a crash leaves it in $T.
export TMPDIR="$T"

# libFuzzer is there when clang links a trivial target with -fsanitize=fuzzer.
have_libfuzzer() {
    command -v "${FUZZ_CC:-clang}" >/dev/null 2>&1 || return 1
    printf '#include <stddef.h>\n#include <stdint.h>\nint LLVMFuzzerTestOneInput(const uint8_t *d, size_t n) { (void)d; (void)n; return 0; }\n' >"$T/probe.c"
    "${FUZZ_CC:-clang}" -fsanitize=fuzzer,address,undefined "$T/probe.c" -o "$T/probe" >/dev/null 2>&1
}

if have_libfuzzer; then
    BIN=build/fuzz/fuzz_scan_split
    MODE=libfuzzer
else
    BIN=build/fuzz/replay_scan_split
    MODE=replay
fi
if ! make -s "$BIN" >"$T/build.log" 2>&1; then
    fail fuzz.build "make $BIN: $(tail -n 3 "$T/build.log" | tr '\n' '|' | cut -c1-300)"
    exit 0
fi
pass "fuzz.build ($MODE)"

# why LOG: the first line that says what went wrong.
why() {
    grep -a -m 1 -E 'disagree|ERROR: AddressSanitizer|runtime error|ERROR: libFuzzer|deadly signal|^fuzz_scan_split:' "$1" |
        sed "s|[^ (]*/fuzz_scan_split\.[A-Za-z0-9]*|INPUT|g" | cut -c1-400
}

mkdir -p "$T/seeds"
for f in "$CORPUS"/*; do
    name=$(basename "$f")
    SHEAF_FUZZ_ALL_SPLITS=1 "$BIN" "$f" >"$T/replay.log" 2>&1
    rc=$?
    if [ "$rc" -eq 0 ]; then
        pass "corpus.$name"
        cp "$f" "$T/seeds/"
    else
        fail "corpus.$name" "exit $rc: $(why "$T/replay.log")"
    fi
done

if [ "$MODE" != libfuzzer ]; then
    skip fuzz.run "clang with libFuzzer (-fsanitize=fuzzer) not found"
    exit 0
fi
if [ -z "$(ls "$T/seeds")" ]; then
    skip fuzz.run "no corpus file passes its replay"
    exit 0
fi
# Mutates copies of the passing seeds (new units go to the copy, not to git).
# shellcheck disable=SC2086
"$BIN" $LIMIT -max_len=4096 -timeout=60 -rss_limit_mb=2048 \
    -print_final_stats=1 -artifact_prefix="$ART/" "$T/seeds" >"$T/fuzz.log" 2>&1
rc=$?
runs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$T/fuzz.log")
if [ "$rc" -eq 0 ]; then
    pass "fuzz.run ($SHOWN, ${runs:-?} inputs)"
else
    unit=$(sed -n 's/.*Test unit written to //p' "$T/fuzz.log" | head -n 1)
    cp "$T/fuzz.log" "$ART/last-fuzz.log"
    fail fuzz.run "exit $rc after ${runs:-?} inputs: $(why "$T/fuzz.log"); input ${unit:-none} (replay: $BIN FILE)"
fi
exit 0
