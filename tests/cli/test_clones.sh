#!/usr/bin/env bash
# The scan's hot loops are compiled twice (src/io/clones.h): an x86-64-v3
# copy, chosen at load time on a CPU that has AVX2 and BMI2, and the
# baseline.  Both must write the same summary bytes.  The sanitized build
# (build/asan/sheaf, made by `make test`) has no clones, so it runs the
# baseline code of the same sources: this compares its summaries with those
# of ./sheaf, byte for byte, on the benchmark profile (no target, a class
# target, a continuous target with exact pair sums, a numeric target past
# --max-classes), at -j1 and -j2, and on the four open datasets; and the
# build under test against itself with its SIMD parser or its wide cell
# hash turned off.
set -u
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup clones || exit 0
BASE=${SHEAF_BASELINE_BIN:-build/asan/sheaf}
GEN=build/demo/generate
if [ ! -x "$BASE" ]; then skip all "$BASE not built (make sanitize-build)"; exit 0; fi
[ -x "$GEN" ] || { fail clones.setup "build/demo/generate is not built"; exit 0; }
if [ "$SHEAF" = "$BASE" ]; then skip all "the sanitized build is the one under test"; exit 0; fi
if grep -qw avx2 /proc/cpuinfo 2>/dev/null; then
    pass clones.cpu_has_avx2
else
    skip clones.cpu "no AVX2 here: both builds run the baseline copy"
fi

$GEN --profile bench --rows 30000 -o "$T/b.csv" 2>/dev/null
# agree NAME INPUT OPTIONS...: the summary of ./sheaf against that of the
# scanning command in OTHER (an array), byte for byte.
agree() {
    local name=$1 in=$2
    shift 2
    "$SHEAF" scan "$in" -o "$T/fast.sheaf" -q "$@" 2>"$T/err1"
    local r1=$?
    "${OTHER[@]}" scan "$in" -o "$T/other.sheaf" -q "$@" 2>"$T/err2"
    local r2=$?
    if [ $r1 -ne 0 ] || [ $r2 -ne 0 ]; then
        fail "$name" "exit $r1 / $r2: $(head -c 200 "$T/err1") $(head -c 200 "$T/err2")"
    else
        check "$name" "$(first_diff "$T/fast.sheaf" "$T/other.sheaf")" cmp -s "$T/fast.sheaf" "$T/other.sheaf"
    fi
}
# The baseline build.
same() { OTHER=(env ASAN_OPTIONS=detect_leaks=0 "$BASE"); agree "$@"; }
# The scalar parser for every cell (no SIMD, no quick loop: the general
# path of src/summary/block.c), in the build under test.
scalar() { OTHER=(env SHEAF_TEST_SCALAR_DECODE=1 "$SHEAF"); agree "$@"; }
for j in 1 2; do
    same "bench.none.j$j" "$T/b.csv" -j"$j"
    same "bench.label.j$j" "$T/b.csv" -j"$j" --target label
    same "bench.balance.j$j" "$T/b.csv" -j"$j" --target balance
    same "bench.digit3.j$j" "$T/b.csv" -j"$j" --target digit --max-classes 3
done
# Two blocks of one class whose M2 is NaN (each block's is -inf + inf):
# which NaN comes out depends on operand order, which differs between the
# copies; the writer stores one NaN (acc/wire.h).
{ echo tray,weight; for i in $(seq 1 129); do echo a,-1.7976931348623157e308; echo a,1.7976931348623157e308; done; } >"$T/nan.csv"
same "nan_m2.label" "$T/nan.csv" --target tray
scalar "scalar.bench.label" "$T/b.csv" --target label
scalar "scalar.bench.balance" "$T/b.csv" -j2 --target balance
# The cells' hashes one at a time (io/cellhash.h: eight at a time with
# AVX-512), in the build under test.
one_hash() { OTHER=(env SHEAF_TEST_SCALAR_HASH=1 "$SHEAF"); agree "$@"; }
one_hash "one_hash.bench.none" "$T/b.csv"
one_hash "one_hash.bench.label" "$T/b.csv" -j2 --target label
OPEN=${SHEAF_OPEN_DATA:-../shared/data/open}
for d in iris mpg penguins tips; do
    if [ -s "$OPEN/$d.csv" ]; then
        same "open.$d" "$OPEN/$d.csv"
        scalar "scalar.open.$d" "$OPEN/$d.csv"
    else
        skip "open.$d" "$OPEN/$d.csv not found"
    fi
done
