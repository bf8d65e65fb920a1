#!/usr/bin/env bash
# Every fuzz harness tests/fuzz/fuzz_NAME.c, bounded: its committed corpus
# tests/fuzz/corpus/NAME/ is replayed (one PASS line, or a FAIL line per
# failing file), then libFuzzer mutates the corpus files that passed.  What each harness checks
# and against which reference is in its header:
#   scan_split     the whole scan at other chunk sizes and as merged shards
#                  against the whole-file scan;
#   scan_threads   the scan on 2 and 3 threads against one thread, byte for
#                  byte;
#   csv_reader     the record reader at any chunk and feed size, raw fields,
#                  the plain and padded tokenizers and the quote rule;
#   number         the scalar and SIMD number parsers against glibc strtod;
#   (any other harness is picked up by its file name).
# Under `make test` the mutation is reproducible: a fixed seed (FUZZ_SEED,
# 1) and a fixed number of inputs per harness (runs_for below, or FUZZ_RUNS
# for all), so the same inputs run on every machine and a CI run cannot fail
# by luck; about a minute in all on the development machine.  `make fuzz`
# sets FUZZ_SECONDS (900) and explores each harness for that long with a
# random seed.  FUZZ_ONLY="NAME..." limits the run to some harnesses.
# Without clang's libFuzzer the corpus is replayed by the plain drivers
# (build/fuzz/replay_NAME, $CC with ASan and UBSan) and the fuzzing is
# skipped.
#
# Built objects go to build/fuzz/ (reused across runs); a failing input is
# kept in build/fuzz/artifacts/NAME/, the log in build/fuzz/artifacts/NAME.log.
# Prints "PASS name", "FAIL name: why" or "SKIP name: reason" lines and exits 0.
set -u
cd "$(dirname "$0")/../.." || exit 0
T=$(mktemp -d "${TMPDIR:-/tmp}/sheaf-fuzz.XXXXXX")
trap 'rm -rf "$T"' EXIT

. tests/cli/common.sh

# Inputs per harness under `make test`: roughly ten seconds each or less
# on the shared 2-core development machine (the scans write and read files
# for every input; the parsers run in memory).
runs_for() {
    case $1 in
        scan_split) echo 250 ;;
        scan_threads) echo 300 ;;
        csv_reader) echo 20000 ;;
        number) echo 100000 ;;
        summary_decode) echo 5000 ;;
        *) echo 2000 ;;
    esac
}
# Longest input per harness (each harness also cuts what is longer).
max_len_for() {
    case $1 in
        number) echo 64 ;;
        summary_decode) echo 32768 ;; # the seeds are summaries of 2 to 19 KB
        *) echo 4096 ;;
    esac
}

ART=build/fuzz/artifacts
mkdir -p "$ART"
export OPENBLAS_NUM_THREADS=1
# Harnesses write their input files under TMPDIR: a crash leaves them in $T.
export TMPDIR="$T"

# libFuzzer is there when clang links a trivial target with -fsanitize=fuzzer.
have_libfuzzer() {
    command -v "${FUZZ_CC:-clang}" >/dev/null 2>&1 || return 1
    printf '#include <stddef.h>\n#include <stdint.h>\nint LLVMFuzzerTestOneInput(const uint8_t *d, size_t n) { (void)d; (void)n; return 0; }\n' >"$T/probe.c"
    "${FUZZ_CC:-clang}" -fsanitize=fuzzer,address,undefined "$T/probe.c" -o "$T/probe" >/dev/null 2>&1
}
if have_libfuzzer; then MODE=libfuzzer; PREFIX=fuzz; else MODE=replay; PREFIX=replay; fi

# why LOG: the first line that says what went wrong.
why() {
    grep -a -m 1 -E 'disagree|ERROR: AddressSanitizer|runtime error|ERROR: libFuzzer|deadly signal|^fuzz_[a-z_]*:' "$1" |
        sed "s|[^ (]*/fuzz_[a-z_]*\.[A-Za-z0-9]*|INPUT|g" | cut -c1-400
}

