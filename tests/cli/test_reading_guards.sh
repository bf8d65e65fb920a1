#!/usr/bin/env bash
# Reading guards: inputs that used to give a silently wrong summary.
#  1. a header repeated at the start of a gzip member or zstd frame
#     (`cat a.csv.gz b.csv.gz`) or of a later file is skipped, counted and
#     reported by info (text and JSON), the same at every -j and chunk size;
#  2. a column whose exact value table holds several values is never flagged
#     constant (30-digit IDs that round to one double);
#  3. --missing spellings of 63, 64, 65 and 1024 bytes match; 1025 is refused;
#  4. trim refuses an empty keep list;
#  5. duplicate column names: one warning line at scan time, every name-based
#     option refuses an ambiguous name with exit 2 (and an unknown --carry
#     name, in trim and project alike);
#  6. input that is not text (random bytes, NUL bytes) stops the scan with
#     exit 3 unless --force; real CSV (tabs, CRLF, Latin-1, a UTF-8 BOM,
#     UTF-8 text) passes;
#  7. a message about a file under a long path (1,500 bytes and more) keeps its
#     reason: the path is cut in its middle, not the message at its end.
# Expected counts are worked by hand from the inputs this script writes (the
# outside reference: the inputs' own construction, counted with wc/grep).
set -u
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup reading-guards || exit 0

json_field() { # json_field FILE KEY: the first integer value of "KEY": in FILE
    sed -n "s/^ *\"$2\": \([0-9]*\),*$/\1/p" "$1" | head -n 1
}

# ---- 1. repeated headers ---------------------------------------------------
{
    echo 'id,x,label'
    for i in $(seq 1 200); do echo "$i,$((i % 7)).5,c$((i % 2))"; done
} >"$T/a.csv"
gzip -c "$T/a.csv" >"$T/a.csv.gz"
cat "$T/a.csv.gz" "$T/a.csv.gz" >"$T/aa.csv.gz"
zstd -q -c "$T/a.csv" >"$T/a.csv.zst"
cat "$T/a.csv.zst" "$T/a.csv.zst" "$T/a.csv.zst" >"$T/aaa.csv.zst"
# A member that does not start with the header: its first line is data.
tail -n +2 "$T/a.csv" | gzip -c >"$T/body.csv.gz"
cat "$T/a.csv.gz" "$T/body.csv.gz" >"$T/ab.csv.gz"
# A header line in the middle of a member is data (only boundaries are checked).
{ cat "$T/a.csv"; head -n 1 "$T/a.csv"; echo '201,1.5,c1'; } | gzip -c >"$T/mid.csv.gz"
# A member boundary inside a record (bgzip-like): nothing skipped.
head -c 1000 "$T/a.csv" | gzip -c >"$T/p1.gz"
tail -c +1001 "$T/a.csv" | gzip -c >"$T/p2.gz"
cat "$T/p1.gz" "$T/p2.gz" >"$T/split.csv.gz"
# CRLF files and a byte-order mark at a member's start.
sed 's/$/\r/' "$T/a.csv" | gzip -c >"$T/crlf.csv.gz"
{ printf '\357\273\277'; cat "$T/a.csv"; } | gzip -c >"$T/bom.csv.gz"
cat "$T/crlf.csv.gz" "$T/crlf.csv.gz" >"$T/crlf2.csv.gz"
cat "$T/bom.csv.gz" "$T/bom.csv.gz" >"$T/bom2.csv.gz"

# rows and repeated headers expected: 200 data rows per copy of a.csv.
for c in "aa.csv.gz 400 1" "aaa.csv.zst 600 2" "ab.csv.gz 400 0" "mid.csv.gz 202 0" \
         "split.csv.gz 200 0" "crlf2.csv.gz 400 1" "bom2.csv.gz 400 1"; do
    set -- $c
    run "$SHEAF" scan "$T/$1" --target label -q -o "$T/r.sheaf"
    if [ "$RC" -ne 0 ]; then fail "repeat_header.$1" "scan exit $RC: $(err_text)"; continue; fi
    "$SHEAF" info "$T/r.sheaf" --format json >"$T/r.json" 2>/dev/null
    rows=$(json_field "$T/r.json" rows)
    rep=$(json_field "$T/r.json" repeated_headers)
    levels=$(grep -c '"value": "label"' "$T/r.json")
    if [ "$rows" = "$2" ] && [ "${rep:-0}" = "$3" ] && { [ "$1" = mid.csv.gz ] || [ "$levels" = 0 ]; }; then
        pass "repeat_header.$1"
    else
        fail "repeat_header.$1" "rows $rows (want $2), repeated_headers ${rep:-absent} (want $3), class 'label' $levels times"
    fi
