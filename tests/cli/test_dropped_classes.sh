#!/usr/bin/env bash
# A numeric target scanned with classes until it has more than --max-classes
# distinct values, then as a regression target: the per-class counts kept
# until then become per-value target moments, and the rows after add to the
# same tables.  Both must be deviations from one frame, the target column's
# (its first number).  The per-value moments were once turned into
# deviations from 0 while the rows after the drop were taken from the value
# of the row that dropped the classes, so every ANOVA F of a text column
# against such a target was wrong (and the summary failed the decoder's
# range check on per-value target means).
#
# Reference: scipy.stats.f_oneway (Debian's python3-scipy) over pandas
# groups of the penguins dataset (shared/data/open, rows where both the
# column and body_mass_g are present); sheaf's F to 1e-9.  Also: the same
# F for --max-classes 5 (classes dropped after a few rows), for --task
# regress (never classes), and for three byte-range shards merged (a merge
# drops the classes of the shards that kept them).
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup dropped-classes python || exit 0
OPEN=""
for d in ../shared/data/open /work/shared/data/open; do [ -s "$d/penguins.csv" ] && OPEN=$d && break; done
[ -n "$OPEN" ] || { skip dropped_classes "no open datasets (shared/data/open)"; exit 0; }
P=$OPEN/penguins.csv
python_modules dropped_classes pandas scipy || exit 0

# f.py SCREEN_JSON DATA: prints the columns whose ANOVA F differs from
# scipy's (over the rows whose body_mass_g is a finite number).
cat >"$T/f.py" <<'EOF'
import json, sys
import pandas as pd
from scipy.stats import f_oneway
d = pd.read_csv(sys.argv[2])
s = json.load(open(sys.argv[1]))
seen = 0
for col in ("species", "island", "sex"):
    f = next(x for x in s["features"] if x["name"] == col)["tests"]["anova_f"]["stat"]
    sub = d[[col, "body_mass_g"]].dropna()
    sub = sub[sub["body_mass_g"].map(lambda v: v not in (float("inf"), float("-inf")))]
    ref = f_oneway(*[g["body_mass_g"].values for _, g in sub.groupby(col)]).statistic
    seen += 1
    if abs(f - ref) > 1e-9 * abs(ref):
        print("%s: F %r, scipy %r" % (col, f, ref))
if seen != 3:
    print("only %d columns compared" % seen)
EOF

# f_matches NAME SUMMARY: screen's F of the three text columns is scipy's.
f_matches() {
    local name=$1 sum=$2 data=${3:-$P}
    if ! "$SHEAF" screen "$sum" --format json >"$T/$name.json" 2>"$T/err"; then
        fail "dropped_classes.$name" "screen: $(err_text)"
        return
    fi
    "$PY" "$T/f.py" "$T/$name.json" "$data" >"$T/check" 2>&1
    check "dropped_classes.$name" "$(tr '\n' '|' <"$T/check")" test ! -s "$T/check"
}

for mc in 20 5; do
    if "$SHEAF" scan -q "$P" --target body_mass_g --max-classes $mc -o "$T/mc$mc.sheaf" 2>"$T/err"; then
        f_matches "max_classes_$mc" "$T/mc$mc.sheaf"
    else
        fail "dropped_classes.max_classes_$mc" "scan: $(err_text)"
    fi
done
if "$SHEAF" scan -q "$P" --target body_mass_g --task regress -o "$T/reg.sheaf" 2>"$T/err"; then
    f_matches regress_from_the_start "$T/reg.sheaf"
else
    fail dropped_classes.regress_from_the_start "scan: $(err_text)"
fi
ok=1
for i in 1 2 3; do
    "$SHEAF" scan -q "$P" --shard $i/3 --target body_mass_g --max-classes 20 -o "$T/sh$i.sheaf" \
        2>"$T/err" || ok=0
done
if [ $ok = 1 ] && "$SHEAF" merge "$T/sh1.sheaf" "$T/sh2.sheaf" "$T/sh3.sheaf" -o "$T/m.sheaf" 2>"$T/err"; then
    f_matches shards_merged "$T/m.sheaf"
else
    fail dropped_classes.shards_merged "scan or merge: $(err_text)"
