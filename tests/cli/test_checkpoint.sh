#!/usr/bin/env bash
# scan --checkpoint / --resume (summary/checkpoint.h, scan.h): a scan killed
# with SIGKILL and resumed writes the summary of the same scan left alone,
# byte for byte: at random moments (seeded) on gzip, and inside chosen
# checkpoints (the test hook SHEAF_TEST_CHECKPOINT_PAUSE=N stops checkpoint N
# halfway through its write) on plain, zstd, several files of mixed formats,
# a class target, several targets, a numeric target whose classes are
# dropped, and another thread count.  A kill inside a checkpoint's write
# leaves the previous checkpoint whole and nothing else.  A checkpoint that
# does not match (an appended byte, another mtime, a finished file or the
# consumed prefix changed in place, other options, other files), a damaged
# or truncated one, and --resume without one are refused with one line and
# the documented exit code; so is a checkpoint a full file system cannot
# take, at one thread and at two.  The resumed summary's price mean is checked
# against pandas (Debian python3-pandas), the outside reference.
set -u
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup checkpoint || exit 0
GEN=build/demo/generate
[ -x "$GEN" ] || { fail checkpoint.setup "build/demo/generate is not built"; exit 0; }

$GEN --profile bench --rows 50000 --seed 5 -o "$T/t.csv" 2>/dev/null
gzip -1 -c "$T/t.csv" >"$T/t.csv.gz"
zstd -q -c "$T/t.csv" >"$T/t.csv.zst"
head -n 15001 "$T/t.csv" >"$T/p1.csv"
(head -n 1 "$T/t.csv"; sed -n '15002,30001p' "$T/t.csv") | gzip -1 >"$T/p2.csv.gz"
(head -n 1 "$T/t.csv"; sed -n '30002,50001p' "$T/t.csv") | zstd -q >"$T/p3.csv.zst"
EVERY=(--checkpoint-every 2M)

# wait_paused ERRFILE PID: 0 once the scan says it paused inside a checkpoint.
wait_paused() {
    local i
    for i in $(seq 300); do
        grep -q 'paused inside checkpoint' "$1" 2>/dev/null && return 0
        kill -0 "$2" 2>/dev/null || return 1
        sleep 0.05
    done
    return 1
}

# killed_in N CK ARGS...: starts the scan with checkpoint N paused, SIGKILLs it
# there.  0 when it paused (the checkpoint before N is then in CK).
killed_in() {
    local n=$1 ck=$2
    shift 2
    # Emptied here: the redirection below truncates the file only once the
    # background process runs, and until then wait_paused would read the
    # previous run's "paused" line and kill this one before any checkpoint.
    : >"$T/bg.err"
    SHEAF_TEST_CHECKPOINT_PAUSE=$n "$SHEAF" scan -q "$@" --checkpoint "$ck" >/dev/null 2>"$T/bg.err" &
    local pid=$!
    local ok=1
    wait_paused "$T/bg.err" "$pid" && ok=0
    kill -9 "$pid" 2>/dev/null
    wait "$pid" 2>/dev/null
    return $ok
}

# reference NAME ARGS...: the uninterrupted scan with the same options.
reference() {
    local name=$1
    shift
    run "$SHEAF" scan -q "$@" --checkpoint "$T/ref.ck" -o "$T/$name.ref"
    [ "$RC" -eq 0 ] || { fail "$name.reference" "exit $RC: $(err_text)"; return 1; }
}