done
# The text of info says how many header lines were skipped.
"$SHEAF" scan "$T/aa.csv.gz" -q -o "$T/r.sheaf" 2>/dev/null
"$SHEAF" info "$T/r.sheaf" >"$T/r.txt" 2>/dev/null
check repeat_header.info_text "info does not report the skipped header line" \
    grep -q 'repeated header lines skipped: 1' "$T/r.txt"
# A merge adds the counts (sheaf's own scans as the reference: 1 + 2 lines).
"$SHEAF" scan "$T/aaa.csv.zst" -q -o "$T/r3.sheaf" 2>/dev/null
"$SHEAF" merge "$T/r.sheaf" "$T/r3.sheaf" -o "$T/rm.sheaf" 2>/dev/null
"$SHEAF" info "$T/rm.sheaf" --format json >"$T/rm.json" 2>/dev/null
check repeat_header.merge_adds "merge does not add the counts ($(json_field "$T/rm.json" repeated_headers))" \
    test "$(json_field "$T/rm.json" repeated_headers)" = 3
# A scan writes format version 7 with or without repeated headers (the
# missing-value case rule and the copy prints are in it:
# docs/summary-format.md); a version-2 file of an earlier build
# (tests/old/README.md) still reads with its count.
"$SHEAF" scan "$T/a.csv.gz" -q -o "$T/one.sheaf" 2>/dev/null
check repeat_header.version7_without "a summary without repeated headers is not version 7" \
    test "$(od -An -tu4 -j8 -N4 "$T/one.sheaf" | tr -d ' ')" = 7
check repeat_header.version7_with "a summary with repeated headers is not version 7" \
    test "$(od -An -tu4 -j8 -N4 "$T/r.sheaf" | tr -d ' ')" = 7
"$SHEAF" info tests/old/v2-exact-case.sheaf --json >"$T/old2.json" 2>/dev/null
check repeat_header.version2_reads "the version-2 file's count ($(json_field "$T/old2.json" repeated_headers)), want 1" \
    test "$(json_field "$T/old2.json" repeated_headers)" = 1
# Every -j and chunk size gives the same bytes; a later file's header is
# skipped as before (each file's first record is its header).
# (The bytes depend on the chunk size, where blocks of rows end; not on -j.)
bad=
for cs in 64 1K default; do
    want=
    copt=(); [ "$cs" != default ] && copt=(--chunk-size "$cs")
    for j in 1 2 3; do
        "$SHEAF" scan "$T/aaa.csv.zst" "$T/aa.csv.gz" --target label -j $j "${copt[@]}" -q -o "$T/t.sheaf" 2>/dev/null ||
            bad="-j$j $cs failed"
        h=$(sha256sum <"$T/t.sheaf" | cut -c1-16)
        [ -z "$want" ] && want=$h
        [ "$h" != "$want" ] && bad="-j$j --chunk-size $cs differs from -j1"
    done
done
check repeat_header.same_bytes_every_j "$bad" test -z "$bad"
"$SHEAF" info "$T/t.sheaf" --format json >"$T/t.json" 2>/dev/null
check repeat_header.multi_file "two files (3 + 2 copies): rows $(json_field "$T/t.json" rows), repeated $(json_field "$T/t.json" repeated_headers)" \
    test "$(json_field "$T/t.json" rows)" = 1000 -a "$(json_field "$T/t.json" repeated_headers)" = 3
