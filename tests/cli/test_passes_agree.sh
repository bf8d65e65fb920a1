#!/usr/bin/env bash
# The three passes over a table -- scan, trim and project -- read the same
# records.  Over awkward inputs (quoted header names holding newlines,
# delimiters and doubled quotes; CRLF; a byte-order mark; ragged rows; a last
# line without a newline; a quote inside an unquoted header name and inside
# an unquoted cell; empty header names; no header) each must see the same
# columns and the same number of records:
#   - scan's rows and column names (empty names become colN, as scan names
#     them; --no-header gives col1..colN);
#   - trim --columns-from with every column (that a one-name-per-line list can
#     name) gives those columns of the input back, and with the last column
#     gives that column, one output record per scanned row (an empty cell
#     alone on its line must not become a blank line, which readers skip);
#     trim --summary a summary names the columns as scan does;
#   - project --summary gives one score row per scanned row.
# On bad input they must fail alike: a record longer than --max-record (trim
# and project take --max-record too) and an unterminated quote exit 3 in all
# three, and the unterminated quote is reported at the same line.
#
# Reference: Python's csv module (Debian's /usr/bin/python3, standard
# library; it, too, treats a quote inside an unquoted field as a character)
# reads every input and every output; row counts and line numbers of the
# error inputs are also known by construction (worked by hand below).  Prints
# one "PASS name" / "FAIL name: why" line per check and exits 0.
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
cli_setup passes python || exit 0

# ------------------------------------------------------------------- inputs
# make.py DIR: the tables (fixed seed; an invented field-survey scenario).
# Every table has at least two numeric columns, so that project has a basis.
cat >"$T/make.py" <<'EOF'
import random, sys
d = sys.argv[1]
r = random.Random(41)
def num():
    return "%.3f" % r.gauss(10, 3)
def body(n, width, eol="\n"):
    return "".join(",".join(num() for _ in range(width)) + eol for _ in range(n))
def put(name, text):
    with open("%s/%s" % (d, name), "wb") as f:
        f.write(text if isinstance(text, bytes) else text.encode())
# quoted header names: a newline, a delimiter, a doubled quote
put("quoted_header.csv", '"depth\nmetres",site,"lat,lon","say ""hi""",count\n' + body(40, 5))
# CRLF everywhere, a quoted name with CRLF inside, a quoted cell with CRLF
put("crlf.csv", '"a\r\nb",c,d\r\n' + body(20, 3, "\r\n") + '"1.5",2.5,"3\r\n"\r\n' + body(19, 3, "\r\n"))
# a byte-order mark before a quoted first name
put("bom.csv", b"\xef\xbb\xbf" + ('"id",u,v,w\n' + body(30, 4)).encode())
# ragged rows: short and long
rows = body(30, 4).splitlines()
rows[5] = "1.0,2.0"
rows[17] = rows[17] + ",9.9,8.8"
put("ragged.csv", "p,q,r,s\n" + "\n".join(rows) + "\n")
# no newline after the last record (which is quoted)
put("no_final_newline.csv", "m,n,o\n" + body(25, 3) + '1.25,"2.5",3.75')
# a quote inside an unquoted header name, and inside an unquoted cell
put("header_quote.csv", 'a"b,c,d\n' + body(30, 3))
rows = body(30, 3).splitlines()
rows[12] = "5'10\"," + rows[12].split(",", 1)[1]
put("cell_quote.csv", "height,c,d\n" + "\n".join(rows) + "\n")
# empty header names (scan calls them col2 and col4)
put("empty_names.csv", "a,,c,\n" + body(30, 4))
# no header at all
put("no_header.csv", body(30, 4))
# a 600-byte record, for --max-record 256
rows = body(20, 3).splitlines()
rows[10] = "1.0,2.0," + "7" * 600
put("long_record.csv", "x,y,z\n" + "\n".join(rows) + "\n")
# an unterminated quote: header (2 lines, quoted CRLF), 5 records on lines
# 3-7, the open quote on line 8 (worked by hand)
put("unterminated.csv", '"u\r\nv",w\r\n' + body(5, 2, "\r\n") + '"1.5,2\r\n3,4\r\n')
put("unterminated_ok.csv", '"u\r\nv",w\r\n' + body(5, 2, "\r\n"))
EOF
"$PY" "$T/make.py" "$T"

# csvref.py MODE FILE [ARG]: Python's csv module over FILE (UTF-8 with an
# optional BOM; blank lines are no records).
#   header FILE          the first record, as JSON
#   rows FILE [noheader] data records
#   col FILE K [noheader]  column K (0-based) of every data record as JSON
#                        ('' where a record is too short)
#   same A B IDX         "ok" when B holds columns IDX (a JSON list) of A's
#                        records, each record of A cut or padded with '' to
#                        its header width
cat >"$T/csvref.py" <<'EOF'
import csv, json, sys
def recs(p):
    with open(p, encoding="utf-8-sig", newline="") as f:
        return [row for row in csv.reader(f) if row]
