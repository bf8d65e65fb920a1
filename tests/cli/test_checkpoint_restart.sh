#!/usr/bin/env bash
# scan --resume from a restart point (io/source.h marks, checkpoint format
# version 2): a resumed gzip scan continues decoding at the last restart
# point before the checkpoint's offset instead of at byte 0, and a plain file
# is hashed up to the offset without being cut into chunks.  Each resume here
# must write the summary of the same scan left alone, byte for byte, and
# each must say (through the test switch SHEAF_TEST_RESTART=note, a warning
# line) whether it used a restart point and where: a resume that silently
# fell back to decoding from byte 0 fails.  Covered: SIGKILL at seeded
# random moments (-j2, and -j3 with the read-ahead thread), a kill inside a
# chosen checkpoint, a second resume from a checkpoint written soon after
# the first, a two-member gzip file (`cat a.gz b.gz`) killed in its second
# member, the second of two files, plain; falling back to decoding from byte
# 0: a restart point from "another build" (SHEAF_TEST_RESTART=stale), one
# switched off, zstd, a version 1 checkpoint; refused: a flipped byte inside
# the restart point (damaged, exit 4), the gzip file changed before the
# restart point (exit 3).  The resumed file's fingerprint is checked against
# the system's libxxhash, the outside reference.
set -u
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup checkpoint_restart || exit 0
GEN=build/demo/generate
[ -x "$GEN" ] || { fail restart.setup "build/demo/generate is not built"; exit 0; }

# 120,000 rows: 25 MB of CSV, so that restart points (every 4 MiB of
# decoded bytes at least) lie before most checkpoints (every 2 MiB).
$GEN --profile bench --rows 120000 --seed 11 -o "$T/t.csv" 2>/dev/null
gzip -6 -c "$T/t.csv" >"$T/t.csv.gz"
zstd -q -c "$T/t.csv" >"$T/t.csv.zst"
# Two members, the second with the header again (read as a repeated header).
head -n 50001 "$T/t.csv" | gzip -1 >"$T/a.gz"
(head -n 1 "$T/t.csv"; tail -n +50002 "$T/t.csv") | gzip -6 -c >"$T/b.gz"
cat "$T/a.gz" "$T/b.gz" >"$T/two.csv.gz"
A_BYTES=$(stat -c %s "$T/a.gz")
EVERY=(--checkpoint-every 2M)

wait_paused() {
    local i
    for i in $(seq 300); do
        grep -q 'paused inside checkpoint' "$1" 2>/dev/null && return 0
        kill -0 "$2" 2>/dev/null || return 1
        sleep 0.05
    done
    return 1
}

# killed_in N CK ARGS...: the scan stopped inside checkpoint N and SIGKILLed
# there (checkpoint N-1 is then in CK).  0 when it paused.
killed_in() {
    local n=$1 ck=$2
    shift 2
    rm -f "$ck"
    # Emptied here: the redirection below truncates the file only once the
    # background process runs, and until then wait_paused would read the
    # previous run's "paused" line and kill this one before any checkpoint.
    : >"$T/bg.err"
    SHEAF_TEST_CHECKPOINT_PAUSE=$n "$SHEAF" scan -q "$@" --checkpoint "$ck" -o "$T/bg.sheaf" \
        >/dev/null 2>"$T/bg.err" &
    local pid=$!
    local ok=1
    wait_paused "$T/bg.err" "$pid" && ok=0
    kill -9 "$pid" 2>/dev/null
    wait "$pid" 2>/dev/null
    return $ok
}

reference() {
    local name=$1
    shift
    run "$SHEAF" scan -q "$@" --checkpoint "$T/ref.ck" -o "$T/$name.ref"
    [ "$RC" -eq 0 ] || { fail "restart.$name.reference" "exit $RC: $(err_text)"; return 1; }
}

# The raw and decoded byte of the note "resumed at raw byte R, decoded byte D".
note_raw() { sed -n 's/.*resumed at raw byte \([0-9]*\), decoded byte \([0-9]*\).*/\1/p' "$1" | head -n 1; }
note_decoded() { sed -n 's/.*resumed at raw byte \([0-9]*\), decoded byte \([0-9]*\).*/\2/p' "$1" | head -n 1; }