"$SHEAF" scan "$T/a.csv" "$T/a.csv" -q -o "$T/f.sheaf" 2>/dev/null
"$SHEAF" info "$T/f.sheaf" --format json >"$T/f.json" 2>/dev/null
check repeat_header.next_file_header "a.csv twice: rows $(json_field "$T/f.json" rows)" \
    test "$(json_field "$T/f.json" rows)" = 400
# trim and project skip the repeated header as the scan does.
printf 'id\nx\n' >"$T/keep.txt"
"$SHEAF" trim "$T/aa.csv.gz" --columns-from "$T/keep.txt" -q >"$T/trim.out" 2>/dev/null
check repeat_header.trim "trim writes $(grep -c '^id,x' "$T/trim.out") header lines, $(wc -l <"$T/trim.out") lines" \
    test "$(grep -c '^id,x' "$T/trim.out")" = 1 -a "$(wc -l <"$T/trim.out")" = 401

# ---- 2. long integers are not constant ------------------------------------
{
    echo 'big,y'
    for i in $(seq 10 59); do echo "1234567890123456789012345678$i,$((i % 3))"; done
} >"$T/big.csv"
"$SHEAF" scan "$T/big.csv" -q -o "$T/big.sheaf" 2>/dev/null
"$SHEAF" screen "$T/big.sheaf" --format json >"$T/big.json" 2>/dev/null
# 50 distinct texts (seq 10 59): the exact table has 50 values.
if grep -q '"no_information"' "$T/big.json"; then
    fail constant.distinct_long_integers "flagged no_information: $(grep -o '"flags": \[[^]]*\]' "$T/big.json" | head -n 1)"
else
    pass constant.distinct_long_integers
fi
printf 'c,y\n7,1\n7,2\n7,3\n' >"$T/const.csv"
"$SHEAF" scan "$T/const.csv" -q -o "$T/const.sheaf" 2>/dev/null
"$SHEAF" screen "$T/const.sheaf" --format json >"$T/const.json" 2>/dev/null
check constant.one_value_still_constant "a column of one value is not flagged no_information" \
    grep -q '"no_information"' "$T/const.json"

# ---- 3. long --missing spellings ------------------------------------------
for n in 63 64 65 1024; do
    s=$(head -c "$n" /dev/zero | tr '\0' 'm')
    { echo 'v'; echo 1; echo "$s"; echo 2; } >"$T/m.csv"
    run "$SHEAF" scan "$T/m.csv" --missing "$s" -q -o "$T/m.sheaf"
    "$SHEAF" info "$T/m.sheaf" --format json >"$T/m.json" 2>/dev/null
    check "missing.spelling_${n}_bytes" "exit $RC, missing $(json_field "$T/m.json" missing) (want 1)" \
        test "$RC" = 0 -a "$(json_field "$T/m.json" missing)" = 1
done
s=$(head -c 1025 /dev/zero | tr '\0' 'm')
run "$SHEAF" scan "$T/m.csv" --missing "$s" -q -o "$T/m2.sheaf"
check missing.spelling_1025_refused "exit $RC: $(err_text)" \
    test "$RC" = 2 -a ! -e "$T/m2.sheaf" -a "$(wc -l <"$T/err")" = 1

# ---- 4. trim with nothing to keep ------------------------------------------
printf '# nothing\n\n' >"$T/empty.txt"
run "$SHEAF" trim "$T/a.csv" --columns-from "$T/empty.txt" -q
check trim.empty_keep_list_refused "exit $RC, $(wc -c <"$T/out") bytes out: $(err_text)" \
    test "$RC" = 2 -a ! -s "$T/out" -a "$(wc -l <"$T/err")" = 1

# ---- 5. duplicate column names ---------------------------------------------
printf 'a,b,a\n1,x,10\n2,y,20\n3,x,30\n' >"$T/dup.csv"
run "$SHEAF" scan "$T/dup.csv" -q -o "$T/dup.sheaf"
check dup.scan_warns "exit $RC, stderr: $(err_text)" \
    test "$RC" = 0 -a "$(wc -l <"$T/err")" = 1 -a "$(grep -c "dup.csv.*duplicate column name.*'a'" "$T/err")" = 1
