#!/usr/bin/env bash
# The GNU parallel over ssh recipes of docs/distributed.md, run against an
# sshd that this script starts on a free loopback port (Debian's
# openssh-server) with a throwaway host key and user key, its own config,
# PID file and authorized_keys in the scratch directory.  Two host names,
# node1 and node2, lead to it (a temporary ssh_config, handed to parallel in
# PARALLEL_SSH), so the jobs really go through ssh and parallel spreads them
# over two "hosts".  The doc's blocks (after "<!-- run-block NAME -->") are
# read from the doc and run as they stand: shards on a shared file system,
# shards with the data copied to a scratch directory on the host and the
# summaries copied back (--basefile, --return, --cleanup), and a two-level
# tree merge whose first level runs on the hosts.  sshd is stopped by PID
# when the script ends, on failure too.
#
# Reference: sheaf's own whole-file scan (counts exact, floating-point values
# to 1e-12 relative, absolute below 1), and the records counted by Python's
# csv module for the row total.  The sessions log in as the user who runs
# the test (root in CI; an sshd that is not root can log in no one else).
# When sshd, ssh, parallel or rsync is missing, or (not root) sshd does not
# let the user in, prints "SKIP ssh_fanout: reason" and counts nothing as
# failed; as root, a login that fails is a FAIL.  Run from the
# repository root after make (tests/run.sh does both).
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
cli_setup fanout-ssh python || exit 0
DOC=docs/distributed.md

# doc_block KEY: the fenced block that follows the line KEY in the doc.
doc_block() {
    awk -v key="$1" '
        state == 0 && $0 == key { state = 1; next }
        state == 1 { if ($0 ~ /^```/) state = 2; else if ($0 != "") exit; next }
        state == 2 { if ($0 ~ /^```/) { done = 1; exit } print }
        END { exit !done }' "$DOC"
}
BLOCKS="ssh-shared ssh-copy ssh-tree"
for b in $BLOCKS; do
    doc_block "<!-- run-block $b -->" >"$T/$b.sh"
    check "doc_has_block_$b" "no block after <!-- run-block $b --> in $DOC" [ -s "$T/$b.sh" ]
done

# ------------------------------------------------------------------ sshd
why=""
for c in /usr/sbin/sshd ssh ssh-keygen parallel rsync; do
    [ -z "$why" ] && ! command -v "$c" >/dev/null && why="$c not found (Debian packages openssh-server, parallel, rsync)"
done
# sshd's privilege separation directory (the package's init script makes it)
[ -z "$why" ] && [ ! -d /run/sshd ] && ! mkdir -m 0755 /run/sshd 2>/dev/null &&
    why="no /run/sshd (sshd's privilege separation directory), and it cannot be made (not root)"
if [ -n "$why" ]; then skip ssh_fanout "$why"; exit 0; fi

