#!/usr/bin/env bash
# Byte-range shards that read only their own range (docs/shards.md): each
# shard guesses its first record from the bytes after its range start,
# records how, and merge checks the guesses against each other.
#
# Files where the guess is hard (quoted fields full of delimiters and
# newlines, quoted fields that hold whole fake records with the header's
# field count, a 3 kB quoted field across range boundaries, no quotes at all,
# CRLF, a byte-order mark, blank lines, a header only): the shards of several
# N, merged, equal the whole-file scan (info JSON, counts exact) and count
# the records Python's csv module counts (standard library: the reference
# for the row totals).  All of N = 1..50 is run in process by
# tests/test_shard_start.c; here a spread of N through the command line.
# Then: the bytes each shard of a 20 MB generated table read, bounded by its
# range plus the look-ahead, the header read and the read past its end; a
# guess made wrong on purpose (the test hook SHEAF_TEST_SHARD_WORST) is
# refused by merge with the command that rescans the shard, and that
# command's summary merges; a look-ahead too short to tell (the test hook
# SHEAF_TEST_SHARD_WINDOW) falls back to the prefix rule with one note;
# overlapping ranges are refused.  Prints PASS/FAIL lines; exits 0.
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
cli_setup shardrange python || exit 0
. tests/cli/shard_common.sh


# ------------------------------------------------------------ the hard files
shard_hard_files "$T"

for f in quoted long plain crlf bom blank headonly; do
    run "$SHEAF" scan -q "$T/$f.csv" -o "$T/$f.whole.sheaf"
    check "$f.whole_scan" "exit $RC: $(err_text)" [ "$RC" -eq 0 ] || continue
    want=$(nrec "$T/$f.csv")
    check "$f.whole_rows_vs_python_csv" "rows $(jget "$T/$f.whole.sheaf" 'd["rows"]'), csv module $want" \
        [ "$(jget "$T/$f.whole.sheaf" 'd["rows"]')" = "$want" ]
    case $f in quoted) ns="1 2 7 50" ;; long) ns="3 11 50" ;; *) ns="4 19" ;; esac
    for n in $ns; do
        scan_shards "$T/$f.csv" "$n" "$f.$n"
        check "$f.$n.scans" "$BAD" [ -z "$BAD" ] || continue
        merge_fixing "$f.$n" "$n" "$T/$f.$n.merged.sheaf"
        check "$f.$n.merge" "exit $RC: $(err_text)" [ "$RC" -eq 0 ] || continue
        rows=$(jget "$T/$f.$n.merged.sheaf" 'd["rows"]')
        check "$f.$n.every_record_once" "rows $rows, csv module $want" [ "$rows" = "$want" ]
        why=$("$PY" tests/cli/info_same.py "$T/$f.$n.merged.sheaf" "$T/$f.whole.sheaf" bytes 2>&1)
        check "$f.$n.same_as_whole" "differs: ${why:0:300}" [ -z "$why" ]
        v=$(jget "$T/$f.$n.merged.sheaf" 'sorted(set(s["shard"]["check"] for s in d["sources"]))')
        check "$f.$n.all_verified" "checks $v (rescanned $FIXED)" [ "$v" = '["verified"]' ]
        [ "$FIXED" -gt 0 ] && echo "note: $f.$n: merge asked for $FIXED rescan(s) from the top"
    done
done