run "$SHEAF" scan "$T/dup.csv" --target a -q -o "$T/dupt.sheaf"
check dup.scan_target_refused "exit $RC: $(err_text)" test "$RC" = 2 -a ! -e "$T/dupt.sheaf"
# A failed scan prints its error alone: one line (the warning once came first).
check dup.scan_target_refused_in_one_line "$(err_text)" test "$(wc -l <"$T/err")" = 1
printf 'a,b,a\n1,"x,10\n2,y,20\n' >"$T/dupq.csv"
run "$SHEAF" scan "$T/dupq.csv" -q -o "$T/dupq.sheaf"
check dup.scan_failing_in_one_line "exit $RC: $(err_text)" \
    test "$RC" = 3 -a "$(wc -l <"$T/err")" = 1 -a "$(grep -c 'dupq.csv' "$T/err")" = 1
run "$SHEAF" scan "$T/dup.csv" --target b -q -o "$T/dupb.sheaf"
check dup.scan_unique_target_ok "exit $RC: $(err_text)" test "$RC" = 0
for opt in --columns --numeric --categorical --exclude; do
    run "$SHEAF" scan "$T/dup.csv" $opt a -q -o "$T/dupo.sheaf"
    check "dup.scan${opt}_refused" "exit $RC: $(err_text)" test "$RC" = 2
done
printf 'a\n' >"$T/keep_a.txt"
run "$SHEAF" trim "$T/dup.csv" --columns-from "$T/keep_a.txt" -q
check dup.trim_keep_refused "exit $RC: $(err_text)" test "$RC" = 2 -a ! -s "$T/out"
run "$SHEAF" trim "$T/dup.csv" --columns-from "$T/keep_a.txt" --carry b -q
check dup.trim_carry_refused "exit $RC: $(err_text)" test "$RC" = 2
printf 'b\n' >"$T/keep_b.txt"
run "$SHEAF" trim "$T/dup.csv" --columns-from "$T/keep_b.txt" -q
check dup.trim_unique_ok "exit $RC, out: $(tr '\n' '|' <"$T/out")" \
    test "$RC" = 0 -a "$(tr '\n' '|' <"$T/out")" = 'b|x|y|x|'
# corr, pca and project on a summary of a table with duplicate names (40 rows).
{ echo 'a,b,a'; for i in $(seq 1 40); do echo "$i,$(((i * 7) % 13)),$(((i * 5) % 11))"; done; } >"$T/dup40.csv"
"$SHEAF" scan "$T/dup40.csv" -q -o "$T/dup40.sheaf" 2>/dev/null
run "$SHEAF" corr "$T/dup40.sheaf" --columns a,b
check dup.corr_columns_refused "exit $RC: $(err_text)" test "$RC" = 2 -a "$(grep -c "'a' names 2 columns" "$T/err")" = 1
run "$SHEAF" corr "$T/dup40.sheaf"
check dup.corr_unnamed_ok "exit $RC: $(err_text)" test "$RC" = 0
run "$SHEAF" pca "$T/dup40.sheaf" --columns a,b
check dup.pca_columns_refused "exit $RC: $(err_text)" test "$RC" = 2 -a "$(grep -c "'a' names more than one" "$T/err")" = 1
run "$SHEAF" project "$T/dup40.csv" --summary "$T/dup40.sheaf" -q
check dup.project_refused "exit $RC: $(err_text)" test "$RC" = 3 -a "$(grep -c "'a' names more than one" "$T/err")" = 1
# project's --carry names columns the user typed, as trim's --carry does: an
# unknown or duplicated name is a usage error (exit 2) in both passes; only a
# column the PCA needs that the data lacks is the data's fault (exit 3, above).
{ echo 'a,b,t,t'; for i in $(seq 1 40); do echo "$i,$(((i * 7) % 13)),x$((i % 3)),y"; done; } >"$T/carry.csv"
"$SHEAF" scan "$T/carry.csv" -q -o "$T/carry.sheaf" 2>/dev/null
run "$SHEAF" project "$T/carry.csv" --summary "$T/carry.sheaf" --carry nosuch -q
check carry.project_unknown_exit_2 "exit $RC: $(err_text)" \
    test "$RC" = 2 -a "$(wc -l <"$T/err")" = 1 -a "$(grep -c "nosuch" "$T/err")" = 1