fuzz_one() {
    local name=$1 bin=build/fuzz/${PREFIX}_$1 corpus=tests/fuzz/corpus/$1
    if ! make -s -j"$(nproc)" "$bin" >"$T/build.log" 2>&1; then
        fail "$name.build" "make $bin: $(grep -a -m 3 -E 'error|Error' "$T/build.log" | tr '\n' '|' | cut -c1-300)"
        return
    fi
    pass "$name.build ($MODE)"
    rm -rf "$T/seeds"
    mkdir -p "$T/seeds"
    # The corpus in one run (one start-up); file by file only when it fails,
    # to name every failing file.
    local files=() f
    for f in "$corpus"/*; do [ -f "$f" ] && files+=("$f"); done
    if [ "${#files[@]}" -gt 0 ]; then
        if SHEAF_FUZZ_ALL_SPLITS=1 "$bin" "${files[@]}" >"$T/replay.log" 2>&1; then
            pass "$name.corpus (${#files[@]} files)"
            cp "${files[@]}" "$T/seeds/"
        else
            for f in "${files[@]}"; do
                SHEAF_FUZZ_ALL_SPLITS=1 "$bin" "$f" >"$T/replay.log" 2>&1
                local rc=$?
                if [ "$rc" -eq 0 ]; then
                    cp "$f" "$T/seeds/"
                else
                    fail "$name.corpus.$(basename "$f")" "exit $rc: $(why "$T/replay.log")"
                fi
            done
        fi
    fi
    if [ "$MODE" != libfuzzer ]; then
        skip "$name.fuzz" "clang with libFuzzer (-fsanitize=fuzzer) not found"
        return
    fi
    if [ -z "$(ls "$T/seeds")" ]; then
        fail "$name.fuzz" "no corpus file in $corpus passes its replay (the corpus is committed)"
        return
    fi
    local limit shown
    if [ -n "${FUZZ_SECONDS:-}" ]; then
        limit="-max_total_time=$FUZZ_SECONDS"
        shown="$FUZZ_SECONDS s"
    else
        local runs=${FUZZ_RUNS:-$(runs_for "$name")}
        limit="-seed=${FUZZ_SEED:-1} -runs=$runs -max_total_time=600"
        shown="seed ${FUZZ_SEED:-1}"
    fi
    mkdir -p "$ART/$name"
    # Mutates copies of the passing seeds (new units go to the copy, not to git).
    # shellcheck disable=SC2086
    "$bin" $limit -max_len="$(max_len_for "$name")" -timeout=60 -rss_limit_mb=2048 \
        -print_final_stats=1 -artifact_prefix="$ART/$name/" "$T/seeds" >"$T/fuzz.log" 2>&1
    local rc=$?
    local done_runs
    done_runs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$T/fuzz.log")
    if [ "$rc" -eq 0 ]; then
        pass "$name.fuzz ($shown, ${done_runs:-?} inputs)"
    else
        local unit
        unit=$(sed -n 's/.*Test unit written to //p' "$T/fuzz.log" | head -n 1)
        cp "$T/fuzz.log" "$ART/$name.log"
        fail "$name.fuzz" "exit $rc after ${done_runs:-?} inputs: $(why "$T/fuzz.log"); input ${unit:-none} (replay: $bin FILE)"
    fi
}

names=${FUZZ_ONLY:-$(for f in tests/fuzz/fuzz_*.c; do basename "$f" .c; done | sed 's/^fuzz_//')}
for name in $names; do
    name=${name#fuzz_} # FUZZ_ONLY may name the harness or its file
    if [ ! -f "tests/fuzz/fuzz_$name.c" ]; then
        fail "$name" "no harness tests/fuzz/fuzz_$name.c (there are: $(ls tests/fuzz/fuzz_*.c | sed 's|.*/fuzz_||; s|\.c$||' | tr '\n' ' '))"
        continue
    fi
    fuzz_one "$name"
done
exit 0
