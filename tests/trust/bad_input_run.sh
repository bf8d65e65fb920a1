#!/usr/bin/env bash
# The bad-input run of issue 12, repeatable: bad inputs of every kind over
# every command, damaged summaries, signals during writes, fuzzing and
# memory limits, each counted.  It is not part of `make test` (it takes
# about 10 minutes plus the fuzzing); `make trust-run` runs it.  What it
# does and the results of the last full run: docs/trust-run.md.
#
#   tests/trust/bad_input_run.sh [--report FILE]
#
# Environment: FUZZ_SECONDS (180) seconds of `make fuzz` per harness (0: no
# fuzzing); SHEAF_BIN (./sheaf, built here with `make -j2 sheaf`; a
# sanitizer build such as build/asan/sheaf may be given instead);
# TRUST_PARTS, the parts to run (default "inputs summaries kills fuzz
# memory"); TRUST_KEEP=1 keeps the scratch directory.
#
# The parts (each in its own directory under one mktemp -d, removed at the
# end):
#   inputs     a catalogue of kinds of bad input (files, streams, options,
#              outputs), each through every command that can take it, under
#              `timeout 60`;
#   summaries  single-bit flips and truncations of a summary with a class
#              target, checksums left as they are (each must be refused,
#              exit 4), and flips with the checksums recomputed
#              (tests/cli/summary_craft.py flips), whose accepted files are
#              judged against the invariants of docs/summary-format.md;
#   kills      SIGTERM, SIGINT, SIGHUP and SIGKILL at seeded moments during
#              scan, trim, project and merge writing a large output;
#   fuzz       `make fuzz FUZZ_SECONDS=...` (every harness), findings counted;
#   memory     scan, merge, info, screen and pca under `ulimit -v` of 100 to
#              400 MiB.
#
# What counts as a problem, for one command run:
#   crash        ended by a signal (status >= 128 from timeout), or a
#                sanitizer report on standard error;
#   hang         still running after 60 s (timeout's status 124);
#   unclear      a failure whose standard error is not exactly one line
#                starting "sheaf", or that does not name the bad file when a
#                file is what is bad (a success may print one warning line);
#   exit code    a status that the README's exit-code table does not give for
#                that kind of failure (each kind below names the codes it
#                accepts, and why where it is not obvious);
#   leftover     a file in the output directory (or beside the inputs) other
#                than the expected output;
#   half-written a failed command whose output name now holds something new,
#                or an input that changed;
#   silent wrong a command that succeeds with a result that breaks a stated
#                rule (rows counted from a concatenated gzip, invariants of
#                an accepted summary, see each part).
# Prints one line per kind and part, then the table of counts and
# "bad-input run: N checks, N problems"; --report FILE writes the same as
# markdown.  Exits 1 when a problem was counted, 2 when the run itself could
# not be set up.
{ # the whole script is one block, read before it runs: editing the file
  # during a run cannot change what the run does
set -u
cd "$(dirname "$0")/../.." || exit 2
ROOT=$(pwd)

REPORT=
while [ $# -gt 0 ]; do
    case $1 in
    --report) REPORT=${2:?--report needs a file}; shift 2 ;;
    --report=*) REPORT=${1#--report=}; shift ;;
    -h | --help) sed -n '2,15p' "$0" | sed 's/^# \{0,1\}//'; exit 0 ;;
    *) echo "bad_input_run.sh: unknown argument '$1' (see --help)" >&2; exit 2 ;;
    esac