# ------------------------------------------- bytes read: range plus bounded
# A 20 MB table of the benchmark profile in 10 shards.  Each shard reads the
# header pass (the reader's first pull: at most 1 MiB + a chunk), the file's
# first 64 KiB (its identity), the 1 MiB look-ahead, its records and, past
# its end, the record that crosses it plus the reader's pull ahead (at most
# 1 MiB + a 256 KiB chunk).  The prefix rule's last shard reads the file.
GEN=build/demo/generate
if [ -x "$GEN" ] || make -s "$GEN" >/dev/null 2>&1; then
    "$GEN" --profile bench --rows 100000 -o "$T/bench.csv" 2>/dev/null
    size=$(stat -c %s "$T/bench.csv")
    bad="" total=0 max=0 old=0
    for i in $(seq 1 10); do
        run "$SHEAF" scan -q -j1 "$T/bench.csv" --shard "$i/10" -o "$T/b.$i.sheaf"
        [ "$RC" -eq 0 ] || { bad+=" $i exit $RC;"; continue; }
        read -r lo hi rb rule <<<"$(jget "$T/b.$i.sheaf" '"%d %d %d %s" % (d["sources"][0]["start_byte"], d["sources"][0]["end_byte"], d["sources"][0]["shard"]["read_bytes"], d["sources"][0]["shard"]["start_rule"])' | tr -d '"')"
        bound=$(( (hi - lo) + 1048576 + 65536 + (1048576 + 262144) + (1048576 + 262144) + 4096 ))
        [ "$rb" -le "$bound" ] || bad+=" shard $i read $rb > $bound;"
        [ "$rule" = prefix ] && bad+=" shard $i fell back to the prefix rule;"
        total=$((total + rb))
        old=$((old + hi)) # the prefix rule read [0, hi) at least
        [ "$rb" -gt "$max" ] && max=$rb
    done
    check bytes.each_shard_bounded "$bad" [ -z "$bad" ]
    run "$SHEAF" merge $(for i in $(seq 1 10); do echo "$T/b.$i.sheaf"; done) -o "$T/b.merged.sheaf"
    check bytes.merge "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
    run "$SHEAF" scan -q -j1 "$T/bench.csv" --shard 10/10 --shard-from-top -o "$T/b.top.sheaf"
    top=$(jget "$T/b.top.sheaf" 'd["sources"][0]["shard"]["read_bytes"]')
    check bytes.prefix_rule_reads_the_prefix "shard 10/10 from the top read $top of $size" \
        [ "$top" -ge "$((size * 9 / 10))" ]
    check bytes.total_bounded "total $total of $size bytes, largest shard $max" \
        [ "$total" -lt "$((size + 10 * 4 * 1048576))" ]
    check bytes.total_under_the_prefix_rule "total $total, the prefix rule at least $old" \
        [ "$total" -lt "$((old / 2))" ]
    echo "note: 10 shards of $size bytes read $total in all, at most $max each (the prefix rule: at least $old); shard 10 from the top read $top"
else
    skip bytes "build/demo/generate could not be built"
fi

# ------------------------------------------------ a wrong guess is refused
# The shards of the quoted file (any natural wrong guess rescanned first),
# then one shard scanned again taking the worst candidate (the test hook),
# until one is wrong: merge refuses it in one line with the command that
# rescans it, writes nothing, and the rescan merges to the whole scan.
f=$T/quoted.csv
n=9
scan_shards "$f" "$n" wrong
merge_fixing wrong "$n" "$T/wrong.base.sheaf"
check wrong_guess.base_merges "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
found=""
for i in $(seq 2 "$n"); do
    cp "$T/wrong.$i.sheaf" "$T/keep.sheaf"
    SHEAF_TEST_SHARD_WORST=1 "$SHEAF" scan -q -j1 "$f" --shard "$i/$n" -o "$T/wrong.$i.sheaf" 2>/dev/null
    run "$SHEAF" merge $(for k in $(seq 1 "$n"); do echo "$T/wrong.$k.sheaf"; done) -o "$T/wrong.merged.sheaf"
    if [ "$RC" -eq 5 ]; then found=$i; break; fi
    cp "$T/keep.sheaf" "$T/wrong.$i.sheaf"
done
if check wrong_guess.refused "no shard's worst candidate was refused" [ -n "$found" ]; then
    i=$found
    lines=$(wc -l <"$T/err")
    check wrong_guess.refused_in_one_line "$(err_text)" [ "$lines" -eq 1 ]
    check wrong_guess.names_the_shard "$(err_text)" grep -q "quoted.csv shard $i/$n (bytes [0-9]*\.\.[0-9]*)" "$T/err"
    check wrong_guess.prints_the_rescan "$(err_text)" \
        grep -qF "sheaf scan $f --shard $i/$n --shard-from-top -o NEW.sheaf" "$T/err"
    check wrong_guess.nothing_written "merged file exists" [ ! -e "$T/wrong.merged.sheaf" ]
    run "$SHEAF" scan -q "$f" --shard "$i/$n" --shard-from-top -o "$T/wrong.$i.sheaf"
    run "$SHEAF" merge $(for k in $(seq 1 "$n"); do echo "$T/wrong.$k.sheaf"; done) -o "$T/wrong.merged.sheaf"
    check wrong_guess.rescan_merges "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
    why=$("$PY" tests/cli/info_same.py "$T/wrong.merged.sheaf" "$T/quoted.whole.sheaf" bytes 2>&1)
    check wrong_guess.rescan_same_as_whole "differs: ${why:0:300}" [ -z "$why" ]
