#!/usr/bin/env bash
# One quote rule for every reader of a table: a '"' opens a quoted field only
# at the start of a field, so a cell such as 5'10" in an unquoted field is
# plain text.  Three 1,000,000-row files hold one such cell: in the middle,
# on the second data row, and in the middle with one valid quoted field
# holding a newline further on.  Each is scanned whole, with --chunk-size
# 64k, with --max-record 1M and as 2 and 4 merged --shard parts; every run
# must exit 0, count 1,000,000 rows and give the same summary.  A header whose
# first name holds a quote (a"b,c,d) must scan too, alone or with rows.
#
# References: the row count and the cells are known by construction (the awk
# generator below, fixed seed) and are checked against Python's csv module
# (standard library; like sheaf, it treats a quote inside an unquoted field
# as a character); the summaries of the other runs are compared with sheaf's
# own whole-file scan (counts exact, floats to 1e-9 relative).  Prints one
# "PASS name" / "FAIL name: why" / "SKIP name: reason" line per check; exits 0.
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
cli_setup quote python || exit 0
ROWS=1000000

# gen OUT HEIGHT_ROW NOTE_ROW: ROWS rows of id,height,team,score; data row
# HEIGHT_ROW holds the height 5'10" and data row NOTE_ROW the team
# "north<newline>bank" (quoted).  awk's srand(7) fixes the numbers.
gen() {
    awk -v rows="$ROWS" -v hrow="$2" -v nrow="$3" 'BEGIN {
        srand(7)
        split("red blue green gold grey", teams, " ")
        print "id,height,team,score"
        for (i = 1; i <= rows; i++) {
            h = sprintf("%.2f", 1.5 + rand() * 0.6)
            t = teams[1 + int(rand() * 5)]
            if (i == hrow) h = "5\04710\""
            if (i == nrow) t = "\"north\nbank\""
            printf "%d,%s,%s,%d\n", i, h, t, int(rand() * 100)
        }
    }' >"$1"
}

# cmp.py A.json B.json: the info JSON of two summaries without "sources";
# integers and strings equal, floats to 1e-9 relative (absolute below 1);
# top-value lists as count-ordered sets, and only for exact value tables.
cat >"$T/cmp.py" <<'EOF'
import json, sys
sys.path.insert(0, "tests")
from refcheck import tree_differences

def info(p):
    try:
        d = json.load(open(p))
    except (OSError, ValueError) as e:
        sys.exit("%s: %s" % (p, e))
    d.pop("sources", None)
    d.pop("format_version", None)  # shards' summaries are version 6 (docs/shards.md)
    for c in d["columns"]:
        if c.get("distinct_exact"):
            c["top"] = sorted(c["top"], key=lambda e: (-e["count"], e["value"]))
        else:
            c.pop("top", None)
    return d

print("; ".join(tree_differences(info(sys.argv[1]), info(sys.argv[2]), 1e-9)[:4]))
EOF
# info_json SUMMARY: its `info --format json --top-values 20`, written once to SUMMARY.json.
info_json() {
    [ -s "$1.json" ] || "$SHEAF" info --format json --top-values 20 "$1" >"$1.json" 2>/dev/null
    echo "$1.json"
}
# jget SUMMARY EXPR: a Python expression over d, the info JSON.
jget() {
    "$PY" -c 'import json,sys
d = json.load(open(sys.argv[2]))
print(json.dumps(eval(sys.argv[1]), separators=(",", ":")))' "$2" "$(info_json "$1")" 2>/dev/null ||
        echo "no-summary"
}

# The cell checks of one summary: rows, the one non-numeric height, no
# ragged rows.
check_cells() {
    local name=$1 s=$2
    local rows height ragged
    rows=$(jget "$s" 'd["rows"]')
    height=$(jget "$s" '[(c["non_numeric"], c["non_numeric_examples"]) for c in d["columns"] if c["name"] == "height"]')
    ragged=$(jget "$s" '[d["short_rows"], d["long_rows"]]')
    check "$name.rows" "rows $rows, want $ROWS" [ "$rows" = "$ROWS" ]
    check "$name.height_cell" "height non-numeric cells and examples $height, want one, 5'10\"" \
        [ "$height" = '[[1,["5'"'"'10\""]]]' ]
    check "$name.ragged_rows" "short/long rows $ragged" [ "$ragged" = "[0,0]" ]
}

same_summary() {
    local name=$1 a=$2 b=$3 why
    why=$("$PY" "$T/cmp.py" "$(info_json "$a")" "$(info_json "$b")" 2>&1)
    if [ -z "$why" ]; then pass "$name"; else fail "$name" "differs from the whole scan: ${why:0:400}"; fi
}

# scan_parts NAME FILE N: N shard scans merged into $T/NAME.sheaf; returns 1
# (after a FAIL line) when a scan or the merge fails.
scan_parts() {
    local name=$1 file=$2 n=$3 bad="" parts=() i
    for i in $(seq 1 "$n"); do
        run "$SHEAF" scan -q "$file" --shard "$i/$n" -o "$T/$name.$i.sheaf"
        [ "$RC" -eq 0 ] || bad+=" $i/$n exit $RC: $(err_text);"
        parts+=("$T/$name.$i.sheaf")
    done
    if [ -n "$bad" ]; then fail "$name.exit_0" "${bad:0:400}"; return 1; fi
    run "$SHEAF" merge "${parts[@]}" -o "$T/$name.sheaf"
    if [ "$RC" -ne 0 ]; then fail "$name.exit_0" "merge exit $RC: $(err_text)"; return 1; fi
    pass "$name.exit_0"
}

