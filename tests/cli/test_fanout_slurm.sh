#!/usr/bin/env bash
# The Slurm recipe of docs/distributed.md, run on a real single-node Slurm
# cluster that this script starts from Debian's slurm-wlm and munge packages:
# munged (its own key and socket), slurmctld and slurmd on loopback ports
# chosen free, every state, spool, PID and log file under the scratch
# directory, no cgroups.  It runs the doc's submission blocks (a job array
# of `sheaf scan --shard I/N` tasks and a merge job with afterok on it; the
# same array merged as a two-level tree), waits for them, and compares the
# merged summaries with one scan of the whole file.  A scan array that fails
# must leave its dependent merge pending for ever (DependencyNeverSatisfied).
# The daemons are stopped by PID when the script ends, on failure too.
#
# The sbatch scripts are docs/examples/slurm-*.sbatch; the doc quotes them and
# the first checks below hold the quotes equal to the files.  The submission
# commands are read from the doc itself (the blocks after
# "<!-- run-block NAME -->") and run as they stand.
#
# Reference: sheaf's own whole-file scan (counts exact, floating-point values
# to 1e-12 relative, absolute below 1), and the records counted by Python's
# csv module for the row total.  Needs root (slurmd starts jobs as their
# user); when not root, or a program or the memory is missing, prints "SKIP
# slurm_cluster: reason" and counts nothing as failed.  As root with the
# packages installed, a cluster that does not come up is a FAIL.  KEEP=1
# keeps the scratch directory (slurm.conf, daemon and job logs) afterwards.
# Run from the repository root after make (tests/run.sh does both).
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
cli_setup fanout-slurm python || exit 0
DOC=docs/distributed.md