run "$SHEAF" trim "$T/carry.csv" --columns-from "$T/keep_b.txt" --carry nosuch -q
check carry.trim_unknown_exit_2 "exit $RC: $(err_text)" test "$RC" = 2
run "$SHEAF" project "$T/carry.csv" --summary "$T/carry.sheaf" --carry t -q
check carry.project_duplicated_exit_2 "exit $RC: $(err_text)" \
    test "$RC" = 2 -a "$(grep -c "'t' names more than one" "$T/err")" = 1

# ---- 6. input that is not text ---------------------------------------------
# Random bytes from a fixed seed, without '"': from /dev/urandom, a quote
# left open at the end made the --force scan fail one run in a few
# ("unterminated quote", as it should for such bytes).
"$PY" -c 'import random, sys
random.seed(11)
b = bytes(random.getrandbits(8) for _ in range(1048576)).replace(b"\x22", b"\x27")
open(sys.argv[1], "wb").write(b)' "$T/random.bin"
run "$SHEAF" scan "$T/random.bin" -q -o "$T/rnd.sheaf"
check binary.random_refused "exit $RC: $(err_text)" \
    test "$RC" = 3 -a ! -e "$T/rnd.sheaf" -a "$(wc -l <"$T/err")" = 1
check binary.message_says_not_text "$(err_text)" grep -q 'random.bin.*not text' "$T/err"
run "$SHEAF" scan "$T/random.bin" --force -q -o "$T/rnd.sheaf"
check binary.force_scans "exit $RC: $(err_text)" test "$RC" = 0 -a -e "$T/rnd.sheaf"
gzip -c "$T/random.bin" >"$T/random.bin.gz"
run "$SHEAF" scan "$T/random.bin.gz" -q -o "$T/rnd.sheaf"
check binary.random_gzip_refused "exit $RC: $(err_text)" test "$RC" = 3
{ printf 'a,b\n'; for i in $(seq 1 100); do printf '%d,x\0y\n' "$i"; done; } >"$T/nul.csv"
run "$SHEAF" scan "$T/nul.csv" -q -o "$T/nul.sheaf"
check binary.nul_bytes_refused "exit $RC: $(err_text)" test "$RC" = 3
# UTF-16 text (NUL in every other byte) is not read as text either.
printf 'a,b\n1,2\n' | iconv -f UTF-8 -t UTF-16LE >"$T/u16.csv"
run "$SHEAF" scan "$T/u16.csv" -q -o "$T/u16.sheaf"
check binary.utf16_refused "exit $RC: $(err_text)" test "$RC" = 3
# Real CSV passes: tabs, CRLF, Latin-1 bytes, a UTF-8 BOM, UTF-8 text, quoted
# newlines, a few stray control bytes (an ESC colour code in a log line).
{
    printf '\357\273\277name\tcity\tnote\r\n'
    for i in $(seq 1 300); do printf 'n%d\tZ\374rich\t"two\r\nlines \342\202\254"\r\n' "$i"; done
    printf 'x\t\033[31mred\033[0m\tok\r\n'
} >"$T/real.tsv"
run "$SHEAF" scan "$T/real.tsv" -q -o "$T/real.sheaf"
check binary.real_text_passes "exit $RC: $(err_text)" test "$RC" = 0
printf 'a\001b,c\n1,2\n' >"$T/ctlhead.csv"
run "$SHEAF" scan "$T/ctlhead.csv" -q -o "$T/ctl.sheaf"
check binary.control_in_header_refused "exit $RC: $(err_text)" test "$RC" = 3
# zstd of Debian's pzstd: a skippable frame before each frame (magic
# 5x 2a 4d 18) is zstd, as `zstd -d` reads it: the scan and trim read the
# table (before, sheaf took the file for plain bytes: trim --no-header wrote
# the compressed bytes as the table, exit 0).
if command -v pzstd >/dev/null 2>&1; then
    "$PY" - "$T/pz.csv" <<'PY'
import sys
with open(sys.argv[1], "w") as f:
    f.write("bay,load,door\n")
    for i in range(3000):
        f.write("b%d,%d.%d,%s\n" % (i % 7, i % 97, i % 10, "ab"[i % 2]))
