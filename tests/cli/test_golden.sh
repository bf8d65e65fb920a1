#!/usr/bin/env bash
# Golden fingerprints: the sha256 of every summary (and of a few `info --format json`
# and `screen --format json` outputs) that today's code writes for a fixed
# set of well-formed inputs.  A change to the engine that is meant to keep
# the format must leave every one of them byte-identical.
#
# Reference: the values in tests/golden/sha256.txt, one line per case
#   NAME <TAB> SHA256 <TAB> COMMAND
# made by this script from the code at the time they were recorded (sheaf's
# own earlier output, not an outside reference: the point is "unchanged").
# The inputs are made here under build/golden/in/ (fixed relative paths,
# mtime 1700000000 by `touch -d @1700000000`), because a summary records the
# path, size and mtime of each source.  They come from build/demo/generate
# (bench and demo profiles), ../shared/data/open (or $SHEAF_DATA/open) and
# the CSV files of Debian's python3-statsmodels.  The hashes also depend on
# the libraries that compute them (ISA-L for the gzip inputs, OpenBLAS for the
# co-moments), so they hold for one machine image, not across machines.
#
# Two things of the machine are pinned or rounded away, so that the values
# hold on any x86-64 CPU with AVX2 and FMA (the CI machine may not be the one
# that recorded them):
# - OpenBLAS picks its kernels by CPU: the values were made with its Haswell
#   kernels, which it also runs on AMD Zen, while a CPU with AVX-512 gets the
#   SkylakeX kernels, whose sums of products round differently in the last
#   bits of the co-moments of small tables.  OPENBLAS_CORETYPE=Haswell is set
#   below where the CPU can run them.
# - The JSON outputs are hashed with every number rounded to 12 significant
#   digits: one screen of the bench table differed in the last digits of its
#   p-values between two machines of the same image but for the CPU, for
#   the same summary bytes.
#
# To refresh the values deliberately (a format change that is intended):
#   SHEAF_GOLDEN_UPDATE=1 bash tests/cli/test_golden.sh
# rewrites tests/golden/sha256.txt; review the diff and commit it with the
# change that explains it.
#
# Prints one "PASS golden.NAME" or "FAIL golden.NAME: why" line per case (the
# command on a mismatch), "SKIP" for an absent data set, and exits 0.
set -u
cd "$(dirname "$0")/../.." || exit 0
SHEAF=${SHEAF_BIN:-./sheaf}
GEN=build/demo/generate
G=build/golden
IN=$G/in
OUT=$G/out
STORE=tests/golden/sha256.txt
DATA=${SHEAF_DATA:-../shared/data}
SM=/usr/lib/python3/dist-packages/statsmodels/datasets
STAMP=@1700000000
T=$(mktemp -d "${TMPDIR:-/tmp}/sheaf-golden.XXXXXX")
trap 'rm -rf "$T"' EXIT

. tests/cli/common.sh

if [ -z "${OPENBLAS_CORETYPE:-}" ] && grep -qw avx2 /proc/cpuinfo 2>/dev/null &&
    grep -qw fma /proc/cpuinfo 2>/dev/null; then
    export OPENBLAS_CORETYPE=Haswell
fi

for tool in "$SHEAF" "$GEN"; do
    if [ ! -x "$tool" ]; then
        fail golden.binary "$tool not found (run make and make $GEN first)"
        exit 0
    fi
done
if ! command -v sha256sum >/dev/null; then
    skip golden "sha256sum not found"
    exit 0
fi

# ---------------------------------------------------------------------------
# Inputs: generated or copied to fixed names, with a fixed mtime.

rm -rf "$G"
mkdir -p "$IN" "$OUT"
BENCH_ROWS=20000
DEMO_ROWS=3000
$GEN --profile bench --rows $BENCH_ROWS --threads 1 -o $IN/bench.csv
$GEN --profile bench --rows $BENCH_ROWS --threads 1 -o $IN/bench.csv.gz
$GEN --profile bench --rows 2000 --threads 1 --crlf -o $IN/bench-crlf.csv
$GEN --rows $DEMO_ROWS --seed 7 --threads 1 --shards 2 --prefix $IN/legs
declare -A HAVE
for tag in iris penguins tips mpg; do
    if [ -r "$DATA/open/$tag.csv" ]; then
        cp "$DATA/open/$tag.csv" "$IN/$tag.csv" && HAVE[$tag]=1
    else
        skip "golden.$tag" "$DATA/open/$tag.csv not found"
    fi
done
for tag in longley stackloss macrodata fair star98 randhie grunfeld fertility co2; do
    if [ -r "$SM/$tag/$tag.csv" ]; then
        cp "$SM/$tag/$tag.csv" "$IN/$tag.csv" && HAVE[$tag]=1
    else
        skip "golden.$tag" "$SM/$tag/$tag.csv not found (python3-statsmodels)"
    fi
done
if [ -n "${HAVE[iris]:-}" ]; then
    tail -n +2 $IN/iris.csv >$IN/iris-noheader.csv && HAVE[iris-noheader]=1
