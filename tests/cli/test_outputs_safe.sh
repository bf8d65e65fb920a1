#!/usr/bin/env bash
# Outputs never destroy what they land on (src/summary/tempfile.h, src/out/sink.h,
# cli_check_output and cli_close_stdout in src/cli/cli.c).
#
#   device.*   character devices and FIFOs are written through and stay what
#              they are (device nodes made here with mknod, never /dev's own,
#              so that a failing run cannot replace the machine's /dev/null)
#   link.*     a symbolic link is followed to the file it names, and stays
#   same.*     an output that is an input (device and inode, through links) is
#              refused with exit 2 and the input is unchanged
#   kill.*     SIGTERM, SIGINT, SIGHUP and SIGKILL at moments drawn from a fixed
#              seed during scan, trim, project and merge: the directory holds
#              only the target, which is the old file or the new one, whole
#   named.*    the same with O_TMPFILE refused (an LD_PRELOAD shim), so the
#              named temporary file and its signal handler are used
#   full.*     a full disk (/dev/full, a 1 MiB tmpfs) names the file and the
#              reason, leaves the old target whole and nothing beside it
#   stdout.*   every failure to write standard output is one line and exit 1
#   push.*     a file that is fsynced at the end has its bytes pushed to the
#              disk every 4 MiB as it is written (sync_file_range, seen with
#              strace), all before that fsync; standard output is not pushed
# References: the old and new files are compared byte for byte with cmp; the
# file types come from stat(1); "No space left on device" and "Bad file
# descriptor" are strerror(ENOSPC) and strerror(EBADF) of glibc.
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
cli_setup outputs || exit 0
SHEAF=${SHEAF_BIN:-$SHEAF} # a sanitizer build, when the runner gives one
MNT=
cleanup() {
    [ -n "$MNT" ] && umount "$MNT" 2>/dev/null
    rm -rf "$T"
}
trap cleanup EXIT
export SHEAF_THREADS=2

# ---- inputs (awk with a fixed seed) ----
awk 'BEGIN { srand(7); print "id,x1,x2,x3,x4,x5,x6,grp,y"
    for (i = 0; i < 400000; i++)
        printf "%d,%.4f,%.4f,%.3f,%.2f,%d,%.5f,g%d,%.3f\n", i, rand() * 100, rand() - 0.5,
            rand() * rand(), rand() * 1000, int(rand() * 50), rand(), int(rand() * 7), rand() * 10 }' \
    >"$T/big.csv"
head -n 2001 "$T/big.csv" >"$T/mid.csv"
printf 'a,b,c\n1,2,x\n3,4,y\n5,7,x\n' >"$T/a.csv"
printf 'a,b,c\n2,2,y\n4,1,y\n6,3,x\n' >"$T/b.csv"
printf 'x1\nx2\nx3\ngrp\ny\n' >"$T/keep"
printf 'a\n' >"$T/keep_a"
mkdir "$T/in" "$T/ref"
$SHEAF scan -q "$T/big.csv" -o "$T/in/big.sheaf" && $SHEAF scan -q "$T/mid.csv" -o "$T/in/mid.sheaf" ||
    fail setup "scan of the big table failed"
$SHEAF scan -q "$T/a.csv" -o "$T/in/a.sheaf" && $SHEAF scan -q "$T/b.csv" -o "$T/in/b.sheaf" ||
    fail setup "scan of the small tables failed"
for i in $(seq 1 150); do ln -s big.sheaf "$T/in/m$i.sheaf"; done

# The commands, each writing OUT (a placeholder replaced by the target).
declare -A CMD=(
    [scan]="scan -q $T/big.csv -o OUT"
    # on three threads: a full disk stops them all the same way
    [scan_j3]="scan -q -j 3 $T/big.csv -o OUT"
    [merge]="merge --allow-duplicates $(printf "$T/in/m%d.sheaf " $(seq 1 150))-o OUT"
    [trim]="trim -q $T/big.csv --columns-from $T/keep -o OUT"
    [project]="project -q $T/big.csv --summary $T/in/big.sheaf -o OUT"
)
declare -A SMALL=(
    [scan]="scan -q $T/a.csv -o OUT"
    [merge]="merge $T/in/a.sheaf $T/in/b.sheaf -o OUT"
    [trim]="trim -q $T/a.csv --columns-from $T/keep_a -o OUT"
    [project]="project -q $T/mid.csv --summary $T/in/mid.sheaf --components 1 -o OUT"
)
# The reference output of each command, written to a new plain file.
for c in scan merge trim project; do
    $SHEAF ${SMALL[$c]/OUT/$T/ref/small.$c} || fail "setup.$c" "small reference failed"