# 1. SIGKILL at random moments (seeded), resumed each time from the last
# checkpoint until a run finishes: the summary is the reference's.
# The moments are seeded fractions of the uninterrupted scan's time (40% to
# 85% for a scan from the start, past the first checkpoint; 10% to 50% for
# a resumed one, which has less to do), so that kills land inside the scan
# on a fast or a busy machine.
RANDOM=16
t0=$(date +%s%N)
reference gzip_random "$T/t.csv.gz" "${EVERY[@]}" -j2
full_ms=$((($(date +%s%N) - t0) / 1000000))
ck=$T/g.ck
rm -f "$ck"
kills=0 resumed_kills=0 resumes=0 done_rc=
for attempt in $(seq 12); do
    resume=()
    [ -e "$ck" ] && { resume=(--resume); resumes=$((resumes + 1)); }
    "$SHEAF" scan -q "$T/t.csv.gz" "${EVERY[@]}" -j2 --checkpoint "$ck" "${resume[@]}" \
        -o "$T/g.sheaf" 2>"$T/g.err" &
    pid=$!
    if [ "$kills" -lt 4 ]; then
        if [ ${#resume[@]} -gt 0 ]; then ms=$((full_ms * (RANDOM % 40 + 10) / 100))
        else ms=$((full_ms * (RANDOM % 45 + 40) / 100)); fi
        sleep "$((ms / 1000)).$(printf '%03d' $((ms % 1000)))"
        if kill -9 "$pid" 2>/dev/null; then
            kills=$((kills + 1))
            [ ${#resume[@]} -gt 0 ] && resumed_kills=$((resumed_kills + 1))
        fi
    fi
    wait "$pid"
    rc=$?
    if [ "$rc" -eq 0 ]; then done_rc=0; break; fi
    [ "$rc" -eq 137 ] || { done_rc=$rc; break; }
done
if [ "$done_rc" != 0 ]; then
    fail checkpoint.random_kills "the resumed scan ended with ${done_rc:-no exit}: $(tr '\n' '|' <"$T/g.err")"
elif [ "$resumes" -lt 1 ]; then
    fail checkpoint.random_kills "no kill landed after a checkpoint ($kills kills): nothing was resumed"
else
    check checkpoint.random_kills "gzip, $kills kills ($resumed_kills of resumed scans), $resumes resumes: $(first_diff "$T/g.sheaf" "$T/gzip_random.ref")" \
        cmp -s "$T/g.sheaf" "$T/gzip_random.ref"
fi
check checkpoint.removed_on_success "the checkpoint is left after a successful scan" test ! -e "$ck"

# 2. Killed inside checkpoint N, resumed (with another thread count):
# byte-identical on every format and option set.
resumed_case() {
    local name=$1 n=$2
    shift 2
    reference "$name" "$@" -j1 || return
    local ck=$T/$name.ck
    rm -f "$ck"
    if ! killed_in "$n" "$ck" "$@" -j1 -o "$T/$name.sheaf"; then
        fail "checkpoint.$name" "the scan did not reach checkpoint $n: $(tr '\n' '|' <"$T/bg.err")"
        return
    fi
    run "$SHEAF" scan -q "$@" -j"${RJ:-2}" --checkpoint "$ck" --resume -o "$T/$name.sheaf"
    if [ "$RC" -ne 0 ]; then fail "checkpoint.$name" "resume exit $RC: $(err_text)"; return; fi
    check "checkpoint.$name" "$(first_diff "$T/$name.sheaf" "$T/$name.ref")" \
        cmp -s "$T/$name.sheaf" "$T/$name.ref"
}
resumed_case plain 4 "$T/t.csv" "${EVERY[@]}"
resumed_case zstd 4 "$T/t.csv.zst" "${EVERY[@]}"
resumed_case gzip_first 2 "$T/t.csv.gz" "${EVERY[@]}"
resumed_case files_in_second 3 "$T/p1.csv" "$T/p2.csv.gz" "$T/p3.csv.zst" "${EVERY[@]}"
RJ=4 resumed_case files_in_third 4 "$T/p1.csv" "$T/p2.csv.gz" "$T/p3.csv.zst" "${EVERY[@]}"
resumed_case class_target 3 "$T/t.csv.gz" --target digit "${EVERY[@]}"
resumed_case text_target 3 "$T/t.csv.gz" --target code "${EVERY[@]}"
resumed_case two_targets 3 "$T/t.csv.zst" --target digit,price "${EVERY[@]}"
resumed_case classes_dropped 3 "$T/t.csv" --target hits --max-classes 20 --checkpoint-every 1M

# The resumed summary against pandas: rows and the mean of price.
if ! "$PY" -c 'import pandas' 2>/dev/null; then
    skip checkpoint.pandas_mean "python3-pandas not installed"
elif [ ! -f "$T/plain.sheaf" ]; then
    fail checkpoint.pandas_mean "no resumed summary of the plain table to check"
else
    "$SHEAF" info -f json "$T/plain.sheaf" >"$T/plain.json"
    check checkpoint.pandas_mean "rows or the price mean differ from pandas" \
        "$PY" - "$T/t.csv" "$T/plain.json" <<'EOF'
import json, sys
import pandas as pd
d = pd.read_csv(sys.argv[1])
s = json.load(open(sys.argv[2]))
col = next(c for c in s["columns"] if c["name"] == "price")
mean = col.get("mean", col.get("numeric", {}).get("mean") if isinstance(col.get("numeric"), dict) else None)
ok = s["rows"] == len(d) and mean is not None and abs(mean - d["price"].mean()) <= 1e-12 * abs(d["price"].mean())
sys.exit(0 if ok else 1)
EOF
fi

# 3. A kill inside a checkpoint's write: the previous checkpoint is whole
# (the same bytes as while the write was paused), nothing else is left in
# the directory, and resuming from it gives the reference.
mkdir -p "$T/w"
ck=$T/w/night.ck
if killed_in 3 "$ck" "$T/t.csv.gz" "${EVERY[@]}" -o "$T/w/out.sheaf"; then
    :
fi
# (killed_in has returned only after the kill: copy now and compare with
# the copy taken by a second run paused at the same place below)
ls -A "$T/w" >"$T/w.list"
check checkpoint.kill_in_write_leaves_one_file "the directory holds: $(tr '\n' ' ' <"$T/w.list")" \
    test "$(cat "$T/w.list")" = night.ck
: >"$T/bg.err" # as in killed_in
SHEAF_TEST_CHECKPOINT_PAUSE=3 "$SHEAF" scan -q "$T/t.csv.gz" "${EVERY[@]}" --checkpoint "$T/w2.ck" \
    -o "$T/w2.sheaf" 2>"$T/bg.err" &
pid=$!
if wait_paused "$T/bg.err" "$pid"; then
    cp "$T/w2.ck" "$T/w2.during"
    kill -9 "$pid"
    wait "$pid" 2>/dev/null
    check checkpoint.kill_in_write_keeps_previous "the checkpoint changed under the kill" \
        cmp -s "$T/w2.ck" "$T/w2.during"
    check checkpoint.previous_is_checkpoint_2 "the two killed runs left different checkpoints" \
        cmp -s "$T/w2.ck" "$ck"
else
    kill -9 "$pid" 2>/dev/null
    fail checkpoint.kill_in_write_keeps_previous "the scan never paused"
fi
reference in_write "$T/t.csv.gz" "${EVERY[@]}"
run "$SHEAF" scan -q "$T/t.csv.gz" "${EVERY[@]}" --checkpoint "$ck" --resume -o "$T/w/out.sheaf"
check checkpoint.resume_after_kill_in_write "exit $RC $(err_text) $(first_diff "$T/w/out.sheaf" "$T/in_write.ref")" \
    cmp -s "$T/w/out.sheaf" "$T/in_write.ref"

# 4. Refusals: one line, the documented exit code, nothing written.
# refused NAME CODE PATTERN ARGS...: the resume of ARGS fails so.
refused() {
    local name=$1 code=$2 pattern=$3
    shift 3
    rm -f "$T/r.sheaf"
    run "$SHEAF" scan -q "$@" -o "$T/r.sheaf"
    local lines
    lines=$(wc -l <"$T/err")
    if [ "$RC" -ne "$code" ] || [ "$lines" -ne 1 ] || ! grep -q -- "$pattern" "$T/err" ||
        [ -e "$T/r.sheaf" ]; then
        fail "checkpoint.refuse_$name" "exit $RC (want $code), $lines lines: $(err_text)"
    else
        pass "checkpoint.refuse_$name"
    fi
}
cp -p "$T/t.csv" "$T/c.csv"
killed_in 3 "$T/c.ck" "$T/c.csv" "${EVERY[@]}" -o "$T/r.sheaf"
cp -p "$T/c.ck" "$T/c.ck.keep"
refused other_options 2 'with other options (--max-levels was 1024 there and is 500 here)' \
    "$T/c.csv" "${EVERY[@]}" --max-levels 500 --checkpoint "$T/c.ck" --resume
refused other_interval 2 'checkpoint-every' \
    "$T/c.csv" --checkpoint-every 4M --checkpoint "$T/c.ck" --resume
refused other_files 2 'scan of 1 files, this one reads 2' \
    "$T/c.csv" "$T/p1.csv" "${EVERY[@]}" --checkpoint "$T/c.ck" --resume
printf 'x' >>"$T/c.csv"
refused appended_byte 3 'its size changed since checkpoint' \
    "$T/c.csv" "${EVERY[@]}" --checkpoint "$T/c.ck" --resume
cp -p "$T/t.csv" "$T/c.csv"
touch -d '2021-02-03 04:05:06' "$T/c.csv"
refused other_mtime 3 'its modification time changed' \
    "$T/c.csv" "${EVERY[@]}" --checkpoint "$T/c.ck" --resume
# The consumed prefix changed in place, with its size and mtime put back.
cp -p "$T/t.csv" "$T/c.csv"
printf '9' | dd of="$T/c.csv" bs=1 seek=5000 conv=notrunc status=none
touch -r "$T/t.csv" "$T/c.csv"
refused prefix_changed 3 'first [0-9]* bytes differ' \
    "$T/c.csv" "${EVERY[@]}" --checkpoint "$T/c.ck" --resume
# A finished file changed in place (same size and mtime): its fingerprint.
cp -p "$T/p1.csv" "$T/f1.csv"
killed_in 3 "$T/f.ck" "$T/f1.csv" "$T/p2.csv.gz" "$T/p3.csv.zst" "${EVERY[@]}" -o "$T/r.sheaf"
printf '9' | dd of="$T/f1.csv" bs=1 seek=5000 conv=notrunc status=none
touch -r "$T/p1.csv" "$T/f1.csv"
refused finished_file_changed 3 'f1.csv: its bytes changed' \
    "$T/f1.csv" "$T/p2.csv.gz" "$T/p3.csv.zst" "${EVERY[@]}" --checkpoint "$T/f.ck" --resume
# Damaged: a flipped byte inside, or cut short.
cp "$T/c.ck.keep" "$T/d.ck"
size=$(stat -c %s "$T/d.ck")
printf '\xff' | dd of="$T/d.ck" bs=1 seek=$((size / 2)) conv=notrunc status=none
cp -p "$T/t.csv" "$T/c.csv"
refused flipped_byte 4 'damaged checkpoint' "$T/c.csv" "${EVERY[@]}" --checkpoint "$T/d.ck" --resume
head -c $((size - 100)) "$T/c.ck.keep" >"$T/d.ck"
refused truncated 4 'damaged checkpoint' "$T/c.csv" "${EVERY[@]}" --checkpoint "$T/d.ck" --resume
printf 'not a checkpoint at all, just text\n' >"$T/d.ck"
refused not_a_checkpoint 4 'damaged checkpoint (not a sheaf checkpoint)' \
    "$T/c.csv" "${EVERY[@]}" --checkpoint "$T/d.ck" --resume
refused no_checkpoint 2 'no checkpoint to resume from' \
    "$T/c.csv" "${EVERY[@]}" --checkpoint "$T/none.ck" --resume
refused resume_alone 2 '--resume needs --checkpoint FILE' "$T/c.csv" --resume
refused standard_input 2 'standard input cannot be read again' - --checkpoint "$T/s.ck" </dev/null
refused with_shard 2 'do not go together' "$T/c.csv" --shard 1/2 --checkpoint "$T/s.ck"
refused checkpoint_is_input 2 'same file as the input' "$T/c.csv" --checkpoint "$T/c.csv"
mkdir -p "$T/ro"
chmod 555 "$T/ro"
if [ "$(id -u)" -ne 0 ]; then
    refused unwritable 1 'cannot' "$T/c.csv" "${EVERY[@]}" --checkpoint "$T/ro/x.ck"
fi
refused checkpoint_in_missing_dir 1 'x.ck' "$T/c.csv" "${EVERY[@]}" --checkpoint "$T/nodir/x.ck"
# The intact checkpoint still resumes after all those refusals.
cp -p "$T/t.csv" "$T/c.csv"
reference intact "$T/c.csv" "${EVERY[@]}"
cp "$T/c.ck.keep" "$T/c.ck"
run "$SHEAF" scan -q "$T/c.csv" "${EVERY[@]}" --checkpoint "$T/c.ck" --resume -o "$T/c.sheaf"
check checkpoint.resume_after_refusals "exit $RC $(err_text)" cmp -s "$T/c.sheaf" "$T/intact.ref"

# A table shorter than one interval writes no checkpoint: the scan ends
# quietly (no warning about a checkpoint to remove) and leaves none.
printf 'a,b\n1,2\n3,4\n' >"$T/short.csv"
run "$SHEAF" scan "$T/short.csv" --checkpoint "$T/short.ck" -o "$T/short.sheaf"
check checkpoint.shorter_than_an_interval "exit $RC, stderr: $(err_text)" \
    test "$RC" -eq 0 -a ! -s "$T/err" -a ! -e "$T/short.ck" -a -s "$T/short.sheaf"

# A checkpoint that cannot be written (a full file system: a 64 KiB tmpfs,
# when this user may mount one) stops the scan with one line naming it and
# exit 1, at one thread and at two (where checkpoints are written on a
# thread of their own while the scan goes on): no summary, nothing left
# on the full file system.
mkdir -p "$T/fullfs"
if mount -t tmpfs -o size=64k tmpfs "$T/fullfs" 2>/dev/null; then
    for j in 1 2; do
        refused "full_disk_j$j" 1 "fullfs/x.ck: cannot write the checkpoint: No space left on device" \
            "$T/c.csv" "${EVERY[@]}" -j "$j" --checkpoint "$T/fullfs/x.ck"
        left=$(ls -A "$T/fullfs")
        check "checkpoint.full_disk_j${j}_leaves_nothing" "left: $left" test -z "$left"
    done
    umount "$T/fullfs"
else
    skip checkpoint.full_disk "cannot mount a tmpfs here"
fi

# 6. A refusal names options as they are written: the task by name, the
# missing spellings as --missing takes them (it showed "--task was 0 there
# and is 1 here", "2:NA,3:N/A,..").
if killed_in 2 "$T/tk.ck" "$T/c.csv" "${EVERY[@]}" --target label -o "$T/r.sheaf"; then
    refused task_by_name 2 '(--task was (decided when read) there and is classify here)' \
        "$T/c.csv" "${EVERY[@]}" --target label --task classify --checkpoint "$T/tk.ck" --resume
else
    fail checkpoint.refuse_task_by_name "the scan did not reach checkpoint 2: $(tr '\n' '|' <"$T/bg.err")"
fi
cp "$T/c.ck.keep" "$T/c.ck"
refused missing_as_written 2 '(--missing was NA,N/A,null,NULL,None,-,? there and is NA,a\\,b here)' \
    "$T/c.csv" "${EVERY[@]}" --missing 'NA,a\,b' --checkpoint "$T/c.ck" --resume

# 7. A pipe under a name (/dev/stdin, a FIFO) is refused with a checkpoint,
# as '-' is: it cannot be read again, and a resume could only ever find it
# changed (it was accepted, then every resume failed with exit 3).
rm -f "$T/pipe.ck" "$T/r.sheaf"
head -c 100000 "$T/c.csv" | "$SHEAF" scan -q /dev/stdin --checkpoint "$T/pipe.ck" -o "$T/r.sheaf" \
    >/dev/null 2>"$T/err"
rc=$?
check checkpoint.refuse_dev_stdin "exit $rc: $(head -c 300 "$T/err")" \
    [ "$rc" -eq 2 ] && check checkpoint.refuse_dev_stdin_says "$(head -c 300 "$T/err")" \
    grep -q '/dev/stdin: --checkpoint needs files that can be read again to resume, and this is a pipe' "$T/err"
check checkpoint.refuse_dev_stdin_writes_nothing "$(ls "$T"/pipe.ck "$T"/r.sheaf 2>&1)" \
    [ ! -e "$T/pipe.ck" ] && check checkpoint.refuse_dev_stdin_no_summary "summary written" [ ! -e "$T/r.sheaf" ]
if mkfifo "$T/fifo" 2>/dev/null; then
    (head -c 100000 "$T/c.csv" >"$T/fifo" &)
    run "$SHEAF" scan -q "$T/fifo" --checkpoint "$T/pipe.ck" -o "$T/r.sheaf"
    check checkpoint.refuse_fifo "exit $RC: $(err_text)" [ "$RC" -eq 2 ]
    cat "$T/fifo" >/dev/null 2>&1 & # the writer, if the scan left it waiting
    sleep 0.2
    kill %1 2>/dev/null
fi

# 8. A checkpoint that cannot be made says it is the checkpoint (it said
# only "x.ck: cannot create: Permission denied").
if command -v setpriv >/dev/null && [ "$(id -u)" = 0 ]; then
    mkdir -p "$T/ro" && chmod 555 "$T/ro" && chmod 755 "$T"
    setpriv --reuid=65534 --regid=65534 --clear-groups "$SHEAF" scan -q "$T/c.csv" \
        --checkpoint "$T/ro/x.ck" -o /tmp/sheaf-ck-nobody.$$.sheaf >/dev/null 2>"$T/err"
    rc=$?
    rm -f /tmp/sheaf-ck-nobody.$$.sheaf
    check checkpoint.unwritable_says_checkpoint "exit $rc: $(head -c 300 "$T/err")" \
        grep -q "checkpoint $T/ro/x.ck: cannot create: Permission denied" "$T/err"
else
    skip checkpoint.unwritable_says_checkpoint "not root, or no setpriv"
fi

# 9. Value tables across segments (equivalence audit): a column whose value
# table fills up after its first segment keeps, with checkpoints, the first
# --max-levels values of the whole stream with their exact counts, as one
# scan does: the segments after a cut admit the earlier segments' values
# whenever they come and new ones only into the room left.  A proofing
# cabinet's probe reads 900-odd values in its first 2,400 rows, then sticks
# at 41.51 (70% of the next 3,000 rows, fresh readings filling the table,
# then 99.9%): 99.2% of the column.  Without this the checkpointed scan lost
# 41.51 from the table (a keep where one scan says little_information).
"$PY" - "$T/stuck.csv" <<'PYEOF'
import random, sys
rnd = random.Random(11)
with open(sys.argv[1], "w") as f:
    f.write("ts,probe_c,rack\n")
    for i in range(450000):
        if i < 2400:
            v = "%.2f" % (30 + rnd.randrange(1000) / 100)
        elif rnd.random() < (0.30 if i < 5400 else 0.001):
            v = "%.3f" % (60 + rnd.random() * 10)
        else:
            v = "41.51"
        f.write("%d,%s,r%d\n" % (1767225600 + i, v, i % 4))
PYEOF
STUCK=(--chunk-size 8K)
"$SHEAF" scan -q "$T/stuck.csv" "${STUCK[@]}" -o "$T/stuck.one.sheaf"
"$SHEAF" scan -q "$T/stuck.csv" "${STUCK[@]}" --checkpoint "$T/stuck.ck" --checkpoint-every 32K \
    -o "$T/stuck.ck.sheaf"
tops() { "$SHEAF" info "$1" --format json | "$PY" -c 'import json,sys; d=json.load(sys.stdin); print([(c["name"], c.get("top")) for c in d["columns"]])'; }
one=$(tops "$T/stuck.one.sheaf") two=$(tops "$T/stuck.ck.sheaf")
check checkpoint.value_tables_as_one_scan "one scan: $one; checkpointed: $two" [ "$one" = "$two" ]
verdict=$("$SHEAF" screen "$T/stuck.ck.sheaf" 2>&1 | grep probe_c)
check checkpoint.stuck_value_found "$verdict" grep -q little_information <<<"$verdict"
if killed_in 3 "$T/stuck.ck" "$T/stuck.csv" "${STUCK[@]}" --checkpoint-every 32K -o "$T/r.sheaf"; then
    run "$SHEAF" scan -q "$T/stuck.csv" "${STUCK[@]}" --checkpoint "$T/stuck.ck" \
        --checkpoint-every 32K --resume -o "$T/stuck.resumed.sheaf"
    check checkpoint.value_tables_resumed "$(first_diff "$T/stuck.resumed.sheaf" "$T/stuck.ck.sheaf")" \
        cmp -s "$T/stuck.resumed.sheaf" "$T/stuck.ck.sheaf"
else
    fail checkpoint.value_tables_resumed "the scan did not reach checkpoint 3: $(tr '\n' '|' <"$T/bg.err")"
fi