# variant NAME: HEIGHT_ROW:NOTE_ROW (NOTE_ROW 0: no quoted newline).
for variant in middle:500000:0 top:2:0 middle_newline:500000:700000; do
    IFS=: read -r v hrow nrow <<<"$variant"
    f="$T/$v.csv"
    gen "$f" "$hrow" "$nrow"
    # Python's csv module: records, the height cell, the team cell.
    ref=$("$PY" - "$f" "$hrow" "$nrow" <<'EOF'
import csv, sys
n, ok = 0, True
with open(sys.argv[1], newline="") as fh:
    r = csv.reader(fh)
    next(r)
    for row in r:
        n += 1
        if n == int(sys.argv[2]):
            ok &= row[1] == "5'10\""
        if n == int(sys.argv[3]):
            ok &= row[2] == "north\nbank"
print(n, ok)
EOF
)
    check "$v.python_csv_reference" "csv module: $ref, want $ROWS True" [ "$ref" = "$ROWS True" ]

    # Every run, even after one fails: the report shows each.
    run "$SHEAF" scan -q "$f" -o "$T/$v.whole.sheaf"
    check "$v.whole.exit_0" "exit $RC: $(err_text)" [ "$RC" -eq 0 ] &&
        check_cells "$v.whole" "$T/$v.whole.sheaf"
    runs=()
    run "$SHEAF" scan -q "$f" --chunk-size 64k -o "$T/$v.chunk64k.sheaf"
    check "$v.chunk64k.exit_0" "exit $RC: $(err_text)" [ "$RC" -eq 0 ] && runs+=(chunk64k)
    # Short records need no long buffer.
    run "$SHEAF" scan -q "$f" --max-record 1M -o "$T/$v.max_record_1M.sheaf"
    check "$v.max_record_1M.exit_0" "exit $RC: $(err_text)" [ "$RC" -eq 0 ] && runs+=(max_record_1M)
    for n in 2 4; do
        scan_parts "$v.shards$n" "$f" "$n" && runs+=("shards$n")
    done
    for r in "${runs[@]}"; do
        check_cells "$v.$r" "$T/$v.$r.sheaf"
        [ -e "$T/$v.whole.sheaf" ] &&
            same_summary "$v.$r.same_as_whole" "$T/$v.$r.sheaf" "$T/$v.whole.sheaf"
    done
    rm -f "$f" "$T/$v".*.sheaf
done

# A quote inside the first header name: a"b is a plain name.
printf 'a"b,c,d\n1,2,3\n4,5,6\n7,8,9\n' >"$T/hq.csv"
run "$SHEAF" scan -q "$T/hq.csv" -o "$T/hq.sheaf"
check header_quote.exit_0 "exit $RC (signal if > 128): $(err_text)" [ "$RC" -eq 0 ]
check header_quote.columns "names $(jget "$T/hq.sheaf" '[c["name"] for c in d["columns"]]'), want a\"b c d" \
    [ "$(jget "$T/hq.sheaf" '[c["name"] for c in d["columns"]]')" = '["a\"b","c","d"]' ]
check header_quote.rows "rows $(jget "$T/hq.sheaf" 'd["rows"]'), want 3" \
    [ "$(jget "$T/hq.sheaf" 'd["rows"]')" = 3 ]
check header_quote.means "means $(jget "$T/hq.sheaf" '[c["mean"] for c in d["columns"]]'), want 4 5 6 (by hand)" \
    [ "$(jget "$T/hq.sheaf" '[c["mean"] for c in d["columns"]]')" = '[4,5,6]' ]
if scan_parts header_quote.shards2 "$T/hq.csv" 2; then
    same_summary header_quote.shards2.same_as_whole "$T/header_quote.shards2.sheaf" "$T/hq.sheaf"
fi
# The 8-byte header alone: a table with no rows.
printf 'a"b,c,d\n' >"$T/h8.csv"
run "$SHEAF" scan -q "$T/h8.csv" -o "$T/h8.sheaf"
check header_quote_alone.exit_0 "exit $RC (signal if > 128): $(err_text)" [ "$RC" -eq 0 ]
check header_quote_alone.empty_table "rows and columns $(jget "$T/h8.sheaf" '[d["rows"], len(d["columns"])]'), want 0 and 3" \
    [ "$(jget "$T/h8.sheaf" '[d["rows"], len(d["columns"])]')" = "[0,3]" ]

# A first record of exactly --max-record bytes after a UTF-8 byte-order mark
# is within the limit for every chunk size: the chunker measured it from
# the mark and refused it when a chunk boundary fell inside it (found by
# the csv_reader fuzzer; exit 3 before).  Read without a header: a column
# name that long is refused on its own.
"$PY" - "$T/bom_limit.csv" <<'EOF'
import sys
head = "a," + "b" * 131067  # 131069 bytes and its newline: 131070
with open(sys.argv[1], "wb") as f:
    f.write(b"\xef\xbb\xbf" + head.encode() + b"\n" + b"5,6\n" * 40000)
EOF
for cs in 64K 1M; do
    run "$SHEAF" scan -q "$T/bom_limit.csv" --no-header --max-record 131070 --chunk-size $cs -o "$T/bl.sheaf"
    check bom_record_at_limit.chunk_$cs "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
done
run "$SHEAF" scan -q "$T/bom_limit.csv" --no-header --max-record 131069 --chunk-size 64K -o "$T/bl.sheaf"
check bom_record_past_limit.refused "exit $RC: $(err_text)" [ "$RC" -eq 3 ]
exit 0