fi
# A class that is infinity or NaN: it has no target cell once the classes
# are dropped, as a row whose target is not finite (the scan refused to drop
# such classes before, exit 3).  Two rows put first in a copy of penguins,
# so that they are classes before the drop.
{ head -n 1 "$P"; echo "Adelie,Dream,40.1,18.0,190,inf,MALE"; echo "Gentoo,Biscoe,47.0,15.0,215,nan,FEMALE"
  tail -n +2 "$P"; } >"$T/pinf.csv"
if "$SHEAF" scan -q "$T/pinf.csv" --target body_mass_g --max-classes 20 -o "$T/pinf.sheaf" 2>"$T/err"; then
    f_matches non_finite_classes_dropped "$T/pinf.sheaf" "$T/pinf.csv"
else
    fail dropped_classes.non_finite_classes_dropped "scan: $(err_text)"
fi

# A stray text cell in a target of measures (300 distinct values, one 'n/a '
# with a trailing space, so text): the target continues as a regression
# target whether the cell comes before the class limit or after it, and
# shards of the file merge (an early text class made the scan fail, exit 3,
# and the merge of the shards refused, exit 5).  Reference: Pearson r of x
# and y over the rows whose y is a number, scipy.stats.pearsonr; sheaf's r
# to 1e-12.  More than 1% text when the limit is met is a text target still.
cat >"$T/stray.py" <<'EOF2'
import sys
at, out = int(sys.argv[1]), sys.argv[2]
texts = [int(a) for a in sys.argv[3:]] or [at]
with open(out, "w") as f:
    f.write("y,x\n")
    for i in range(300):
        f.write(("n/a " if i in texts else str(i / 2)) + "," + str((i * 7) % 17 + i / 40) + "\n")
EOF2
cat >"$T/stray_r.py" <<'EOF2'
import json, sys
import pandas as pd
from scipy.stats import pearsonr
d = pd.read_csv(sys.argv[2], keep_default_na=False, dtype=str)
y = pd.to_numeric(d["y"], errors="coerce")
ok = y.notna()
ref = pearsonr(d["x"][ok].astype(float), y[ok]).statistic
s = json.load(open(sys.argv[1]))
r = s["features"][0]["tests"]["corr_f"]["r"]
if abs(r - ref) > 1e-12:
    print("r %r, scipy %r" % (r, ref))
EOF2
for at in 3 298; do
    "$PY" "$T/stray.py" $at "$T/stray$at.csv"
    if "$SHEAF" scan -q "$T/stray$at.csv" --target y -o "$T/stray$at.sheaf" 2>"$T/err" &&
        "$SHEAF" screen "$T/stray$at.sheaf" --format json >"$T/stray$at.json" 2>"$T/err"; then
        "$PY" "$T/stray_r.py" "$T/stray$at.json" "$T/stray$at.csv" >"$T/check" 2>&1
        check "dropped_classes.stray_text_in_row_$at" "$(tr '\n' '|' <"$T/check")" \
            holds '[ ! -s "$T/check" ] && [ "$(jget "$T/stray$at.sheaf" "[c for c in d[\"columns\"] if c[\"name\"] == \"y\"][0][\"non_numeric\"]")" = 1 ]'
    else
        fail "dropped_classes.stray_text_in_row_$at" "$(err_text)"
    fi
    ok=1
    for i in 1 2; do
        "$SHEAF" scan -q "$T/stray$at.csv" --shard $i/2 --target y -o "$T/stray$at.$i.sheaf" \
            2>"$T/err" || ok=0
    done
    if [ $ok = 1 ] && "$SHEAF" merge "$T/stray$at.1.sheaf" "$T/stray$at.2.sheaf" \
        -o "$T/stray$at.m.sheaf" 2>"$T/err"; then
        info_same "dropped_classes.stray_text_in_row_${at}_shards_merge" "$T/stray$at.sheaf" \
            "$T/stray$at.m.sheaf"
    else
        fail "dropped_classes.stray_text_in_row_${at}_shards_merge" "scan or merge: $(err_text)"
    fi
done
# Four text cells among the first 257 rows (1.6%): a text target at the limit.
"$PY" "$T/stray.py" 0 "$T/stray4.csv" 3 10 20 30
run "$SHEAF" scan -q "$T/stray4.csv" --target y -o "$T/stray4.sheaf"
check dropped_classes.text_share_past_one_percent_is_a_text_target "exit $RC: $(err_text)" \
    holds '[ $RC = 3 ] && grep -q "more than 256 classes" "$T/err" && [ ! -e "$T/stray4.sheaf" ]'