# resumed NAME N WANT ARGS...: killed inside checkpoint N, resumed with the
# note on; WANT is "point" (a restart point must be used) or the reason a
# note must give for reading from byte 0.  Leaves the note in $T/NAME.note.
resumed() {
    local name=$1 n=$2 want=$3
    shift 3
    reference "$name" "$@" || return 1
    local ck=$T/$name.ck
    if ! killed_in "$n" "$ck" "$@" -j2; then
        fail "restart.$name" "the scan did not reach checkpoint $n: $(tr '\n' '|' <"$T/bg.err")"
        return 1
    fi
    cp "$ck" "$T/$name.ck.keep"
    SHEAF_TEST_RESTART=note${RESTART:+,$RESTART} run "$SHEAF" scan -q "$@" -j"${RJ:-2}" \
        --checkpoint "$ck" --resume -o "$T/$name.sheaf"
    cp "$T/err" "$T/$name.note"
    if [ "$RC" -ne 0 ]; then fail "restart.$name" "resume exit $RC: $(err_text)"; return 1; fi
    if [ "$want" = point ]; then
        if ! grep -q 'test note: resumed at raw byte [1-9]' "$T/err"; then
            fail "restart.$name" "no restart point used: $(err_text)"
            return 1
        fi
    elif ! grep -q "no restart point used ($want)" "$T/err"; then
        fail "restart.$name" "want a note that none was used ($want): $(err_text)"
        return 1
    fi
    check "restart.$name" "$(first_diff "$T/$name.sheaf" "$T/$name.ref")" \
        cmp -s "$T/$name.sheaf" "$T/$name.ref"
}

