#!/usr/bin/env bash
# Copy prints (format version 7, docs/summary-format.md "Copy prints"):
# screen drops a copy of any kind of column as "a copy of NAME", in one
# scan, a merge of nights, byte-range shards and every -j; a column that
# differs in one cell, in its missing rows or in how a number is written is
# no copy; a summary without prints (version 6) keeps text copies and says
# so; a print on a column without cells is damage.  Reference for "the same
# cell in every row": pandas Series.equals over the CSV read as text.
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup copy-prints python || exit 0
python_modules copy_prints pandas || exit 0

# An invented night log of parcel lockers: 'bay' and 'bay_again' are the
# same text cell for cell (missing in the same rows), 'bay_one_off' differs
# in one row, 'bay_holes' is missing in one more row, 'weight' and
# 'weight_again' the same numbers, 'weight_dotted' the same numbers written
# with '.0' where whole, 'door' a text column of its own.
"$PY" - "$T/lockers.csv" <<'PY'
import random, sys
rng = random.Random(11)
with open(sys.argv[1], "w") as f:
    f.write("bay,weight,bay_again,bay_one_off,bay_holes,weight_again,weight_dotted,door\n")
    for i in range(4000):
        bay = rng.choice(["north", "south", "east", "west", "", "NA"])
        w = rng.choice([1, 2, 3]) if i % 7 else round(rng.uniform(0, 9), 2)
        wd = "%s.0" % w if isinstance(w, int) else str(w)
        f.write("%s,%s,%s,%s,%s,%s,%s,%s\n" % (bay, w, bay, "odd" if i == 2345 else bay,
                                              "" if i == 17 else bay, w, wd,
                                              rng.choice(["a", "b"])))
PY
reasons() { # SUMMARY: "column=reason" lines of screen's JSON
    "$SHEAF" screen "$1" -f json 2>/dev/null | "$PY" -c '
import json, sys
for f in json.load(sys.stdin)["features"]:
    print("%s=%s" % (f["name"], "; ".join(f["reasons"])))'
}
expect_copies() { # NAME SUMMARY
    local got want sum=$2
    got=$(reasons "$2" | grep -c 'a copy of')
    want=2
    check "$1.copies" "$(reasons "$2" | grep 'a copy of' | tr '\n' '|'), want bay_again and weight_again" \
        holds '[ "$got" = "$want" ] && [ "$(reasons "$sum" | grep -c "^bay_again=a copy of bay \|^weight_again=a copy of weight ")" = 2 ]'
}
# The reference: which columns equal which (pandas, as text).
pairs=$("$PY" - "$T/lockers.csv" <<'PY'
import sys, pandas as pd
d = pd.read_csv(sys.argv[1], dtype=str, keep_default_na=False)
cols = list(d.columns)
print(" ".join("%s=%s" % (b, a) for i, a in enumerate(cols) for b in cols[i + 1:]
               if d[a].equals(d[b])))
PY
)
check reference.pairs "pandas finds '$pairs'" [ "$pairs" = "bay_again=bay weight_again=weight" ]

"$SHEAF" scan "$T/lockers.csv" -q -o "$T/one.sheaf"
expect_copies one_scan "$T/one.sheaf"
for c in bay_one_off bay_holes door; do
    r=$(reasons "$T/one.sheaf" | grep "^$c=")
    check "one_scan.$c.kept" "$r" [ "$r" = "$c=no flag, not redundant" ]
done
# The same numbers written otherwise are no copy, but redundant by r.
r=$(reasons "$T/one.sheaf" | grep "^weight_dotted=")
check one_scan.weight_dotted "$r" [ "$r" = "weight_dotted=redundant with weight (r = 1.000)" ]
for j in 1 3; do
    "$SHEAF" scan "$T/lockers.csv" -q -j$j -o "$T/j$j.sheaf"
    check "threads.j$j.same_bytes" "$(first_diff "$T/j$j.sheaf" "$T/one.sheaf")" cmp -s "$T/j$j.sheaf" "$T/one.sheaf"