done
# sheaf CMD-STRING TARGET: runs a command line from the tables with OUT set.
sheaf_to() { local line=$1; $SHEAF ${line/OUT/$2}; }

# fresh_full: the device node $T/full made anew (a failing run replaces it).
fresh_full() { rm -f "$T/full" && mknod "$T/full" c 1 7 2>/dev/null; }
# ---- device.*: write through ----
if mknod "$T/null" c 1 3 2>/dev/null && fresh_full; then
    for c in scan merge trim project; do
        run sheaf_to "${SMALL[$c]}" "$T/null"
        check "device.$c.null_written_through" "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
        check "device.$c.null_stays_a_device" "$(stat -c %F "$T/null")" [ -c "$T/null" ]
        fresh_full
        run sheaf_to "${SMALL[$c]}" "$T/full"
        check "device.$c.full_exit_1" "exit $RC" [ "$RC" -eq 1 ]
        check "device.$c.full_one_line_names_file_and_reason" "$(err_text)" \
            [ "$(wc -l <"$T/err")" -eq 1 -a -n "$(grep -F "$T/full" "$T/err" | grep 'No space left on device')" ]
        check "device.$c.full_stays_a_device" "$(stat -c %F "$T/full")" [ -c "$T/full" ]
    done
else
    skip device.mknod "mknod failed (not root?)"
fi
# /dev/stdout as a link of one's own: /proc/self/fd/1 on a pipe.
ln -s /proc/self/fd/1 "$T/stdout"
for c in scan trim; do
    sheaf_to "${SMALL[$c]}" "$T/stdout" 2>"$T/err" | cat >"$T/got"
    check "device.$c.stdout_link_written_through" "$(err_text) / $(first_diff "$T/got" "$T/ref/small.$c")" \
        cmp -s "$T/got" "$T/ref/small.$c"
    check "device.$c.stdout_link_stays_a_link" "$(stat -c %F "$T/stdout")" [ -L "$T/stdout" ]
done
# Other spellings of descriptor 1 are descriptor 1 too: '>> log' with
# -o /proc/self/fd//1 replaced log with the summary alone (outputs audit of
# 2026-12-05).
for p in /proc/self/fd//1 /dev/fd/./1 /proc/self/./fd/1; do
    echo first >"$T/log"
    sheaf_to "${SMALL[scan]}" "$p" >>"$T/log" 2>"$T/err"
    check "device.scan.spelt_${p//[^a-z0-9]/_}_appends" "$(err_text) / $(head -c 5 "$T/log" | od -c | head -1)" \
        holds '[ "$(head -n 1 "$T/log")" = first ] && [ "$(wc -c <"$T/log")" -gt 100 ]'
done
# A named pipe: the reader gets every byte, the FIFO stays.
mkfifo "$T/fifo"
for c in scan merge trim project; do
    rm -f "$T/got"
    # a reader that gives up: a sheaf that replaced the FIFO never opens it
    timeout 30 cat "$T/fifo" >"$T/got" &
    reader=$!
    run sheaf_to "${SMALL[$c]}" "$T/fifo"
    kind=$(stat -c %F "$T/fifo")
    [ -p "$T/fifo" ] || { rm -f "$T/fifo"; mkfifo "$T/fifo"; kill $reader 2>/dev/null; }
    wait $reader 2>/dev/null
    check "device.$c.fifo_receives_the_output" "exit $RC: $(err_text) / $(first_diff "$T/got" "$T/ref/small.$c")" \
        cmp -s "$T/got" "$T/ref/small.$c"
    check "device.$c.fifo_stays_a_fifo" "$kind" [ "$kind" = fifo ]
done
# A directory is refused, not replaced.
mkdir "$T/adir"
run sheaf_to "${SMALL[scan]}" "$T/adir"
check device.directory_refused "exit $RC, $(err_text)" [ "$RC" -eq 1 -a -d "$T/adir" ]