mode, p = sys.argv[1], sys.argv[2]
rs = recs(p)
if mode == "header":
    print(json.dumps(rs[0]))
elif mode == "rows":
    print(len(rs) - (0 if sys.argv[3:] == ["noheader"] else 1))
elif mode == "col":
    k = int(sys.argv[3])
    data = rs if sys.argv[4:] == ["noheader"] else rs[1:]
    print(json.dumps([row[k] if k < len(row) else "" for row in data]))
elif mode == "same":
    w, idx = len(rs[0]), json.loads(sys.argv[4])
    want = [[(row + [""] * w)[k] for k in idx] for row in rs]
    got = recs(sys.argv[3])
    if got == want:
        print("ok")
    else:
        bad = next((i for i in range(min(len(got), len(want))) if got[i] != want[i]), None)
        print("records %d vs %d; first difference at record %s: %r vs %r" % (
            len(got), len(want), bad, got[bad] if bad is not None else None,
            want[bad] if bad is not None else None))
EOF
ref() { "$PY" "$T/csvref.py" "$@" 2>&1; }
# scan's names for a header: empty ones are colN (1-based).
scan_names() {
    "$PY" -c 'import json,sys
h = json.loads(sys.argv[1])
print(json.dumps([n if n else "col%d" % (i + 1) for i, n in enumerate(h)], separators=(",", ":")))' "$1"
}

# ---------------------------------------------- valid inputs: the same records
for name in quoted_header crlf bom ragged no_final_newline header_quote cell_quote empty_names; do
    f="$T/$name.csv"
    rows=$(ref rows "$f")
    names=$(scan_names "$(ref header "$f")")
    run "$SHEAF" scan -q "$f" -o "$T/$name.sheaf"
    if ! check "$name.scan.exit_0" "exit $RC: $(err_text)" [ "$RC" -eq 0 ]; then continue; fi
    check "$name.scan.rows" "scan $(jget "$T/$name.sheaf" 'd["rows"]'), csv module $rows" \
        [ "$(jget "$T/$name.sheaf" 'd["rows"]')" = "$rows" ]
    check "$name.scan.columns" "scan $(jget "$T/$name.sheaf" '[c["name"] for c in d["columns"]]'), csv module $names" \
        [ "$(jget "$T/$name.sheaf" '[c["name"] for c in d["columns"]]')" = "$names" ]

    # trim, every column a keep list can name (one name per line: not those
    # holding a line end): the table back (ragged rows cut or padded)
    idx=$("$PY" -c 'import json,sys
names = json.loads(sys.argv[1])
idx = [i for i, n in enumerate(names) if "\n" not in n and "\r" not in n]
open(sys.argv[2], "w").write("".join(names[i] + "\n" for i in idx))
print(json.dumps(idx))' "$names" "$T/keep_all")
    run "$SHEAF" trim "$f" --columns-from "$T/keep_all" -o "$T/$name.all.csv"
    if check "$name.trim_all.exit_0" "exit $RC: $(err_text)" [ "$RC" -eq 0 ]; then
        why=$(ref same "$f" "$T/$name.all.csv" "$idx")
        check "$name.trim_all.same_table" "$why" [ "$why" = ok ]
        got=$(ref rows "$T/$name.all.csv")
        check "$name.trim_all.rows_as_scan" "trim wrote $got records, scan read $rows" [ "$got" = "$rows" ]
    fi
    # trim, the last column
    last=$("$PY" -c 'import json,sys; print(json.loads(sys.argv[1])[-1])' "$names")
    k=$(( $("$PY" -c 'import json,sys; print(len(json.loads(sys.argv[1])))' "$names") - 1 ))
    printf '%s\n' "$last" >"$T/keep_last"
    run "$SHEAF" trim "$f" --columns-from "$T/keep_last" -o "$T/$name.last.csv"
    if check "$name.trim_last.exit_0" "exit $RC: $(err_text)" [ "$RC" -eq 0 ]; then
        got=$(ref col "$T/$name.last.csv" 0) want=$(ref col "$f" "$k")
        check "$name.trim_last.column" "trim ${got:0:120}, csv module ${want:0:120}" [ "$got" = "$want" ]
    fi
    # trim --summary: the kept names are scan's names
    run "$SHEAF" trim "$f" --summary "$T/$name.sheaf" -o "$T/$name.from.csv"
    if check "$name.trim_from.exit_0" "exit $RC: $(err_text)" [ "$RC" -eq 0 ]; then
        got=$(ref rows "$T/$name.from.csv")
        check "$name.trim_from.rows_as_scan" "trim wrote $got records, scan read $rows" [ "$got" = "$rows" ]
    fi
    # project: one score row per scanned row
    run "$SHEAF" project "$f" --summary "$T/$name.sheaf" --components 1 -o "$T/$name.scores.csv"
    if check "$name.project.exit_0" "exit $RC: $(err_text)" [ "$RC" -eq 0 ]; then
        got=$(ref rows "$T/$name.scores.csv")
        check "$name.project.rows_as_scan" "project wrote $got score rows, scan read $rows" [ "$got" = "$rows" ]
    fi
done

# ------------------------------------------------ no header: col1..colN
f="$T/no_header.csv"
rows=$(ref rows "$f" noheader)
run "$SHEAF" scan -q --no-header "$f" -o "$T/nh.sheaf"
if check no_header.scan.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]; then
    check no_header.scan.rows "scan $(jget "$T/nh.sheaf" 'd["rows"]'), csv module $rows" \
        [ "$(jget "$T/nh.sheaf" 'd["rows"]')" = "$rows" ]
    printf 'col2\ncol4\n' >"$T/keep_nh"
    # No header in, no header out: the kept fields of every record.
    run "$SHEAF" trim "$f" --no-header --columns-from "$T/keep_nh" -o "$T/nh.kept.csv"
    if check no_header.trim_keep_list.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]; then
        got=$(ref col "$T/nh.kept.csv" 1 noheader) want=$(ref col "$f" 3 noheader)
        check no_header.trim_keep_list.col4 "trim ${got:0:100}, csv module ${want:0:100}" [ "$got" = "$want" ]
    fi
    run "$SHEAF" trim "$f" --no-header --summary "$T/nh.sheaf" -o "$T/nh.from.csv"
    if check no_header.trim_from.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]; then
        got=$(ref rows "$T/nh.from.csv" noheader)
        check no_header.trim_from.rows_as_scan "trim wrote $got records, scan read $rows" [ "$got" = "$rows" ]
    fi
    run "$SHEAF" project "$f" --no-header --summary "$T/nh.sheaf" --components 1 -o "$T/nh.scores.csv"
    if check no_header.project.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]; then
        got=$(ref rows "$T/nh.scores.csv")
        check no_header.project.rows_as_scan "project wrote $got score rows, scan read $rows" [ "$got" = "$rows" ]
    fi
