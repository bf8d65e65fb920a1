#!/usr/bin/env bash
# Where outputs land: each check here failed on the build before the fixes
# of a fresh audit of every writer, one group per finding.
#
#   ckpt.*     scan --checkpoint: the checkpoint named by another spelling of
#              -o, a device, a FIFO, a symbolic link, a file that was there
#              before and that the scan never wrote
#   page.*     page: --base as the output, a chart file that is an input, a
#              page that cannot be written after its charts were
#   long.*     replacing an existing output whose name is 242-255 bytes long
#   xfsz.*     a file size limit (ulimit -f): one line and exit 1, no
#              temporary file left by the named fallback
#   early.*    an -o that cannot be created is reported before the input is read
#   fd.*       -o /dev/stdout when standard output is a file opened for
#              appending, or closed
#   empty.*    -o '' is a usage error
#
# Prints PASS/FAIL/SKIP lines and exits 0.  Device nodes are made with mknod in the scratch directory,
# never /dev's own.  Data: small invented tables made here (a fixed awk seed).
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
cli_setup outputs-where-meant || exit 0
case $SHEAF in /*) ;; *) SHEAF=$PWD/$SHEAF ;; esac
export SHEAF_THREADS=2

printf 'a,b,c\n1,2,x\n3,4,y\n5,7,x\n' >"$T/a.csv"
printf 'a,b,c\n2,2,y\n4,1,y\n6,3,x\n' >"$T/b.csv"
printf 'a\n' >"$T/keep_a"
awk 'BEGIN { srand(7); print "id,x1,x2,x3,grp,y"
    for (i = 0; i < 200000; i++)
        printf "%d,%.4f,%.4f,%.3f,g%d,%.3f\n", i, rand() * 100, rand() - 0.5, rand() * rand(), int(rand() * 7), rand() * 10 }' >"$T/big.csv"
printf 'x1\n' >"$T/keep_x1"
awk 'BEGIN { srand(3); print "x,noise,cls"
    for (i = 0; i < 300; i++) printf "%.3f,%.3f,%s\n", (i % 2) * 0.8 + rand(), rand(), i % 2 ? "b" : "a" }' >"$T/t.csv"
"$SHEAF" scan -q "$T/a.csv" -o "$T/a.sheaf" && "$SHEAF" scan -q "$T/b.csv" -o "$T/b.sheaf" &&
    "$SHEAF" scan -q "$T/t.csv" --target cls -o "$T/t.sheaf" || fail setup "scans failed"
EVERY=(--checkpoint-every 1M)
is_summary() { "$SHEAF" info "$1" >/dev/null 2>&1; }

# ---- ckpt.*: the checkpoint file (src/cli/scan.c) ----
mkdir "$T/c"
# The -o file by another spelling: the summary must not be removed afterwards.
run "$SHEAF" scan -q "$T/big.csv" "${EVERY[@]}" -o "$T/c/o.sheaf" --checkpoint "$T/c/./o.sheaf"
check ckpt.other_spelling_of_output_refused "exit $RC: $(err_text)" [ "$RC" -eq 2 ]
check ckpt.other_spelling_of_output_no_summary_lost "exit $RC, $(ls -A "$T/c" | tr '\n' ' ')" \
    [ "$RC" -ne 0 -o -f "$T/c/o.sheaf" ]
# A file that was there before, which a scan shorter than one interval never writes.
echo "field notes, not a checkpoint" >"$T/c/notes.txt"
cp "$T/c/notes.txt" "$T/c/notes.ref"
run "$SHEAF" scan -q "$T/a.csv" -o "$T/c/n.sheaf" --checkpoint "$T/c/notes.txt"
check ckpt.file_never_written_is_kept "exit $RC, notes.txt $( [ -e "$T/c/notes.txt" ] && echo present || echo removed)" \
    cmp -s "$T/c/notes.txt" "$T/c/notes.ref"
# A symbolic link: the checkpoint it names is what must go; the link stays.
mkdir "$T/c/real"
ln -s real/run.ck "$T/c/ck.link"
run "$SHEAF" scan -q "$T/big.csv" "${EVERY[@]}" -o "$T/c/l.sheaf" --checkpoint "$T/c/ck.link"
check ckpt.link_target_removed "exit $RC, left in real/: $(ls -A "$T/c/real" | tr '\n' ' ')" \
    [ "$RC" -eq 0 -a -z "$(ls -A "$T/c/real")" ]
check ckpt.link_stays "exit $RC" [ -L "$T/c/ck.link" ]
if mknod "$T/c/null" c 1 3 2>/dev/null; then
    run "$SHEAF" scan -q "$T/a.csv" -o "$T/c/d.sheaf" --checkpoint "$T/c/null"
    check ckpt.device_stays "exit $RC, $(stat -c %F "$T/c/null" 2>&1)" [ -c "$T/c/null" ]
else
    skip ckpt.device_stays "mknod failed (not root?)"
fi
mkfifo "$T/c/fifo"
timeout 10 cat "$T/c/fifo" >/dev/null 2>&1 &
reader=$!
run timeout 10 "$SHEAF" scan -q "$T/a.csv" -o "$T/c/f.sheaf" --checkpoint "$T/c/fifo"
kill $reader 2>/dev/null
wait $reader 2>/dev/null
check ckpt.fifo_stays "exit $RC, $(stat -c %F "$T/c/fifo" 2>&1)" [ -p "$T/c/fifo" ]
rm -f "$T/c/fifo"
mkfifo "$T/c/fifo"
run timeout 5 "$SHEAF" scan -q "$T/a.csv" -o "$T/c/f2.sheaf" --checkpoint "$T/c/fifo"
check ckpt.fifo_without_reader_does_not_hang "exit $RC (124: still blocked after 5 s)" [ "$RC" -ne 124 ]

# ---- page.*: the page and its charts (src/cli/page.c, src/out/report_files.c) ----
mkdir "$T/p"
cp "$T/b.sheaf" "$T/p/base.sheaf"
cp "$T/p/base.sheaf" "$T/p/base.ref"
run "$SHEAF" page "$T/a.sheaf" --base "$T/p/base.sheaf" -o "$T/p/base.sheaf"
check page.base_as_output_exit_2 "exit $RC: $(err_text)" [ "$RC" -eq 2 ]
check page.base_as_output_unchanged "$(first_diff "$T/p/base.sheaf" "$T/p/base.ref")" \
    cmp -s "$T/p/base.sheaf" "$T/p/base.ref"
mkdir "$T/p/charts"
cp "$T/t.sheaf" "$T/p/in.sheaf"
cp "$T/t.sheaf" "$T/p/in.ref"
ln -s ../in.sheaf "$T/p/charts/scree.svg"
run "$SHEAF" page "$T/p/in.sheaf" --write-svg "$T/p/charts"
check page.chart_that_is_the_input_refused "exit $RC, $(first_diff "$T/p/in.sheaf" "$T/p/in.ref")" \
    cmp -s "$T/p/in.sheaf" "$T/p/in.ref"
run "$SHEAF" page "$T/t.sheaf" -o "$T/p/nodir/x.html" --write-svg "$T/p/newcharts"
check page.unwritable_page_exit_1 "exit $RC: $(err_text)" [ "$RC" -eq 1 ]
check page.unwritable_page_leaves_no_charts "left: $(ls -A "$T/p/newcharts" 2>/dev/null | tr '\n' ' ')" \
    [ ! -e "$T/p/newcharts" ]

# ---- long.*: a name of 250 bytes (NAME_MAX is 255) ----
mkdir "$T/long"
L=$(printf 'n%.0s' $(seq 1 250))
"$SHEAF" scan -q "$T/a.csv" -o "$T/long/$L" 2>/dev/null
for c in scan trim; do
    if [ $c = scan ]; then run "$SHEAF" scan -q "$T/b.csv" -o "$T/long/$L"
    else run "$SHEAF" trim -q "$T/b.csv" --columns-from "$T/keep_a" -o "$T/long/$L"; fi
    check "long.$c.replaces_existing" "exit $RC: $(err_text | rev | cut -c1-80 | rev)" [ "$RC" -eq 0 ]
done

# ---- xfsz.*: ulimit -f ----
mkdir "$T/x"
for c in scan trim; do
    rm -rf "$T/x"/* && echo old >"$T/x/target"
    if [ $c = scan ]; then line=(scan -q "$T/big.csv" -o "$T/x/target")
    else line=(trim -q "$T/big.csv" --columns-from "$T/keep_x1" -o "$T/x/target"); fi
    # (the shell's own "File size limit exceeded" report goes to /dev/null)
    { RC=$( (ulimit -f 64; exec "$SHEAF" "${line[@]}") >/dev/null 2>"$T/err"; echo $?); } 2>/dev/null
    check "xfsz.$c.exit_1" "exit $RC (153: killed by SIGXFSZ)" [ "$RC" -eq 1 ]
    check "xfsz.$c.one_line_names_file" "$(err_text)" \
        [ "$(wc -l <"$T/err")" -eq 1 -a -n "$(grep -F "$T/x/target" "$T/err")" ]
    check "xfsz.$c.old_target_whole" "$(cat "$T/x/target" | head -c 40)" [ "$(cat "$T/x/target")" = old ]
done
no_tmpfile_shim
if [ -n "$SHIM" ]; then
    rm -rf "$T/x"/* && echo old >"$T/x/target"
    { (ulimit -f 64; LD_PRELOAD=$SHIM exec "$SHEAF" trim -q "$T/big.csv" --columns-from "$T/keep_x1" \
        -o "$T/x/target") >/dev/null 2>&1; } 2>/dev/null
    check xfsz.named_fallback_nothing_left "left: $(ls -A "$T/x" | tr '\n' ' ')" [ "$(ls -A "$T/x")" = target ]
    mkdir "$T/long2"
    L2=$(printf 'm%.0s' $(seq 1 246))
    run env LD_PRELOAD="$SHIM" "$SHEAF" scan -q "$T/a.csv" -o "$T/long2/$L2"
    check long.named_fallback_creates "exit $RC: $(err_text | rev | cut -c1-80 | rev)" [ "$RC" -eq 0 ]
else
    skip xfsz.named_fallback "$SHIM_WHY"
fi

# ---- early.*: an output that cannot be created, found before the input is read ----
# Standard input stays open for 5 s: a command that reads it all first is
# still waiting when timeout stops it (exit 124) after 3 s.
slow() { (printf 'a,b\n1,2\n'; sleep 5) | timeout 3 "$@" >/dev/null 2>"$T/err"; }
slow "$SHEAF" scan -q - -o "$T/nodir/x.sheaf"
RC=$?
check early.scan_missing_dir "exit $RC (124: still reading)" [ "$RC" -eq 1 ]
(cat "$T/a.sheaf"; sleep 5) | timeout 3 "$SHEAF" merge - "$T/b.sheaf" -o "$T/nodir/x.sheaf" >/dev/null 2>"$T/err"
RC=$?
check early.merge_missing_dir "exit $RC (124: still reading)" [ "$RC" -eq 1 ]

# ---- fd.*: -o /dev/stdout (README: written through, as a shell's > would) ----
mkdir "$T/fd"
rm -f "$T/fd/all.csv"
for f in a b; do "$SHEAF" trim -q "$T/$f.csv" --columns-from "$T/keep_a" -o /dev/stdout >>"$T/fd/all.csv"; done
for f in a b; do "$SHEAF" trim -q "$T/$f.csv" --columns-from "$T/keep_a" >>"$T/fd/want.csv"; done
check fd.dev_stdout_appends "$(tr '\n' ' ' <"$T/fd/all.csv")" cmp -s "$T/fd/all.csv" "$T/fd/want.csv"
{ echo "first line"; "$SHEAF" trim -q "$T/a.csv" --columns-from "$T/keep_a" -o /dev/stdout; echo "last line"; } >"$T/fd/mixed.txt"
check fd.dev_stdout_shared_redirection_kept "$(tr '\n' ' ' <"$T/fd/mixed.txt")" \
    [ "$(head -n 1 "$T/fd/mixed.txt")" = "first line" -a "$(tail -n 1 "$T/fd/mixed.txt")" = "last line" ]
for c in scan trim; do
    if [ $c = scan ]; then "$SHEAF" scan -q "$T/a.csv" -o /dev/stdout >&- 2>"$T/err"
    else "$SHEAF" trim -q "$T/a.csv" --columns-from "$T/keep_a" -o /dev/stdout >&- 2>"$T/err"; fi
    RC=$?
    check "fd.$c.dev_stdout_closed_exit_1" "exit $RC: $(err_text)" [ "$RC" -eq 1 ]
done

# ---- empty.*: -o '' ----
mkdir "$T/e"
(cd "$T/e" && slow "$SHEAF" scan -q - -o "")
RC=$?
check empty.scan_usage_error "exit $RC: $(err_text)" [ "$RC" -eq 2 ]
run "$SHEAF" trim -q "$T/a.csv" --columns-from "$T/keep_a" -o ""
check empty.trim_usage_error "exit $RC: $(err_text)" [ "$RC" -eq 2 ]
exit 0
