#!/usr/bin/env bash
# merge names every shard that guessed its first record wrong, in one line,
# so that one round of rescans mends them all.  Before, the check stopped at
# the first wrong shard: the six shards of a quote-heavy table took four
# rounds of merge and rescan (a fresh audit of the quote rule).
#
# The table (tests/cli/shard_hive.py, invented) has quoted fake tables and
# doubled quotes where the shards' ranges start: shards 2 to 5 of 6 guess
# wrong.  Checks: merge exits 5 and its one line names 2/6 and the three
# others; the shards it names, rescanned with --shard-from-top, merge with
# exit 0 into the rows of the whole-file scan and of Python's csv module
# (the outside reference for the record count).
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup shard-wrong-all python || exit 0
"$PY" tests/cli/shard_hive.py "$T" || { fail shard_wrong_all.setup "shard_hive.py failed"; exit 0; }
H=$T/hive.csv
for i in 1 2 3 4 5 6; do
    "$SHEAF" scan -q "$H" --shard $i/6 -o "$T/s$i.sheaf" 2>"$T/err" ||
        { fail shard_wrong_all.scan "shard $i/6: $(err_text)"; exit 0; }
done
run "$SHEAF" merge "$T"/s[1-6].sheaf -o "$T/m.sheaf"
check shard_wrong_all.exit_5 "exit $RC: $(err_text)" [ "$RC" -eq 5 ]
check shard_wrong_all.one_line "$(wc -l <"$T/err") lines" [ "$(wc -l <"$T/err")" -eq 1 ]
check shard_wrong_all.names_every_wrong_shard "$(err_text)" \
    grep -q 'shard 2/6 .*and the same for 3 more: shards 3/6, 4/6, 5/6' "$T/err"
check shard_wrong_all.nothing_written "m.sheaf exists" test ! -e "$T/m.sheaf"

# Rescan what the line names, then merge once more.
named=$(grep -o 'shard [0-9]*/6' "$T/err" | grep -o '[0-9]*/' | tr -d / | sort -u)
named="$named $(grep -o 'shards [0-9/, ]*' "$T/err" | grep -o '[0-9]*/6' | cut -d/ -f1)"
for i in $named; do
    "$SHEAF" scan -q "$H" --shard "$i/6" --shard-from-top -o "$T/s$i.sheaf" 2>"$T/err" ||
        fail shard_wrong_all.rescan "shard $i/6: $(err_text)"
done
run "$SHEAF" merge "$T"/s[1-6].sheaf -o "$T/m.sheaf"
check shard_wrong_all.one_round_mends "exit $RC after rescanning shards $named: $(err_text)" \
    [ "$RC" -eq 0 ]
"$SHEAF" scan -q "$H" -o "$T/w.sheaf"
rows() { "$SHEAF" info -f json "$1" | "$PY" -c 'import json,sys; print(json.load(sys.stdin)["rows"])'; }
want=$("$PY" -c 'import csv,sys
csv.field_size_limit(1 << 30)  # the 1.25 MiB note
with open(sys.argv[1], newline="") as f:
    print(sum(1 for r in csv.reader(f)) - 1)' "$H")
if [ "$RC" -eq 0 ]; then
    check shard_wrong_all.rows "merged $(rows "$T/m.sheaf"), whole $(rows "$T/w.sheaf"), csv module $want" \
        [ "$(rows "$T/m.sheaf")" = "$want" -a "$(rows "$T/w.sheaf")" = "$want" ]
fi
