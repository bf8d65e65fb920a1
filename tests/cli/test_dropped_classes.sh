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