# ---- link.*: follow symbolic links ----
mkdir -p "$T/l/real" "$T/l/links"
for c in scan merge trim project; do
    echo old >"$T/l/real/$c.out"
    ln -s ../real/$c.out "$T/l/links/$c.link"
    run sheaf_to "${SMALL[$c]}" "$T/l/links/$c.link"
    check "link.$c.exit_0" "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
    check "link.$c.link_stays" "$(stat -c %F "$T/l/links/$c.link")" [ -L "$T/l/links/$c.link" ]
    check "link.$c.named_file_replaced" "$(first_diff "$T/l/real/$c.out" "$T/ref/small.$c")" \
        cmp -s "$T/l/real/$c.out" "$T/ref/small.$c"
done
# A chain: absolute link -> relative link in another directory -> file.
ln -s "$T/l/links/trim.link" "$T/l/chain"
echo old >"$T/l/real/trim.out"
run sheaf_to "${SMALL[trim]}" "$T/l/chain"
check link.chain_followed "exit $RC $(first_diff "$T/l/real/trim.out" "$T/ref/small.trim")" \
    cmp -s "$T/l/real/trim.out" "$T/ref/small.trim"
check link.chain_stays "" [ -L "$T/l/chain" -a -L "$T/l/links/trim.link" ]
# A dangling link names the file to create.
ln -s ../real/new.sheaf "$T/l/links/dangling"
run sheaf_to "${SMALL[scan]}" "$T/l/links/dangling"
check link.dangling_creates_named_file "exit $RC $(err_text)" \
    cmp -s "$T/l/real/new.sheaf" "$T/ref/small.scan"
check link.dangling_stays_a_link "" [ -L "$T/l/links/dangling" ]
left=$(ls -A "$T/l/real" "$T/l/links" | grep -c -e '\.tmp\.' -e '\.sheaf-')
check link.no_temporary_files "$left left" [ "$left" -eq 0 ]

# ---- keep.*: screen --write-kept, the output file of a printing command ----
# It once wrote "NAME.tmp" with fopen and renamed it over the target: a device
# became a regular file, a link was replaced, and the summary itself could be
# overwritten by its own keep list.
# (x overlaps between the classes: classes apart would flag x mirrors_target
# and leave the keep list empty.)
mkdir "$T/kl"
awk 'BEGIN { srand(3); print "x,noise,cls"
    for (i = 0; i < 300; i++) printf "%.3f,%.3f,%s\n", (i % 2) * 0.8 + rand(), rand(), i % 2 ? "b" : "a" }' >"$T/kl/t.csv"
$SHEAF scan -q "$T/kl/t.csv" --target cls -o "$T/kl/t.sheaf" || fail setup "scan with a target failed"
$SHEAF screen "$T/kl/t.sheaf" --write-kept "$T/ref/keep.list" >/dev/null 2>&1
check keep.reference_written "no keep list written" test -s "$T/ref/keep.list"
if fresh_full; then
    run $SHEAF screen "$T/kl/t.sheaf" --write-kept "$T/full"
    check keep.full_exit_1 "exit $RC: $(err_text)" [ "$RC" -eq 1 ]
    check keep.full_one_line_names_file_and_reason "$(err_text)" \
        [ "$(wc -l <"$T/err")" -eq 1 -a -n "$(grep -F "$T/full" "$T/err" | grep 'No space left on device')" ]
    check keep.full_stays_a_device "$(stat -c %F "$T/full")" [ -c "$T/full" ]
fi
cp "$T/kl/t.sheaf" "$T/kl/copy.sheaf"
run $SHEAF screen "$T/kl/t.sheaf" --write-kept "$T/kl/t.sheaf"
check keep.summary_as_keep_list_exit_2 "exit $RC: $(err_text)" [ "$RC" -eq 2 ]
check keep.summary_as_keep_list_says_so "$(err_text)" grep -q 'same file as the input' "$T/err"
check keep.summary_unchanged "$(first_diff "$T/kl/t.sheaf" "$T/kl/copy.sheaf")" cmp -s "$T/kl/t.sheaf" "$T/kl/copy.sheaf"
cp "$T/kl/copy.sheaf" "$T/kl/t.sheaf" # whatever happened above
# The list is written before the report: a report into a pipe its reader has
# closed (`| head`) ended screen by SIGPIPE before the list was written, and
# last run's list stayed in place for trim (outputs audit of 2026-12-05).
awk 'BEGIN { srand(5); printf "cls"; for (j = 0; j < 40; j++) printf ",v%d", j; print ""
    for (i = 0; i < 200; i++) { printf "%s", i % 2 ? "b" : "a"
        for (j = 0; j < 40; j++) printf ",%.3f", (i % 2) * (j % 3) * 0.3 + rand(); print "" } }' >"$T/kl/w.csv"
