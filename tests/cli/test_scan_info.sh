#!/usr/bin/env bash
# End-to-end checks of `sheaf scan` and `sheaf info` through the command line:
# help and usage errors, exit codes (0 ok, 1 output failure, 2 usage, 3 bad
# input, 4 damaged summary), compressed and damaged inputs, CSV dialects
# (delimiters, BOM, CRLF, blank lines, ragged rows, quotes), column options,
# missing spellings, damaged summaries and atomic replacement of the output.
#
# Run from the repository root after make (tests/run.sh does both).  Prints
# one "PASS name" or "FAIL name: why" line per check, "SKIP name: reason" for
# checks whose tools or data are absent, and exits 0.  JSON is read with
# Debian's /usr/bin/python3 (json module).  Test inputs are small files made
# here; the penguins table comes from ../shared/data/open (or $SHEAF_DATA).
set -u
cd "$(dirname "$0")/../.."
SHEAF=${SHEAF_BIN:-./sheaf}
DATA=${SHEAF_DATA:-../shared/data}
PY=/usr/bin/python3
T=$(mktemp -d "${TMPDIR:-/tmp}/sheaf-cli.XXXXXX")
trap 'rm -rf "$T"' EXIT

. tests/cli/common.sh
lines_of() { wc -l <"$1" | tr -d ' '; }
# one_line_error: stderr holds exactly one line.
one_line_error() { [ "$(lines_of "$T/err")" -eq 1 ]; }

if [ ! -x "$SHEAF" ]; then
    fail binary "$SHEAF not found (run make first)"
    exit 0
fi
HAVE_PY=0
[ -x "$PY" ] && HAVE_PY=1