fi

# A partial merge (shards 3..9, without 1 and 2) is accepted; its first
# shard cannot be checked yet unless its start was certain.
run "$SHEAF" merge $(for k in $(seq 3 "$n"); do echo "$T/wrong.$k.sheaf"; done) -o "$T/part.sheaf"
check partial_merge.accepted "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
v=$(jget "$T/part.sheaf" '[s["shard"]["check"] + "/" + s["shard"]["start_rule"] for s in d["sources"] if s["start_byte"] == min(x["start_byte"] for x in d["sources"])]')
check partial_merge.first_unverified "first shard $v" grep -q 'unverified/\|verified/certain\|verified/prefix' <<<"$v"

# ------------------------------------------ a look-ahead too short to tell
run env SHEAF_TEST_SHARD_WINDOW=16 "$SHEAF" scan -q "$T/long.csv" --shard 2/3 -o "$T/short.sheaf"
check short_window.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
check short_window.one_note "$(err_text)" [ "$(grep -c 'found it from the top of the file' "$T/err")" -eq 1 ]
check short_window.prefix_rule "rule $(jget "$T/short.sheaf" 'd["sources"][0]["shard"]["start_rule"]')" \
    [ "$(jget "$T/short.sheaf" 'd["sources"][0]["shard"]["start_rule"]')" = '"prefix"' ]

# A wrong guess can leave a quote open to the end of the file (the guess
# rules such a candidate out when its window reaches the end; the test hook
# takes it anyway): the scan fails (exit 3) saying the start was guessed and
# how to find it from the top, and that scan succeeds.
printf 'a,b\n1,"x\nyy\n",2\n3,4\n5,6\n7,8\n' >"$T/open.csv"
run env SHEAF_TEST_SHARD_WORST=1 "$SHEAF" scan -q "$T/open.csv" --shard 2/4 -o "$T/open.sheaf"
check open_quote.fails "exit $RC: $(err_text)" [ "$RC" -eq 3 ]
check open_quote.says_how "$(err_text)" grep -q "guessed its first record from the bytes after byte [0-9]*; --shard-from-top finds it" "$T/err"
run "$SHEAF" scan -q "$T/open.csv" --shard 2/4 --shard-from-top -o "$T/open.sheaf"
check open_quote.from_the_top "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
run "$SHEAF" scan -q "$T/open.csv" --shard 2/4 -o "$T/open2.sheaf"
check open_quote.no_hook_guesses_right "exit $RC: $(err_text)" [ "$RC" -eq 0 ]

# ------------------------------------------------------------- misuse
run "$SHEAF" merge "$T/quoted.2.1.sheaf" "$T/quoted.7.1.sheaf" -o "$T/overlap.sheaf"
check overlap.refused "exit $RC: $(err_text)" [ "$RC" -eq 5 ]
check overlap.names_both "$(err_text)" grep -q "shard 1/2 .* and .*shard 1/7 .* overlap\|shard 1/7 .* and .*shard 1/2 .* overlap" "$T/err"
run "$SHEAF" scan -q "$T/quoted.csv" --shard-from-top -o "$T/x.sheaf"
check from_top_needs_shard "exit $RC: $(err_text)" [ "$RC" -eq 2 ]
gzip -c "$T/quoted.csv" >"$T/quoted.csv.gz"
run "$SHEAF" scan -q "$T/quoted.csv.gz" --shard 1/2 -o "$T/x.sheaf"
check gzip_refused "exit $RC: $(err_text)" holds '[ "$RC" -eq 2 ] && grep -q gzip "$T/err"'
if command -v zstd >/dev/null; then
    zstd -q -c "$T/quoted.csv" >"$T/quoted.csv.zst"
    run "$SHEAF" scan -q "$T/quoted.csv.zst" --shard 2/2 -o "$T/x.sheaf"
    check zstd_refused "exit $RC: $(err_text)" holds '[ "$RC" -eq 2 ] && grep -q zstd "$T/err"'
else
    skip zstd_refused "no zstd command"
fi