# 1. SIGKILL at seeded random moments, resumed from the last checkpoint
# until a run finishes, with -j2 and with -j3 (decoded ahead on a thread of
# its own, so restart points are taken ahead of the cuts).
random_kills() {
    local name=$1 j=$2 seed=$3 tries=${4:-1}
    RANDOM=$seed
    local t0 full_ms
    t0=$(date +%s%N)
    reference "$name" "$T/t.csv.gz" "${EVERY[@]}" -j"$j" || return
    full_ms=$((($(date +%s%N) - t0) / 1000000))
    local ck=$T/$name.ck kills=0 resumes=0 used=0 done_rc= ms rc
    rm -f "$ck"
    : >"$T/$name.notes"
    for attempt in $(seq 14); do
        local resume=()
        [ -e "$ck" ] && { resume=(--resume); resumes=$((resumes + 1)); }
        SHEAF_TEST_RESTART=note "$SHEAF" scan -q "$T/t.csv.gz" "${EVERY[@]}" -j"$j" \
            --checkpoint "$ck" "${resume[@]}" -o "$T/$name.sheaf" 2>"$T/$name.err" &
        local pid=$!
        if [ "$kills" -lt 4 ]; then
            if [ ${#resume[@]} -gt 0 ]; then ms=$((full_ms * (RANDOM % 30 + 10) / 100))
            else ms=$((full_ms * (RANDOM % 40 + 45) / 100)); fi
            sleep "$((ms / 1000)).$(printf '%03d' $((ms % 1000)))"
            kill -9 "$pid" 2>/dev/null && kills=$((kills + 1))
        fi
        wait "$pid"
        rc=$?
        cat "$T/$name.err" >>"$T/$name.notes"
        grep -q 'test note: resumed at raw byte [1-9]' "$T/$name.err" && used=$((used + 1))
        if [ "$rc" -eq 0 ]; then done_rc=0; break; fi
        [ "$rc" -eq 137 ] || { done_rc=$rc; break; }
    done
    if [ "$done_rc" != 0 ]; then
        fail "restart.$name" "the resumed scan ended with ${done_rc:-no exit}: $(tr '\n' '|' <"$T/$name.err")"
    elif [ "$used" -lt 1 ] && ! grep -q 'test note:' "$T/$name.notes" && [ "$tries" -lt 3 ]; then
        # No resume got as far as opening the file (each was killed first, or
        # the last checkpoint had read it all): the kill times, drawn from the
        # reference run's time, missed on a loaded machine.  Other ones.
        random_kills "$name" "$j" $((seed + 1000)) $((tries + 1))
    elif [ "$used" -lt 1 ]; then
        fail "restart.$name" "$resumes resumes, none from a restart point: $(tr '\n' '|' <"$T/$name.notes")"
    elif grep -q "another build's" "$T/$name.notes"; then
        fail "restart.$name" "a restart point was taken for another build's: $(tr '\n' '|' <"$T/$name.notes")"
    else
        check "restart.$name" "$kills kills, $resumes resumes ($used from a restart point): $(first_diff "$T/$name.sheaf" "$T/$name.ref")" \
            cmp -s "$T/$name.sheaf" "$T/$name.ref"
    fi
}
random_kills random_j2 2 31
random_kills random_j3 3 47

# 2. Inside a chosen checkpoint: checkpoint 6 is at about 12 MB, so the
# restart point (decoded offset D) lies at most one checkpoint interval
# plus the read-ahead before it, after byte 0.
if resumed gzip_point 7 point "$T/t.csv.gz" "${EVERY[@]}"; then
    d=$(note_decoded "$T/gzip_point.note")
    check restart.gzip_point_offset "decoded byte ${d:-?} is not within the 4-14 MB" \
        test "${d:-0}" -ge 4000000 -a "${d:-0}" -le 14000000
fi
# A checkpoint written by a scan that itself resumed from a restart point,
# soon after it (less than one point interval on): it holds a point too
# (the restored one at least), so a second resume does not start at byte 0.
if [ -f "$T/gzip_point.ck.keep" ]; then
    cp "$T/gzip_point.ck.keep" "$T/chain.ck"
    : >"$T/bg.err" # as in killed_in
    SHEAF_TEST_CHECKPOINT_PAUSE=8 "$SHEAF" scan -q "$T/t.csv.gz" "${EVERY[@]}" -j2 \
        --checkpoint "$T/chain.ck" --resume -o "$T/chain.sheaf" >/dev/null 2>"$T/bg.err" &
    pid=$!
    if wait_paused "$T/bg.err" "$pid"; then
        kill -9 "$pid"
        wait "$pid" 2>/dev/null
        SHEAF_TEST_RESTART=note run "$SHEAF" scan -q "$T/t.csv.gz" "${EVERY[@]}" \
            --checkpoint "$T/chain.ck" --resume -o "$T/chain.sheaf"
        if grep -q 'test note: resumed at raw byte [1-9]' "$T/err"; then
            check restart.resumed_twice "exit $RC $(first_diff "$T/chain.sheaf" "$T/gzip_point.ref")" \
                cmp -s "$T/chain.sheaf" "$T/gzip_point.ref"
        else
            fail restart.resumed_twice "the second resume used no restart point: $(err_text)"
        fi
    else
        kill -9 "$pid" 2>/dev/null
        wait "$pid" 2>/dev/null
        fail restart.resumed_twice "the resumed scan never paused in checkpoint 8"
    fi
fi
RJ=3 resumed gzip_point_j3 5 point "$T/t.csv.gz" "${EVERY[@]}" --target digit
# The summary's fingerprint of the file (its provenance), hashed partly
# before the restart point and partly after it, against XXH3-64 of the
# whole file from the system's libxxhash (ctypes), the outside reference.
fp=$(jget "$T/gzip_point.sheaf" 'd["sources"][0]["fingerprint"]' | tr -d '"')
want=$("$PY" -c 'import ctypes, sys
lib = ctypes.CDLL("libxxhash.so.0")
lib.XXH3_64bits.restype = ctypes.c_uint64
lib.XXH3_64bits.argtypes = [ctypes.c_char_p, ctypes.c_size_t]
b = open(sys.argv[1], "rb").read()
print("%016x" % lib.XXH3_64bits(b, len(b)))' "$T/t.csv.gz" 2>/dev/null)
check restart.fingerprint "resumed ${fp:-?}, libxxhash ${want:-?}" test -n "$want" -a "$fp" = "$want"

# 3. Two gzip members, killed in the second: the restart point lies past
# the first member's raw bytes.
if resumed two_members 8 point "$T/two.csv.gz" "${EVERY[@]}"; then
    r=$(note_raw "$T/two_members.note")
    check restart.two_members_second "raw byte ${r:-?} is not past the first member ($A_BYTES bytes)" \
        test "${r:-0}" -gt "$A_BYTES"
fi

# The second of two files (plain, then gzip): the header comes from the
# second file's own top, the first file's fingerprint from the checkpoint.
RJ=3 resumed second_file 20 point "$T/t.csv" "$T/t.csv.gz" "${EVERY[@]}"

# 4. Plain: hashed to the offset, no chunks before it; the note's raw and
# decoded bytes are the offset itself.
if resumed plain 5 point "$T/t.csv" "${EVERY[@]}"; then
    r=$(note_raw "$T/plain.note")
    d=$(note_decoded "$T/plain.note")
    check restart.plain_at_offset "raw ${r:-?} and decoded ${d:-?} differ" test "${r:-x}" = "${d:-y}"
fi

# 5. Falling back to decoding from byte 0, still byte-identical: a restart
# point taken for another build's, one switched off, and zstd.
RESTART=stale resumed stale 6 "another build's" "$T/t.csv.gz" "${EVERY[@]}"
RESTART=off resumed switched_off 6 "switched off" "$T/t.csv.gz" "${EVERY[@]}"
resumed zstd 6 "zstd is fast-forwarded" "$T/t.csv.zst" "${EVERY[@]}"

# A version 1 checkpoint (written before restart points: the same file
# without the two restart fields, its checksums made again with the
# system's libxxhash) still resumes, from byte 0.
if [ -f "$T/gzip_point.ck.keep" ] && "$PY" - "$T/gzip_point.ck.keep" "$T/v1.ck" <<'EOF'
import ctypes, struct, sys
lib = ctypes.CDLL("libxxhash.so.0")
lib.XXH3_64bits.restype = ctypes.c_uint64
lib.XXH3_64bits.argtypes = [ctypes.c_char_p, ctypes.c_size_t]
h64 = lambda b: struct.pack("<Q", lib.XXH3_64bits(bytes(b), len(b)))
b = open(sys.argv[1], "rb").read()
assert b[:8] == b"SHEAFCKP" and struct.unpack_from("<I", b, 8)[0] == 2
hlen = struct.unpack_from("<Q", b, 12)[0]
head, parts = b[20:20 + hlen], b[28 + hlen:-8]
pos = 0
def take(n):
    global pos
    pos += n
def text():
    take(4 + struct.unpack_from("<I", head, pos)[0])
text()                                   # options
nfiles = struct.unpack_from("<I", head, pos)[0]
take(4)
for _ in range(nfiles):
    text()                               # path
    take(24)                             # size, mtime, fingerprint
take(4 + 8 * 5 + 1)                      # index, offset, prefix, lines, rows, number, delim
cut = pos
text()                                   # the restart point
text()                                   # its prefix hash
v1 = head[:cut] + head[pos:]
out = b"SHEAFCKP" + struct.pack("<I", 1) + struct.pack("<Q", len(v1)) + v1
out += h64(out)
out += parts
out += h64(out)
open(sys.argv[2], "wb").write(out)
EOF
then
    SHEAF_TEST_RESTART=note run "$SHEAF" scan -q "$T/t.csv.gz" "${EVERY[@]}" \
        --checkpoint "$T/v1.ck" --resume -o "$T/v1.sheaf"
    if ! grep -q 'no restart point used (none in the checkpoint)' "$T/err"; then
        fail restart.version_1 "exit $RC, want a note that the file is read from byte 0: $(err_text)"
    else
        check restart.version_1 "exit $RC $(first_diff "$T/v1.sheaf" "$T/gzip_point.ref")" \
            cmp -s "$T/v1.sheaf" "$T/gzip_point.ref"
    fi
else
    fail restart.version_1 "no version 1 checkpoint could be made from the gzip case's"
fi

# 6. Refusals.
refused() {
    local name=$1 code=$2 pattern=$3
    shift 3
    rm -f "$T/r.sheaf"
    run "$SHEAF" scan -q "$@" -o "$T/r.sheaf"
    local lines
    lines=$(wc -l <"$T/err")
    if [ "$RC" -ne "$code" ] || [ "$lines" -ne 1 ] || ! grep -q -- "$pattern" "$T/err" ||
        [ -e "$T/r.sheaf" ]; then
        fail "restart.refuse_$name" "exit $RC (want $code), $lines lines: $(err_text)"
    else
        pass "restart.refuse_$name"
    fi
}
if [ -f "$T/gzip_point.ck.keep" ]; then
    # A flipped byte inside the restart point (the checkpoint's header is
    # mostly the point: ~88 KB of decoder state after the options).
    cp "$T/gzip_point.ck.keep" "$T/d.ck"
    printf '\x5a' | dd of="$T/d.ck" bs=1 seek=40000 conv=notrunc status=none
    refused flipped_in_point 4 'damaged checkpoint' "$T/t.csv.gz" "${EVERY[@]}" --checkpoint "$T/d.ck" --resume
    # The gzip file changed before the restart point (size and mtime put
    # back): its raw prefix hash.
    r=$(note_raw "$T/gzip_point.note")
    cp -p "$T/t.csv.gz" "$T/c.csv.gz"
    byte=$(od -An -tu1 -j $((r / 2)) -N1 "$T/c.csv.gz" | tr -d ' ')
    printf "\\$(printf '%03o' $(((byte + 1) % 256)))" |
        dd of="$T/c.csv.gz" bs=1 seek=$((r / 2)) conv=notrunc status=none
    touch -r "$T/t.csv.gz" "$T/c.csv.gz"
    # A checkpoint of its own for the copy, then the copy changed.
    cp -p "$T/t.csv.gz" "$T/c2.csv.gz"
    if killed_in 7 "$T/c2.ck" "$T/c2.csv.gz" "${EVERY[@]}" -j2; then
        cp "$T/c.csv.gz" "$T/c2.csv.gz"
        touch -r "$T/t.csv.gz" "$T/c2.csv.gz"
        refused raw_prefix_changed 3 'first [0-9]* raw bytes differ' \
            "$T/c2.csv.gz" "${EVERY[@]}" --checkpoint "$T/c2.ck" --resume
    else
        fail restart.refuse_raw_prefix_changed "the scan did not reach checkpoint 7"
    fi
else
    fail restart.refuse_flipped_in_point "no checkpoint of the gzip case to damage"
    fail restart.refuse_raw_prefix_changed "no checkpoint of the gzip case"
fi

# 7. Repeated headers at gzip member starts (each member of `cat a.gz b.gz
# ...` begins with the header line), resumed at -j3 from a restart point: a
# read-ahead thread may have found member starts past the checkpoint's
# offset, which the resume once dropped with the skipped ones, so that a
# later member's header counted as a data row (some resumes in four: 5 rows
# more, a class named after the header).  Four resumes of one checkpoint,
# each the reference's bytes.
head -n 1 "$T/t.csv" >"$T/hdr"
tail -n +2 "$T/t.csv" | split -l 2000 - "$T/member_"
for f in "$T"/member_*; do cat "$T/hdr" "$f" | gzip -1 -c; done >"$T/rep.csv.gz"
rm -f "$T"/member_*
REP=("$T/rep.csv.gz" --target label --checkpoint-every 1M --chunk-size 256K)
if reference repeated "${REP[@]}" -j2 && killed_in 5 "$T/rep.ck" "${REP[@]}" -j2; then
    cp "$T/rep.ck" "$T/rep.ck.keep"
    bad=""
    for k in 1 2 3 4; do
        cp "$T/rep.ck.keep" "$T/rep.ck"
        SHEAF_TEST_RESTART=note run "$SHEAF" scan -q "${REP[@]}" -j3 --checkpoint "$T/rep.ck" \
            --resume -o "$T/rep.sheaf"
        if [ "$RC" -ne 0 ]; then bad="$bad resume $k: exit $RC ($(err_text));"; continue; fi
        grep -q 'test note: resumed at raw byte [1-9]' "$T/err" ||
            bad="$bad resume $k: no restart point used;"
        cmp -s "$T/rep.sheaf" "$T/repeated.ref" ||
            bad="$bad resume $k: $(first_diff "$T/rep.sheaf" "$T/repeated.ref");"
    done
    check restart.repeated_headers_j3 "${bad:-}" [ -z "$bad" ]
else
    fail restart.repeated_headers_j3 "no reference or the scan did not reach checkpoint 5: $(tr '\n' '|' <"$T/bg.err")"
fi