$SHEAF scan -q "$T/kl/w.csv" --target cls -o "$T/kl/w.sheaf" || fail setup "scan of the wide table failed"
echo stale >"$T/kl/w.list"
$SHEAF screen "$T/kl/w.sheaf" --format json --write-kept "$T/kl/w.list" | { exec <&-; sleep 0.3; }
check keep.written_before_the_report "list: $(head -n 1 "$T/kl/w.list")" \
    holds '[ "$(head -n 1 "$T/kl/w.list")" != stale ] && [ -s "$T/kl/w.list" ]'
mkdir "$T/kl/real"
echo old >"$T/kl/real/keep"
ln -s real/keep "$T/kl/link"
run $SHEAF screen "$T/kl/t.sheaf" --write-kept "$T/kl/link"
check keep.link_exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
check keep.link_stays "$(stat -c %F "$T/kl/link")" [ -L "$T/kl/link" ]
check keep.named_file_replaced "$(first_diff "$T/kl/real/keep" "$T/ref/keep.list")" \
    cmp -s "$T/kl/real/keep" "$T/ref/keep.list"
mkdir "$T/kl/adir"
run $SHEAF screen "$T/kl/t.sheaf" --write-kept "$T/kl/adir"
check keep.directory_refused "exit $RC, $(err_text)" [ "$RC" -eq 1 -a -d "$T/kl/adir" ]
check keep.directory_reason "$(err_text)" grep -q 'Is a directory\|not a regular file\|directory' "$T/err"
left=$(ls -A "$T/kl" "$T/kl/real" | grep -c -e '\.tmp' -e '\.keep-' -e '\.adir')
check keep.no_temporary_files "$(ls -A "$T/kl" "$T/kl/real" | tr '\n' ' ')" [ "$left" -eq 0 ]

# ---- same.*: an input is never the output ----
mkdir "$T/s"
cp "$T/a.csv" "$T/s/a.csv"
gzip -c "$T/a.csv" >"$T/s/a.csv.gz"
cp "$T/in/a.sheaf" "$T/s/a.sheaf"
cp "$T/in/b.sheaf" "$T/s/b.sheaf"
cp "$T/keep_a" "$T/s/keep"
cp "$T/in/big.sheaf" "$T/s/big.sheaf"
ln "$T/s/a.csv" "$T/s/hard.csv"
ln -s a.csv "$T/s/soft.csv"
sums() { (cd "$T/s" && sha256sum a.csv a.csv.gz a.sheaf b.sheaf keep big.sheaf); }
sums >"$T/sums.before"
same() { # NAME COMMAND...
    local name=$1
    shift
    run "$@"
    check "same.$name.exit_2" "exit $RC: $(err_text)" [ "$RC" -eq 2 ]
    check "same.$name.says_so" "$(err_text)" grep -q 'same file as the input' "$T/err"
    sums >"$T/sums.after"
    check "same.$name.inputs_unchanged" "$(diff "$T/sums.before" "$T/sums.after" | tr '\n' '|')" \
        cmp -s "$T/sums.before" "$T/sums.after"
}
same scan.input $SHEAF scan -q "$T/s/a.csv" -o "$T/s/a.csv"
same scan.hard_link $SHEAF scan -q "$T/s/a.csv" -o "$T/s/hard.csv"
same scan.symlink $SHEAF scan -q "$T/s/soft.csv" -o "$T/s/a.csv"
same scan.output_symlink $SHEAF scan -q "$T/s/a.csv" -o "$T/s/soft.csv"
same scan.second_input $SHEAF scan -q "$T/b.csv" "$T/s/a.csv" -o "$T/s/a.csv"
sheaf_stdin() { $SHEAF scan -q - -o "$T/s/a.csv" <"$T/s/a.csv"; }
same scan.standard_input sheaf_stdin
same trim.gzip_input $SHEAF trim -q "$T/s/a.csv.gz" --columns-from "$T/s/keep" -o "$T/s/a.csv.gz"
same trim.keep_list $SHEAF trim -q "$T/s/a.csv" --columns-from "$T/s/keep" -o "$T/s/keep"
same trim.from $SHEAF trim -q "$T/s/a.csv" --summary "$T/s/a.sheaf" -o "$T/s/a.sheaf"
sheaf_append() { $SHEAF trim -q "$T/s/a.csv" --columns-from "$T/s/keep" >>"$T/s/a.csv"; }
same trim.standard_output_appending sheaf_append
same merge.input $SHEAF merge "$T/s/a.sheaf" "$T/s/b.sheaf" -o "$T/s/b.sheaf"
same project.pca $SHEAF project -q "$T/big.csv" --summary "$T/s/big.sheaf" -o "$T/s/big.sheaf"
cp "$T/big.csv" "$T/s/bigcopy.csv"
same project.input $SHEAF project -q "$T/s/bigcopy.csv" --summary "$T/s/big.sheaf" -o "$T/s/bigcopy.csv"
run $SHEAF scan -q /dev/null -o /dev/null
check same.devices_are_not_protected "exit $RC: $(err_text)" [ "$RC" -ne 2 ]