fi

# ------------------------------------------- a record longer than --max-record
f="$T/long_record.csv"
printf 'x\ny\nz\n' >"$T/keep_xyz"
run "$SHEAF" scan -q "$f" -o "$T/long.sheaf" # the summary project needs
check long_record.scan_default.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
run "$SHEAF" scan -q --max-record 256 "$f" -o "$T/long256.sheaf"
check long_record.scan.exit_3 "exit $RC, want 3: $(err_text)" [ "$RC" -eq 3 ]
run "$SHEAF" trim --max-record 256 "$f" --columns-from "$T/keep_xyz" -o "$T/long.trim.csv"
check long_record.trim.exit_3 "exit $RC, want 3: $(err_text)" [ "$RC" -eq 3 ]
check long_record.trim.no_output "an output file was left" [ ! -e "$T/long.trim.csv" ]
run "$SHEAF" trim --max-record 1M "$f" --columns-from "$T/keep_xyz" -o "$T/long.trim1m.csv"
check long_record.trim_1M.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
run "$SHEAF" project --max-record 256 "$f" --summary "$T/long.sheaf" --components 1 -o "$T/long.scores.csv"
check long_record.project.exit_3 "exit $RC, want 3: $(err_text)" [ "$RC" -eq 3 ]
run "$SHEAF" project --max-record 1M "$f" --summary "$T/long.sheaf" --components 1 -o "$T/long.scores1m.csv"
check long_record.project_1M.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]

# ------------------------------------ an unterminated quote: line 8 in all three
f="$T/unterminated.csv"
line_of() { grep -o 'line [0-9]*' "$T/err" | head -n 1 | cut -d' ' -f2; }
run "$SHEAF" scan -q "$T/unterminated_ok.csv" -o "$T/unt.sheaf"
run "$SHEAF" scan -q "$f" -o "$T/unt_bad.sheaf"
check unterminated.scan.exit_3 "exit $RC, want 3: $(err_text)" [ "$RC" -eq 3 ]
check unterminated.scan.line_8 "line '$(line_of)', want 8 (by hand): $(err_text)" [ "$(line_of)" = 8 ]
printf 'w\n' >"$T/keep_w"
run "$SHEAF" trim "$f" --columns-from "$T/keep_w" -o "$T/unt.trim.csv"
check unterminated.trim.exit_3 "exit $RC, want 3: $(err_text)" [ "$RC" -eq 3 ]
check unterminated.trim.line_8 "line '$(line_of)', want 8 (by hand): $(err_text)" [ "$(line_of)" = 8 ]
run "$SHEAF" project "$f" --summary "$T/unt.sheaf" --components 1 -o "$T/unt.scores.csv"
check unterminated.project.exit_3 "exit $RC, want 3: $(err_text)" [ "$RC" -eq 3 ]
check unterminated.project.line_8 "line '$(line_of)', want 8 (by hand): $(err_text)" [ "$(line_of)" = 8 ]
exit 0
