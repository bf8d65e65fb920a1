#!/usr/bin/env bash
# The passes on threads under ThreadSanitizer: the whole sheaf command built
# again with -fsanitize=thread (build/tsan/sheaf), then scan, trim and
# project at -j3 with small chunks (many chunks in flight, every task kind
# racing) on a small table with a class target and with a continuous target,
# a scan with checkpoints (written on a thread of their own while the scan
# goes on), and a scan that fails in the middle (its threads stop while others run).
# Any unsynchronized access is a race ThreadSanitizer reports (its
# happens-before detection); the outputs must also equal the -j1 outputs of
# the normal build.  SKIP when no compiler here supports -fsanitize=thread.
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
cli_setup threads-tsan || exit 0

OUT=build/tsan
BIN=$OUT/sheaf
mkdir -p "$OUT"
if ! tsan_compiler "$OUT"; then
    skip threads_tsan "no compiler with a working -fsanitize=thread"
    exit 0
fi
SRC=$(ls src/*/*.c)
LIBS="-lgsl $(pkg-config --libs libisal libzstd libxxhash openblas lapacke 2>/dev/null ||
    echo -lisal -lzstd -lxxhash -lopenblas -llapacke) -lz -lm -lpthread"
if [ ! -x "$BIN" ] || [ -n "$(find src -newer "$BIN" \( -name '*.c' -o -name '*.h' \) -print -quit)" ]; then
    if ! $CC_TSAN -std=c11 -D_GNU_SOURCE -O1 -g -fsanitize=thread -Iinclude -Isrc $SRC \
        -o "$BIN" $LIBS >"$OUT/build-sheaf.log" 2>&1; then
        fail threads_tsan.build "$CC_TSAN -fsanitize=thread failed: $(head -n 3 "$OUT/build-sheaf.log" | tr '\n' '|')"
        exit 0
    fi
fi

build/demo/generate --profile bench --rows 6000 -o "$T/t.csv" 2>/dev/null
gzip -6 -c "$T/t.csv" >"$T/t.csv.gz"
{ head -n 3000 "$T/t.csv"; tail -n +3001 "$T/t.csv" | tr -d '"' |
    awk 'NR == 1 { sub(/,/, ",\"open,") } { print }'; } >"$T/quote.csv"
export OPENBLAS_NUM_THREADS=1
export TSAN_OPTIONS="halt_on_error=0 exitcode=66 history_size=4"
: >"$T/tsan.err"
tsan() { # name, command... (the sanitized sheaf is $BIN): reports races into tsan.err
    local name=$1
    shift
    "$@" >"$T/out" 2>"$T/err"
    RC=$?
    cat "$T/err" >>"$T/tsan.err"
    if grep -q 'WARNING: ThreadSanitizer' "$T/err"; then
        fail "threads_tsan.$name" "$(grep -A 10 -m 1 'WARNING: ThreadSanitizer' "$T/err" | tr '\n' '|' | cut -c1-600)"
        return 1
    fi
    return 0
}
same() { # name, file made by the sanitized build at -j3, the same by ./sheaf -j1
    if cmp -s "$2" "$3"; then pass "threads_tsan.$1"; else fail "threads_tsan.$1" "differs from -j1: $(first_diff "$2" "$3")"; fi
}
for tgt in label price; do
    tsan "scan_$tgt" "$BIN" scan "$T/t.csv.gz" "$T/t.csv" --target "$tgt" --chunk-size 64K -j 3 -q -o "$T/a.sheaf" &&
        ./sheaf scan "$T/t.csv.gz" "$T/t.csv" --target "$tgt" --chunk-size 64K -j 1 -q -o "$T/b.sheaf" &&
        same "scan_$tgt" "$T/a.sheaf" "$T/b.sheaf"
done
# With checkpoints every 256 KiB: each cut's checkpoint is settled, merged
# and written on its own thread while the workers scan the next segment.
tsan checkpointed "$BIN" scan "$T/t.csv.gz" --target label --chunk-size 64K -j 3 -q \
    --checkpoint "$T/a.ckpt" --checkpoint-every 256K -o "$T/a.sheaf" &&
    ./sheaf scan "$T/t.csv.gz" --target label --chunk-size 64K -j 1 -q \
        --checkpoint "$T/b.ckpt" --checkpoint-every 256K -o "$T/b.sheaf" &&
    same checkpointed "$T/a.sheaf" "$T/b.sheaf"
./sheaf scan "$T/t.csv" --target label -q -o "$T/s.sheaf"
tsan trim "$BIN" trim "$T/t.csv.gz" --summary "$T/s.sheaf" --chunk-size 64K -j 3 -q -o "$T/a.csv" &&
    ./sheaf trim "$T/t.csv.gz" --summary "$T/s.sheaf" --chunk-size 64K -j 1 -q -o "$T/b.csv" &&
    same trim "$T/a.csv" "$T/b.csv"
tsan project "$BIN" project "$T/t.csv" --summary "$T/s.sheaf" --chunk-size 64K -j 3 -q -o "$T/a.pc.csv" &&
    ./sheaf project "$T/t.csv" --summary "$T/s.sheaf" --chunk-size 64K -j 1 -q -o "$T/b.pc.csv" &&
    same project "$T/a.pc.csv" "$T/b.pc.csv"
if tsan failing_scan "$BIN" scan "$T/quote.csv" --chunk-size 64K -j 3 -q -o "$T/q.sheaf"; then
    if [ "$RC" -eq 3 ] && grep -q "line 3001: unterminated quote" "$T/err"; then pass threads_tsan.failing_scan
    else fail threads_tsan.failing_scan "exit $RC: $(err_text)"; fi
fi
# Compressed input at -j2: one worker, and the reading thread runs tasks
# while it waits for a slot (chunks_options.caller_helps), a failing one too.
tsan helping_scan "$BIN" scan "$T/t.csv.gz" --target label --chunk-size 64K -j 2 -q -o "$T/h.sheaf" &&
    ./sheaf scan "$T/t.csv.gz" --target label --chunk-size 64K -j 1 -q -o "$T/h1.sheaf" &&
    same helping_scan "$T/h.sheaf" "$T/h1.sheaf"
gzip -c "$T/quote.csv" >"$T/quote.csv.gz"
if tsan helping_failing_scan "$BIN" scan "$T/quote.csv.gz" --chunk-size 64K -j 2 -q -o "$T/qh.sheaf"; then
    if [ "$RC" -eq 3 ] && grep -q "line 3001: unterminated quote" "$T/err"; then pass threads_tsan.helping_failing_scan
    else fail threads_tsan.helping_failing_scan "exit $RC: $(err_text)"; fi
fi
races=$(grep -c 'WARNING: ThreadSanitizer' "$T/tsan.err")
check threads_tsan.no_race_report "$races reports" test "$races" -eq 0