# ------------------------------------------------ the doc quotes the files
# doc_block KEY: the fenced block that follows the line KEY in the doc.
doc_block() {
    awk -v key="$1" '
        state == 0 && $0 == key { state = 1; next }
        state == 1 { if ($0 ~ /^```/) state = 2; else if ($0 != "") exit; next }
        state == 2 { if ($0 ~ /^```/) { done = 1; exit } print }
        END { exit !done }' "$DOC"
}
for f in docs/examples/slurm-*.sbatch; do
    n=${f##*/}
    if doc_block "\`$f\`:" >"$T/quoted"; then
        check "doc_quotes_$n" "docs/distributed.md differs from $f: $(diff "$T/quoted" "$f" | head -n 3 | tr '\n' '|')" \
            cmp -s "$T/quoted" "$f"
    else
        fail "doc_quotes_$n" "docs/distributed.md has no line \`$f\`: followed by a code block"
    fi
done
for b in slurm-flat slurm-tree; do
    doc_block "<!-- run-block $b -->" >"$T/$b.sh"
    check "doc_has_block_$b" "no block after <!-- run-block $b --> in $DOC" [ -s "$T/$b.sh" ]
done

# ----------------------------------------------------------- the cluster
why=""
[ "$(id -u)" -eq 0 ] || why="not root (slurmd must start jobs as their user)"
for c in munged mungekey slurmctld slurmd sbatch squeue scontrol sinfo scancel; do
    [ -z "$why" ] && ! command -v "$c" >/dev/null && why="$c not found (Debian packages slurm-wlm, munge)"
done
mem_mb=$(awk '/^MemTotal:/ { print int($2 / 1024 * 0.8) }' /proc/meminfo)
[ -z "$why" ] && [ "${mem_mb:-0}" -lt 2048 ] && why="less than 2.5 GiB of memory (the merge job asks for 2G)"
if [ -n "$why" ]; then skip slurm_cluster "$why"; exit 0; fi

C=$T/cluster
mkdir -p "$C/key" "$C/run" "$C/state" "$C/spool" "$C/log"
# munged wants its socket directory open to all (execute) and the key private
chmod 711 "$T" "$C" "$C/run"
chmod 700 "$C/key"
PIDS=()
stop_cluster() {
    if [ -n "${SLURM_CONF:-}" ] && [ ${#PIDS[@]} -ge 2 ]; then
        scancel --user=root >/dev/null 2>&1
        for _ in $(seq 1 20); do [ -z "$(squeue -h 2>/dev/null)" ] && break; sleep 0.5; done
    fi
    local i
    for ((i = ${#PIDS[@]} - 1; i >= 0; i--)); do kill "${PIDS[i]}" 2>/dev/null; done
    for ((i = ${#PIDS[@]} - 1; i >= 0; i--)); do wait "${PIDS[i]}" 2>/dev/null; done
    PIDS=()
}
trap 'stop_cluster; [ -n "${KEEP:-}" ] || rm -rf "$T"' EXIT
# started: NAME PID LOG: is PID alive after its start?  As root with the
# packages in place the cluster must come up: FAIL otherwise.
started() {
    sleep 0.3
    kill -0 "$2" 2>/dev/null && return 0
    fail slurm_cluster "$1 did not start: $(tail -n 2 "$3" 2>/dev/null | tr '\n' '|' | cut -c1-200)"
    exit 0
}

mungekey --create --keyfile="$C/key/munge.key" >"$C/log/mungekey.out" 2>&1 ||
    { fail slurm_cluster "mungekey failed: $(head -c 200 "$C/log/mungekey.out")"; exit 0; }
munged -F --socket="$C/run/munge.sock" --key-file="$C/key/munge.key" --pid-file="$C/run/munged.pid" \
    --log-file="$C/log/munged.log" --seed-file="$C/key/munged.seed" >"$C/log/munged.out" 2>&1 &
PIDS+=($!)
started munged "${PIDS[0]}" "$C/log/munged.out"

# two free loopback ports (the kernel picks them; closed again at once)
read -r PCTL PD < <("$PY" -c 'import socket
s = [socket.socket() for _ in range(2)]
for x in s: x.bind(("127.0.0.1", 0))
print(*[x.getsockname()[1] for x in s])')
HOST=$(hostname -s)
cat >"$C/slurm.conf" <<EOF
ClusterName=sheaftest
SlurmctldHost=$HOST(127.0.0.1)
SlurmctldPort=$PCTL
SlurmdPort=$PD
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket=$C/run/munge.sock
StateSaveLocation=$C/state
SlurmdSpoolDir=$C/spool
SlurmctldPidFile=$C/run/slurmctld.pid
SlurmdPidFile=$C/run/slurmd.pid
SlurmctldLogFile=$C/log/slurmctld.log
SlurmdLogFile=$C/log/slurmd.log
ProctrackType=proctrack/pgid
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
SwitchType=switch/none
MpiDefault=none
MailProg=/bin/true
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
SchedulerType=sched/builtin
ReturnToService=2
SlurmdParameters=config_overrides
NodeName=$HOST NodeAddr=127.0.0.1 CPUs=8 RealMemory=$mem_mb State=UNKNOWN
PartitionName=night Nodes=ALL Default=YES MaxTime=INFINITE State=UP
EOF
export SLURM_CONF=$C/slurm.conf
slurmctld -D -c -f "$SLURM_CONF" >"$C/log/slurmctld.out" 2>&1 &
PIDS+=($!)
started slurmctld "${PIDS[1]}" "$C/log/slurmctld.log"
slurmd -D -f "$SLURM_CONF" -N "$HOST" >"$C/log/slurmd.out" 2>&1 &
PIDS+=($!)
started slurmd "${PIDS[2]}" "$C/log/slurmd.log"
state=""
for _ in $(seq 1 60); do
    state=$(sinfo -h -o %T 2>/dev/null)
    [ "$state" = idle ] && break
    sleep 0.5
done
if [ "$state" != idle ]; then
    fail slurm_cluster "the node did not come up (state '$state'): $(grep -h error "$C"/log/slurm*.log | tail -n 2 | tr '\n' '|' | cut -c1-250)"
    exit 0
fi
pass slurm_cluster.node_idle

# ----------------------------------------------------------- the data
mkdir "$T/bin"
ln -s "$(readlink -f "$SHEAF")" "$T/bin/sheaf"
export PATH="$T/bin:$PATH" OPENBLAS_NUM_THREADS=1
if ! make -s build/demo/generate >"$T/make.out" 2>&1 || [ ! -x build/demo/generate ]; then
    fail demo_generator "build/demo/generate did not build: $(tail -n 1 "$T/make.out")"
    exit 0
fi
build/demo/generate --rows 50000 --seed 11 -o "$T/big.csv"
ROWS=$("$PY" -c 'import csv,sys; print(sum(1 for _ in csv.reader(open(sys.argv[1], newline=""))) - 1)' "$T/big.csv")
check data.rows_vs_python_csv "csv module counts $ROWS records" [ "$ROWS" -eq 50000 ]
run sheaf scan -q "$T/big.csv" -o "$T/single.sheaf"
check data.single_scan "exit $RC: $(err_text)" [ "$RC" -eq 0 ]

# wait_jobs SECONDS: until the queue is empty; returns 1 on timeout.
wait_jobs() {
    local end=$((SECONDS + $1))
    while [ -n "$(squeue -h 2>/dev/null)" ]; do
        [ "$SECONDS" -ge "$end" ] && return 1
        sleep 0.5
    done
}
# job_states DIR: "JobId=STATE:EXIT" for each job and array task submitted
# from DIR (the controller keeps ended jobs for MinJobAge, 300 s).
job_states() {
    scontrol show job -o 2>&1 | grep -F "WorkDir=$1 " |
        sed -E 's/^JobId=([0-9]+) .*JobState=([A-Z_]+) .*ExitCode=([0-9:]+) .*/\1=\2:\3/' |
        sort | tr '\n' ' '
}

# -------------------------------------------- the doc's blocks, as they are
# Both blocks are submitted at once, then the queue is waited for.
t0=$SECONDS
for b in slurm-flat slurm-tree; do
    W=$T/$b
    mkdir "$W"
    ln -s "$T/big.csv" "$W/big.csv"
    cp docs/examples/slurm-*.sbatch "$W/"
    (cd "$W" && bash -e "$T/$b.sh") >"$T/out" 2>"$T/err"
    RC=$?
    check "$b.submitted" "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
done
if ! wait_jobs 150; then
    fail jobs_finished "jobs still queued after 150 s: $(squeue -h | head -n 3 | tr '\n' '|')"
    scancel --user=root
fi
echo "# $((SECONDS - t0)) s from the first submission to an empty queue"
for b in slurm-flat slurm-tree; do
    W=$T/$b
    states=$(job_states "$W")
    bad=$(tr ' ' '\n' <<<"$states" | grep -v -E '^$|=COMPLETED:0:0$' | head -n 3 | tr '\n' ' ')
    check "$b.jobs_completed" "states: $states; logs: $(cat "$W"/logs/* 2>/dev/null | head -n 3 | tr '\n' '|')" \
        [ -n "$states" -a -z "$bad" ]
    # the merge started only after the last task it depends on had ended
    # (ISO times, one second apart at worst, compare as strings)
    times=$(scontrol show job -o 2>/dev/null | grep -F "WorkDir=$W " |
        sed -E 's/.*JobName=([^ ]+) .*StartTime=([^ ]+) EndTime=([^ ]+) .*/\1 \2 \3/')
    last_dep=$(awk '$1 != "sheaf-merge" { print $3 }' <<<"$times" | sort | tail -n 1)
    merge_start=$(awk '$1 == "sheaf-merge" { print $2 }' <<<"$times")
    check "$b.merge_after_dependencies" "merge started '$merge_start', last task it waits for ended '$last_dep'" \
        [ -n "$merge_start" -a -n "$last_dep" -a ! "$merge_start" \< "$last_dep" ]
    out=$(ls "$W"/*.sheaf 2>/dev/null | head -n 1)
    if check "$b.merged_summary" "no *.sheaf in $W: $(ls "$W" | tr '\n' ' ')" [ -n "$out" ]; then
        check "$b.rows" "rows $(jget "$out" 'd["rows"]'), want $ROWS" [ "$(jget "$out" 'd["rows"]')" = "$ROWS" ]
        nsrc=$(jget "$out" 'len(d["sources"])')
        check "$b.sources" "$nsrc sources, want 8 shards" [ "$nsrc" = 8 ]
        info_same "$b.same_as_single_scan" "$out" "$T/single.sheaf"
    fi
done
if [ -f "$T/slurm-tree/night.sheaf" ]; then
    ng=$(ls "$T"/slurm-tree/groups/g*.sheaf 2>/dev/null | wc -l)
    check slurm-tree.two_groups "$ng group summaries" [ "$ng" -eq 2 ]
fi

# ---------------------------------- a failed task keeps the merge from running
W=$T/failing
mkdir -p "$W/logs" "$W/shards"
cp docs/examples/slurm-*.sbatch "$W/"
scan=$(cd "$W" && sbatch --parsable --array=1-2 slurm-scan.sbatch missing.csv 2 shards)
merge=$(cd "$W" && sbatch --parsable --dependency=afterok:"$scan" slurm-merge.sbatch shards night.sheaf)
reason=""
for _ in $(seq 1 60); do
    reason=$(squeue -h -j "$merge" -o %r 2>/dev/null)
    [ "$reason" = DependencyNeverSatisfied ] && break
    sleep 0.5
done
check failed_scan.merge_never_runs "merge job $merge: reason '$reason', states $(job_states "$W")" \
    [ "$reason" = DependencyNeverSatisfied ]
check failed_scan.no_output "night.sheaf exists" [ ! -e "$W/night.sheaf" ]
scancel "$merge" 2>/dev/null
wait_jobs 20

stop_cluster
exit 0
