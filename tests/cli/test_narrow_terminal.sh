#!/usr/bin/env bash
# Text output at 80 (and 60, 100) columns: no line wider than COLUMNS with
# colour on or off (escape bytes take no width), names printed whole (users
# copy them), columns dropped by a stated order with a line saying which,
# cuts marked with U+2026 and never inside a UTF-8 sequence, and --color
# always/never/auto.  Open datasets: penguins and mpg (tests/ref uses the
# same files; see tests/testutil for where they are looked up).
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup narrow python || exit 0
D=../shared/data/open
[ -d "$D" ] || D=/work/shared/data/open
if [ ! -s "$D/penguins.csv" ] || [ ! -s "$D/mpg.csv" ]; then skip all "open datasets not found"; exit 0; fi

$SHEAF scan -q "$D/penguins.csv" --target species -o "$T/pg.sheaf" || fail scan_penguins "exit $?"
$SHEAF scan -q "$D/mpg.csv" --target origin -o "$T/mpg.sheaf" || fail scan_mpg "exit $?"
# A table with a long UTF-8 name and long UTF-8 values.
"$PY" - "$T/u.csv" <<'EOF2'
import sys
with open(sys.argv[1], "w", encoding="utf-8") as f:
    f.write("température_moyenne_du_capteur_principal,étiquette,k\n")
    for i in range(40):
        f.write(f"{i * 0.5},x{'é' * 40}ü{i % 3},{'ab'[i % 2]}\n")
EOF2
$SHEAF scan -q "$T/u.csv" --target k -o "$T/u.sheaf" || fail scan_utf8 "exit $?"

# widths FILE: the widest line in screen columns, escapes removed; "bad"
# when a line is not valid UTF-8.
widths() {
    "$PY" - "$1" <<'EOF2'
import re, sys
try:
    text = open(sys.argv[1], encoding="utf-8").read()
except UnicodeDecodeError:
    print("bad"); sys.exit()
print(max((len(re.sub(r"\x1b\[[0-9;]*[A-Za-z]", "", l)) for l in text.split("\n")), default=0))
EOF2
}
for s in pg mpg u; do
    for c in info screen corr pca; do
        for cols in 60 80 100; do
            for col in never always; do
                name="${s}_${c}_${cols}_color_${col}"
                COLUMNS=$cols $SHEAF $c "$T/$s.sheaf" --color $col >"$T/out" 2>"$T/err"
                rc=$?
                if [ $rc -ne 0 ]; then fail "$name" "exit $rc: $(err_text)"; continue; fi
                w=$(widths "$T/out")
                if [ "$w" = bad ]; then fail "$name" "output is not valid UTF-8"
                elif [ "$w" -le "$cols" ]; then pass "$name"
                else fail "$name" "a line of $w columns at COLUMNS=$cols"; fi
            done
        done
    done
done

# Colour on: escapes present, and the table columns still line up (the
# decision column starts at the same screen column on every row).
COLUMNS=80 $SHEAF screen "$T/pg.sheaf" --color always >"$T/c.txt"
COLUMNS=80 $SHEAF screen "$T/pg.sheaf" --color never >"$T/n.txt"
check color_has_escapes "no escape bytes with --color always" grep -q $'\033\\[' "$T/c.txt"
if grep -q $'\033' "$T/n.txt"; then fail color_never "escape bytes with --color never"; else pass color_never; fi
same=$("$PY" - "$T/c.txt" "$T/n.txt" <<'EOF2'
import re, sys
a = [re.sub(r"\x1b\[[0-9;]*[A-Za-z]", "", l) for l in open(sys.argv[1], encoding="utf-8")]
b = open(sys.argv[2], encoding="utf-8").readlines()
print("yes" if a == b else "no")
EOF2
)
check color_same_layout "the coloured table differs from the plain one once escapes are removed" [ "$same" = yes ]
if $SHEAF screen "$T/pg.sheaf" --color maybe >/dev/null 2>"$T/err"; then fail color_bad_word "accepted"
else [ $? -eq 2 ] && pass color_bad_word || fail color_bad_word "exit code not 2"; fi
# Piped without --color: no escapes (auto; stdout is not a terminal).
$SHEAF screen "$T/pg.sheaf" >"$T/p.txt"
if grep -q $'\033' "$T/p.txt"; then fail color_auto_pipe "escape bytes in a pipe"; else pass color_auto_pipe; fi