# ---- kill.* and named.*: signals at random moments ----
# The reference new output of each big command, and how long it runs.
declare -A SECS
for c in scan merge trim project; do
    start=$(date +%s%N)
    sheaf_to "${CMD[$c]}" "$T/ref/big.$c" || fail "setup.$c" "big reference failed"
    SECS[$c]=$((($(date +%s%N) - start) / 1000000))
    echo "# $c runs ${SECS[$c]} ms"
done
echo "old contents, not a table" >"$T/old"
no_tmpfile_shim || skip named.shim "$SHIM_WHY"
RANDOM=12  # the fixed seed of the moments
# trial MODE CMD SIG I: one run killed after a drawn delay.
trial() {
    local mode=$1 c=$2 sig=$3 i=$4 d=$T/k
    rm -rf "$d"
    mkdir "$d"
    cp "$T/old" "$d/target"
    # moments in [0, 1.1 x the measured time], half of them in its last fifth
    local ms=${SECS[$c]} delay
    if ((RANDOM % 2)); then delay=$((RANDOM % (ms * 11 / 10 + 1))); else delay=$((ms * 8 / 10 + RANDOM % (ms * 3 / 10 + 1))); fi
    local pre=
    [ "$mode" = named ] && pre="LD_PRELOAD=$SHIM"
    # env resets SIGINT, which a shell leaves ignored in background jobs.
    env --default-signal=INT,TERM,HUP $pre $SHEAF ${CMD[$c]/OUT/$d/target} >/dev/null 2>"$T/err" &
    local pid=$!
    sleep "$(printf '%d.%03d' $((delay / 1000)) $((delay % 1000)))"
    kill -s "$sig" $pid 2>/dev/null
    wait $pid 2>/dev/null
    local rc=$? want
    want=$((128 + $(kill -l "$sig")))
    local name="$mode.$c.$sig.$i"
    check "$name.exit_status" "exit $rc (want 0 or $want) after ${delay} ms: $(err_text)" \
        [ "$rc" -eq 0 -o "$rc" -eq "$want" ]
    local whole=no
    { cmp -s "$d/target" "$T/old" || cmp -s "$d/target" "$T/ref/big.$c"; } && whole=yes
    check "$name.target_old_or_new" "after ${delay} ms: $(first_diff "$d/target" "$T/ref/big.$c")" \
        [ $whole = yes ]
    local left
    left=$(ls -A "$d" | grep -v '^target$' | tr '\n' ' ')
    if [ "$mode" = named ] && [ "$sig" = KILL ]; then
        return 0 # SIGKILL cannot be caught: the named fallback leaves its file (DEVELOPERS.md)
    fi
    check "$name.nothing_left" "after ${delay} ms: $left" [ -z "$left" ]
}
for c in scan trim project merge; do
    for sig in TERM INT HUP KILL; do
        trial kill "$c" "$sig" 1
        [ $c = trim ] && trial kill "$c" "$sig" 2 # the pass that writes all along
    done
done
if [ -n "$SHIM" ]; then
    # The fallback writes whole outputs too.
    for c in scan trim; do
        rm -rf "$T/k" && mkdir "$T/k" && cp "$T/old" "$T/k/target"
        run env LD_PRELOAD="$SHIM" $SHEAF ${SMALL[$c]/OUT/$T/k/target}
        check "named.$c.writes" "exit $RC $(err_text)" cmp -s "$T/k/target" "$T/ref/small.$c"
        check "named.$c.nothing_left" "$(ls -A "$T/k" | tr '\n' ' ')" [ "$(ls -A "$T/k")" = target ]
    done
    for c in scan trim project merge; do
        for sig in TERM INT HUP KILL; do trial named "$c" "$sig" 1; done
    done
