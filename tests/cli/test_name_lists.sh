#!/usr/bin/env bash
# One rule for every list of names in one option value (io/namelist.h):
# commas separate the names, "\," is a comma inside a name, "\\" a
# backslash, any other backslash itself.  A header name that holds a comma
# can then be named in --columns, --exclude, --numeric, --categorical,
# --carry and scan's --target list, as --missing spellings always could.
#
#   scan.*     scan's lists pick the columns the rule says
#   corr.*     corr --columns
#   pca.*      pca --columns / --exclude
#   carry.*    trim --carry and project --carry copy the named column
#   target.*   scan --target with two names, one holding a comma
#   hint.*     the "(columns: ...)" listing of an unknown name quotes a name
#              that holds a comma, so the commas between names stay apart
#   empty.*    an empty name is still refused, an escaped trailing comma
#              is no empty name
#   help.*     --help and the manual page state the rule where a list is taken
# The references are the header names as Python's csv module reads them.
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
SHEAF=${SHEAF_BIN:-./sheaf}
PY=/usr/bin/python3
T=$(mktemp -d)
trap 'rm -rf "$T"' EXIT

"$PY" - "$T/d.csv" <<'PY'
import csv, random, sys
random.seed(7)
with open(sys.argv[1], "w", newline="") as f:
    w = csv.writer(f)
    w.writerow(["id", "fare, usd", "tip\\", "a\\b", "zone", "wait,min", "kind, of"])
    for i in range(400):
        fare = round(random.uniform(5, 60), 2)
        w.writerow([i, fare, round(fare * 0.15 + random.uniform(0, 1), 2),
                    random.randint(0, 9), random.choice("NSEW"),
                    round(random.uniform(0, 30), 1), random.choice(["x", "y", "z"])])
PY
names() { jget "$1" '[c["name"] for c in d["columns"]]'; }

run "$SHEAF" scan "$T/d.csv" -q -o "$T/c.sheaf" --columns 'id,fare\, usd,tip\\,a\b'
check scan.columns "exit $RC: $(err_text) $(names "$T/c.sheaf")" \
    [ "$(names "$T/c.sheaf")" = '["id","fare, usd","tip\\","a\\b"]' ]
run "$SHEAF" scan "$T/d.csv" -q -o "$T/e.sheaf" --exclude 'fare\, usd,wait\,min'
check scan.exclude "exit $RC: $(err_text) $(names "$T/e.sheaf")" \
    [ "$(names "$T/e.sheaf")" = '["id","tip\\","a\\b","zone","kind, of"]' ]
run "$SHEAF" scan "$T/d.csv" -q -o "$T/k.sheaf" --categorical 'fare\, usd' --numeric 'a\b'
check scan.categorical "exit $RC: $(err_text)" \
    [ "$(jget "$T/k.sheaf" '[c["name"] for c in d["columns"] if c["kind"] != "numeric"]')" = '["fare, usd","zone","kind, of"]' ]

run "$SHEAF" scan "$T/d.csv" -q -o "$T/s.sheaf"
run "$SHEAF" corr "$T/s.sheaf" --format json --columns 'fare\, usd,tip\\,wait\,min'
check corr.columns "exit $RC: $(err_text)" holds \
    '[ "$RC" = 0 ] && "$PY" -c "import json,sys; d=json.load(open(sys.argv[1])); sys.exit(sorted(d[\"columns\"]) != sorted([\"fare, usd\", \"tip\\\\\", \"wait,min\"]))" "$T/out"'
run "$SHEAF" pca "$T/s.sheaf" --format json --columns 'fare\, usd,tip\\,wait\,min,id' --exclude 'id'
check pca.columns_exclude "exit $RC: $(err_text)" holds \
    '[ "$RC" = 0 ] && "$PY" -c "import json,sys; d=json.load(open(sys.argv[1])); sys.exit(sorted(d[\"columns\"]) != sorted([\"fare, usd\", \"tip\\\\\", \"wait,min\"]))" "$T/out"'

printf 'tip\\\n' >"$T/keep.txt"
run "$SHEAF" trim "$T/d.csv" --columns-from "$T/keep.txt" --carry 'fare\, usd' -o "$T/t.csv"
check carry.trim "exit $RC: $(err_text) $(head -c 80 "$T/t.csv")" \
    [ "$(head -n 1 "$T/t.csv" | tr -d '\r')" = '"fare, usd",tip\' ]
run "$SHEAF" project "$T/d.csv" --summary "$T/s.sheaf" -k 1 --carry 'wait\,min' -o "$T/p.csv"
check carry.project "exit $RC: $(err_text)" holds \
    '[ "$RC" = 0 ] && head -n 1 "$T/p.csv" | grep -q "^\"wait,min\","'

run "$SHEAF" scan "$T/d.csv" -q -o "$T/g.sheaf" --target 'kind\, of,zone'
check target.two_names "exit $RC: $(err_text)" \
    [ "$(jget "$T/g.sheaf" 'd["targets"]')" = '["kind, of","zone"]' ]

run "$SHEAF" scan "$T/d.csv" -q -o "$T/x.sheaf" --columns 'fare usd'
check hint.listing_quoted "exit $RC: $(err_text)" holds \
    '[ "$RC" = 2 ] && grep -qF "(columns: id, '"'"'fare, usd'"'"', tip\\, a\\b, zone, ..." "$T/err" && [ ! -e "$T/x.sheaf" ]'

run "$SHEAF" scan "$T/d.csv" -q -o "$T/x.sheaf" --columns 'id,,zone'
check empty.refused "exit $RC: $(err_text)" holds \
    '[ "$RC" = 2 ] && grep -q "an empty name in" "$T/err" && [ ! -e "$T/x.sheaf" ]'
printf 'id,"a,"\n1,2\n' >"$T/trail.csv"
run "$SHEAF" scan "$T/trail.csv" -q -o "$T/y.sheaf" --columns 'a\,'
check empty.escaped_trailing_comma "exit $RC: $(err_text)" \
    [ "$(names "$T/y.sheaf")" = '["a,"]' ]

# help.*: every command with a list of names states the rule in --help and in
# its manual page; a command without one does not.
for cmd in scan corr pca project trim; do
    check "help.$cmd" "$("$SHEAF" "$cmd" --help | tail -n 3 | tr '\n' '|')" holds \
        '"$SHEAF" "$cmd" --help | grep -qF "A,B,..: names separated by commas; \\, is a comma inside a name" &&
         "$SHEAF" help --roff "$cmd" | grep -qF "A,B,..: names separated by commas; \\e, is a comma"'
done
check help.merge_has_no_lists "" holds '! "$SHEAF" merge --help | grep -qF "A,B,..:"'