fi
if [ -n "${HAVE[tips]:-}" ]; then  # no field of tips.csv holds a comma
    tr ',' '\t' <$IN/tips.csv >$IN/tips.tsv && HAVE[tips-tab]=1
fi
if [ -n "${HAVE[penguins]:-}" ]; then
    sed 's/$/\r/' $IN/penguins.csv >$IN/penguins-crlf.csv && HAVE[penguins-crlf]=1
fi
touch -d $STAMP $IN/*

# ---------------------------------------------------------------------------
# Cases.  Each runs one command and hashes one file (or standard output).

declare -A WANT WANT_CMD
if [ -r "$STORE" ] && [ -z "${SHEAF_GOLDEN_UPDATE:-}" ]; then
    while IFS=$'\t' read -r name hash cmd; do
        case "$name" in ''|'#'*) continue ;; esac
        WANT[$name]=$hash
        WANT_CMD[$name]=$cmd
    done <"$STORE"
fi
NEW=$T/sha256.txt
: >"$NEW"
SEEN=" "

# record NAME HASH CMDTEXT: compares with the stored value (or stores it).
record() {
    local name=$1 hash=$2 cmd=$3
    SEEN+="$name "
    printf '%s\t%s\t%s\n' "$name" "$hash" "$cmd" >>"$NEW"
    if [ -n "${SHEAF_GOLDEN_UPDATE:-}" ]; then
        pass "golden.$name"
    elif [ -z "${WANT[$name]:-}" ]; then
        fail "golden.$name" "no stored value in $STORE (command: $cmd)"
    elif [ "${WANT_CMD[$name]}" != "$cmd" ]; then
        fail "golden.$name" "command differs from the stored one: now '$cmd', stored '${WANT_CMD[$name]}'"
    elif [ "${WANT[$name]}" != "$hash" ]; then
        fail "golden.$name" "sha256 $hash, stored ${WANT[$name]}; command: $cmd"
    else
        pass "golden.$name"
    fi
}

# summary NAME ARGS...: `sheaf scan ARGS -o build/golden/out/NAME.sheaf -q`
# (or `sheaf merge` when ARGS starts with "merge"), then the file's sha256.
summary() {
    local name=$1
    shift
    local sub=scan
    if [ "$1" = merge ]; then sub=merge; shift; fi
    local out=$OUT/$name.sheaf
    local -a argv=("$SHEAF" "$sub" "$@" -o "$out")
    [ $sub = scan ] && argv+=(-q)
    local cmd="${argv[*]}"
    run "${argv[@]}"
    if [ "$RC" -ne 0 ] || [ ! -s "$out" ]; then
        fail "golden.$name" "exit $RC: $(err_text); command: $cmd"
        return 1
    fi
    record "$name" "$(sha256sum <"$out" | cut -d' ' -f1)" "$cmd"
}

# stdout NAME COMMAND...: the sha256 of a command's standard output (JSON,
# numbers rounded: json_rounded).
stdout() {
    local name=$1
    shift
    local cmd="$*"
    run "$@"
    if [ "$RC" -ne 0 ] || [ ! -s "$T/out" ]; then
        fail "golden.$name" "exit $RC: $(err_text); command: $cmd"
        return 1
    fi
    if ! json_rounded <"$T/out" >"$T/rounded"; then
        fail "golden.$name" "output is not JSON; command: $cmd"
        return 1
    fi
    record "$name" "$(sha256sum <"$T/rounded" | cut -d' ' -f1)" "$cmd"
}

# json_rounded: the JSON on stdin, every number rounded to 12 significant
# digits, written back in the same order.
json_rounded() {
    /usr/bin/python3 -c '
import json, sys
def rounded(x):
    if isinstance(x, float):
        return float("%.12g" % x)
    if isinstance(x, list):
        return [rounded(v) for v in x]
    if isinstance(x, dict):
        return {k: rounded(v) for k, v in x.items()}
    return x
json.dump(rounded(json.load(sys.stdin)), sys.stdout, indent=1)
'
}

have() { [ -n "${HAVE[$1]:-}" ]; }

# The bench table slice, plain and gzip: no target, the 6-class `label`,
# the continuous `balance` (as bench/run.sh's target section).
for f in bench.csv bench.csv.gz; do
    tag=${f//./-}
    summary "$tag" $IN/$f
    summary "$tag.label" $IN/$f --target label
    summary "$tag.balance" $IN/$f --target balance
done
summary bench-crlf $IN/bench-crlf.csv --target label
# Byte-range shards of the plain file, and their merge.
summary bench-csv.shard-2of3 $IN/bench.csv --shard 2/3
summary bench-csv.shard-1of2.label $IN/bench.csv --shard 1/2 --target label
summary bench-csv.shard-2of2.label $IN/bench.csv --shard 2/2 --target label
summary bench-csv.merge-2-shards.label merge $OUT/bench-csv.shard-1of2.label.sheaf \
    $OUT/bench-csv.shard-2of2.label.sheaf
# Several files in one scan.
summary bench.plain-and-gzip $IN/bench.csv $IN/bench.csv.gz --target label

# The demo shards (demo/run.sh, made small), each with and without the
# outcome as target, and their merge.
for i in 01 02; do
    summary legs-$i $IN/legs-$i.csv.gz
    summary legs-$i.arrival_condition $IN/legs-$i.csv.gz --target arrival_condition
    summary legs-$i.energy_kwh $IN/legs-$i.csv.gz --target energy_kwh
done
summary legs.merge merge $OUT/legs-01.sheaf $OUT/legs-02.sheaf
summary legs.merge.arrival_condition merge $OUT/legs-01.arrival_condition.sheaf \
    $OUT/legs-02.arrival_condition.sheaf
summary legs.merge.energy_kwh merge $OUT/legs-01.energy_kwh.sheaf $OUT/legs-02.energy_kwh.sheaf

# The open datasets of tests/ref/*.py, without a target and with the targets
# (and --task / --max-classes) those suites use.
open_case() { # TAG [TARGET EXTRA...]
    local tag=$1
    shift
    have "$tag" || return 0
    if [ $# -eq 0 ]; then
        summary "$tag" $IN/$tag.csv
    else
        local target=$1
        shift
        local name="$tag.$target"
        [ $# -gt 0 ] && name+=$(printf '%s' "$*" | tr -d '-' | tr ' ' '_' | sed 's/^/./')
        summary "$name" $IN/$tag.csv --target "$target" "$@"
    fi
}
open_case iris
open_case iris species
open_case penguins
open_case penguins species
open_case penguins sex
open_case penguins body_mass_g --task regress
open_case tips
open_case tips day
open_case tips sex
open_case tips tip --task regress
open_case tips size --task regress
open_case mpg
open_case mpg cylinders
open_case mpg cylinders --task classify
open_case mpg cylinders --task regress
open_case mpg cylinders --max-classes 3
open_case mpg mpg
open_case mpg mpg --task classify
open_case mpg horsepower --task regress
# Several targets in one pass: a file of format version 4 (its parts are the
# single-target summaries above, byte for byte: tests/cli/test_targets.sh).
open_case mpg mpg,cylinders,horsepower --max-classes 3
open_case penguins species,body_mass_g,sex
open_case longley
open_case longley TOTEMP --task regress
for tag in stackloss macrodata fair star98 randhie grunfeld fertility co2; do
    open_case $tag
done

# Dialects: no header, tab, CRLF.
if have iris-noheader; then
    summary iris-noheader $IN/iris-noheader.csv --no-header
    summary iris-noheader.col5 $IN/iris-noheader.csv --no-header --target col5
fi
if have tips-tab; then
    summary tips-tab $IN/tips.tsv
    summary tips-tab.day $IN/tips.tsv --delim tab --target day
fi
have penguins-crlf && summary penguins-crlf.species $IN/penguins-crlf.csv --target species

# Read-back outputs: `info --format json` and `screen --format json`.
stdout info.bench-csv.label $SHEAF info --format json $OUT/bench-csv.label.sheaf
stdout info.legs.merge.arrival_condition $SHEAF info --format json --top-values 10 \
    $OUT/legs.merge.arrival_condition.sheaf
stdout screen.bench-csv.label $SHEAF screen --format json $OUT/bench-csv.label.sheaf
stdout screen.bench-csv.balance $SHEAF screen --format json $OUT/bench-csv.balance.sheaf
stdout screen.legs.merge.arrival_condition $SHEAF screen --format json \
    $OUT/legs.merge.arrival_condition.sheaf
if have iris; then
    stdout info.iris.species $SHEAF info --format json $OUT/iris.species.sheaf
    stdout screen.iris.species $SHEAF screen --format json $OUT/iris.species.sheaf
fi
if have tips; then
    stdout screen.tips.tip $SHEAF screen --format json $OUT/tips.tip.task_regress.sheaf
fi
if have mpg; then
    stdout info.mpg $SHEAF info --format json --top-values 20 $OUT/mpg.sheaf
    stdout screen.mpg.cylinders.top3 $SHEAF screen --format json --max-kept 3 $OUT/mpg.cylinders.sheaf
fi

# Stored cases that did not run: their input is absent (SKIP above) or the
# command failed (FAIL above).
for name in "${!WANT[@]}"; do
    case "$SEEN" in
        *" $name "*) ;;
        *) echo "SKIP golden.$name: not hashed in this run" ;;
    esac
done

if [ -n "${SHEAF_GOLDEN_UPDATE:-}" ]; then
    mkdir -p "$(dirname "$STORE")"
    {
        echo "# Golden sha256 of sheaf outputs: NAME<TAB>SHA256<TAB>COMMAND."
        echo "# Written by SHEAF_GOLDEN_UPDATE=1 bash tests/cli/test_golden.sh; see that script."
        cat "$NEW"
    } >"$STORE"
    echo "golden: wrote $(wc -l <"$NEW") values to $STORE" >&2
fi
exit 0