fi

# ---- full.*: a full disk ----
if fresh_full; then
    for c in trim project; do
        fresh_full
        run sheaf_to "${SMALL[$c]}" "$T/full"
        check "full.$c.names_file_and_reason" "$(err_text)" \
            grep -q "^sheaf $c: $T/full: cannot write: No space left on device\$" "$T/err"
    done
fi
mkdir "$T/small"
if mount -t tmpfs -o size=1m tmpfs "$T/small" 2>/dev/null; then
    MNT=$T/small
    for c in trim project scan scan_j3 merge; do
        rm -rf "$MNT"/* "$MNT"/.[!.]* 2>/dev/null
        cp "$T/old" "$MNT/target"
        # leave about 16 KiB free: less than any of the outputs
        avail=$(($(stat -f -c '%a*%S' "$MNT")))
        head -c $((avail - 16384)) /dev/zero >"$MNT/filler" 2>/dev/null
        run sheaf_to "${CMD[$c]}" "$MNT/target"
        check "full.tmpfs.$c.exit_1" "exit $RC: $(err_text)" [ "$RC" -eq 1 ]
        check "full.tmpfs.$c.names_file_and_reason" "$(err_text)" \
            grep -q "^sheaf ${c%_j3}: $MNT/target: .*No space left on device\$" "$T/err"
        check "full.tmpfs.$c.old_target_whole" "$(first_diff "$MNT/target" "$T/old")" cmp -s "$MNT/target" "$T/old"
        check "full.tmpfs.$c.nothing_left" "$(ls -A "$MNT" | tr '\n' ' ')" \
            [ "$(ls -A "$MNT" | tr '\n' ' ')" = "filler target " ]
    done
    umount "$MNT" && MNT=
else
    skip full.tmpfs "cannot mount a tmpfs (not root?)"
fi

# ---- push.*: early writeback (tempfile_push in src/summary/tempfile.h) ----
if command -v strace >/dev/null && strace -f -o /dev/null true 2>/dev/null; then
    # 120 columns of decimals: a summary of 8.2 MB, a trimmed table of 19 MB
    awk 'BEGIN { srand(11); for (j = 0; j < 120; j++) printf "%sv%d", (j ? "," : ""), j; print ""
        for (i = 0; i < 20000; i++) {
            for (j = 0; j < 120; j++) printf "%s%.3f", (j ? "," : ""), rand() * 1000
            print "" } }' >"$T/wide.csv"
    head -n 1 "$T/wide.csv" | tr , '\n' >"$T/keep_wide"
    declare -A PUSH=([scan]="scan -q $T/wide.csv -o $T/push.out"
                     [trim]="trim -q $T/wide.csv --columns-from $T/keep_wide -o $T/push.out")
    for c in scan trim; do
        rm -f "$T/push.out"
        # shellcheck disable=SC2086
        strace -f -qq -e trace=sync_file_range,fsync -o "$T/trace" $SHEAF ${PUSH[$c]} 2>"$T/err"
        RC=$?
        size=$(stat -c %s "$T/push.out" 2>/dev/null || echo 0)
        pushes=$(grep -c 'sync_file_range(' "$T/trace")
        first_fsync=$(grep -n 'fsync(' "$T/trace" | head -n 1 | cut -d: -f1)
        last_push=$(grep -n 'sync_file_range(' "$T/trace" | tail -n 1 | cut -d: -f1)
        check "push.$c.wrote_over_4_MiB" "exit $RC, $size bytes" [ "$RC" -eq 0 -a "$size" -gt 4194304 ]
        check "push.$c.one_push_per_4_MiB" "$pushes pushes for $size bytes" \
            [ "$pushes" -eq $((size / 4194304)) ]
        check "push.$c.pushed_before_the_fsync" "last push line ${last_push:-none}, fsync line ${first_fsync:-none}" \
            holds '[ -n "$last_push" -a -n "$first_fsync" ] && [ "$last_push" -lt "$first_fsync" ]'
    done
    strace -f -qq -e trace=sync_file_range -o "$T/trace" $SHEAF scan -q "$T/wide.csv" -o - >"$T/push.out" 2>"$T/err"
    check push.stdout.not_pushed "$(grep -c 'sync_file_range(' "$T/trace") pushes" \
        [ "$(grep -c 'sync_file_range(' "$T/trace")" -eq 0 -a -s "$T/push.out" ]
else
    skip push "strace cannot trace here"
fi

# ---- stdout.*: standard output ----
declare -A OUT=(
    [info]="info $T/in/big.sheaf"
    [info_json]="info --format json $T/in/big.sheaf"
    [screen]="screen $T/in/big.sheaf"
    [screen_json]="screen --format json $T/in/big.sheaf"
    [corr]="corr $T/in/big.sheaf"
    [pca]="pca $T/in/big.sheaf"
    [trim]="trim -q $T/a.csv --columns-from $T/keep_a"
    [project]="project -q $T/mid.csv --summary $T/in/mid.sheaf --components 1"
    [help]="--help"
    [scan_help]="scan --help"
    [version]="--version"
)
for k in "${!OUT[@]}"; do
    for dest in full closed; do
        if [ $dest = full ]; then
            fresh_full || continue
            reason="No space left on device"
            $SHEAF ${OUT[$k]} >"$T/full" 2>"$T/err"
        else
            reason="Bad file descriptor"
            $SHEAF ${OUT[$k]} >&- 2>"$T/err"
        fi
        RC=$?
        check "stdout.$k.$dest.exit_1" "exit $RC: $(err_text)" [ "$RC" -eq 1 ]
        check "stdout.$k.$dest.one_line_names_standard_output" "$(err_text)" \
            [ "$(wc -l <"$T/err")" -eq 1 -a -n "$(grep 'standard output' "$T/err" | grep -F "$reason")" ]
    done
done
# A pipe whose reader is gone: SIGPIPE's default action ends sheaf quietly,
# as it ends other filters; with SIGPIPE ignored, the broken pipe is a write
# failure like any other (Python's subprocess holds the read end closed).
if [ -x /usr/bin/python3 ]; then
    /usr/bin/python3 - "$SHEAF" "$T/in/big.sheaf" >"$T/py" 2>&1 <<'EOF'
import os, signal, subprocess, sys
sheaf, summary = sys.argv[1], sys.argv[2]
for mode in ("default", "ignored"):
    r, w = os.pipe()
    os.close(r)
    pre = (lambda: signal.signal(signal.SIGPIPE, signal.SIG_IGN)) if mode == "ignored" else None
    p = subprocess.run([sheaf, "info", summary], stdout=w, stderr=subprocess.PIPE, preexec_fn=pre)
    os.close(w)
    print(mode, p.returncode, p.stderr.decode().strip().replace("\n", "|"))
EOF
    read -r _ rc msg < <(grep '^default' "$T/py")
    check stdout.closed_pipe.sigpipe_default_quiet "exit $rc, '$msg'" [ "$rc" = -13 -a -z "$msg" ]
    read -r _ rc msg < <(grep '^ignored' "$T/py")
    check stdout.closed_pipe.sigpipe_ignored_one_line "exit $rc, '$msg'" \
        [ "$rc" = 1 -a "$msg" = "sheaf: standard output: Broken pipe" ]
else
    skip stdout.closed_pipe "/usr/bin/python3 not found"
fi
# A summary for a pipe or a device is written to a scratch file in $TMPDIR
# first; when that file could not grow, the message named standard output
# (or /dev/null), which had room (outputs audit of 2026-12-05).  A file-size
# limit stands in for a full $TMPDIR (SIGXFSZ ignored: the write fails).
mkdir -p "$T/scratch"
for dest in stdout null; do
    for cmd in scan merge; do
        if [ "$cmd" = scan ]; then set -- scan -q "$T/big.csv"; else set -- merge "$T/in/big.sheaf"; fi
        if [ "$dest" = stdout ]; then out=-; name="standard output"; else out=/dev/null; name=/dev/null; fi
        (trap '' XFSZ; ulimit -f 1; TMPDIR="$T/scratch" "$SHEAF" "$@" -o "$out" 2>"$T/err" | cat >"$T/piped"; exit "${PIPESTATUS[0]}")
        RC=$?
        check "scratch_full.$cmd.$dest.names_the_scratch_folder" "exit $RC: $(err_text)" \
            holds '[ "$RC" = 1 ] && [ "$(wc -l <"$T/err")" = 1 ] && grep -qF "$name (its scratch file in $T/scratch, \$TMPDIR): cannot write: File too large" "$T/err" && [ ! -s "$T/piped" ] && [ -z "$(ls -A "$T/scratch")" ]'
    done
done
exit 0