# json SUMMARY EXPR: evaluates the python expression EXPR over d, the info
# JSON of SUMMARY, and prints the result (compact JSON).
json() {
    "$SHEAF" info --format json "$1" >"$T/json.out" 2>"$T/json.err" || { echo "info-exit-$?"; return; }
    "$PY" -c 'import json,sys
d = json.load(open(sys.argv[1]))
print(json.dumps(eval(sys.argv[2]), sort_keys=True, separators=(",", ":")))' "$T/json.out" "$2"
}
# body SUMMARY: info JSON without the sources block and the byte count.
body() { json "$1" '{k: v for k, v in d.items() if k not in ("sources", "bytes")}'; }
# jcheck NAME SUMMARY EXPR WANT: json SUMMARY EXPR prints WANT.
jcheck() {
    if [ "$HAVE_PY" -eq 0 ]; then skip "$1" "$PY not found"; return; fi
    local got
    got=$(json "$2" "$3")
    if [ "$got" = "$4" ]; then pass "$1"; else fail "$1" "$3 is $got, want $4"; fi
}
# same_body NAME A B: the two summaries agree apart from sources and bytes.
same_body() {
    if [ "$HAVE_PY" -eq 0 ]; then skip "$1" "$PY not found"; return; fi
    local a b
    a=$(body "$2")
    b=$(body "$3")
    if [ -n "$a" ] && [ "$a" = "$b" ]; then pass "$1"; else
        fail "$1" "info JSON differs: $(cut -c1-150 <<<"$a") vs $(cut -c1-150 <<<"$b")"
    fi
}
# close_body NAME A B: as same_body, but numbers agree to 1e-12 relative
# (absolute 1e-12 near 0): for scans whose rows were grouped differently.
close_body() {
    if [ "$HAVE_PY" -eq 0 ]; then skip "$1" "$PY not found"; return; fi
    body "$2" >"$T/body.a"
    body "$3" >"$T/body.b"
    local why
    why=$("$PY" -c 'import json,sys
def cmp(a, b, path):
    if isinstance(a, bool) or isinstance(b, bool) or not (isinstance(a, (int, float)) and isinstance(b, (int, float))):
        if type(a) != type(b):
            return [path]
        if isinstance(a, dict):
            if set(a) != set(b):
                return [path + " keys"]
            return [p for k in a for p in cmp(a[k], b[k], path + "." + k)]
        if isinstance(a, list):
            if len(a) != len(b):
                return [path + " length"]
            return [p for i in range(len(a)) for p in cmp(a[i], b[i], "%s[%d]" % (path, i))]
        return [] if a == b else [path]
    if isinstance(a, int) and isinstance(b, int):
        return [] if a == b else [path]
    return [] if abs(a - b) <= 1e-12 * max(abs(a), abs(b), 1.0) else ["%s %r vs %r" % (path, a, b)]
try:
    d = cmp(json.load(open(sys.argv[1])), json.load(open(sys.argv[2])), "")
except ValueError as e:
    d = ["not JSON: %s" % e]
print("; ".join(d[:4]))' "$T/body.a" "$T/body.b")
    if [ -z "$why" ]; then pass "$1"; else fail "$1" "differs at $why"; fi
}
# scan_ok NAME ARGS...: scan must exit 0.
scan_ok() {
    local name=$1
    shift
    run "$SHEAF" scan -q "$@"
    if [ "$RC" -eq 0 ]; then return 0; fi
    fail "$name" "scan $* exited $RC: $(err_text)"
    return 1
}

# ---------------------------------------------------------------- help, usage
for cmd in "" scan info; do
    name=help${cmd:+_$cmd}
    # shellcheck disable=SC2086
    run "$SHEAF" $cmd --help
    check "$name.exit_0" "exit $RC" [ "$RC" -eq 0 ]
    check "$name.prints_usage" "stdout: $(head -c 80 "$T/out")" grep -q "^usage: sheaf" "$T/out"
done
run "$SHEAF" scan -h
check help_scan_short.exit_0 "exit $RC" [ "$RC" -eq 0 ]

run "$SHEAF" scan --no-such-option x.csv -o "$T/x.sheaf"
check unknown_option.exit_2 "exit $RC" [ "$RC" -eq 2 ]
check unknown_option.one_line "stderr: $(err_text)" one_line_error
check unknown_option.names_option "stderr: $(err_text)" grep -q -- "--no-such-option" "$T/err"
run "$SHEAF" info --no-such-option x.sheaf
check unknown_info_option.exit_2 "exit $RC" [ "$RC" -eq 2 ]
check unknown_info_option.one_line "stderr: $(err_text)" one_line_error
run "$SHEAF" no-such-command
check unknown_command.exit_2 "exit $RC" [ "$RC" -eq 2 ]
check unknown_command.one_line "stderr: $(err_text)" one_line_error
run "$SHEAF"
check no_command.exit_2 "exit $RC" [ "$RC" -eq 2 ]

printf 'a,b\n1,2\n3,4\n' >"$T/small.csv"
run "$SHEAF" scan "$T/small.csv"
check missing_output.exit_2 "exit $RC" [ "$RC" -eq 2 ]
check missing_output.one_line "stderr: $(err_text)" one_line_error
run "$SHEAF" scan -o "$T/x.sheaf"
check no_inputs.exit_2 "exit $RC" [ "$RC" -eq 2 ]
run "$SHEAF" scan "$T/small.csv" -o
check output_without_value.exit_2 "exit $RC" [ "$RC" -eq 2 ]
run "$SHEAF" scan "$T/small.csv" -o "$T/x.sheaf" --chunk-size lots
check bad_chunk_size.exit_2 "exit $RC" [ "$RC" -eq 2 ]
run "$SHEAF" info
check info_no_file.exit_2 "exit $RC" [ "$RC" -eq 2 ]
check usage_errors_write_nothing "files: $(ls "$T" | tr '\n' ' ')" [ ! -e "$T/x.sheaf" ]

# ------------------------------------------------------------- bad input data
run "$SHEAF" scan -q "$T/no-such-file.csv" -o "$T/x.sheaf"
check nonexistent_input.exit_3 "exit $RC" [ "$RC" -eq 3 ]
check nonexistent_input.names_file "stderr: $(err_text)" grep -q "no-such-file.csv" "$T/err"
check nonexistent_input.one_line "stderr: $(err_text)" one_line_error
check nonexistent_input.no_output "output exists" [ ! -e "$T/x.sheaf" ]

# A table big enough that half of its gzip holds whole deflate blocks.
"$PY" -c 'import random
r = random.Random(7)
print("id,level,label")
for i in range(20000):
    print("%d,%.3f,%s" % (i, r.gauss(50, 10), r.choice("abcde")))' >"$T/big.csv" 2>/dev/null ||
    awk 'BEGIN { print "id,level,label"; for (i = 0; i < 20000; i++) printf "%d,%.3f,%c\n", i, (i * 7919 % 1009) / 10.0, 97 + i % 5 }' >"$T/big.csv"

# Damaged compressed inputs, each scanned in a directory of its own so that
# any leftover (output or temporary file) shows.
damaged_input() { # NAME FILE WORD: scan exits 3, names FILE and WORD, leaves nothing
    local name=$1 file=$2 word=$3 dir
    dir=$(dirname "$file")
    run "$SHEAF" scan -q "$file" -o "$dir/out.sheaf"
    check "$name.exit_3" "exit $RC: $(err_text)" [ "$RC" -eq 3 ]
    check "$name.names_file" "stderr: $(err_text)" grep -q "$(basename "$file")" "$T/err"
    [ -n "$word" ] && check "$name.says_$word" "stderr: $(err_text)" grep -qi "$word" "$T/err"
    check "$name.one_line" "stderr: $(err_text)" one_line_error
    check "$name.no_output_left" "directory holds: $(ls "$dir" | tr '\n' ' ')" \
        [ "$(ls "$dir")" = "$(basename "$file")" ]
}
mkdir "$T/gz"
gzip -c "$T/big.csv" >"$T/full.gz"
size=$(stat -c %s "$T/full.gz")
head -c $((size / 2)) "$T/full.gz" >"$T/gz/half.csv.gz"
damaged_input truncated_gzip "$T/gz/half.csv.gz" truncated
mkdir "$T/gz2"
head -c $((size - 4)) "$T/full.gz" >"$T/gz2/short_trailer.gz"
damaged_input truncated_gzip_trailer "$T/gz2/short_trailer.gz" ""

# flip_byte FILE POS: inverts the byte at POS.
flip_byte() {
    local b
    b=$(od -An -tu1 -j "$2" -N1 "$1" | tr -d ' ')
    printf "\\x$(printf %02x $((b ^ 255)))" | dd of="$1" bs=1 seek="$2" conv=notrunc status=none
}
# flip_bit FILE POS BIT: inverts one bit of the byte at POS.
flip_bit() {
    local b
    b=$(od -An -tu1 -j "$2" -N1 "$1" | tr -d ' ')
    printf "\\x$(printf %02x $((b ^ (1 << $3))))" | dd of="$1" bs=1 seek="$2" conv=notrunc status=none
}
mkdir "$T/gz3"
cp "$T/full.gz" "$T/gz3/crc.gz"
flip_byte "$T/gz3/crc.gz" $((size - 6)) # inside the CRC-32 trailer
damaged_input gzip_crc_mismatch "$T/gz3/crc.gz" ""

if command -v zstd >/dev/null; then
    zstd -q -c "$T/big.csv" >"$T/full.zst"
    zsize=$(stat -c %s "$T/full.zst")
    mkdir "$T/zs" "$T/zs2"
    cp "$T/full.zst" "$T/zs/corrupt.zst"
    for p in 20 21 22 23 $((zsize / 2)) $((zsize / 2 + 1)); do flip_byte "$T/zs/corrupt.zst" "$p"; done
    damaged_input corrupt_zstd "$T/zs/corrupt.zst" ""
    head -c $((zsize / 2)) "$T/full.zst" >"$T/zs2/half.zst"
    damaged_input truncated_zstd "$T/zs2/half.zst" truncated
else
    skip corrupt_zstd "zstd command not found"
fi

# Unterminated quote at the end of the input: the line where it opened.
printf 'id,note\n1,plain\n2,"opens here\n3,never closed\n' >"$T/quote.csv"
run "$SHEAF" scan -q "$T/quote.csv" -o "$T/q.sheaf"
check unterminated_quote.exit_3 "exit $RC" [ "$RC" -eq 3 ]
check unterminated_quote.names_line_3 "stderr: $(err_text)" grep -q "line 3" "$T/err"
check unterminated_quote.names_file "stderr: $(err_text)" grep -q "quote.csv" "$T/err"
check unterminated_quote.no_output "output exists" [ ! -e "$T/q.sheaf" ]
# A quoted field with delimiters, a newline and doubled quotes is one cell.
printf 'id,note\n1,"a, b"\n2,"two\nlines"\n3,"say ""hi"""\n' >"$T/quoted.csv"
if scan_ok quoted_fields "$T/quoted.csv" -o "$T/quoted.sheaf"; then
    jcheck quoted_fields.rows "$T/quoted.sheaf" 'd["rows"]' 3
    jcheck quoted_fields.values "$T/quoted.sheaf" \
        'sorted(e["value"] for e in d["columns"][1]["top"])' '["a, b","say \"hi\"","two\nlines"]'
fi

# ----------------------------------------------------------------- ragged rows
printf 'a,b,c\n1,2,3\n4,5\n6,7,8,9\n10,11,12\n' >"$T/ragged.csv"
run "$SHEAF" scan -q --strict "$T/ragged.csv" -o "$T/r.sheaf"
check strict_ragged.exit_3 "exit $RC" [ "$RC" -eq 3 ]
check strict_ragged.names_line_3 "stderr: $(err_text)" grep -q "line 3" "$T/err"
check strict_ragged.one_line "stderr: $(err_text)" one_line_error
check strict_ragged.no_output "output exists" [ ! -e "$T/r.sheaf" ]
if scan_ok ragged_counted "$T/ragged.csv" -o "$T/r.sheaf"; then
    jcheck ragged_counted.rows "$T/r.sheaf" 'd["rows"]' 4
    jcheck ragged_counted.short_rows "$T/r.sheaf" 'd["short_rows"]' 1
    jcheck ragged_counted.long_rows "$T/r.sheaf" 'd["long_rows"]' 1
    jcheck ragged_counted.lines "$T/r.sheaf" 'd["ragged_lines"]' '[3,4]'
    # the absent cell of the short row is missing; the extra field is dropped
    jcheck ragged_counted.short_row_cell_missing "$T/r.sheaf" \
        '[(c["n"], c["missing"]) for c in d["columns"]]' '[[4,0],[4,0],[3,1]]'
    jcheck ragged_counted.long_row_extra_dropped "$T/r.sheaf" 'd["columns"][2]["max"]' 12
fi
# Line numbers count physical lines: blank lines and quoted newlines included.
printf 'a,b\n\n1,"x\ny"\n\n2\n' >"$T/ragged2.csv"
run "$SHEAF" scan -q --strict "$T/ragged2.csv" -o "$T/r2.sheaf"
check strict_ragged_physical_line.exit_3 "exit $RC" [ "$RC" -eq 3 ]
check strict_ragged_physical_line.names_line_6 "stderr: $(err_text)" grep -q "line 6" "$T/err"

# Line numbers stay right across chunk boundaries.
{ cat "$T/big.csv"; printf '20000,1.0,"opens\nand runs on\n'; } >"$T/bigquote.csv"
awk 'NR == 15001 { print "1,2"; next } { print }' "$T/big.csv" >"$T/bigragged.csv"
for c in 1K 4M; do
    run "$SHEAF" scan -q --chunk-size "$c" "$T/bigquote.csv" -o "$T/x.sheaf"
    check "unterminated_quote_chunks_$c.line_20002" "exit $RC: $(err_text)" \
        eval '[ "$RC" -eq 3 ] && grep -q "line 20002" "$T/err"'
    run "$SHEAF" scan -q --strict --chunk-size "$c" "$T/bigragged.csv" -o "$T/x.sheaf"
    check "strict_ragged_chunks_$c.line_15001" "exit $RC: $(err_text)" \
        eval '[ "$RC" -eq 3 ] && grep -q "line 15001" "$T/err"'
    if scan_ok "ragged_chunks_$c" --chunk-size "$c" "$T/bigragged.csv" -o "$T/x.sheaf"; then
        jcheck "ragged_chunks_$c.lines" "$T/x.sheaf" '(d["ragged_lines"], d["short_rows"], d["rows"])' \
            '[[15001],1,20000]'
        rm -f "$T/x.sheaf"
    fi
done

# ------------------------------------------------------------- CSV dialects
printf '1,2.5,x\n3,4.5,y\n' >"$T/nohead.csv"
if scan_ok no_header "$T/nohead.csv" --no-header -o "$T/nh.sheaf"; then
    jcheck no_header.names "$T/nh.sheaf" '[c["name"] for c in d["columns"]]' '["col1","col2","col3"]'
    jcheck no_header.first_row_is_data "$T/nh.sheaf" 'd["rows"]' 2
    # the first row is data: all three columns see both rows
    jcheck no_header.first_row_counted "$T/nh.sheaf" \
        '[(c["n"], c["missing"], c["non_numeric"]) for c in d["columns"]]' '[[2,0,0],[2,0,0],[0,0,2]]'
    jcheck no_header.mean "$T/nh.sheaf" 'd["columns"][1]["mean"]' 3.5
fi

printf 'id,level,group\n1,10.5,a\n2,11.5,b\n3,12.5,a\n' >"$T/comma.csv"
tr ',' '\t' <"$T/comma.csv" >"$T/tab.tsv"
tr ',' ';' <"$T/comma.csv" >"$T/semi.csv"
tr ',' '|' <"$T/comma.csv" >"$T/pipe.csv"
scan_ok comma "$T/comma.csv" -o "$T/comma.sheaf"
for v in tab:tab.tsv semi:semi.csv pipe:pipe.csv; do
    label=${v%%:*} file=${v#*:}
    if scan_ok "delim_detected_$label" "$T/$file" -o "$T/$label.sheaf"; then
        jcheck "delim_detected_$label.names" "$T/$label.sheaf" \
            '[c["name"] for c in d["columns"]]' '["id","level","group"]'
        same_body "delim_detected_$label.same_as_comma" "$T/$label.sheaf" "$T/comma.sheaf"
    fi
done
if scan_ok delim_tab_option "$T/tab.tsv" --delim tab -o "$T/tab2.sheaf"; then
    same_body delim_tab_option.same_as_comma "$T/tab2.sheaf" "$T/comma.sheaf"
fi
if scan_ok delim_semicolon_option "$T/semi.csv" -d ';' -o "$T/semi2.sheaf"; then
    same_body delim_semicolon_option.same_as_comma "$T/semi2.sheaf" "$T/comma.sheaf"
fi
# Forcing ',' on a tab file gives one column holding the whole line.
if scan_ok delim_forced "$T/tab.tsv" --delim , -o "$T/forced.sheaf"; then
    jcheck delim_forced.one_column "$T/forced.sheaf" '[c["name"] for c in d["columns"]]' \
        '["id\tlevel\tgroup"]'
fi
run "$SHEAF" scan -q "$T/comma.csv" --delim ab -o "$T/x.sheaf"
check delim_two_chars.exit_2 "exit $RC" [ "$RC" -eq 2 ]

printf '\xef\xbb\xbfid,level,group\n1,10.5,a\n2,11.5,b\n3,12.5,a\n' >"$T/bom.csv"
if scan_ok bom "$T/bom.csv" -o "$T/bom.sheaf"; then
    jcheck bom.first_name_plain "$T/bom.sheaf" 'd["columns"][0]["name"]' '"id"'
    same_body bom.same_as_plain "$T/bom.sheaf" "$T/comma.sheaf"
fi
gzip -c "$T/bom.csv" >"$T/bom.csv.gz"
if scan_ok bom_gzip "$T/bom.csv.gz" -o "$T/bomgz.sheaf"; then
    jcheck bom_gzip.first_name_plain "$T/bomgz.sheaf" 'd["columns"][0]["name"]' '"id"'
fi

sed 's/$/\r/' "$T/comma.csv" >"$T/crlf.csv"
if scan_ok crlf "$T/crlf.csv" -o "$T/crlf.sheaf"; then
    same_body crlf.same_as_lf "$T/crlf.sheaf" "$T/comma.sheaf"
    jcheck crlf.no_cr_in_values "$T/crlf.sheaf" \
        'any("\r" in e["value"] for c in d["columns"] for e in c["top"]) or "\r" in d["columns"][2]["name"]' \
        false
fi
# A larger CRLF table across many small chunks.
sed 's/$/\r/' "$T/big.csv" >"$T/bigcrlf.csv"
if scan_ok crlf_chunks "$T/bigcrlf.csv" --chunk-size 1K -o "$T/bigcrlf.sheaf" &&
    scan_ok crlf_chunks_lf "$T/big.csv" -o "$T/biglf.sheaf"; then
    close_body crlf_chunks.same_as_lf "$T/bigcrlf.sheaf" "$T/biglf.sheaf"
fi

printf '\nid,level,group\n\n1,10.5,a\n\n\n2,11.5,b\n3,12.5,a\n\n' >"$T/blank.csv"
if scan_ok blank_lines "$T/blank.csv" -o "$T/blank.sheaf"; then
    same_body blank_lines.skipped "$T/blank.sheaf" "$T/comma.sheaf"
fi

# Several inputs must share the header.
printf 'id,level,other\n4,13.5,c\n' >"$T/otherhead.csv"
run "$SHEAF" scan -q "$T/comma.csv" "$T/otherhead.csv" -o "$T/two.sheaf"
check different_headers.exit_3 "exit $RC" [ "$RC" -eq 3 ]
check different_headers.names_file "stderr: $(err_text)" grep -q "otherhead.csv" "$T/err"
check different_headers.no_output "output exists" [ ! -e "$T/two.sheaf" ]
printf 'id,level,group\n4,13.5,c\n' >"$T/samehead.csv"
if scan_ok same_headers "$T/comma.csv" "$T/samehead.csv" -o "$T/two.sheaf"; then
    jcheck same_headers.rows "$T/two.sheaf" 'd["rows"]' 4
    jcheck same_headers.sources "$T/two.sheaf" '[s["rows"] for s in d["sources"]]' '[3,1]'
fi

# --------------------------------------------------------------- column options
printf 'id,level,code,note\n1,10.5,007,x\n2,11.5,008,y\n3,NA,009,z\n' >"$T/cols.csv"
if scan_ok columns_option "$T/cols.csv" --columns note,level -o "$T/c1.sheaf"; then
    jcheck columns_option.selected "$T/c1.sheaf" 'sorted(c["name"] for c in d["columns"])' '["level","note"]'
fi
if scan_ok ignore_option "$T/cols.csv" --exclude id,note -o "$T/c2.sheaf"; then
    jcheck ignore_option.left_out "$T/c2.sheaf" '[c["name"] for c in d["columns"]]' '["level","code"]'
fi
if scan_ok categorical_option "$T/cols.csv" --categorical code -o "$T/c3.sheaf"; then
    jcheck categorical_option.kind "$T/c3.sheaf" \
        '[(c["kind"], c["n"], c["non_numeric"]) for c in d["columns"] if c["name"] == "code"]' \
        '[["categorical",0,3]]'
    jcheck categorical_option.raw_text "$T/c3.sheaf" \
        'sorted(e["value"] for c in d["columns"] if c["name"] == "code" for e in c["top"])' \
        '["007","008","009"]'
fi
if scan_ok numeric_option "$T/cols.csv" --numeric note -o "$T/c4.sheaf"; then
    jcheck numeric_option.kind "$T/c4.sheaf" \
        '[(c["kind"], c["n"], c["non_numeric"]) for c in d["columns"] if c["name"] == "note"]' \
        '[["numeric",0,3]]'
fi
if scan_ok auto_kinds "$T/cols.csv" -o "$T/c5.sheaf"; then
    jcheck auto_kinds.kinds "$T/c5.sheaf" '[c["kind"] for c in d["columns"]]' \
        '["numeric","numeric","numeric","categorical"]'
fi
for opt in columns ignore categorical numeric; do
    run "$SHEAF" scan -q "$T/cols.csv" "--$opt" level,no_such_column -o "$T/x.sheaf"
    check "${opt}_unknown_name.exit_2" "exit $RC" [ "$RC" -eq 2 ]
    check "${opt}_unknown_name.names_it" "stderr: $(err_text)" grep -q no_such_column "$T/err"
    check "${opt}_unknown_name.no_output" "output exists" [ ! -e "$T/x.sheaf" ]
done
run "$SHEAF" scan -q "$T/cols.csv" --numeric code --categorical code -o "$T/x.sheaf"
check numeric_and_categorical.exit_2 "exit $RC" [ "$RC" -eq 2 ]

# --missing replaces the default list ("" stays missing).
printf 'v,w\nNA,1\n-999,2\n5,\n?,-999\n7,NA\n' >"$T/miss.csv"
if scan_ok missing_default "$T/miss.csv" -o "$T/m0.sheaf"; then
    jcheck missing_default.counts "$T/m0.sheaf" '[(c["missing"], c["n"]) for c in d["columns"]]' \
        '[[2,3],[2,3]]'
fi
if scan_ok missing_option "$T/miss.csv" --missing -999 -o "$T/m1.sheaf"; then
    jcheck missing_option.replaces_list "$T/m1.sheaf" \
        '[(c["missing"], c["n"], c["non_numeric"]) for c in d["columns"]]' '[[1,2,2],[2,2,1]]'
    jcheck missing_option.mean "$T/m1.sheaf" '[float(c["mean"]) for c in d["columns"]]' '[6.0,1.5]'
fi

# ---------------------------------------------------------- damaged summaries
PENG="$DATA/open/penguins.csv"
[ -e "$PENG" ] || { skip penguins "$PENG not found; using a made-up table"; PENG="$T/big.csv"; }
scan_ok base_summary "$PENG" -o "$T/base.sheaf"
if [ -s "$T/base.sheaf" ]; then
    size=$(stat -c %s "$T/base.sheaf")
    run "$SHEAF" info --format json "$T/base.sheaf"
    check intact_summary.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
    # one flipped bit at 200 evenly spaced positions, then every bit of the
    # first 12 bytes (magic and version)
    bad="" n=0
    positions=""
    for i in $(seq 0 199); do positions+=" $((i * (size - 1) / 199)):$((i % 8))"; done
    for p in $(seq 0 11); do for b in $(seq 0 7); do positions+=" $p:$b"; done; done
    for pb in $positions; do
        p=${pb%%:*} b=${pb#*:}
        cp "$T/base.sheaf" "$T/flip.sheaf"
        flip_bit "$T/flip.sheaf" "$p" "$b"
        run "$SHEAF" info --format json "$T/flip.sheaf"
        n=$((n + 1))
        if [ "$RC" -ne 4 ] || ! one_line_error || [ -s "$T/out" ]; then
            bad+=" byte $p bit $b: exit $RC, $(lines_of "$T/err") stderr lines, $(wc -c <"$T/out") stdout bytes;"
        fi
    done
    check "flipped_bit_refused.$n" "${bad:0:600}" [ -z "$bad" ]
    # text output refuses the same way
    cp "$T/base.sheaf" "$T/flip.sheaf"
    flip_bit "$T/flip.sheaf" $((size / 3)) 5
    run "$SHEAF" info "$T/flip.sheaf"
    check flipped_bit_refused_text.exit_4 "exit $RC" [ "$RC" -eq 4 ]
    check flipped_bit_refused_text.names_file "stderr: $(err_text)" grep -q flip.sheaf "$T/err"

    bad=""
    for cut in 0 1 8 12 $((size / 2)) $((size - 9)) $((size - 1)); do
        head -c "$cut" "$T/base.sheaf" >"$T/trunc.sheaf"
        run "$SHEAF" info --format json "$T/trunc.sheaf"
        if [ "$RC" -ne 4 ] || ! one_line_error; then bad+=" $cut bytes: exit $RC;"; fi
    done
    check truncated_summary.exit_4 "$bad" [ -z "$bad" ]
    { cat "$T/base.sheaf"; printf 'x'; } >"$T/trailing.sheaf"
    run "$SHEAF" info --format json "$T/trailing.sheaf"
    check trailing_garbage_summary.exit_4 "exit $RC" [ "$RC" -eq 4 ]
else
    skip damaged_summaries "no base summary"
fi
run "$SHEAF" info --format json "$T/comma.csv"
check non_summary.exit_4 "exit $RC" [ "$RC" -eq 4 ]
check non_summary.one_line "stderr: $(err_text)" one_line_error
gzip -c "$T/comma.csv" >"$T/comma.csv.gz"
run "$SHEAF" info "$T/comma.csv.gz"
check non_summary_gzip.exit_4 "exit $RC" [ "$RC" -eq 4 ]
run "$SHEAF" info "$T/no-such.sheaf"
check nonexistent_summary.fails "exit $RC" [ "$RC" -ne 0 -a "$RC" -lt 128 ]

# ----------------------------------------------------------- output handling
mkdir "$T/outdir"
cp "$T/comma.csv" "$T/outdir/in.csv"
if scan_ok output_first "$T/outdir/in.csv" -o "$T/outdir/s.sheaf"; then
    cp "$T/outdir/s.sheaf" "$T/outdir.keep"
    ino=$(stat -c %i "$T/outdir/s.sheaf")
    # a failing scan over an existing summary leaves it untouched
    run "$SHEAF" scan -q "$T/gz/half.csv.gz" -o "$T/outdir/s.sheaf"
    check failed_scan_keeps_old.exit_3 "exit $RC" [ "$RC" -eq 3 ]
    check failed_scan_keeps_old.unchanged "summary changed" cmp -s "$T/outdir/s.sheaf" "$T/outdir.keep"
    run "$SHEAF" scan -q "$T/no-such-file.csv" -o "$T/outdir/s.sheaf"
    check failed_open_keeps_old.unchanged "summary changed" cmp -s "$T/outdir/s.sheaf" "$T/outdir.keep"
    run "$SHEAF" scan -q --strict "$T/ragged.csv" -o "$T/outdir/s.sheaf"
    check failed_strict_keeps_old.unchanged "summary changed" cmp -s "$T/outdir/s.sheaf" "$T/outdir.keep"
    check failed_scans_leave_no_temporaries "directory holds: $(ls -A "$T/outdir" | tr '\n' ' ')" \
        [ "$(ls -A "$T/outdir" | tr '\n' ' ')" = "in.csv s.sheaf " ]
    # a successful scan replaces it by a rename (new inode, new content)
    if scan_ok output_replaced "$T/ragged.csv" -o "$T/outdir/s.sheaf"; then
        jcheck output_replaced.new_content "$T/outdir/s.sheaf" 'd["rows"]' 4
        check output_replaced.by_rename "same inode $ino: written in place" \
            [ "$(stat -c %i "$T/outdir/s.sheaf")" != "$ino" ]
        check output_replaced.no_temporaries "directory holds: $(ls -A "$T/outdir" | tr '\n' ' ')" \
            [ "$(ls -A "$T/outdir" | tr '\n' ' ')" = "in.csv s.sheaf " ]
    fi
fi
run "$SHEAF" scan -q "$T/comma.csv" -o "$T/no-such-dir/s.sheaf"
check unwritable_output.exit_1 "exit $RC: $(err_text)" [ "$RC" -eq 1 ]
check unwritable_output.one_line "stderr: $(err_text)" one_line_error
run "$SHEAF" scan -q "$T/comma.csv" -o "$T/outdir"
check output_is_directory.exit_1 "exit $RC: $(err_text)" [ "$RC" -eq 1 ]

# Empty input is bad data; a header alone is a table with no rows.
: >"$T/empty.csv"
run "$SHEAF" scan -q "$T/empty.csv" -o "$T/e.sheaf"
check empty_input.exit_3 "exit $RC" [ "$RC" -eq 3 ]
printf 'a,b\n' >"$T/headonly.csv"
if scan_ok header_only "$T/headonly.csv" -o "$T/h.sheaf"; then
    jcheck header_only.rows "$T/h.sheaf" '(d["rows"], len(d["columns"]))' '[0,2]'
fi

# Standard input, plain and gzip.
run "$SHEAF" scan -q - -o "$T/stdin.sheaf" <"$T/comma.csv"
check stdin.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
[ "$RC" -eq 0 ] && same_body stdin.same_as_file "$T/stdin.sheaf" "$T/comma.sheaf"
gzip -c "$T/comma.csv" | "$SHEAF" scan -q - -o "$T/stdingz.sheaf" 2>"$T/err"
RC=$?
check stdin_gzip.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
[ "$RC" -eq 0 ] && same_body stdin_gzip.same_as_file "$T/stdingz.sheaf" "$T/comma.sheaf"

exit 0