done
case $REPORT in /*|'') ;; *) REPORT=$ROOT/$REPORT ;; esac
FUZZ_SECONDS=${FUZZ_SECONDS:-180}
PARTS=${TRUST_PARTS:-inputs summaries kills fuzz memory}
PY=/usr/bin/python3
[ -x "$PY" ] || { echo "bad_input_run.sh: $PY (Debian's python3) not found" >&2; exit 2; }

echo "== build: make -j2 sheaf"
make -j2 sheaf >/dev/null || { echo "bad_input_run.sh: make -j2 sheaf failed" >&2; exit 2; }
SHEAF=$(realpath "${SHEAF_BIN:-./sheaf}")
[ -x "$SHEAF" ] || { echo "bad_input_run.sh: $SHEAF not found" >&2; exit 2; }

W=$(mktemp -d "${TMPDIR:-/tmp}/sheaf-trust.XXXXXX")
chmod 755 "$W" # the unreadable-file kind runs sheaf as nobody
BG_PIDS=()
cleanup() {
    local p
    for p in "${BG_PIDS[@]}"; do kill "$p" 2>/dev/null; done
    if [ "${TRUST_KEEP:-0}" = 1 ]; then echo "scratch kept: $W"; else rm -rf "$W"; fi
}
trap cleanup EXIT
trap 'exit 130' INT TERM
START=$(date +%s)

# ---- counting ----
CATS=(crash hang silent leftover half unclear exit fuzz)
declare -A LABEL=(
    [crash]="crashes" [hang]="hangs" [silent]="silent wrong results"
    [leftover]="leftovers" [half]="half-written outputs" [unclear]="unclear messages"
    [exit]="undocumented exit codes" [fuzz]="fuzz findings")
declare -A N
for c in "${CATS[@]}"; do N[$c]=0; done
CHECKS=0
KINDS=0
declare -A PAIRS=() CMDS_SEEN=()
declare -A PART_CHECKS=() PART_PROBLEMS=()
PART=setup
: >"$W/problems.log"
# problem CATEGORY WHAT: counts one problem and prints it.
problem() {
    N[$1]=$((N[$1] + 1))
    PART_PROBLEMS[$PART]=$((${PART_PROBLEMS[$PART]:-0} + 1))
    printf 'PROBLEM %s [%s] %s\n' "${LABEL[$1]}" "$PART" "$2" | tee -a "$W/problems.log"
}
checked() { CHECKS=$((CHECKS + ${1:-1})); PART_CHECKS[$PART]=$((${PART_CHECKS[$PART]:-0} + ${1:-1})); }
oneline() { tr '\n' '|' <"$1" | cut -c1-240; }
# sanitizer reports count as crashes when SHEAF_BIN is a sanitized build
sanitizer_report() { grep -q -a -e 'ERROR: AddressSanitizer' -e 'runtime error:' -e 'ERROR: LeakSanitizer' "$1"; }

# ---- data (fixed seeds) ----
D=$W/data
mkdir -p "$D"
echo "== data"
mkdir -p "$W/mem"
"$PY" - "$D" "$W/mem" <<'EOF'
import random, sys
d = sys.argv[1]
random.seed(12)
def table(path, rows, cls=True):
    with open(path, "w") as f:
        f.write("id,x,y,z,grade,note" + (",cls" if cls else "") + "\n")
        for i in range(rows):
            x = random.random()
            c = random.choice("abc")
            y = random.gauss(2.0 if c == "a" else 0.0, 1.0)
            row = [str(i), "%.4f" % x, "%.3f" % y, str(random.randint(0, 9)),
                   random.choice(["low", "mid", "high", "NA"]), random.choice(["ok", "late", "x y"])]
            if cls:
                row.append(c)
            f.write(",".join(row) + "\n")
table(d + "/good.csv", 300)
table(d + "/good2.csv", 200)
# 300 numeric columns and a 3-class label, for the memory limits
with open(sys.argv[2] + "/w300.csv", "w") as f:
    f.write(",".join("c%d" % i for i in range(300)) + ",label\n")
    for r in range(1500):
        f.write(",".join("%.4f" % random.random() for _ in range(300)))
        f.write("," + random.choice("abc") + "\n")
EOF
printf 'x\ny\n' >"$D/keep.txt"
# The summaries record their sources' paths and mtimes: relative names and a
# fixed mtime make them the same bytes in every run (so are part 2's flips).
touch -d @1700000000 "$D/good.csv" "$D/good2.csv"
S() { (cd "$D" && "$SHEAF" "$@"); }
S scan -q good.csv --target cls -o good.sheaf &&
    S scan -q good.csv -o nt.sheaf &&
    S scan -q good2.csv --target cls -o good2.sheaf ||
    { echo "bad_input_run.sh: scans of the good tables failed" >&2; exit 2; }
S info --format json good.sheaf >"$D/good.info.json" || exit 2

# Every command the catalogue drives (`sheaf --help`).
COMMANDS=(scan merge info screen corr pca trim project)

# ====================================================================
# Part 1: a catalogue of bad inputs, each through every command that can
# take it.
# ====================================================================
O=$W/o # the output directory (and working directory) of every run, made anew

# snapshot: every entry under the output, input and data directories with
# its type; regular files and links also with size, modification and change
# times (ns) and inode, so that a file written or replaced differs.
# Directories, devices and FIFOs keep only their type (writing through a
# FIFO or a device changes its times, and that is what should happen).
snapshot() {
    find "$O" "$IN" "$D" -mindepth 1 \( -type f -o -type l \) -printf '%p\t%y %s %T@ %C@ %i\n' \
        -o -printf '%p\t%y\n' 2>/dev/null
}

# inv CMD ALLOWED OUTPUT ARGV...: one run of the current kind, judged.
#   CMD      the command it counts for: the pair (KIND, CMD);
#   ALLOWED  the exit codes the README's table gives for this kind
#            (space-separated);
#   OUTPUT   the file the command writes, or "-" (standard output or none).
# Dynamically scoped settings of the kind: NAMES (text a failure message
# must contain), STDOUT (normal, closed or full), STDIN (a file), AS (a
# command prefix, e.g. setpriv), PREP (a function run before the command,
# after $O is made), AFTER (one run after it), VERIFY (a function run after a success: prints what is wrong).
inv() {
    local cmd=$1 allowed=$2 output=$3 IFS=$' \t\n'
    shift 3
    rm -rf "$O"
    mkdir -p "$O"
    [ -n "${AS:-}" ] && chmod 777 "$O"
    [ -n "${PREP:-}" ] && $PREP
    case ${STDOUT:-normal} in full) mknod "$O/full" c 1 7 ;; esac
    snapshot >"$W/before"
    local rc t0=$EPOCHREALTIME
    # shellcheck disable=SC2086
    case ${STDOUT:-normal} in
    normal) (cd "$O" && timeout 60 ${AS:-} "$@" <"${STDIN:-/dev/null}" >"$W/run.out" 2>"$W/run.err") ;;
    closed) (cd "$O" && timeout 60 ${AS:-} "$@" <"${STDIN:-/dev/null}" >&- 2>"$W/run.err") ;;
    full) (cd "$O" && timeout 60 ${AS:-} "$@" <"${STDIN:-/dev/null}" >"$O/full" 2>"$W/run.err") ;;
    esac
    rc=$?
    [ -n "${AFTER:-}" ] && $AFTER
    snapshot >"$W/after"
    checked
    PAIRS["$KIND/$cmd"]=1
    CMDS_SEEN[$cmd]=1
    KIND_RC="$KIND_RC $cmd=$rc"
    local where="$KIND/$cmd (${*:2})" lines first errs
    where=${where//$W\//}
    mapfile -t errs <"$W/run.err"
    lines=${#errs[@]}
    first=${errs[0]:-}
    printf '%s\t%s\t%s\t%d ms\t%s\n' "$KIND" "$cmd" "$rc" $(((${EPOCHREALTIME/./} - ${t0/./}) / 1000)) "$first" >>"$W/inputs.tsv"
    if [ "$rc" -eq 124 ]; then
        problem hang "$where: still running after 60 s"
        return
    fi
    if [ "$rc" -ge 128 ] || sanitizer_report "$W/run.err"; then
        problem crash "$where: exit $rc: $(oneline "$W/run.err")"
        return
    fi
    case " $allowed " in
    *" $rc "*) ;;
    *) problem exit "$where: exit $rc, the README gives $allowed here: $(oneline "$W/run.err")" ;;
    esac
    if [ "$rc" -ne 0 ]; then
        if [ "$lines" -ne 1 ] || [ "${first#sheaf}" = "$first" ]; then
            problem unclear "$where: exit $rc with $lines lines: $(oneline "$W/run.err")"
        elif [ -n "${NAMES:-}" ] && [ "${first#*"$NAMES"}" = "$first" ]; then
            problem unclear "$where: the message does not name '$NAMES': $first"
        fi
    elif [ "$lines" -gt 1 ] || { [ "$lines" -eq 1 ] && [ "${first#sheaf}" = "$first" ]; }; then
        problem unclear "$where: success with $lines lines on standard error: $(oneline "$W/run.err")"
    fi
    # What changed on disk: new names are leftovers, except the output; a
    # failed run must leave the output name as it was; inputs never change.
    local change name
    while read -r change name; do
        case $change in
        new) problem leftover "$where: exit $rc left ${name#"$W"/}" ;;
        created | changed)
            [ "$rc" -ne 0 ] && problem half "$where: exit $rc, yet the output ${name#"$W"/} was $change" ;;
        modified | removed) problem half "$where: exit $rc, the input ${name#"$W"/} was $change" ;;
        esac
    done < <(awk -F'\t' -v out="$output" '
        NR == FNR { b[$1] = $2; next }
        { a[$1] = $2 }
        END {
            for (k in a) {
                if (!(k in b)) print (k == out ? "created" : "new"), k
                else if (a[k] != b[k]) print (k == out ? "changed" : "modified"), k
            }
            for (k in b) if (!(k in a)) print (k == out ? "changed" : "removed"), k
        }' "$W/before" "$W/after")
    if [ "$rc" -eq 0 ] && [ -n "${VERIFY:-}" ]; then
        local wrong
        wrong=$($VERIFY "$output")
        checked
        [ -n "$wrong" ] && problem silent "$where: $wrong"
    fi
    return 0
}

# kind NAME DESCRIPTION: starts a kind; its inputs go in $IN.
kind() {
    [ -n "${KIND:-}" ] && printf '  %-34s%s\n' "$KIND" "$KIND_RC"
    [ -z "$1" ] && return
    KIND=$1
    KIND_RC=
    KINDS=$((KINDS + 1))
    IN=$W/k/$KIND
    mkdir -p "$IN"
    printf '%s\t%s\n' "$KIND" "$2" >>"$W/kinds.tsv"
}

# as_table PATH: the data file of scan, trim and project.  ALLOW (or
# ALLOW_scan, ALLOW_trim, ALLOW_project) are the accepted exit codes;
# SCAN_ARGS and READ_ARGS (both passes) add options.
as_table() {
    local p=$1
    VERIFY=${VERIFY_scan:-} inv scan "${ALLOW_scan:-$ALLOW}" "$O/out.sheaf" "$SHEAF" scan -q "$p" -o "$O/out.sheaf" ${SCAN_ARGS:-} ${READ_ARGS:-}
    inv trim "${ALLOW_trim:-$ALLOW}" "$O/out.csv" "$SHEAF" trim -q "$p" --columns-from "$D/keep.txt" -o "$O/out.csv" ${READ_ARGS:-}
    inv project "${ALLOW_project:-$ALLOW}" "$O/out.csv" "$SHEAF" project -q "$p" --summary "$D/nt.sheaf" -o "$O/out.csv" ${READ_ARGS:-}
}
# as_summary PATH: the summary of merge, info, screen, corr, pca, trim
# --summary and project --summary (ALLOW_sum, or ALLOW).
as_summary() {
    local p=$1 a=${ALLOW_sum:-$ALLOW}
    inv merge "$a" "$O/out.sheaf" "$SHEAF" merge "$p" "$D/good2.sheaf" -o "$O/out.sheaf"
    inv info "$a" - "$SHEAF" info "$p"
    inv screen "$a" - "$SHEAF" screen "$p"
    inv corr "$a" - "$SHEAF" corr "$p"
    inv pca "$a" - "$SHEAF" pca "$p"
    inv trim "$a" "$O/out.csv" "$SHEAF" trim -q "$D/good.csv" --summary "$p" -o "$O/out.csv"
    inv project "$a" "$O/out.csv" "$SHEAF" project -q "$D/good.csv" --summary "$p" -o "$O/out.csv"
}

# Checks of successful results (VERIFY): each prints what is wrong, if anything.
info_field() { "$SHEAF" info --format json "$1" | "$PY" -c "import json,sys; d=json.load(sys.stdin); print(eval(sys.argv[1]))" "$2"; }
# rows_are N: the scan's summary holds N rows and no class named after the
# target ("cls"), i.e. no header was read as a row.
rows_are() {
    local want=$1 out=$2 got
    got=$(info_field "$out" 'd["rows"], [l["value"] for l in (d.get("target") or {}).get("levels", [])]')
    case $got in "($want, "*) ;; *) echo "rows/classes $got, expected $want rows"; return ;; esac
    case $got in *"'cls'"*) echo "a class named after the target: $got" ;; esac
}

# Fixtures of the catalogue (fixed seed), in $F; each kind copies what it
# reads into its own $IN.
F=$W/fix
mkdir -p "$F"
"$PY" - "$F" "$D/good.csv" <<'EOF_PY'
import random, sys
f, good = sys.argv[1], sys.argv[2]
random.seed(65)
lines = open(good, "rb").read().split(b"\n")
head, rows = lines[0], [l for l in lines[1:] if l]
def put(name, data):
    open(f + "/" + name, "wb").write(data)
def table(rs, h=head, eol=b"\n"):
    return eol.join([h] + rs) + eol
put("random.bin", bytes(random.getrandbits(8) for _ in range(65536)))
put("header_only.csv", head + b"\n")
put("newlines.csv", b"\n" * 1000)
put("bom.csv", b"\xef\xbb\xbf")
r = list(rows); r[10] = r[10][:4] + b"\x00" + r[10][4:]
put("nul.csv", table(r))
# Latin-1 and broken UTF-8 sequences in a text column (README: 8-bit text passes)
r = [x.replace(b",ok,", b",caf\xe9,").replace(b",late,", b",\xff\xfe\xc3,") for x in rows]
put("invalid_utf8.csv", table(r))
# control bytes (BEL, backspace, 0x01) in most rows: over 1% of the bytes
r = [x.replace(b",", b"\x07,", 2).replace(b"x y", b"x\x01\x08y") for x in rows]
put("control.csv", table(r))
put("control_header.csv", table(rows, h=head.replace(b"grade", b"gr\x02\x03de")))
r = list(rows); r[150] = r[150].replace(b",x y,", b',"x y,') .replace(b",ok,", b',"ok,').replace(b",late,", b',"late,')
put("unterminated.csv", table(r))
r = [x.replace(b"x y", b"5'10\" tall").replace(b",ok,", b',o"k,') for x in rows]
put("quote_inside.csv", table(r))
r = list(rows)
for i in range(5, 300, 37): r[i] = r[i].rsplit(b",", 2)[0]
for i in range(7, 300, 53): r[i] = r[i] + b",extra,fields"
put("ragged.csv", table(r))
r = list(rows); r[100] = r[100].replace(b",ok,", b"," + b"k" * 5000 + b",")
r[100] = r[100].replace(b",late,", b"," + b"k" * 5000 + b",").replace(b",x y,", b"," + b"k" * 5000 + b",")
put("long_record.csv", table(r))
wide = [b"x", b"y"] + [b"c%d" % i for i in range(2, 10000)]
put("wide.csv", table([b",".join(b"%d" % random.randint(0, 99) for _ in wide) for _ in range(5)], h=b",".join(wide)))
put("duplicate_names.csv", table(rows, h=b"id,x,x,z,grade,note,cls"))
put("empty_names.csv", table(rows, h=b"id,,y,,grade,note,cls"))
r = list(rows)
put("mixed_eol.csv", head + b"\r\n" + b"".join(x + random.choice([b"\n", b"\r\n", b"\r"]) for x in r))
put("extreme.csv", b"id,x,y,z,grade,note,cls\n" + b"".join(
    b"%d,%s,%s,%s,low,ok,a\n" % (i, v, w, b"1" * 400 if i % 2 else b"-0")
    for i, (v, w) in enumerate([(b"1e308", b"-1e308"), (b"1e-320", b"inf"), (b"nan", b"-inf"),
                                (b"1.7976931348623157e308", b"-4.9e-324"), (b"0x1p3", b"1e99999"),
                                (b"123456789012345678901234567890", b"123456789012345678901234567891")] * 5)))
put("many_fields.csv", table(rows[:20] + [b",".join(b"%d" % i for i in range(100000))] + rows[20:40]))
put("no_final_newline.csv", table(rows)[:-1])
put("delims_header.csv", table(rows, h=b",,,,,,"))
big = b'"' + b"line\n" * 400000 + b'"'
put("big_quoted.csv", b"id,x,y,z,grade,note,cls\n" + b"1,0.5,0.3,2,low," + big + b",a\n" + b"\n".join(rows[1:50]) + b"\n")
put("other.csv", b"when,where,what\n" + b"".join(b"%d,p%d,%d\n" % (i, i % 7, i * 3) for i in range(100)))
put("utf16.csv", table(rows[:50]).decode("latin-1").encode("utf-16"))
EOF_PY
cp "$D/good.csv" "$F/good.csv"
gzip -n -c "$F/good.csv" >"$F/good.csv.gz"
zstd -q -c "$F/good.csv" >"$F/good.csv.zst"

# ---- the kinds ----
# Exit codes (README, "Exit codes"): 1 output not written, 2 usage (bad
# command line, unknown column name, an output that is an input), 3 bad input
# data (unreadable, malformed, truncated, corrupt stream), 4 damaged,
# truncated or newer summary, 5 incompatible summaries, 6 resource limit.

# Files that are bad whatever they hold: given to every command, as the data
# of scan, trim and project and as the summary of the others.
k_missing_file() {
    kind missing_file "a path that does not exist"
    local ALLOW=3 NAMES=nosuch
    as_table "$IN/nosuch.csv"
    as_summary "$IN/nosuch.sheaf"
}
k_directory() {
    kind directory "a directory where a file is expected"
    mkdir "$IN/adir"
    local ALLOW=3 NAMES=adir
    as_table "$IN/adir"
    as_summary "$IN/adir"
}
k_unreadable() {
    # chmod 000 does not stop root, so sheaf runs as nobody (setpriv) on a
    # file of mode 000; without setpriv the kind is skipped.
    kind unreadable_file "a file without read permission (sheaf run as nobody)"
    if ! setpriv --reuid=65534 --regid=65534 --clear-groups true 2>/dev/null; then
        echo "  (skipped: setpriv cannot run as nobody)"
        return
    fi
    cp "$F/good.csv" "$IN/locked.csv"
    cp "$D/good.sheaf" "$IN/locked.sheaf"
    chmod 000 "$IN/locked.csv" "$IN/locked.sheaf"
    local ALLOW=3 NAMES=locked AS="setpriv --reuid=65534 --regid=65534 --clear-groups"
    as_table "$IN/locked.csv"
    as_summary "$IN/locked.sheaf"
}
k_empty_file() {
    # trim of an empty file writes an empty file (exit 0): a filter of
    # nothing is nothing, and with no header there is no column to miss
    # (src/pass/trim.c, require_records = 0).  scan and project need records.
    kind empty_file "a file of 0 bytes (also as an empty summary)"
    : >"$IN/empty.csv"
    local ALLOW=3 ALLOW_trim="0" ALLOW_sum=4 NAMES=empty
    as_table "$IN/empty.csv"
    as_summary "$IN/empty.csv"
}
k_char_device() {
    kind char_device "/dev/null as the input"
    local ALLOW=3 ALLOW_trim="0" NAMES=/dev/null
    as_table /dev/null
    as_summary /dev/null # a summary must be a regular file: exit 3 (summary-format.md)
}
fifo_feed() { # a writer for $IN/pipe, ended by fifo_stop
    (timeout 70 cat "$FEED" >"$IN/pipe" 2>/dev/null) &
    FEED_PID=$!
    BG_PIDS+=("$FEED_PID")
}
fifo_stop() { kill "$FEED_PID" 2>/dev/null; wait "$FEED_PID" 2>/dev/null; }
k_fifo() {
    # A FIFO with a writer: a table streams through (exit 0); a summary is
    # mapped, so a FIFO is refused as not a regular file (exit 3,
    # summary-format.md "Exit codes").
    kind fifo_input "a named pipe as the input, with a writer"
    mkfifo "$IN/pipe"
    local PREP=fifo_feed AFTER=fifo_stop FEED=$F/good.csv ALLOW=0 NAMES=pipe
    as_table "$IN/pipe"
    FEED=$D/good.sheaf ALLOW=3 as_summary "$IN/pipe"
}
k_read_error() {
    # /proc/self/mem opens, and read(2) at offset 0 fails with EIO: a file
    # that cannot be read.  As a summary it is a regular file of size 0:
    # refused as unreadable (3) or as a truncated summary (4).
    kind read_error "a file whose read fails with EIO (/proc/self/mem)"
    local ALLOW=3 ALLOW_sum="3 4" NAMES=/proc/self/mem
    as_table /proc/self/mem
    as_summary /proc/self/mem
}
k_symlink_loop() {
    kind symlink_loop "a symbolic link to itself"
    ln -s loop "$IN/loop"
    local ALLOW=3 NAMES=loop
    as_table "$IN/loop"
    as_summary "$IN/loop"
}
k_dangling_link() {
    kind dangling_symlink "a symbolic link to nothing"
    ln -s gone.csv "$IN/dangling"
    local ALLOW=3 NAMES=dangling
    as_table "$IN/dangling"
    as_summary "$IN/dangling"
}
k_table_as_summary() {
    kind table_as_summary "a CSV table given where a summary is expected"
    cp "$F/good.csv" "$IN/t.csv"
    local ALLOW=4 NAMES=t.csv
    as_summary "$IN/t.csv"
}
k_summary_as_table() {
    # A summary is binary: the scan refuses it as not text (3); trim and
    # project look for their columns in its first "line" and refuse the
    # names as missing (trim: unknown column, 2; project: 3, README).
    kind summary_as_table "a summary given where a table is expected"
    cp "$D/good.sheaf" "$IN/s.sheaf"
    local ALLOW=3 ALLOW_trim="2 3" NAMES=s.sheaf
    as_table "$IN/s.sheaf"
}

# Tables that are bad as tables.
k_header_only() {
    kind header_only "a header and no rows"
    cp "$F/header_only.csv" "$IN/h.csv"
    local ALLOW=0 VERIFY_scan="rows_are 0"
    as_table "$IN/h.csv"
}
k_only_newlines() {
    kind only_newlines "1,000 empty lines"
    cp "$F/newlines.csv" "$IN/nl.csv"
    local ALLOW=3 ALLOW_trim=0 NAMES=nl.csv
    as_table "$IN/nl.csv"
}
k_bom_only() {
    kind bom_only "a UTF-8 byte-order mark and nothing else"
    cp "$F/bom.csv" "$IN/bom.csv"
    local ALLOW=3 ALLOW_trim=0 NAMES=bom.csv
    as_table "$IN/bom.csv"
}
k_nul() {
    # The scan refuses non-text (README "Reading guards"); trim and project
    # read text fields, and a NUL byte is one more byte of a cell there.
    kind nul_bytes "a NUL byte in a data row"
    cp "$F/nul.csv" "$IN/nul.csv"
    local ALLOW=3 ALLOW_trim="0 3" ALLOW_project="0 3" NAMES=nul.csv
    as_table "$IN/nul.csv"
}
k_nul_force() {
    kind nul_bytes_force "a NUL byte, scanned with --force"
    cp "$F/nul.csv" "$IN/nul.csv"
    local ALLOW=0
    inv scan 0 "$O/out.sheaf" "$SHEAF" scan -q --force "$IN/nul.csv" -o "$O/out.sheaf"
}
k_random_binary() {
    kind random_binary "64 KiB of random bytes"
    cp "$F/random.bin" "$IN/r.bin"
    local ALLOW=3 ALLOW_trim="2 3" NAMES=r.bin
    as_table "$IN/r.bin"
}
k_random_binary_force() {
    # With --force the bytes are read as a table: a quote among them may be
    # left open (3), or they scan to columns of noise (0).
    kind random_binary_force "random bytes scanned with --force"
    cp "$F/random.bin" "$IN/r.bin"
    local NAMES=r.bin
    inv scan "0 3" "$O/out.sheaf" "$SHEAF" scan -q --force "$IN/r.bin" -o "$O/out.sheaf"
}
k_invalid_utf8() {
    # README: UTF-8 and 8-bit text such as Latin-1 pass; sheaf does not check
    # UTF-8 (docs/screen-json.md, "Strings").
    kind invalid_utf8 "Latin-1 and broken UTF-8 sequences in cells"
    cp "$F/invalid_utf8.csv" "$IN/u.csv"
    local ALLOW=0 VERIFY_scan="rows_are 300"
    as_table "$IN/u.csv"
}
k_control() {
    kind control_chars "control bytes in most rows"
    cp "$F/control.csv" "$IN/c.csv"
    local ALLOW=3 ALLOW_trim="0 3" ALLOW_project="0 3" NAMES=c.csv
    as_table "$IN/c.csv"
}
k_control_header() {
    kind control_chars_header "control bytes in the header"
    cp "$F/control_header.csv" "$IN/c.csv"
    local ALLOW=3 ALLOW_trim="0 3" ALLOW_project="0 3" NAMES=c.csv
    as_table "$IN/c.csv"
}
k_unterminated() {
    kind unterminated_quote "a quote opened on line 152 and never closed"
    cp "$F/unterminated.csv" "$IN/q.csv"
    local ALLOW=3 NAMES="q.csv: line 152"
    as_table "$IN/q.csv"
}
k_quote_inside() {
    kind quote_in_unquoted_field "5'10\" and o\"k: quotes inside unquoted cells are data"
    cp "$F/quote_inside.csv" "$IN/q.csv"
    local ALLOW=0 VERIFY_scan="rows_are 300"
    as_table "$IN/q.csv"
}
k_ragged() {
    kind ragged_rows "rows with too few and too many fields"
    cp "$F/ragged.csv" "$IN/r.csv"
    local ALLOW=0 VERIFY_scan="rows_are 300"
    as_table "$IN/r.csv"
}
k_ragged_strict() {
    kind ragged_rows_strict "rows with too few fields, under --strict"
    cp "$F/ragged.csv" "$IN/r.csv"
    local NAMES="r.csv: line"
    inv scan 3 "$O/out.sheaf" "$SHEAF" scan -q --strict "$IN/r.csv" -o "$O/out.sheaf"
}
k_long_record() {
    kind record_over_max_record "a 15 KB record under --max-record 4K"
    cp "$F/long_record.csv" "$IN/l.csv"
    local ALLOW=3 READ_ARGS="--max-record 4K" NAMES=l.csv
    as_table "$IN/l.csv"
}
k_wide() {
    # 10,000 columns.  The scan keeps pairwise co-moments of every column
    # that is not declared categorical: 32 p^2 bytes, 3.2 GB for p = 10,000
    # (docs/summary-format.md, COMO), which --mem checks before reading.  A
    # default scan of this file takes about a minute and writes a 3.2 GB
    # summary for 5 rows, so the run asks for what fits: under --mem 1G the
    # scan is refused before reading (exit 6), and with --columns it reads
    # the wide header and keeps two columns.  trim keeps x and y; the PCA's
    # other columns are not in the header, which project refuses (3).
    kind wide_header "a header of 10,000 columns"
    cp "$F/wide.csv" "$IN/w.csv"
    inv scan 6 "$O/out.sheaf" "$SHEAF" scan -q "$IN/w.csv" --mem 1G -o "$O/out.sheaf"
    VERIFY="rows_are 5" inv scan 0 "$O/out.sheaf" "$SHEAF" scan -q "$IN/w.csv" --columns x,c9999 -o "$O/out.sheaf"
    inv trim 0 "$O/out.csv" "$SHEAF" trim -q "$IN/w.csv" --columns-from "$D/keep.txt" -o "$O/out.csv"
    NAMES=w.csv inv project 3 "$O/out.csv" "$SHEAF" project -q "$IN/w.csv" --summary "$D/nt.sheaf" -o "$O/out.csv"
}
k_duplicate_names() {
    # A duplicated name warns at scan time (one line); trim's keep list
    # naming it is refused (2), project refuses the data file (3) (README,
    # "Reading guards").
    kind duplicate_column_names "two columns named x"
    cp "$F/duplicate_names.csv" "$IN/d.csv"
    local ALLOW=0 ALLOW_trim=2 ALLOW_project=3
    as_table "$IN/d.csv"
}
k_duplicate_target() {
    kind duplicate_name_as_target "--target names a duplicated column"
    cp "$F/duplicate_names.csv" "$IN/d.csv"
    inv scan 2 "$O/out.sheaf" "$SHEAF" scan -q "$IN/d.csv" --target x -o "$O/out.sheaf"
}
k_empty_names() {
    # Empty names become colN (README); the keep list's x is then unknown
    # (trim 2) and the PCA's x is missing from the data (project 3).
    kind empty_column_names "header fields that are empty"
    cp "$F/empty_names.csv" "$IN/e.csv"
    local ALLOW=0 ALLOW_trim=2 ALLOW_project=3
    as_table "$IN/e.csv"
}
k_mixed_eol() {
    # A lone CR is not a line end (RFC 4180 records end in CRLF; LF is
    # accepted): it stays in the cell, so rows are still read whole or
    # counted as ragged.  The row count depends on the lone CRs: any exit 0.
    kind mixed_line_ends "CRLF, LF and lone CR line ends mixed"
    cp "$F/mixed_eol.csv" "$IN/m.csv"
    local ALLOW=0
    as_table "$IN/m.csv"
}
k_truncated_gzip() {
    kind truncated_gzip "a gzip file cut in the middle"
    head -c $(($(stat -c %s "$F/good.csv.gz") / 2)) "$F/good.csv.gz" >"$IN/t.csv.gz"
    local ALLOW=3 NAMES=t.csv.gz
    as_table "$IN/t.csv.gz"
}
k_gzip_crc() {
    kind gzip_bad_crc "a gzip file whose CRC-32 is wrong"
    cp "$F/good.csv.gz" "$IN/c.csv.gz"
    local n
    n=$(stat -c %s "$IN/c.csv.gz")
    printf '\x55' | dd of="$IN/c.csv.gz" bs=1 seek=$((n - 8)) conv=notrunc status=none
    local ALLOW=3 NAMES=c.csv.gz
    as_table "$IN/c.csv.gz"
}
k_gzip_garbage() {
    kind gzip_of_garbage "random bytes, gzip-compressed"
    gzip -n -c "$F/random.bin" >"$IN/g.csv.gz"
    local ALLOW=3 ALLOW_trim="2 3" NAMES=g.csv.gz
    as_table "$IN/g.csv.gz"
}
k_truncated_zstd() {
    kind truncated_zstd "a zstd file cut in the middle"
    head -c $(($(stat -c %s "$F/good.csv.zst") / 2)) "$F/good.csv.zst" >"$IN/t.csv.zst"
    local ALLOW=3 NAMES=t.csv.zst
    as_table "$IN/t.csv.zst"
}
k_zstd_corrupt() {
    kind zstd_frame_corrupted "a zstd frame with bytes overwritten in its middle"
    cp "$F/good.csv.zst" "$IN/c.csv.zst"
    local n
    n=$(stat -c %s "$IN/c.csv.zst")
    printf '\xff\xff\xff\xff\xff\xff\xff\xff' | dd of="$IN/c.csv.zst" bs=1 seek=$((n / 2)) conv=notrunc status=none
    local ALLOW=3 NAMES=c.csv.zst
    as_table "$IN/c.csv.zst"
}
k_zstd_garbage() {
    kind zstd_of_garbage "random bytes, zstd-compressed"
    zstd -q -c "$F/random.bin" >"$IN/g.csv.zst"
    local ALLOW=3 ALLOW_trim="2 3" NAMES=g.csv.zst
    as_table "$IN/g.csv.zst"
}
k_gzip_members() {
    # README "Reading guards": the header line at the start of the second
    # member is skipped, not read as a row: 600 rows, no class "cls" (the
    # scan is given --target cls).
    kind gzip_members_repeated_header "two gzip members, each with the header"
    cat "$F/good.csv.gz" "$F/good.csv.gz" >"$IN/two.csv.gz"
    local ALLOW=0 VERIFY_scan="rows_are 600" SCAN_ARGS="--target cls"
    as_table "$IN/two.csv.gz"
}
k_zstd_frames() {
    kind zstd_frames_repeated_header "two zstd frames, each with the header"
    cat "$F/good.csv.zst" "$F/good.csv.zst" >"$IN/two.csv.zst"
    local ALLOW=0 VERIFY_scan="rows_are 600" SCAN_ARGS="--target cls"
    as_table "$IN/two.csv.zst"
}
k_plain_named_gz() {
    kind plain_text_named_gz "plain CSV in a file named .gz (the format comes from the bytes)"
    cp "$F/good.csv" "$IN/p.csv.gz"
    local ALLOW=0 VERIFY_scan="rows_are 300"
    as_table "$IN/p.csv.gz"
}
k_empty_gzip() {
    kind empty_gzip "a gzip file of no bytes"
    gzip -n -c </dev/null >"$IN/e.csv.gz"
    local ALLOW=3 ALLOW_trim=0 NAMES=e.csv.gz
    as_table "$IN/e.csv.gz"
}
k_utf16() {
    kind utf16 "a table in UTF-16 (NUL bytes in every other byte)"
    cp "$F/utf16.csv" "$IN/u.csv"
    local ALLOW=3 ALLOW_trim="2 3" NAMES=u.csv
    as_table "$IN/u.csv"
}
k_stdin_binary() {
    kind stdin_binary "random bytes on standard input ('-')"
    local ALLOW=3 ALLOW_trim="2 3" STDIN=$F/random.bin NAMES="-:" # named as typed
    as_table -
}
k_extreme_numbers() {
    # 1e308, subnormals, infinities, NaN, 400-digit and 30-digit integers,
    # 1e99999 (overflow, a non-finite number): all read, nothing crashes.
    kind extreme_numbers "numbers at and past the limits of a double"
    cp "$F/extreme.csv" "$IN/x.csv"
    local ALLOW=0 VERIFY_scan="rows_are 30"
    as_table "$IN/x.csv"
}
k_many_fields() {
    kind row_of_100000_fields "one row with 100,000 fields (a ragged row)"
    cp "$F/many_fields.csv" "$IN/m.csv"
    local ALLOW=0 VERIFY_scan="rows_are 41"
    as_table "$IN/m.csv"
}
k_no_final_newline() {
    kind no_final_newline "the last record has no line end"
    cp "$F/no_final_newline.csv" "$IN/n.csv"
    local ALLOW=0 VERIFY_scan="rows_are 300"
    as_table "$IN/n.csv"
}
k_delims_header() {
    # Every name empty: col1..col7; the keep list and the PCA name columns
    # that are not there (trim 2, project 3).
    kind header_of_delimiters "a header of delimiters only"
    cp "$F/delims_header.csv" "$IN/h.csv"
    local ALLOW=0 ALLOW_trim=2 ALLOW_project=3
    as_table "$IN/h.csv"
}
k_big_quoted() {
    kind quoted_cell_over_chunks "a 2 MB quoted cell, read in 64 KiB chunks"
    cp "$F/big_quoted.csv" "$IN/b.csv"
    local ALLOW=0 READ_ARGS="--chunk-size 64K" VERIFY_scan="rows_are 50"
    as_table "$IN/b.csv"
}

# Summaries that are damaged, truncated, newer or not summaries: every
# reader must refuse them with exit 4 (README; docs/summary-format.md,
# "Reading and validation").
CRAFT="$PY $ROOT/tests/cli/summary_craft.py"
# reseal_version IN OUT VERSION: IN with its format version set (the u32 after
# the magic) and every checksum recomputed with summary_craft.reseal.
reseal_version() {
    "$PY" - "$1" "$2" "$3" "$ROOT/tests/cli" <<'EOF_PY'
import struct, sys
sys.path.insert(0, sys.argv[4])
import summary_craft
data = bytearray(open(sys.argv[1], "rb").read())
sections, _ = summary_craft.parse(data)
struct.pack_into("<I", data, 8, int(sys.argv[3]))
summary_craft.reseal(data, sections)
open(sys.argv[2], "wb").write(data)
EOF_PY
}
summary_kind() { # NAME DESCRIPTION FILE [NAMES]: FILE through every reader, exit 4
    kind "$1" "$2"
    local ALLOW=4 NAMES=${4:-$(basename "$3")}
    as_summary "$3"
}
k_summaries() {
    local g=$D/good.sheaf n
    n=$(stat -c %s "$g")
    head -c 8 "$g" >"$W/s_magic.sheaf"
    summary_kind summary_magic_only "the 8 magic bytes of a summary and nothing else" "$W/s_magic.sheaf"
    head -c 1 "$g" >"$W/s_1.sheaf"
    summary_kind summary_truncated_1_byte "the first byte of a summary" "$W/s_1.sheaf"
    head -c $((n / 2)) "$g" >"$W/s_half.sheaf"
    summary_kind summary_truncated_half "the first half of a summary" "$W/s_half.sheaf"
    head -c $((n - 1)) "$g" >"$W/s_short.sheaf"
    summary_kind summary_one_byte_short "a summary without its last byte" "$W/s_short.sheaf"
    reseal_version "$g" "$W/s_v99.sheaf" 99
    summary_kind summary_future_version "format version 99, checksums recomputed" "$W/s_v99.sheaf" "newer"
    reseal_version "$g" "$W/s_v0.sheaf" 0
    summary_kind summary_version_0 "format version 0, checksums recomputed" "$W/s_v0.sheaf"
    "$PY" -c "import sys; d=bytearray(open(sys.argv[1],'rb').read()); d[len(d)//3]^=4; open(sys.argv[2],'wb').write(d)" "$g" "$W/s_flip.sheaf"
    summary_kind summary_flipped_bit "one bit flipped, checksums left" "$W/s_flip.sheaf"
    $CRAFT set "$g" "$W/s_rows.sheaf" "TABL.rows=$(($($CRAFT get "$g" TABL.rows) + 1))"
    summary_kind summary_rows_do_not_add_up "TABL.rows one more than the sources', checksums recomputed" "$W/s_rows.sheaf"
    $CRAFT set "$g" "$W/s_cell.sheaf" "COLS[1].bins.entry[0].cell=9"
    summary_kind summary_class_out_of_range "a bucket naming class 9 of 3, checksums recomputed" "$W/s_cell.sheaf"
    $CRAFT long-section "$g" "$W/s_long.sheaf"
    summary_kind summary_section_length_2_30 "a section header claiming 2^30 bytes at the end of the file" "$W/s_long.sheaf"
    cp "$g" "$W/s_tail.sheaf" && printf 'trailing bytes' >>"$W/s_tail.sheaf"
    summary_kind summary_trailing_bytes "bytes after the end marker" "$W/s_tail.sheaf"
    gzip -n -c "$g" >"$W/s_gz.sheaf"
    summary_kind summary_gzipped "a gzip-compressed summary" "$W/s_gz.sheaf"
    "$PY" -c "import sys; d=open(sys.argv[1],'rb').read(); open(sys.argv[2],'wb').write(d[:-30] + d[-30:].replace(b'END.', b'END!'))" "$g" "$W/s_end.sheaf"
    summary_kind summary_no_end_marker "the end marker overwritten" "$W/s_end.sheaf"
}

# Summaries that are whole but cannot be merged (exit 5), and merges that
# are fine.
k_merges() {
    "$SHEAF" scan -q "$F/other.csv" -o "$W/other.sheaf"
    "$SHEAF" scan -q "$D/good2.csv" --target cls --max-levels 10 -o "$W/levels10.sheaf"
    "$SHEAF" scan -q "$D/good2.csv" -o "$W/nt2.sheaf"
    kind merge_different_columns "two summaries with different columns"
    inv merge 5 "$O/out.sheaf" "$SHEAF" merge "$D/good.sheaf" "$W/other.sheaf" -o "$O/out.sheaf"
    kind merge_different_options "the same columns scanned with --max-levels 10 and 1024"
    inv merge 5 "$O/out.sheaf" "$SHEAF" merge "$D/good.sheaf" "$W/levels10.sheaf" -o "$O/out.sheaf"
    kind merge_target_and_none "a summary with a target and one without"
    inv merge 5 "$O/out.sheaf" "$SHEAF" merge "$D/good.sheaf" "$W/nt2.sheaf" -o "$O/out.sheaf"
    kind merge_source_twice "the same summary twice (its source counted twice)"
    inv merge 5 "$O/out.sheaf" "$SHEAF" merge "$D/good.sheaf" "$D/good.sheaf" -o "$O/out.sheaf"
}

# Options with bad values: usage errors (exit 2) unless said otherwise.
opt_kind() { # NAME DESCRIPTION CMD:ARGS... ; each CMD with its args, exit ALLOW (2)
    kind "$1" "$2"
    shift 2
    local spec cmd args out IFS=$' \t\n'
    for spec in "$@"; do
        cmd=${spec%%:*}
        args=${spec#*:}
        args=${args//@G/$D/good.csv}
        args=${args//@S/$D/good.sheaf}
        args=${args//@N/$D/nt.sheaf}
        args=${args//@K/$D/keep.txt}
        args=${args//@O/$O}
        out=-
        case $args in *" -o $O/"*) out=${args##* -o }; out=${out%% *} ;; esac
        # shellcheck disable=SC2086
        inv "$cmd" "${ALLOW:-2}" "$out" "$SHEAF" $cmd $args
    done
}
PASSES=("scan:@G -q -o @O/out.sheaf" "trim:@G -q --columns-from @K -o @O/out.csv" "project:@G -q --summary @N -o @O/out.csv")
passes_with() { local p IFS=' '; for p in "${PASSES[@]}"; do echo "$p $*"; done; }
k_options() {
    local IFS=$'\n'
    # shellcheck disable=SC2046
    {
    opt_kind threads_negative "-j -1" $(passes_with -j -1)
    opt_kind threads_zero "-j 0" $(passes_with -j 0)
    opt_kind threads_huge "-j 100000" $(passes_with -j 100000)
    opt_kind threads_not_a_number "-j many" $(passes_with -j many)
    opt_kind chunk_size_zero "--chunk-size 0" $(passes_with --chunk-size 0)
    opt_kind chunk_size_huge "--chunk-size 1T" $(passes_with --chunk-size 1T)
    opt_kind chunk_size_garbage "--chunk-size 12Q" $(passes_with --chunk-size 12Q)
    opt_kind max_record_zero "--max-record 0" $(passes_with --max-record 0)
    opt_kind max_record_negative "--max-record -5" $(passes_with --max-record -5)
    opt_kind delimiter_two_chars "-d xy" $(passes_with -d xy)
    # --mem 1: one byte cannot hold the co-moment matrix: over --mem is a
    # resource limit (exit 6, README), refused before any row is read.
    ALLOW=6 opt_kind mem_1_byte "--mem 1" "scan:@G -q -o @O/out.sheaf --mem 1"
    opt_kind mem_garbage "--mem lots" "scan:@G -q -o @O/out.sheaf --mem lots"
    opt_kind shard_0_of_2 "--shard 0/2" "scan:@G -q -o @O/out.sheaf --shard 0/2"
    opt_kind shard_3_of_2 "--shard 3/2" "scan:@G -q -o @O/out.sheaf --shard 3/2"
    opt_kind shard_malformed "--shard 1/" "scan:@G -q -o @O/out.sheaf --shard 1/"
    opt_kind target_missing_column "--target names no column" "scan:@G -q -o @O/out.sheaf --target nosuch"
    opt_kind columns_unknown "--columns names no column" "scan:@G -q -o @O/out.sheaf --columns x,nosuch" \
        "corr:@S --columns x,nosuch" "pca:@N --columns x,nosuch" "project:@G -q --summary @N --columns x,nosuch -o @O/out.csv"
    opt_kind missing_2000_bytes "--missing with a spelling of 2,000 bytes (the limit is 1024)" \
        "scan:@G -q -o @O/out.sheaf --missing NA,$(printf 'm%.0s' {1..2000})"
    opt_kind max_classes_zero "--max-classes 0" "scan:@G -q -o @O/out.sheaf --target cls --max-classes 0"
    opt_kind max_levels_zero "--max-levels 0" "scan:@G -q -o @O/out.sheaf --max-levels 0"
    opt_kind max_levels_huge "--max-levels 10000000000" "scan:@G -q -o @O/out.sheaf --max-levels 10000000000"
    opt_kind bucket_budget_zero "--bucket-budget 0" "scan:@G -q -o @O/out.sheaf --bucket-budget 0"
    opt_kind task_unknown "--task guess" "scan:@G -q -o @O/out.sheaf --target cls --task guess"
    opt_kind q_out_of_range "--fdr 2" "screen:@S --fdr 2" "trim:@G -q --summary @S --fdr 2 -o @O/out.csv"
    opt_kind q_not_a_number "--fdr nan" "screen:@S --fdr nan" "trim:@G -q --summary @S --fdr nan -o @O/out.csv"
    opt_kind top_negative "--top-values / --max-kept -1" "info:@S --top-values -1" "screen:@S --max-kept -1" "trim:@G -q --summary @S --max-kept -1 -o @O/out.csv"
    opt_kind bins_zero "--bins 0" "screen:@S --bins 0"
    opt_kind rank_by_unknown "--rank-by luck" "screen:@S --rank-by luck"
    opt_kind redundancy_negative "--redundancy -0.5" "screen:@S --redundancy -0.5"
    opt_kind format_unknown "--format xml" "screen:@S --format xml" "corr:@S --format xml" "pca:@N --format xml"
    opt_kind numeric_share_over_1 "--numeric-share 2" "info:@S --numeric-share 2" "screen:@S --numeric-share 2" \
        "corr:@S --numeric-share 2" "pca:@N --numeric-share 2" "project:@G -q --summary @N --numeric-share 2 -o @O/out.csv"
    opt_kind k_zero "--components 0" "pca:@N --components 0" "project:@G -q --summary @N --components 0 -o @O/out.csv"
    opt_kind share_over_1 "--share 1.5" "pca:@N --share 1.5" "project:@G -q --summary @N --share 1.5 -o @O/out.csv"
    opt_kind k_and_share "--components and --share together" "pca:@N --components 2 --share 0.5" "project:@G -q --summary @N --components 2 --share 0.5 -o @O/out.csv"
    opt_kind basis_unknown "--basis spherical" "pca:@N --basis spherical" "project:@G -q --summary @N --basis spherical -o @O/out.csv"
    # --leading 0 lists no loadings: the eigenvalues and shares alone, a
    # request that makes sense (unlike --components 0), so exit 0 is right.
    ALLOW=0 opt_kind leading_zero "--leading 0" "pca:@N --leading 0"
    opt_kind carry_unknown "--carry names no column" "trim:@G -q --columns-from @K --carry nosuch -o @O/out.csv" \
        "project:@G -q --summary @N --carry nosuch -o @O/out.csv"
    opt_kind exclude_unknown "--exclude names no column" "pca:@N --exclude nosuch" "project:@G -q --summary @N --exclude nosuch -o @O/out.csv"
    opt_kind from_and_keep_list "trim with both --summary and --columns-from" "trim:@G -q --summary @S --columns-from @K -o @O/out.csv"
    opt_kind trim_without_list "trim with neither --summary nor --columns-from" "trim:@G -q -o @O/out.csv"
    opt_kind project_without_pca "project without --summary" "project:@G -q -o @O/out.csv"
    opt_kind unknown_option "--frobnicate" $(for c in scan merge info screen corr pca trim project; do echo "$c:--frobnicate @S"; done)
    opt_kind no_arguments "the command alone" $(for c in scan merge info screen corr pca trim project; do echo "$c:"; done)
    opt_kind option_value_missing "-o as the last word" "scan:@G -o" "merge:@S @N -o" "trim:@G --columns-from @K -o" "project:@G --summary @N -o"
    opt_kind too_many_summaries "two summaries where one is read" "info:@S @N" "screen:@S @N" "corr:@S @N" "pca:@S @N"
    opt_kind merge_without_output "merge without -o" "merge:@S @N"
    opt_kind scan_without_output "scan without -o" "scan:@G"
    }
    # Files named by options.
    printf 'x\nnosuch\n' >"$W/keep_unknown.txt"
    printf '# nothing\n\n' >"$W/keep_empty.txt"
    printf 'x\nx\ny\n' >"$W/keep_twice.txt"
    kind keep_list_missing_file "--columns-from names a file that does not exist"
    local NAMES=nosuch.txt
    inv trim 3 "$O/out.csv" "$SHEAF" trim -q "$D/good.csv" --columns-from "$W/nosuch.txt" -o "$O/out.csv"
    inv pca 3 - "$SHEAF" pca "$D/nt.sheaf" --columns-from "$W/nosuch.txt"
    inv project 3 "$O/out.csv" "$SHEAF" project -q "$D/good.csv" --summary "$D/nt.sheaf" --columns-from "$W/nosuch.txt" -o "$O/out.csv"
    NAMES=
    local f what
    for what in directory read_error; do
        if [ $what = directory ]; then f=$W; else f=/proc/self/mem; fi
        kind "keep_list_$what" "--columns-from names $( [ $what = directory ] && echo "a directory" || echo "a file whose read fails (EIO)")"
        NAMES=$f
        inv trim 3 "$O/out.csv" "$SHEAF" trim -q "$D/good.csv" --columns-from "$f" -o "$O/out.csv"
        inv pca 3 - "$SHEAF" pca "$D/nt.sheaf" --columns-from "$f"
        inv project 3 "$O/out.csv" "$SHEAF" project -q "$D/good.csv" --summary "$D/nt.sheaf" --columns-from "$f" -o "$O/out.csv"
    done
    NAMES=
    kind keep_list_unknown_column "--columns-from names a column that does not exist"
    inv trim 2 "$O/out.csv" "$SHEAF" trim -q "$D/good.csv" --columns-from "$W/keep_unknown.txt" -o "$O/out.csv"
    inv pca 2 - "$SHEAF" pca "$D/nt.sheaf" --columns-from "$W/keep_unknown.txt"
    inv project 2 "$O/out.csv" "$SHEAF" project -q "$D/good.csv" --summary "$D/nt.sheaf" --columns-from "$W/keep_unknown.txt" -o "$O/out.csv"
    kind keep_list_empty "--columns-from of comments and blank lines"
    inv trim 2 "$O/out.csv" "$SHEAF" trim -q "$D/good.csv" --columns-from "$W/keep_empty.txt" -o "$O/out.csv"
    inv pca 2 - "$SHEAF" pca "$D/nt.sheaf" --columns-from "$W/keep_empty.txt"
    inv project 2 "$O/out.csv" "$SHEAF" project -q "$D/good.csv" --summary "$D/nt.sheaf" --columns-from "$W/keep_empty.txt" -o "$O/out.csv"
    kind keep_list_binary "--columns-from of random bytes"
    inv trim 2 "$O/out.csv" "$SHEAF" trim -q "$D/good.csv" --columns-from "$F/random.bin" -o "$O/out.csv"
    inv pca 2 - "$SHEAF" pca "$D/nt.sheaf" --columns-from "$F/random.bin"
    inv project 2 "$O/out.csv" "$SHEAF" project -q "$D/good.csv" --summary "$D/nt.sheaf" --columns-from "$F/random.bin" -o "$O/out.csv"
}

# Outputs that cannot be written (README, "Where outputs land").
WRITERS=(scan merge trim project screen)
# writes CMD TARGET: the command line of CMD writing TARGET.
writes() {
    case $1 in
    scan) echo "$SHEAF scan -q $D/good.csv -o $2" ;;
    merge) echo "$SHEAF merge $D/good.sheaf $D/good2.sheaf -o $2" ;;
    trim) echo "$SHEAF trim -q $D/good.csv --columns-from $D/keep.txt -o $2" ;;
    project) echo "$SHEAF project -q $D/good.csv --summary $D/nt.sheaf -o $2" ;;
    screen) echo "$SHEAF screen $D/good.sheaf --write-kept $2" ;; # the keep list is its output file
    esac
}
out_kind() { # NAME DESCRIPTION ALLOWED TARGET [OUTPUT]
    kind "$1" "$2"
    local c
    for c in "${WRITERS[@]}"; do
        # shellcheck disable=SC2046
        inv "$c" "$3" "${5:-$4}" $(writes "$c" "$4")
    done
}
make_dir() { mkdir "$O/adir"; }
make_full() { mknod "$O/full" c 1 7; }
make_readonly() { mkdir "$O/ro" && chmod 555 "$O/ro"; }
k_outputs() {
    # A directory is refused (exit 1); so is a path in a directory that
    # does not exist, or one nobody may write (exit 1: output not written).
    PREP=make_dir out_kind output_is_directory "-o names a directory" 1 "$O/adir"
    out_kind output_in_missing_directory "-o in a directory that does not exist" 1 "$O/nodir/out"
    # /dev/full made here with mknod, never the machine's own (a regression
    # that replaced the target would replace the device).  The device is
    # not the output here ("-"): it must stay a device, whatever happens.
    PREP=make_full NAMES="No space left on device" out_kind output_dev_full "-o a full device (c 1 7)" 1 "$O/full" -
    if setpriv --reuid=65534 --regid=65534 --clear-groups true 2>/dev/null; then
        AS="setpriv --reuid=65534 --regid=65534 --clear-groups" PREP=make_readonly NAMES="Permission denied" \
            out_kind output_read_only_directory "-o in a directory nobody may write (sheaf as nobody)" 1 "$O/ro/out"
    fi
    # An output that is one of the inputs: exit 2, the input unchanged (the
    # output is given as "-", so any change to the input counts).
    kind output_is_input "-o names one of the command's inputs"
    cp "$D/good.csv" "$IN/in.csv"
    cp "$D/good.sheaf" "$IN/in.sheaf"
    cp "$D/keep.txt" "$IN/keep.txt"
    local NAMES="same file as the input"
    inv scan 2 - "$SHEAF" scan -q "$IN/in.csv" -o "$IN/in.csv"
    inv merge 2 - "$SHEAF" merge "$IN/in.sheaf" "$D/good2.sheaf" -o "$IN/in.sheaf"
    inv trim 2 - "$SHEAF" trim -q "$D/good.csv" --columns-from "$IN/keep.txt" -o "$IN/keep.txt"
    inv project 2 - "$SHEAF" project -q "$IN/in.csv" --summary "$D/nt.sheaf" -o "$IN/in.csv"
    inv screen 2 - "$SHEAF" screen "$IN/in.sheaf" --write-kept "$IN/in.sheaf"
    NAMES=
    # Standard output closed (>&-) or full (a device made here): the
    # commands that print end with exit 1 and one line naming standard
    # output; scan and merge, which print nothing, succeed.
    local mode c
    for mode in closed full; do
        kind "stdout_$mode" "standard output $( [ $mode = closed ] && echo "closed (>&-)" || echo "on a full device")"
        local STDOUT=$mode NAMES="standard output"
        inv scan 0 "$O/out.sheaf" "$SHEAF" scan -q "$D/good.csv" -o "$O/out.sheaf"
        inv merge 0 "$O/out.sheaf" "$SHEAF" merge "$D/good.sheaf" "$D/good2.sheaf" -o "$O/out.sheaf"
        for c in info screen corr pca; do inv "$c" 1 - "$SHEAF" "$c" "$D/good.sheaf"; done
        inv trim 1 - "$SHEAF" trim -q "$D/good.csv" --columns-from "$D/keep.txt"
        inv project 1 - "$SHEAF" project -q "$D/good.csv" --summary "$D/nt.sheaf"
        STDOUT=normal NAMES=
    done
}

part_inputs() {
    PART=inputs
    echo "== part 1: bad inputs over every command"
    : >"$W/inputs.tsv"
    k_missing_file; k_directory; k_unreadable; k_read_error; k_empty_file; k_char_device; k_fifo
    k_symlink_loop; k_dangling_link; k_table_as_summary; k_summary_as_table
    k_header_only; k_only_newlines; k_bom_only; k_nul; k_nul_force; k_random_binary
    k_random_binary_force; k_invalid_utf8; k_control; k_control_header; k_unterminated
    k_quote_inside; k_ragged; k_ragged_strict; k_long_record; k_wide; k_duplicate_names
    k_duplicate_target; k_empty_names; k_mixed_eol; k_truncated_gzip; k_gzip_crc
    k_gzip_garbage; k_truncated_zstd; k_zstd_corrupt; k_zstd_garbage; k_gzip_members
    k_zstd_frames; k_plain_named_gz; k_empty_gzip; k_utf16; k_stdin_binary
    k_extreme_numbers; k_many_fields; k_no_final_newline; k_delims_header; k_big_quoted
    k_summaries
    k_merges
    k_options
    k_outputs
    kind "" # prints the last kind's line
    rm -rf "$W/k"
}

# ====================================================================
# Part 2: damaged summaries.
# ====================================================================
# judge_read WHAT WANT CMD...: one read of a damaged summary.  WANT is the
# exit code that is right ("4"; "0 4" for files whose checksums were
# recomputed).  Sets RC.  A crash, a hang, a status other than WANT, or a
# failure that is not one line, is a problem.
judge_read() {
    local what=$1 want=$2 errs
    shift 2
    timeout 60 "$@" >"$W/read.out" 2>"$W/read.err" </dev/null
    RC=$?
    checked
    mapfile -t errs <"$W/read.err"
    if [ "$RC" -eq 124 ]; then problem hang "$what: still running after 60 s"; return; fi
    if [ "$RC" -ge 128 ] || sanitizer_report "$W/read.err"; then
        problem crash "$what: exit $RC: $(oneline "$W/read.err")"
        return
    fi
    case " $want " in
    *" $RC "*) ;;
    *" 4 "*)
        if [ "$RC" -eq 0 ]; then
            problem silent "$what: accepted (exit 0), a damaged summary must be refused"
        else
            problem exit "$what: exit $RC, expected $want: $(oneline "$W/read.err")"
        fi
        return ;;
    *) problem exit "$what: exit $RC, expected $want: $(oneline "$W/read.err")"; return ;;
    esac
    if [ "$RC" -ne 0 ] && { [ "${#errs[@]}" -ne 1 ] || [ "${errs[0]#sheaf}" = "${errs[0]}" ]; }; then
        problem unclear "$what: exit $RC with ${#errs[@]} lines: $(oneline "$W/read.err")"
    fi
}

part_summaries() {
    PART=summaries
    echo "== part 2: damaged summaries"
    local M=$W/sum g=$D/good.sheaf
    mkdir -p "$M/flips" "$M/cuts" "$M/sealed"
    # The re-execution that sets OPENBLAS_NUM_THREADS is part 1's; here it
    # would double the time of 3,200 reads.
    local OPENBLAS_NUM_THREADS=1
    export OPENBLAS_NUM_THREADS
    # 1,000 single-bit flips anywhere in the file and 200 truncations, seeded.
    "$PY" - "$g" "$M" <<'EOF_PY'
import random, sys
data = open(sys.argv[1], "rb").read()
m = sys.argv[2]
rng = random.Random(1201)
bits = rng.sample(range(len(data) * 8), 1000)
with open(m + "/flips.list", "w") as lst:
    for k, bit in enumerate(bits):
        d = bytearray(data)
        d[bit // 8] ^= 1 << (bit % 8)
        open("%s/flips/f%d.sheaf" % (m, k), "wb").write(d)
        lst.write("%d %d\n" % (k, bit))
lengths = sorted(rng.sample(range(len(data)), 200))
with open(m + "/cuts.list", "w") as lst:
    for k, n in enumerate(lengths):
        open("%s/cuts/c%d.sheaf" % (m, k), "wb").write(data[:n])
        lst.write("%d %d\n" % (k, n))
EOF_PY
    local k bit n c refused accepted
    refused=0
    while read -r k bit; do
        local ok=1
        for c in info screen; do
            judge_read "flip of bit $bit ($c)" 4 "$SHEAF" $c "$M/flips/f$k.sheaf"
            [ "$RC" -eq 4 ] || ok=0
        done
        refused=$((refused + ok))
    done <"$M/flips.list"
    echo "  1000 single-bit flips, checksums left: $refused refused by info and screen (exit 4)"
    FLIPS_REFUSED=$refused
    refused=0
    while read -r k n; do
        local ok=1
        for c in info screen; do
            judge_read "truncation to $n bytes ($c)" 4 "$SHEAF" $c "$M/cuts/c$k.sheaf"
            [ "$RC" -eq 4 ] || ok=0
        done
        refused=$((refused + ok))
    done <"$M/cuts.list"
    echo "  200 truncations: $refused refused by info and screen (exit 4)"
    CUTS_REFUSED=$refused
    # 400 flips of payload bits with every checksum recomputed
    # (summary_craft.py flips): the decoder's invariants must refuse what is
    # impossible; what it accepts must be read without a crash or a hang,
    # give exit 0 from both info --format json and screen --format json, print
    # JSON that keeps the invariants of docs/summary-format.md that its
    # output shows (judged by the checker below, once for all files), and
    # be a file that keeps every invariant check_invariants.py checks.
    $CRAFT flips "$g" "$M/sealed" 400 1202 >"$M/sealed.list"
    "$SHEAF" screen --format json "$g" >"$M/screen.ref"
    refused=0 accepted=0
    : >"$M/accepted.list"
    while read -r k bit; do
        local f=$M/sealed/flip-$k.sheaf rc_info rc_screen
        judge_read "sealed flip of payload bit $bit (info --format json)" "0 4" "$SHEAF" info --format json "$f"
        rc_info=$RC
        cp "$W/read.out" "$M/sealed/info-$k.json"
        judge_read "sealed flip of payload bit $bit (screen --format json)" "0 4" "$SHEAF" screen --format json "$f"
        rc_screen=$RC
        cp "$W/read.out" "$M/sealed/screen-$k.json"
        if [ "$rc_info" -eq 4 ] && [ "$rc_screen" -eq 4 ]; then
            refused=$((refused + 1))
        elif [ "$rc_info" -eq 0 ] && [ "$rc_screen" -eq 0 ]; then
            accepted=$((accepted + 1))
            echo "$k $bit" >>"$M/accepted.list"
        elif [ "$rc_info" -lt 124 ] && [ "$rc_screen" -lt 124 ]; then
            problem exit "sealed flip of payload bit $bit: info exit $rc_info, screen exit $rc_screen (one reader accepts what the other refuses)"
        fi
    done <"$M/sealed.list"
    # The checker: prints one line per broken invariant, then "changed N".
    "$PY" - "$M" "$D/good.info.json" "$M/screen.ref" <<'EOF_PY' >"$M/judged.txt"
import json, math, sys
m, info_ref, screen_ref = sys.argv[1:4]
ref_info = open(info_ref).read()
ref_screen = open(screen_ref).read()
changed = 0
def num(x):
    return x if isinstance(x, (int, float)) else None
for line in open(m + "/accepted.list"):
    k, bit = line.split()
    where = "sealed flip of payload bit %s" % bit
    text_i = open("%s/sealed/info-%s.json" % (m, k)).read()
    text_s = open("%s/sealed/screen-%s.json" % (m, k)).read()
    if text_i != ref_info or text_s != ref_screen:
        changed += 1
    try:
        d = json.loads(text_i)
        s = json.loads(text_s)
    except ValueError as e:
        print("%s: output is not JSON: %s" % (where, e))
        continue
    bad = []
    rows = d["rows"]
    # TABL: short_rows + long_rows <= rows; kept ragged lines >= 1 and no
    # more than the ragged rows
    if d["short_rows"] + d["long_rows"] > rows:
        bad.append("short + long rows > rows")
    if len(d["ragged_lines"]) > d["short_rows"] + d["long_rows"] or any(l < 1 for l in d["ragged_lines"]):
        bad.append("ragged lines")
    # SRCS, TABL: the sources' rows add up to TABL's rows
    if sum(x["rows"] for x in d["sources"]) != rows:
        bad.append("sources' rows do not add up to rows")
    # TRGT: each class has rows >= 1, no label twice, the rows add up to at most rows
    levels = (d.get("target") or {}).get("levels", [])
    class_rows = {l["value"]: l["rows"] for l in levels}
    if any(l["rows"] < 1 for l in levels) or len(class_rows) != len(levels) or \
            sum(class_rows.values()) > rows:
        bad.append("class table")
    if s["rows"] != rows:
        bad.append("screen and info disagree on rows")
    for c in d["columns"]:
        name = c["name"]
        n = c["n"]
        present = n + c["non_numeric"] + c["non_finite"]
        # COLS: missing + n + non_numeric + non_finite = rows; zeros <= integers <= n
        if c["missing"] + present != rows:
            bad.append("%s: cells do not add up to rows" % name)
        if not (c["zeros"] <= c["integers"] <= n):
            bad.append("%s: zeros <= integers <= n broken" % name)
        lo, hi, mean, var = num(c.get("min")), num(c.get("max")), num(c.get("mean")), num(c.get("variance"))
        # moments, n >= 1: min <= max, both finite; n >= 2: m2 >= 0, mean
        # within 2 (max - min) of a frame in [min, max] (+ 2^-30 max(|min|, |max|))
        if n >= 1:
            if lo is None or hi is None or not lo <= hi:
                bad.append("%s: min/max" % name)
            elif n >= 2 and hi - lo < 2.0 ** 200:
                spread = hi - lo
                slack = 2 * spread + 2.0 ** -30 * max(abs(lo), abs(hi))
                if mean is None or not (lo - slack <= mean <= hi + slack):
                    bad.append("%s: mean %r outside the bound" % (name, mean))
                if var is None or var < 0:
                    bad.append("%s: variance %r" % (name, var))
        # value table: its counts add up to at most the present cells
        top = c.get("top") or []
        if sum(t["count"] for t in top) > present or any(t["count"] < 1 for t in top):
            bad.append("%s: top counts" % name)
        if c.get("distinct_exact") and c.get("distinct", 0) > present:
            bad.append("%s: more distinct values than cells" % name)
        # per-class moments: n <= the class's rows, m2 >= 0
        for b in c.get("by_class") or []:
            if b["n"] > class_rows.get(b["class"], -1):
                bad.append("%s: class %s: n > the class's rows" % (name, b["class"]))
            v = num(b.get("variance"))
            if b["n"] >= 2 and v is not None and v < 0:
                bad.append("%s: class %s: negative variance" % (name, b["class"]))
        if sum(b["n"] for b in c.get("by_class") or []) > n:
            bad.append("%s: per-class counts over n" % name)
    for b in bad:
        print("%s: %s" % (where, b))
print("changed %d" % changed)
EOF_PY
    local changed
    changed=$(sed -n 's/^changed //p' "$M/judged.txt")
    checked "$accepted"
    while read -r line; do problem silent "$line"; done < <(grep -v '^changed ' "$M/judged.txt")
    # The accepted files themselves, field by field, against the format's
    # invariants (tests/trust/check_invariants.py, apart from sheaf's
    # decoder): an accepted file that breaks one is a silent wrong result,
    # whatever the commands print.
    if [ "$accepted" -gt 0 ]; then
        checked "$accepted"
        while read -r k bit; do echo "$M/sealed/flip-$k.sheaf"; done <"$M/accepted.list" |
            xargs "$PY" "$ROOT/tests/trust/check_invariants.py" >"$M/invariants.txt"
        while read -r line; do
            problem silent "sealed flip accepted, yet ${line#"$M"/sealed/}"
        done <"$M/invariants.txt"
    fi
    echo "  400 single-bit flips, checksums recomputed: $refused refused, $accepted accepted ($changed of them print something else than the undamaged summary)"
    SEALED_REFUSED=$refused SEALED_ACCEPTED=$accepted SEALED_CHANGED=$changed
    rm -rf "$M"
    unset OPENBLAS_NUM_THREADS
}

# ====================================================================
# Part 3: signals while writing.
# ====================================================================
part_kills() {
    PART=kills
    echo "== part 3: SIGTERM, SIGINT, SIGHUP and SIGKILL while writing"
    local K=$W/kill
    mkdir -p "$K/in" "$K/ref"
    # 2,000,000 rows (awk, fixed seed): each command runs for about a second
    # on the 2-core development machine (the times are printed).
    awk 'BEGIN { srand(26); print "id,x1,x2,x3,x4,x5,x6,grp,y"
        for (i = 0; i < 2000000; i++)
            printf "%d,%.4f,%.4f,%.3f,%.2f,%d,%.5f,g%d,%.3f\n", i, rand() * 100, rand() - 0.5,
                rand() * rand(), rand() * 1000, int(rand() * 50), rand(), int(rand() * 7), rand() * 10 }' \
        >"$K/in/big.csv"
    printf 'x1\nx2\nx3\ngrp\ny\n' >"$K/in/keep"
    "$SHEAF" scan -q "$K/in/big.csv" -o "$K/in/big.sheaf" || { problem crash "kills: setup scan failed"; return; }
    local i
    for i in $(seq 1 1000); do ln -s big.sheaf "$K/in/m$i.sheaf"; done
    declare -A CMD=(
        [scan]="scan -q $K/in/big.csv -o OUT"
        [trim]="trim -q $K/in/big.csv --columns-from $K/in/keep -o OUT"
        [project]="project -q $K/in/big.csv --summary $K/in/big.sheaf -o OUT"
        [merge]="merge --allow-duplicates $(printf "$K/in/m%d.sheaf " $(seq 1 1000))-o OUT")
    declare -A MS
    local c t0
    for c in scan trim project merge; do
        t0=${EPOCHREALTIME/./}
        # shellcheck disable=SC2086
        "$SHEAF" ${CMD[$c]/OUT/$K/ref/$c} || { problem crash "kills: reference $c failed"; return; }
        MS[$c]=$(((${EPOCHREALTIME/./} - t0) / 1000))
        echo "  $c writes $(stat -c %s "$K/ref/$c") bytes in ${MS[$c]} ms"
    done
    echo "old contents" >"$K/old"
    RANDOM=1226 # the seed of the moments
    local sig old trials=0 outcome
    declare -A SEEN=()
    for c in scan trim project merge; do
        for sig in TERM INT HUP KILL; do
            for old in yes no; do
                local d=$K/t ms=${MS[$c]} delay rc want
                rm -rf "$d"
                mkdir "$d"
                [ $old = yes ] && cp "$K/old" "$d/target"
                # a moment in [0, 1.1 x the measured time]; half of them in the
                # last fifth, where the output is finished and renamed
                if ((RANDOM % 2)); then delay=$((RANDOM % (ms * 11 / 10 + 1))); else delay=$((ms * 8 / 10 + RANDOM % (ms * 3 / 10 + 1))); fi
                # env resets SIGINT, which a shell leaves ignored in background jobs
                # shellcheck disable=SC2086
                env --default-signal=INT,TERM,HUP "$SHEAF" ${CMD[$c]/OUT/$d/target} >/dev/null 2>"$K/err" &
                local pid=$!
                sleep "$(printf '%d.%03d' $((delay / 1000)) $((delay % 1000)))"
                kill -s "$sig" "$pid" 2>/dev/null
                wait "$pid" 2>/dev/null
                rc=$?
                trials=$((trials + 1))
                checked
                want=$((128 + $(kill -l "$sig")))
                local what="$c, SIG$sig after $delay ms, $( [ $old = yes ] && echo "over an old target" || echo "no target before")"
                if [ "$rc" -ne 0 ] && [ "$rc" -ne "$want" ]; then
                    if [ "$rc" -ge 128 ] || sanitizer_report "$K/err"; then problem crash "$what: exit $rc"
                    else problem exit "$what: exit $rc (0 or $want expected): $(oneline "$K/err")"; fi
                fi
                # the target is the old file (or absent) or the new file, whole
                if [ -e "$d/target" ]; then
                    if cmp -s "$d/target" "$K/ref/$c"; then outcome=new
                    elif [ $old = yes ] && cmp -s "$d/target" "$K/old"; then outcome=old
                    else outcome=broken; problem half "$what: the target is neither the old nor the new file"; fi
                else
                    if [ $old = yes ]; then outcome=gone; problem half "$what: the old target is gone"
                    else outcome=absent; fi
                fi
                SEEN[$outcome]=$((${SEEN[$outcome]:-0} + 1))
                local left
                left=$(ls -A "$d" | grep -v '^target$' | tr '\n' ' ')
                # The one documented exception (README, "Where outputs land"):
                # SIGKILL between the linkat and the rename that replace an
                # existing file leaves ".target-XXXXXX", a complete new file.
                if [ -n "$left" ] && [ "$sig" = KILL ] && [ $old = yes ] &&
                    [ "$(ls -A "$d" | grep -c -v '^target$')" = 1 ] &&
                    cmp -s "$d/$(ls -A "$d" | grep -v '^target$')" "$K/ref/$c"; then
                    echo "  $what: left $left, a complete new file (the documented window)"
                elif [ -n "$left" ]; then
                    problem leftover "$what: left $left"
                fi
            done
        done
    done
    echo "  $trials trials: target new ${SEEN[new]:-0}, old ${SEEN[old]:-0}, absent ${SEEN[absent]:-0}, broken ${SEEN[broken]:-0}, gone ${SEEN[gone]:-0}"
    KILL_TRIALS=$trials
    rm -rf "$K"
}

# ====================================================================
# Part 4: fuzzing (make fuzz, every harness for FUZZ_SECONDS).
# ====================================================================
part_fuzz() {
    PART=fuzz
    if [ "$FUZZ_SECONDS" = 0 ]; then echo "== part 4: fuzzing skipped (FUZZ_SECONDS=0)"; return; fi
    echo "== part 4: make fuzz FUZZ_SECONDS=$FUZZ_SECONDS"
    local t0=$SECONDS
    touch "$W/fuzz.stamp"
    make --no-print-directory fuzz FUZZ_SECONDS="$FUZZ_SECONDS" >"$W/fuzz.log" 2>&1
    local rc=$?
    FUZZ_ELAPSED=$((SECONDS - t0))
    sed 's/^/  /' "$W/fuzz.log" | grep -E '^  (PASS|FAIL|SKIP)'
    local fails passes artifacts
    fails=$(grep -c '^FAIL' "$W/fuzz.log")
    passes=$(grep -c '^PASS' "$W/fuzz.log")
    artifacts=$(find build/fuzz/artifacts -type f -newer "$W/fuzz.stamp" ! -name '*.log' 2>/dev/null | wc -l)
    checked $((passes + fails))
    local line
    while read -r line; do N[fuzz]=$((N[fuzz] + 1)); PART_PROBLEMS[fuzz]=$((${PART_PROBLEMS[fuzz]:-0} + 1)); echo "PROBLEM fuzz findings [fuzz] ${line#FAIL }" >>"$W/problems.log"; done < <(grep '^FAIL' "$W/fuzz.log")
    if [ "$artifacts" -gt "$fails" ]; then
        problem fuzz "$((artifacts - fails)) new files in build/fuzz/artifacts without a FAIL line"
    fi
    if [ "$rc" -ne 0 ] && [ "$fails" -eq 0 ]; then problem fuzz "make fuzz exited $rc: $(tail -n 3 "$W/fuzz.log" | tr '\n' '|')"; fi
    if grep -q '^SKIP' "$W/fuzz.log"; then echo "  (some harnesses were skipped: see the SKIP lines)"; fi
    FUZZ_RUNS=$(sed -n 's/.*, \([0-9]*\) inputs)$/\1/p' "$W/fuzz.log" | paste -sd+ | bc 2>/dev/null)
}

# ====================================================================
# Part 5: memory limits.
# ====================================================================
part_memory() {
    PART=memory
    echo "== part 5: under ulimit -v of 100, 150, 200 and 400 MiB"
    local L=$W/mem
    "$SHEAF" scan -q "$L/w300.csv" --target label -o "$L/t.sheaf" &&
        "$SHEAF" scan -q "$L/w300.csv" -o "$L/n.sheaf" &&
        "$SHEAF" merge --allow-duplicates "$L/t.sheaf" "$L/t.sheaf" -o "$L/m.sheaf" ||
        { problem crash "memory: the runs without a limit failed"; return; }
    local c
    for c in info screen pca; do "$SHEAF" $c "$L/t.sheaf" >"$L/ref.$c" 2>/dev/null; done
    declare -A RUN=(
        [scan]="scan -q $L/w300.csv -o $L/out.sheaf"
        [scan_target]="scan -q $L/w300.csv --target label -o $L/out.sheaf"
        [merge]="merge --allow-duplicates $L/t.sheaf $L/t.sheaf -o $L/out.sheaf"
        [info]="info $L/t.sheaf" [screen]="screen $L/t.sheaf" [pca]="pca $L/t.sheaf")
    declare -A REF=([scan]=$L/n.sheaf [scan_target]=$L/t.sheaf [merge]=$L/m.sheaf)
    local mb name rc errs line=
    for mb in 100 150 200 400; do
        line="  $mb MiB:"
        for name in scan scan_target merge info screen pca; do
            rm -f "$L/out.sheaf"
            # shellcheck disable=SC2086
            (ulimit -v $((mb * 1024)) && exec timeout 60 "$SHEAF" ${RUN[$name]}) >"$L/out" 2>"$L/err" </dev/null
            rc=$?
            checked
            mapfile -t errs <"$L/err"
            line="$line $name=$rc"
            local what="$name under ulimit -v ${mb} MiB"
            if [ "$rc" -eq 124 ]; then problem hang "$what: still running after 60 s"; continue; fi
            if [ "$rc" -ge 128 ] || sanitizer_report "$L/err"; then problem crash "$what: exit $rc"; continue; fi
            case $rc in
            0)
                if [ -n "${REF[$name]:-}" ]; then
                    cmp -s "$L/out.sheaf" "${REF[$name]}" || problem silent "$what: the summary differs from the one written without a limit"
                elif ! cmp -s "$L/out" "$L/ref.$name"; then
                    problem silent "$what: prints something else than without a limit"
                fi ;;
            6)
                # one line that says what did not fit
                if [ "${#errs[@]}" -ne 1 ] || [ "${errs[0]#*out of memory}" = "${errs[0]}" ]; then
                    problem unclear "$what: exit 6 without one 'out of memory' line: $(oneline "$L/err")"
                fi
                [ -e "$L/out.sheaf" ] && problem half "$what: exit 6, yet the output was written" ;;
            4) problem exit "$what: a good summary called damaged (exit 4): $(oneline "$L/err")" ;;
            *) problem exit "$what: exit $rc (0 or 6 expected): $(oneline "$L/err")" ;;
            esac
            local left
            left=$(ls -A "$L" | grep -v -x -e w300.csv -e t.sheaf -e n.sheaf -e m.sheaf -e out.sheaf -e out -e err -e 'ref\..*' | tr '\n' ' ')
            [ -n "$left" ] && problem leftover "$what: left $left"
        done
        echo "$line"
    done
}

# ====================================================================
# The run and its table.
# ====================================================================
LOADS="start $(cut -d' ' -f1 /proc/loadavg)"
for p in $PARTS; do
    case $p in
    inputs) part_inputs ;;
    summaries) part_summaries ;;
    kills) part_kills ;;
    fuzz) part_fuzz ;;
    memory) part_memory ;;
    *) echo "bad_input_run.sh: unknown part '$p'" >&2; exit 2 ;;
    esac
    LOADS="$LOADS, after $p $(cut -d' ' -f1 /proc/loadavg)"
done
ELAPSED=$(($(date +%s) - START))

PROBLEMS=0
for c in "${CATS[@]}"; do PROBLEMS=$((PROBLEMS + N[$c])); done
table() { # FORMAT (text or markdown)
    local fmt=$1 rows=() r
    rows+=("kinds of bad input|$KINDS")
    local seen=() c
    for c in "${COMMANDS[@]}"; do [ -n "${CMDS_SEEN[$c]:-}" ] && seen+=("$c"); done
    rows+=("commands|${#CMDS_SEEN[@]} (${seen[*]})")
    rows+=("(kind, command) pairs|${#PAIRS[@]}")
    for p in inputs summaries kills fuzz memory; do
        [ -n "${PART_CHECKS[$p]:-}" ] && rows+=("checks in part '$p'|${PART_CHECKS[$p]} (${PART_PROBLEMS[$p]:-0} problems)")
    done
    [ -n "${FLIPS_REFUSED:-}" ] && rows+=("single-bit flips refused (exit 4)|$FLIPS_REFUSED of 1000")
    [ -n "${CUTS_REFUSED:-}" ] && rows+=("truncations refused (exit 4)|$CUTS_REFUSED of 200")
    [ -n "${SEALED_REFUSED:-}" ] && rows+=("flips with checksums recomputed|400: $SEALED_REFUSED refused, $SEALED_ACCEPTED accepted ($SEALED_CHANGED print something else)")
    [ -n "${KILL_TRIALS:-}" ] && rows+=("kill trials|$KILL_TRIALS")
    [ -n "${FUZZ_RUNS:-}" ] && rows+=("fuzz inputs run|$FUZZ_RUNS")
    for c in "${CATS[@]}"; do rows+=("${LABEL[$c]}|${N[$c]}"); done
    rows+=("time without fuzzing|$((ELAPSED - ${FUZZ_ELAPSED:-0})) s")
    [ -n "${FUZZ_ELAPSED:-}" ] && rows+=("time fuzzing|$FUZZ_ELAPSED s ($FUZZ_SECONDS s per harness)")
    if [ "$fmt" = markdown ]; then
        echo "| count | value |"
        echo "| --- | --- |"
        for r in "${rows[@]}"; do echo "| ${r%%|*} | ${r#*|} |"; done
    else
        for r in "${rows[@]}"; do printf '  %-34s %s\n' "${r%%|*}" "${r#*|}"; done
    fi
}
FINAL="bad-input run: $CHECKS checks, $PROBLEMS problems"
echo "== counts (load average: $LOADS)"
table text
echo "$FINAL"
if [ -n "$REPORT" ]; then
    {
        echo "# Bad-input run, $(date -u '+%Y-%m-%d %H:%M UTC')"
        echo
        echo "sheaf $(git -C "$ROOT" describe --always --dirty 2>/dev/null) ($SHEAF);" \
            "$(nproc) cores, $(. /etc/os-release 2>/dev/null && echo "$PRETTY_NAME");" \
            "parts: $PARTS; FUZZ_SECONDS=$FUZZ_SECONDS; load average (1 min): $LOADS."
        echo
        table markdown
        echo
        if [ "$PROBLEMS" -gt 0 ]; then
            echo "Problems:"
            echo
            sed 's/^/- /' "$W/problems.log"
            echo
        fi
        echo "$FINAL"
    } >"$REPORT"
fi
[ "$PROBLEMS" -eq 0 ]
exit
}