# Names whole at 80 columns: every column name of penguins appears uncut.
COLUMNS=80 $SHEAF info "$T/pg.sheaf" >"$T/i.txt"
for n in bill_length_mm bill_depth_mm flipper_length_mm body_mass_g; do
    check "name_whole_$n" "'$n' not printed whole at 80 columns" grep -q "^$n " "$T/i.txt"
done
check dropped_named "no line names the columns left out" grep -q "not shown at this width" "$T/i.txt"
# The long UTF-8 name stays whole at 80 columns; values are cut with the marker.
COLUMNS=80 $SHEAF info "$T/u.sheaf" >"$T/ui.txt"
check utf8_name_whole "the long name was cut" grep -q "^température_moyenne_du_capteur_principal " "$T/ui.txt"
COLUMNS=130 $SHEAF info "$T/u.sheaf" >"$T/ui130.txt"
check utf8_cut_marked "no U+2026 marker on a cut value" grep -q "xéé*…" "$T/ui130.txt"
# Without COLUMNS and not on a terminal: nothing is cut or dropped.
env -u COLUMNS $SHEAF info "$T/pg.sheaf" >"$T/wide.txt"
if grep -q "…\|not shown at this width" "$T/wide.txt"; then fail pipe_uncut "cut or dropped in a pipe"; else pass pipe_uncut; fi
# screen ends with the next step.
check screen_next_step "screen's text output does not end with the next step" \
    grep -q "^next: .*--write-kept" "$T/n.txt"
# JSON of values kept in part: valid UTF-8, and the top value marked cut.
$SHEAF info --format json "$T/u.sheaf" >"$T/u.json"
ok=$("$PY" - "$T/u.json" <<'EOF2'
import json, sys
try:
    d = json.loads(open(sys.argv[1], "rb").read().decode("utf-8"))
except (UnicodeDecodeError, ValueError) as e:
    print(f"invalid: {e}"[:200]); sys.exit()
c = [c for c in d["columns"] if c["name"] == "étiquette"][0]
t = c["top"][0]
ex = c["non_numeric_examples"][0]
print("yes" if t.get("cut") is True and t["value"].startswith("xéé") and ex.startswith("xéé") else f"no: {t} {ex}")
EOF2
)
check json_utf8_cut "$ok" [ "$ok" = yes ]

# --help fits 80 columns in a file or a pipe (no width known), and the width
# of a terminal (COLUMNS) when it has one: option help wraps under itself.
for c in "" scan info merge corr screen trim pca project page; do
    wide=$(env -u COLUMNS $SHEAF $c --help 2>&1 | awk 'length($0) > 80 { n++ } END { print n + 0 }')
    check "help_80.${c:-top}" "$wide lines wider than 80" [ "$wide" = 0 ]
done
wide=$(COLUMNS=64 $SHEAF screen --help | sed '/^examples:/,$d' |
    awk 'length($0) > 64 { n++ } END { print n + 0 }')
check help_columns_64.screen "$wide lines wider than 64 before the examples" [ "$wide" = 0 ]
# A command's description is prose: filled anew at the width, so no line
# starts indented and none ends early (the next line's first word would
# have fitted).  Wrapping its source lines one by one left a lone word on
# an indented line ("all\n  their\nsources").
for c in scan info merge corr screen trim pca project drift page; do
    for w in 60 80; do
        COLUMNS=$w $SHEAF $c --help >"$T/about" 2>&1
        bad=$("$PY" - "$T/about" "$w" <<'EOF2'
import sys
lines = open(sys.argv[1], encoding="utf-8").read().split("\n")
width = int(sys.argv[2])
about = lines[2:lines.index("options:") - 1] if "options:" in lines else []
bad = [l for l in about if l.startswith(" ")]
bad += [a for a, b in zip(about, about[1:]) if a and b and len(a) + 1 + len(b.split()[0]) <= width]
print(len(bad) if about else "no description")
EOF2
)
        check "help_description_filled.$c.$w" "$bad lines indented or ended early" [ "$bad" = 0 ]
    done
done
env -u COLUMNS $SHEAF screen --help >"$T/h80"
check help_wraps_under_itself "the --fdr help does not go on under column 30" \
    grep -qE '^ {29}below it is relevant' "$T/h80"