PY
    pzstd -q -p 2 "$T/pz.csv" -o "$T/pz.csv.zst"
    magic=$(od -An -tx1 -N4 "$T/pz.csv.zst" | tr -d ' ')
    check pzstd.skippable_first "first bytes $magic" [ "${magic:2:6}" = 2a4d18 ]
    "$SHEAF" scan "$T/pz.csv" -q -o "$T/pz-plain.sheaf"
    run "$SHEAF" scan "$T/pz.csv.zst" -q -o "$T/pz-zst.sheaf"
    check pzstd.scan "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
    info_same pzstd.same_figures "$T/pz-zst.sheaf" "$T/pz-plain.sheaf"
    printf 'col2\n' >"$T/pz.cols"
    "$SHEAF" trim "$T/pz.csv" --columns-from "$T/pz.cols" --no-header -o "$T/pz-plain.out" 2>/dev/null
    run "$SHEAF" trim "$T/pz.csv.zst" --columns-from "$T/pz.cols" --no-header -o "$T/pz-zst.out"
    check pzstd.trim "exit $RC: $(err_text); $(first_diff "$T/pz-zst.out" "$T/pz-plain.out")" \
        cmp -s "$T/pz-zst.out" "$T/pz-plain.out"
else
    skip pzstd "pzstd (Debian's zstd package) is not installed"
fi
# A header name longer than a summary can hold (65,536 bytes) is refused
# by the scan (exit 3, no file), not written into a summary that every
# reader then refuses as damaged; one of exactly 65,536 bytes reads back.
"$PY" -c 'import sys; open(sys.argv[1], "w").write("a," + "b" * 65537 + "\n1,2\n")' "$T/longname.csv"
run "$SHEAF" scan "$T/longname.csv" -q -o "$T/longname.sheaf"
check header.name_too_long "exit $RC: $(err_text)" holds '[ "$RC" -eq 3 ] && [ ! -e "$T/longname.sheaf" ]'
"$PY" -c 'import sys; open(sys.argv[1], "w").write("a," + "b" * 65536 + "\n1,2\n")' "$T/longname2.csv"
"$SHEAF" scan "$T/longname2.csv" -q -o "$T/longname2.sheaf" 2>/dev/null
run "$SHEAF" info "$T/longname2.sheaf"
check header.name_at_limit_reads "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
# The same for a class label (a summary holds at most 1 MiB in one): a
# target cell of 1,048,577 bytes is refused by the scan with its line (it
# wrote a summary that info, screen and merge refused as damaged, exit 4);
# one of exactly 1 MiB reads back.
"$PY" -c 'import sys; open(sys.argv[1], "w").write("x,label\n1," + "a" * 1048577 + "\n2,b\n")' \
    "$T/longlabel.csv"
run "$SHEAF" scan "$T/longlabel.csv" -q -t label -o "$T/longlabel.sheaf"
check target.label_too_long "exit $RC: $(err_text)" \
    holds '[ "$RC" -eq 3 ] && grep -q "line 2: target .label. has a cell of 1048577 bytes" "$T/err" && [ ! -e "$T/longlabel.sheaf" ]'
"$PY" -c 'import sys; open(sys.argv[1], "w").write("x,label\n1," + "a" * 1048576 + "\n2,b\n")' \
    "$T/longlabel2.csv"
"$SHEAF" scan "$T/longlabel2.csv" -q -t label -o "$T/longlabel2.sheaf" 2>/dev/null
run "$SHEAF" screen "$T/longlabel2.sheaf"
check target.label_at_limit_reads "exit $RC: $(err_text)" [ "$RC" -eq 0 ]

# Pieces of one table as CSV and TSV (equivalence audit): every file is read
# with the first one's delimiter, and the refusal says so (it said only "1
# vs 12 fields").
printf 'a,b,c\n1,2,3\n' >"$T/piece1.csv"
printf 'a\tb\tc\n4\t5\t6\n' >"$T/piece2.tsv"
run "$SHEAF" scan "$T/piece1.csv" "$T/piece2.tsv" -q -o "$T/pieces.sheaf"
check files.other_delimiter_named "exit $RC: $(err_text)" [ "$RC" -eq 3 ] &&
    check files.other_delimiter_says_why "$(err_text)" \
        grep -q "every file is read with the first one's delimiter, ','" "$T/err"