S=$T/ssh
mkdir -p "$S/home" "$T/bin" "$T/hostbin"
ln -s "$(readlink -f "$SHEAF")" "$T/bin/sheaf"
export PATH="$T/bin:$PATH"
# The hosts' sheaf (on the PATH sshd gives the sessions, not on ours) notes
# each call, so the test knows which jobs went through ssh.
cat >"$T/hostbin/sheaf" <<EOF
#!/bin/sh
echo "\$*" >>"$T/host-calls.log"
exec "$(readlink -f "$SHEAF")" "\$@"
EOF
chmod +x "$T/hostbin/sheaf"
ssh-keygen -q -t ed25519 -N '' -C sheaf-test-host -f "$S/host_key"
ssh-keygen -q -t ed25519 -N '' -C sheaf-test-user -f "$S/user_key"
cp "$S/user_key.pub" "$S/authorized_keys"
PORT=$("$PY" -c 'import socket
s = socket.socket(); s.bind(("127.0.0.1", 0)); print(s.getsockname()[1])')
# SetEnv: the hosts have sheaf on the PATH of a non-interactive shell; HOME
# is a directory of the test, so the sessions read none of the login scripts
# of the user who runs it (a slow ~/.bashrc made every job take 1.7 s).
cat >"$S/sshd_config" <<EOF
ListenAddress 127.0.0.1:$PORT
HostKey $S/host_key
PidFile $S/sshd.pid
AuthorizedKeysFile $S/authorized_keys
StrictModes no
UsePAM no
PasswordAuthentication no
KbdInteractiveAuthentication no
PubkeyAuthentication yes
PermitRootLogin prohibit-password
MaxStartups 50
SetEnv PATH=$T/hostbin:/usr/local/bin:/usr/bin:/bin HOME=$S/home
EOF
cat >"$S/ssh_config" <<EOF
Host node1 node2
    HostName 127.0.0.1
    Port $PORT
    User $(id -un)
    IdentityFile $S/user_key
    IdentitiesOnly yes
    UserKnownHostsFile $S/known_hosts
    StrictHostKeyChecking no
    BatchMode yes
    LogLevel ERROR
    ControlMaster auto
    ControlPath $S/cm-%C
    ControlPersist 120
EOF
SSHD_PID=""
stop_sshd() {
    # the shared connection (ControlPersist) first, then sshd
    [ -n "$SSHD_PID" ] && ssh -F "$S/ssh_config" -O exit node1 >/dev/null 2>&1
    [ -n "$SSHD_PID" ] && kill "$SSHD_PID" 2>/dev/null && wait "$SSHD_PID" 2>/dev/null
    SSHD_PID=""
}
trap 'stop_sshd; rm -rf "$T"' EXIT
/usr/sbin/sshd -D -e -f "$S/sshd_config" 2>"$S/sshd.log" &
SSHD_PID=$!
ok=""
for _ in $(seq 1 40); do
    if ssh -F "$S/ssh_config" node1 true 2>"$S/ssh.err"; then ok=1; break; fi
    kill -0 "$SSHD_PID" 2>/dev/null || break
    grep -q "Permission denied" "$S/ssh.err" && break # it answers, and says no
    sleep 0.25
done
# Not root, sshd may refuse the user (no shell, locked account): SKIP.  As
# root, sshd must let root in with the key: FAIL otherwise.
if [ -z "$ok" ]; then
    [ "$(id -u)" -eq 0 ] && f=fail || f=skip
    $f ssh_fanout "no login through the sshd on 127.0.0.1:$PORT: $(tail -n 2 "$S/sshd.log" "$S/ssh.err" | tr '\n' '|' | cut -c1-250)"
    exit 0
fi
remote_sheaf=$(ssh -F "$S/ssh_config" node2 'command -v sheaf' 2>&1)
check sshd.sheaf_on_remote_path "ssh node2 'command -v sheaf': $remote_sheaf" [ "$remote_sheaf" = "$T/hostbin/sheaf" ]
export PARALLEL_SSH="ssh -F $S/ssh_config"

# ------------------------------------------------------------------ data
if ! make -s build/demo/generate >"$T/make.out" 2>&1 || [ ! -x build/demo/generate ]; then
    fail demo_generator "build/demo/generate did not build: $(tail -n 1 "$T/make.out")"
    exit 0
fi
W=$T/night
mkdir "$W"
build/demo/generate --rows 50000 --seed 13 -o "$W/big.csv"
ROWS=$("$PY" -c 'import csv,sys; print(sum(1 for _ in csv.reader(open(sys.argv[1], newline=""))) - 1)' "$W/big.csv")
check data.rows_vs_python_csv "csv module counts $ROWS records" [ "$ROWS" -eq 50000 ]
run sheaf scan -q "$W/big.csv" -o "$T/single.sheaf"
check data.single_scan "exit $RC: $(err_text)" [ "$RC" -eq 0 ]

# merged NAME SUMMARY SOURCES: the merged summary equals the single scan
merged() {
    if check "$1.merged_summary" "$2 missing" [ -s "$2" ]; then
        check "$1.rows" "rows $(jget "$2" 'd["rows"]'), want $ROWS" [ "$(jget "$2" 'd["rows"]')" = "$ROWS" ]
        check "$1.sources" "sources $(jget "$2" 'len(d["sources"])'), want $3" [ "$(jget "$2" 'len(d["sources"])')" = "$3" ]
        info_same "$1.same_as_single_scan" "$2" "$T/single.sheaf"
    fi
}
# calls WORD: how many calls of `sheaf WORD` went through ssh so far.
calls() { grep -c "^$1 " "$T/host-calls.log" 2>/dev/null; }

# -------------------------------------------- the doc's blocks, as they are
# ssh-shared: node1 and node2 see this directory (it is one machine).
t0=$SECONDS
(cd "$W" && bash -e "$T/ssh-shared.sh") >"$T/out" 2>"$T/err"
RC=$?
echo "# ssh-shared: $((SECONDS - t0)) s"
check ssh-shared.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
check ssh-shared.jobs_went_through_ssh "$(calls scan) scans ran on the hosts, want 8" [ "$(calls scan)" = 8 ]
merged ssh-shared "$W/night.sheaf" 8

# ssh-tree: the 8 shard summaries of ssh-shared, merged in groups on the hosts
t0=$SECONDS
(cd "$W" && bash -e "$T/ssh-tree.sh") >"$T/out" 2>"$T/err"
RC=$?
echo "# ssh-tree: $((SECONDS - t0)) s"
check ssh-tree.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
check ssh-tree.groups_went_through_ssh "$(calls merge) merges ran on the hosts, want 2" [ "$(calls merge)" = 2 ]
ng=$(ls "$W"/groups/g*.sheaf 2>/dev/null | wc -l)
check ssh-tree.two_groups "$ng group summaries" [ "$ng" -eq 2 ]
merged ssh-tree "$W/night-tree.sheaf" 8

# ssh-copy: no shared file system; the host works in $scratch
C=$T/copy
mkdir "$C"
ln "$W/big.csv" "$C/big.csv"
export scratch=$T/host-scratch
t0=$SECONDS
(cd "$C" && bash -e "$T/ssh-copy.sh") >"$T/out" 2>"$T/err"
RC=$?
echo "# ssh-copy: $((SECONDS - t0)) s"
check ssh-copy.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
check ssh-copy.jobs_went_through_ssh "$(calls scan) scans ran on the hosts in all, want 16" [ "$(calls scan)" = 16 ]
nret=$(ls "$C"/s*.sheaf 2>/dev/null | wc -l)
check ssh-copy.summaries_returned "$nret summaries copied back, want 8" [ "$nret" -eq 8 ]
left=$(find "$scratch" -type f 2>/dev/null | head -n 3 | tr '\n' ' ')
check ssh-copy.cleaned_up "left on the host: $left" [ -z "$left" ]
merged ssh-copy "$C/night.sheaf" 8

stop_sshd
exit 0
