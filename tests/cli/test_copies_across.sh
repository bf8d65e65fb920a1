#!/usr/bin/env bash
# The copy prints (summary format version 7), from a fresh audit of them:
# `sheaf screen`'s "a copy of NAME (the same cell in every row)" checked
# against Python's csv module (RFC 4180; copies_ref.py says how missing
# cells and ragged rows are read) and against itself across -j, shards (plain, BGZF, zstd frames),
# merges of nights (CRLF + BOM vs LF), repeated gzip headers, checkpoint and
# resume, several targets and stdin.  The last check (rows whose unquoted
# bytes agree) failed before the row key took the fields' places.  Inputs:
# tests/cli/copies_ref.py (invented data).
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup copies-across python || exit 0
python_modules copies_across pandas || exit 0
REF=tests/cli/copies_ref.py
"$PY" "$REF" gen "$T/in"
I=$T/in

screen_json() { # SUMMARY OUT.json [screen options]
    local s=$1 o=$2
    shift 2
    "$SHEAF" screen "$s" -f json "$@" >"$o" 2>"$T/screen.err"
}
reasons_of() { "$PY" "$REF" reasons "$1"; }
# ref_case NAME SUMMARY CSV... [-- screen options]: the verdicts against the reference
ref_case() {
    local name=$1 sum=$2 bad skip=
    shift 2
    if [ "$1" = --skip-header-lines ]; then skip=$1; shift; fi
    local csvs=() opts=()
    while [ $# -gt 0 ] && [ "$1" != -- ]; do csvs+=("$1"); shift; done
    [ "${1:-}" = -- ] && { shift; opts=("$@"); }
    if ! screen_json "$sum" "$T/$name.json" "${opts[@]}"; then
        fail "$name" "screen failed: $(tr '\n' '|' <"$T/screen.err")"
        return 1
    fi
    bad=$("$PY" "$REF" check $skip "$T/$name.json" "${csvs[@]}")
    check "$name" "$(echo "$bad" | tr '\n' '|' | cut -c1-400)" [ -z "$bad" ]
}
# same_reasons NAME A.json B.json
same_reasons() {
    local d
    d=$(diff <(reasons_of "$2") <(reasons_of "$3") | tr '\n' '|' | cut -c1-400)
    check "$1" "differs: $d" [ -z "$d" ]
}

# ---------------------------------------------------------------- one scan
# lockers.csv: copies (bay_copy always quoted, note_copy with quoted commas,
# newlines and quotes, num_copy quoted numbers, bay_na with n/a where bay is
# empty) and near-copies (one cell, missing in another row, case, a trailing
# space, lagged by one row, two values swapped between two rows alike in
# every other column, 1 vs 1.0), duplicate records, two all-missing columns,
# an identifier and its copy.
"$SHEAF" scan "$I/lockers.csv" -q -j1 -o "$T/one.sheaf"
ref_case one_scan.vs_csv_module "$T/one.sheaf" "$I/lockers.csv"
cp "$T/one_scan.vs_csv_module.json" "$T/one.json"
r=$(reasons_of "$T/one.json")
check one_scan.all_missing_not_copies "$(echo "$r" | grep '^empty' | tr '\n' '|')" \
    holds '[ "$(echo "$r" | grep "^empty" | grep -c "a copy of")" = 0 ]'
check one_scan.flagged_copy_keeps_flag "$(echo "$r" | grep '^ident' | tr '\n' '|')" \
    holds '[ "$(echo "$r" | grep -c "^ident.*=names_rows$")" = 2 ]'
# pandas' reading (keep_default_na=False) calls bay_na no copy of bay (n/a vs
# the empty cell); the doc's "missing in the same rows" calls it one.
np=$("$PY" -c '
import pandas as pd, sys
d = pd.read_csv(sys.argv[1], dtype=str, keep_default_na=False)
print(int(d.bay.equals(d.bay_copy)), int(d.bay.equals(d.bay_na)), int(d.note.equals(d.note_copy)))' "$I/lockers.csv")
check one_scan.pandas_agrees "pandas bay=bay_copy, bay=bay_na, note=note_copy: $np (want 1 0 1)" [ "$np" = "1 0 1" ]
check one_scan.missing_spellings_as_documented "$(echo "$r" | grep '^bay_na=')" \
    holds '[ "$(echo "$r" | grep "^bay_na=")" = "bay_na=a copy of bay (the same cell in every row)" ]'

# ---------------------------------------------------------------- threads, stdin
for j in 2 3; do
    "$SHEAF" scan "$I/lockers.csv" -q -j$j -o "$T/j$j.sheaf"
    check "threads.j$j.same_bytes" "$(first_diff "$T/j$j.sheaf" "$T/one.sheaf")" cmp -s "$T/j$j.sheaf" "$T/one.sheaf"
done
"$SHEAF" scan - -q -j2 -o "$T/stdin.sheaf" <"$I/lockers.csv"
screen_json "$T/stdin.sheaf" "$T/stdin.json"
same_reasons stdin.same_verdicts "$T/one.json" "$T/stdin.json"
"$SHEAF" scan "$I/big.csv" -q -j1 --chunk-size 64K -o "$T/big1.sheaf"
"$SHEAF" scan "$I/big.csv" -q -j3 --chunk-size 64K -o "$T/big3.sheaf"
check threads.big_small_chunks_same_bytes "$(first_diff "$T/big1.sheaf" "$T/big3.sheaf")" cmp -s "$T/big1.sheaf" "$T/big3.sheaf"
ref_case big.vs_csv_module "$T/big1.sheaf" "$I/big.csv"

# ---------------------------------------------------------------- options that change the kept fields
"$SHEAF" scan "$I/lockers.csv" -q --categorical num_text,bay_copy -o "$T/kinds.sheaf"
ref_case kinds.categorical_copy_of_numeric "$T/kinds.sheaf" "$I/lockers.csv"
cp "$T/kinds.categorical_copy_of_numeric.json" "$T/kinds.json"
r=$(reasons_of "$T/kinds.json" | grep '^num_text=')
check kinds.num_text_copy "$r" [ "$r" = "num_text=a copy of num (the same cell in every row)" ]
"$SHEAF" scan "$I/lockers.csv" -q --numeric bay_copy -o "$T/kinds2.sheaf"
ref_case kinds.numeric_declared_text "$T/kinds2.sheaf" "$I/lockers.csv"
"$SHEAF" scan "$I/lockers.csv" -q --columns bay_copy,bay_one_off,note,note_copy,kind -o "$T/cols.sheaf"
ref_case columns.subset "$T/cols.sheaf" "$I/lockers.csv"
"$SHEAF" scan "$I/lockers.csv" -q --exclude bay,ident,ident_copy -o "$T/excl.sheaf"
ref_case columns.exclude_first "$T/excl.sheaf" "$I/lockers.csv"

# ---------------------------------------------------------------- ragged rows
"$SHEAF" scan "$I/ragged.csv" -q -o "$T/ragged.sheaf"
ref_case ragged.short_and_long_rows "$T/ragged.sheaf" "$I/ragged.csv"

# ---------------------------------------------------------------- shards
for n in 3 5; do
    for i in $(seq $n); do "$SHEAF" scan "$I/lockers.csv" --shard $i/$n -q -o "$T/s$n.$i.sheaf"; done
    "$SHEAF" merge $(for i in $(seq $n | sort -r); do echo "$T/s$n.$i.sheaf"; done) -o "$T/s$n.sheaf"
    screen_json "$T/s$n.sheaf" "$T/s$n.json"
    same_reasons "shards.plain.$n" "$T/one.json" "$T/s$n.json"
done
cat >"$T/bgzf.py" <<'PYEOF'
import struct, sys, zlib
def member(data):
    c = zlib.compressobj(6, zlib.DEFLATED, -15)
    body = c.compress(data) + c.flush()
    head = (b"\x1f\x8b\x08\x04\0\0\0\0\x00\xff" + struct.pack("<H", 6) + b"BC" +
            struct.pack("<HH", 2, 12 + 6 + len(body) + 8 - 1))
    return head + body + struct.pack("<II", zlib.crc32(data) & 0xffffffff, len(data))
data = open(sys.argv[1], "rb").read()
size = int(sys.argv[3])
with open(sys.argv[2], "wb") as f:
    for i in range(0, len(data), size):
        f.write(member(data[i:i + size]))
    f.write(member(b""))
PYEOF
"$PY" "$T/bgzf.py" "$I/lockers.csv" "$T/lockers.bgz" 3000
for i in 1 2 3 4; do "$SHEAF" scan "$T/lockers.bgz" --shard $i/4 -q -o "$T/b.$i.sheaf"; done
"$SHEAF" merge "$T/b.3.sheaf" "$T/b.1.sheaf" "$T/b.4.sheaf" "$T/b.2.sheaf" -o "$T/b.sheaf"
screen_json "$T/b.sheaf" "$T/b.json"
same_reasons shards.bgzf.4 "$T/one.json" "$T/b.json"
p1=$("$PY" tests/cli/summary_craft.py get "$T/one.sheaf" 'COLS[1].copy_print')
p2=$("$PY" tests/cli/summary_craft.py get "$T/b.sheaf" 'COLS[1].copy_print')
check shards.bgzf.same_print "whole $p1, shards $p2" holds '[ -n "$p1" ] && [ "$p1" = "$p2" ]'
if command -v zstd >/dev/null; then
    mkdir -p "$T/zp"
    split -b 2500 "$I/lockers.csv" "$T/zp/p"
    for p in "$T/zp"/p*; do zstd -q -c "$p"; done >"$T/lockers.zst"
    for i in 1 2 3; do "$SHEAF" scan "$T/lockers.zst" --shard $i/3 -q -o "$T/z.$i.sheaf"; done
    "$SHEAF" merge "$T/z.2.sheaf" "$T/z.3.sheaf" "$T/z.1.sheaf" -o "$T/z.sheaf"
    screen_json "$T/z.sheaf" "$T/z.json"
    same_reasons shards.zstd_frames.3 "$T/one.json" "$T/z.json"
fi

# ---------------------------------------------------------------- nights: CRLF + BOM, LF
"$SHEAF" scan "$I/night1.csv" -q -o "$T/n1.sheaf"
"$SHEAF" scan "$I/night2.csv" -q -o "$T/n2.sheaf"
"$SHEAF" merge "$T/n1.sheaf" "$T/n2.sheaf" -o "$T/n12.sheaf"
"$SHEAF" merge "$T/n2.sheaf" "$T/n1.sheaf" -o "$T/n21.sheaf"
ref_case nights.crlf_bom_then_lf "$T/n12.sheaf" "$I/night1.csv" "$I/night2.csv"
cp "$T/nights.crlf_bom_then_lf.json" "$T/n12.json"
screen_json "$T/n21.sheaf" "$T/n21.json"
same_reasons nights.either_order "$T/n12.json" "$T/n21.json"
same_reasons nights.as_one_scan "$T/one.json" "$T/n12.json"
# the nights as gzip members, each with its header (the repeated one skipped)
(gzip -c "$I/night2.csv"; tail -n +2 "$I/night1.csv" | sed '1s/^/'"$(head -n1 "$I/night2.csv")"'\r\n/' | gzip -c) >"$T/members.csv.gz"
run "$SHEAF" scan "$T/members.csv.gz" -o "$T/members.sheaf"
check gzip_members.scan "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
ref_case gzip_members.repeated_header_skipped "$T/members.sheaf" --skip-header-lines "$I/night2.csv" "$I/night1.csv"

# ---------------------------------------------------------------- checkpoint and resume
"$SHEAF" scan "$I/big.csv" -q -j1 --chunk-size 64K --checkpoint "$T/ref.ck" --checkpoint-every 100K -o "$T/ckref.sheaf"
: >"$T/bg.err"
SHEAF_TEST_CHECKPOINT_PAUSE=3 "$SHEAF" scan "$I/big.csv" -q -j1 --chunk-size 64K --checkpoint "$T/k.ck" \
    --checkpoint-every 100K -o "$T/ck.sheaf" >/dev/null 2>"$T/bg.err" &
pid=$!
for _ in $(seq 200); do grep -q 'paused inside checkpoint' "$T/bg.err" && break; kill -0 $pid 2>/dev/null || break; sleep 0.05; done
paused=$(grep -c 'paused inside checkpoint' "$T/bg.err")
kill -9 $pid 2>/dev/null; wait $pid 2>/dev/null
run "$SHEAF" scan "$I/big.csv" -q -j2 --chunk-size 64K --checkpoint "$T/k.ck" --checkpoint-every 100K --resume -o "$T/ck.sheaf"
check checkpoint.resumed_same_bytes "paused $paused, resume exit $RC $(err_text) $(first_diff "$T/ck.sheaf" "$T/ckref.sheaf")" \
    holds '[ "$paused" -ge 1 ] && [ "$RC" -eq 0 ] && cmp -s "$T/ck.sheaf" "$T/ckref.sheaf"'
ref_case checkpoint.vs_csv_module "$T/ck.sheaf" "$I/big.csv"

# ---------------------------------------------------------------- targets
"$SHEAF" scan "$I/target.csv" -q -t outcome -o "$T/t1.sheaf"
ref_case target.outcome "$T/t1.sheaf" "$I/target.csv"
cp "$T/target.outcome.json" "$T/t1.json"
r=$(reasons_of "$T/t1.json")
check target.copy_of_target_not_kept "$(echo "$r" | grep '^outcome_copy=')" \
    holds '! echo "$r" | grep -q "^outcome_copy=relevant"'
"$SHEAF" scan "$I/target.csv" -q -t weight -o "$T/t2.sheaf"
"$SHEAF" scan "$I/target.csv" -q -t outcome,weight -o "$T/tt.sheaf"
screen_json "$T/tt.sheaf" "$T/tt1.json" --target outcome
same_reasons targets.several.outcome "$T/t1.json" "$T/tt1.json"
screen_json "$T/t2.sheaf" "$T/t2.json"
screen_json "$T/tt.sheaf" "$T/tt2.json" --target weight
same_reasons targets.several.weight "$T/t2.json" "$T/tt2.json"
ref_case targets.several.weight_vs_csv "$T/tt.sheaf" "$I/target.csv" -- --target weight
# several targets where one's classes overflow (its blocks leave the grid)
"$PY" - "$T/many.csv" <<'PY'
import random, sys
rng = random.Random(9)
with open(sys.argv[1], "w") as f:
    f.write("reading,shelf,shelf_copy,zone,zone_copy\n")
    for i in range(3000):
        s, z = rng.choice("abcd"), rng.choice(["n", "s", "e"])
        f.write("%d,%s,%s,%s,%s\n" % (rng.randint(0, 5000), s, s, z, z))
PY
"$SHEAF" scan "$T/many.csv" -q -t zone,reading -o "$T/mm.sheaf" 2>/dev/null
"$SHEAF" scan "$T/many.csv" -q -t reading -o "$T/m1.sheaf" 2>/dev/null
screen_json "$T/mm.sheaf" "$T/mm.json" --target reading
screen_json "$T/m1.sheaf" "$T/m1.json"
same_reasons targets.classes_dropped "$T/m1.json" "$T/mm.json"
ref_case targets.classes_dropped_vs_csv "$T/mm.sheaf" "$T/many.csv" -- --target reading

# ---------------------------------------------------------------- crafted summaries
# A crafted equal print is taken as a copy (documented: the file is trusted
# once its checksums and invariants hold; only a print without cells is refused).
"$PY" tests/cli/summary_craft.py set "$T/one.sheaf" "$T/craft.sheaf" "COLS[5].copy_print=$p1" >/dev/null
run "$SHEAF" screen "$T/craft.sheaf" -f json
r=$(grep -o '"bay_case"' "$T/out" >/dev/null && screen_json "$T/craft.sheaf" "$T/craft.json" && reasons_of "$T/craft.json" | grep '^bay_case=')
check crafted.equal_print_taken_as_copy "exit $RC, $r (expected: a crafted print that checks is trusted)" \
    holds '[ "$RC" -eq 0 ] && [ "$r" = "bay_case=a copy of bay (the same cell in every row)" ]'
"$PY" tests/cli/summary_craft.py set "$T/one.sheaf" "$T/craft0.sheaf" "COLS[1].copy_print=0" >/dev/null
run "$SHEAF" info "$T/craft0.sheaf"
check crafted.zero_print_with_cells_read "exit $RC (a zero print on a column with cells is a 2^-64 coincidence, accepted)" [ "$RC" -eq 0 ]

# ---------------------------------------------------------------- row keys
# The row key hashes the bytes from the first field's first byte (after an
# opening quote) to the last kept field's last byte (before a closing quote),
# after the tokenizer unquoted the fields in place (src/summary/chunks_rows.c,
# chunks_rows_of): without the fields' places as its seed, rows with other
# cells got the same key, and two columns whose cells swap between such rows
# the same print.  Four such tables, each against the csv module.
sub=()
sub_case() { # NAME SUMMARY CSV... [-- screen options]
    local name=$1 sum=$2 bad
    shift 2
    screen_json "$sum" "$T/f1.$name.json" || { sub+=("$name: screen failed"); return; }
    bad=$("$PY" "$REF" check "$T/f1.$name.json" "$@")
    [ -n "$bad" ] && sub+=("$name: $(echo "$bad" | head -n 1)")
}
# a. RFC 4180 rows as Python's csv module writes them, no ragged row:
#    ['', 'ok', ',ok,'] is `,ok,",ok,"` and [',ok,', 'ok', ''] is `",ok,",ok,`;
#    both keys are the bytes `,ok,",ok,`.
"$SHEAF" scan "$I/mirror.csv" -q -o "$T/mirror.sheaf"
sub_case mirrored_quoted_cells "$T/mirror.sheaf" "$I/mirror.csv"
# b. the same, shards merged
for i in 1 2 3; do "$SHEAF" scan "$I/mirror.csv" --shard $i/3 -q -o "$T/ms.$i.sheaf"; done
"$SHEAF" merge "$T/ms.2.sheaf" "$T/ms.1.sheaf" "$T/ms.3.sheaf" -o "$T/ms.sheaf"
sub_case mirrored_quoted_cells_shards "$T/ms.sheaf" "$I/mirror.csv"
# c. a short row whose quoted first field holds the delimiter, and the row
#    of the same bytes without the opening quote: c and d swap.
"$SHEAF" scan "$I/shortquote.csv" -q -o "$T/sq.sheaf" 2>/dev/null
sub_case short_row_quoted_first_field "$T/sq.sheaf" "$I/shortquote.csv"
# d. two nights of other layouts (the second's extra fields left out with
#    --exclude), merged: no ragged row; b and c swap between the nights.
"$SHEAF" scan "$I/layout1.csv" -q -o "$T/lay1.sheaf"
"$SHEAF" scan "$I/layout2.csv" -q --exclude extra1,extra2 -o "$T/lay2.sheaf"
"$SHEAF" merge "$T/lay1.sheaf" "$T/lay2.sheaf" -o "$T/lay.sheaf"
"$PY" - "$I/layout2.csv" "$T/layout2.kept.csv" <<'PY'
import csv, sys
rows = list(csv.reader(open(sys.argv[1], newline="")))
with open(sys.argv[2], "w", newline="") as f:
    w = csv.writer(f, lineterminator="\n")
    for r in rows:
        w.writerow([r[0], r[1], r[3], r[5]])
PY
sub_case merged_layouts "$T/lay.sheaf" "$I/layout1.csv" "$T/layout2.kept.csv"
why=$(printf '%s | ' "${sub[@]}")
check row_key.unquoted_bytes_agree_no_false_copy "${#sub[@]} of 4 cases: ${why:0:700}" [ ${#sub[@]} -eq 0 ]
exit 0