run "$SHEAF" scan "$T/piece1.csv" "$T/piece2.tsv" -q -d , -o "$T/pieces.sheaf"
check files.other_delimiter_still_refused_with_d "exit $RC" [ "$RC" -eq 3 ]

# ---- 7. long paths keep the reason -------------------------------------------
deep="$T/$(printf 'd%.0s' $(seq 1 250))"
for _ in 1 2 3 4 5; do deep="$deep/$(printf 'e%.0s' $(seq 1 250))"; done
if mkdir -p "$deep" 2>/dev/null; then
    printf 'a,b\n1,"open\n' >"$deep/quote.csv"
    printf 'a,b\n1,2\n' >"$deep/plain.csv"
    long_reason() { # NAME EXIT PATTERN: one line, the exit, the reason at its end
        local lines want=$2 reason=$3
        lines=$(wc -l <"$T/err")
        check "long_path.$1" "exit $RC, $lines lines: $(tail -c 200 "$T/err")" \
            holds '[ "$RC" = "$want" ] && [ "$lines" = 1 ] && grep -q "$reason" "$T/err" &&
                   grep -q "^sheaf [a-z]*: $T/d" "$T/err" && grep -q " \.\.\. " "$T/err"'
    }
    run "$SHEAF" scan "$deep/missing.csv" -o "$T/l.sheaf"
    long_reason scan_missing 3 'missing.csv: cannot open: No such file or directory$'
    for j in 1 2; do
        run "$SHEAF" scan "$deep/quote.csv" -o "$T/l.sheaf" -j$j
        long_reason "unterminated_quote_j$j" 3 'quote.csv: line 2: unterminated quote (a quoted field runs to the end of the input)$'
    done
    check long_path.no_summary_left "$(ls "$T"/l.sheaf 2>&1)" [ ! -e "$T/l.sheaf" ]
    run "$SHEAF" info "$deep/plain.csv"
    long_reason info_not_a_summary 4 'plain.csv: not a sheaf summary'
    printf "a\n" >"$T/keep_a.txt"
    run "$SHEAF" trim "$deep/missing.csv" --columns-from "$T/keep_a.txt" -o "$T/l.csv"
    long_reason trim_missing 3 'missing.csv: cannot open: No such file or directory$'
else
    skip long_path "cannot make a 1,500-byte path under $T"
fi

# ---- 8. a repeated header is told by its names, quoted or not (quote audit) ----
# A later file's header was compared unquoted, a member's byte for byte, so
# '"id","x"' after 'id,x' in a later gzip member was counted as a data row.
printf 'id,x\n1,2\n' | gzip -c >"$T/q1.gz"
for h in '"id","x"' 'id,"x"' '\xef\xbb\xbf"id","x"' '\xef\xbb\xbfid,x'; do
    printf "$h\n3,4\n" | gzip -c >"$T/q2.gz"
    cat "$T/q1.gz" "$T/q2.gz" >"$T/qq.csv.gz"
    for j in 1 2; do
        "$SHEAF" scan -q "$T/qq.csv.gz" -o "$T/qq.sheaf" -j$j
        "$SHEAF" info "$T/qq.sheaf" -f json >"$T/qq.json"
        check "quoted_member_header.$(printf '%s' "$h" | tr -c 'a-z' _).j$j" \
            "rows $(json_field "$T/qq.json" rows), repeated $(json_field "$T/qq.json" repeated_headers)" \
            [ "$(json_field "$T/qq.json" rows)" = 2 -a "$(json_field "$T/qq.json" repeated_headers)" = 1 ]
    done
done
printf 'x\n' >"$T/keep_x"
run "$SHEAF" trim "$T/qq.csv.gz" --columns-from "$T/keep_x"
check quoted_member_header.trim_skips_it "$(tr '\n' ' ' <"$T/out")" [ "$(tr '\n' ' ' <"$T/out")" = "x 2 4 " ]