done
# Two nights, merged either way; three shards.
head -n 1 "$T/lockers.csv" >"$T/n1.csv"; sed -n 2,1800p "$T/lockers.csv" >>"$T/n1.csv"
head -n 1 "$T/lockers.csv" >"$T/n2.csv"; sed -n '1801,$p' "$T/lockers.csv" >>"$T/n2.csv"
"$SHEAF" scan "$T/n1.csv" -q -o "$T/n1.sheaf"
"$SHEAF" scan "$T/n2.csv" -q -o "$T/n2.sheaf"
"$SHEAF" merge "$T/n1.sheaf" "$T/n2.sheaf" -o "$T/n12.sheaf"
"$SHEAF" merge "$T/n2.sheaf" "$T/n1.sheaf" -o "$T/n21.sheaf"
expect_copies nights.forward "$T/n12.sheaf"
expect_copies nights.reversed "$T/n21.sheaf"
for i in 1 2 3; do "$SHEAF" scan "$T/lockers.csv" --shard $i/3 -q -o "$T/s$i.sheaf"; done
"$SHEAF" merge "$T/s2.sheaf" "$T/s3.sheaf" "$T/s1.sheaf" -o "$T/s.sheaf"
expect_copies shards "$T/s.sheaf"
p1=$("$PY" tests/cli/summary_craft.py get "$T/one.sheaf" 'COLS[2].copy_print')
p2=$("$PY" tests/cli/summary_craft.py get "$T/s.sheaf" 'COLS[2].copy_print')
check shards.same_print "whole $p1, shards $p2" holds '[ -n "$p1" ] && [ "$p1" = "$p2" ]'
# Without prints (version 5): the text copy is kept, and the reason says why.
"$PY" tests/cli/summary_craft3.py no-prints "$T/one.sheaf" "$T/v6.sheaf"
r=$(reasons "$T/v6.sheaf" | grep '^bay_again=')
check version6.text_not_compared "$r" [ "$r" = "bay_again=no flag (text: not compared with the others)" ]
r=$(reasons "$T/v6.sheaf" | grep '^weight_again=')
check version6.numeric_by_r "$r" [ "$r" = "weight_again=redundant with weight (r = 1.000)" ]
"$SHEAF" merge "$T/v6.sheaf" "$T/n2.sheaf" -o "$T/mix.sheaf" --allow-duplicates
check version6.merge_has_no_prints "version $("$PY" tests/cli/summary_craft.py get "$T/mix.sheaf" version)" \
    [ "$("$PY" tests/cli/summary_craft.py get "$T/mix.sheaf" version)" -lt 7 ]
# Two rows whose unquoted bytes are the same (a quoted field holding the
# delimiter, first in one row and last in the other, as Python's csv module
# writes them): the row key also hashes where each field lies, so two
# columns that swap values between them are no copy (they were: a fresh
# audit of the prints).
"$PY" - "$T/mirror.csv" <<'PY'
import csv, sys
with open(sys.argv[1], "w", newline="") as f:
    w = csv.writer(f, lineterminator="\n")
    w.writerow(["note_in", "mid", "note_out"])
    w.writerow(["", "ok", ",ok,"])
    w.writerow([",ok,", "ok", ""])
    for i in range(20):
        w.writerow(["n%d" % i, "ok", "m%d" % i])
PY
"$SHEAF" scan "$T/mirror.csv" -q -o "$T/mirror.sheaf"
r=$(reasons "$T/mirror.sheaf" | grep '^note_out=')
check mirror_rows.no_copy "$r (pandas: note_in.equals(note_out) is False)" \
    holds '[ -n "$r" ] && ! echo "$r" | grep -q "a copy of"'
# A print on a column with no present cell is damage (exit 4).
printf 'a,b\n1,\n2,\n' >"$T/empty_col.csv"
"$SHEAF" scan "$T/empty_col.csv" -q -o "$T/ec.sheaf"
"$PY" tests/cli/summary_craft.py set "$T/ec.sheaf" "$T/ec_bad.sheaf" 'COLS[1].copy_print=5'
run "$SHEAF" info "$T/ec_bad.sheaf"
check damage.print_without_cells "exit $RC: $(err_text)" [ "$RC" -eq 4 ]
exit 0
