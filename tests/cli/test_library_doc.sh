#!/usr/bin/env bash
# docs/library.md's example program, and the public header on its own.
#
# The example between <!-- example:begin --> and <!-- example:end --> is
# extracted, compiled with `cc -Iinclude` (no -Isrc) against libsheaf.a and
# the libraries the Makefile links (its LDLIBS), and run on an invented table
# of bakery batches that this script writes.  Its output is checked against
# figures computed independently with Python's standard library (csv,
# statistics.fmean; the one-way ANOVA F and the chi-squared statistic
# written out from their textbook formulas), not with sheaf.
# include/sheaf.h must compile alone with -std=c11 -Wall -Wextra -pedantic
# and include nothing from src/.
cd "$(dirname "$0")/../.." || exit 1
. tests/cli/common.sh
cli_setup library python || exit 0
CC=${CC:-cc}
if [ ! -f libsheaf.a ]; then fail libsheaf "libsheaf.a not found (run make first)"; exit 0; fi
LIBS=$(printf 'include Makefile\n_print_ldlibs:\n\t@echo $(LDLIBS)\n' |
       make -s --no-print-directory -f - _print_ldlibs 2>/dev/null)
check ldlibs_read "no LDLIBS from the Makefile" [ -n "$LIBS" ]

# ---- the header alone -------------------------------------------------------
printf '#include "sheaf.h"\nint main(void) { return sheaf_version() == 0; }\n' >"$T/alone.c"
run "$CC" -std=c11 -Wall -Wextra -pedantic -Werror -Iinclude -c "$T/alone.c" -o "$T/alone.o"
check header_alone_c11_pedantic "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
# What it pulls in, as the preprocessor sees it: nothing under src/.
run "$CC" -std=c11 -Iinclude -M "$T/alone.c"
check header_dependencies_listed "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
if grep -q 'src/' "$T/out"; then
    fail header_includes_nothing_from_src "$(grep -o '[^ ]*src/[^ ]*' "$T/out" | head -n 3 | tr '\n' ' ')"
else
    pass header_includes_nothing_from_src
fi
others=$(grep -E '^[[:space:]]*#[[:space:]]*include' include/sheaf.h |
         grep -vE '<(stddef|stdint|stdio)\.h>')
check header_only_standard_includes "includes: $others" [ -z "$others" ]
# Every declared function is sheaf_-prefixed and marked SHEAF_API.
bad=$(grep -E '^[A-Za-z_].*\(' include/sheaf.h | grep -vE '^(SHEAF_API|typedef|#)' | head -n 3)
check header_calls_marked "unmarked: $bad" [ -z "$bad" ]
bad=$(grep -E '^SHEAF_API' include/sheaf.h | grep -vE '[ *]sheaf_[a-z0-9_]+\(' | head -n 3)
check header_calls_prefixed "not sheaf_: $bad" [ -z "$bad" ]

# ---- the example --------------------------------------------------------------
awk '/<!-- example:begin -->/ { on = 1; next } /<!-- example:end -->/ { on = 0 }
     on && /^```/ { next } on { print }' docs/library.md >"$T/example.c"
lines=$(wc -l <"$T/example.c")
check example_found "extracted $lines lines" holds '[ "$lines" -ge 20 ] && [ "$lines" -le 45 ]'
# shellcheck disable=SC2086
run "$CC" -std=c11 -Wall -Wextra -Werror -Iinclude "$T/example.c" libsheaf.a $LIBS -o "$T/example"
check example_compiles "exit $RC: $(err_text)" [ "$RC" -eq 0 ] || exit 0

# 400 batches (seed 12: one whose statistics are all far from the edge, see
# below): an ID, oven temperature (drives burning), proofing minutes and
# flour (no relation to it), room temperature (a weaker relation, 20 cells
# missing as NA).  random.random is Mersenne Twister, the same on every
# Python 3.
"$PY" - "$T/bakery.csv" <<'PYEOF'
import random, sys
rng = random.Random(12)
with open(sys.argv[1], "w") as f:
    f.write("batch,oven_c,proof_min,room_c,flour,burnt\n")
    for i in range(1, 401):
        oven = round(200 + 40 * rng.random(), 1)
        proof = round(30 + 60 * rng.random(), 1)
        flour = rng.choice(["rye", "spelt", "wheat"])
        burnt = "yes" if oven + 12 * (rng.random() - 0.5) > 222 else "no"
        room = round(18 + 6 * rng.random() + (1.5 if burnt == "yes" else 0), 2)
        room_text = "NA" if i % 20 == 7 else repr(room)
        f.write(f"{i},{oven!r},{proof!r},{room_text},{flour},{burnt}\n")
PYEOF

run "$T/example" "$T/bakery.csv" burnt oven_c
check example_runs "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
cp "$T/out" "$T/example.out"

# The reference: rows, the mean of oven_c, and the columns a screen at q 0.05
# must keep, from the standard library alone.  The F and chi-squared
# statistics are far from the edge (F(1, ~390) above 30 has p < 1e-7, below
# 1.5 has p > 0.2; chi-squared with 2 df below 3 has p > 0.2), so the
# decision does not depend on the Benjamini-Hochberg step; a fixture whose
# statistics fell between is refused rather than judged.
"$PY" - "$T/bakery.csv" >"$T/want" <<'PYEOF'
import csv, statistics, sys
rows = list(csv.DictReader(open(sys.argv[1], newline="")))
print("rows", len(rows))
print("mean oven_c %.6f" % statistics.fmean(float(r["oven_c"]) for r in rows))
def anova_f(col):
    groups = {}
    for r in rows:
        if r[col] != "NA":
            groups.setdefault(r["burnt"], []).append(float(r[col]))
    allx = [x for g in groups.values() for x in g]
    m, k, n = statistics.fmean(allx), len(groups), len(allx)
    ssb = sum(len(g) * (statistics.fmean(g) - m) ** 2 for g in groups.values())
    ssw = sum(sum((x - statistics.fmean(g)) ** 2 for x in g) for g in groups.values())
    return (ssb / (k - 1)) / (ssw / (n - k))
def chi2(col):
    n = len(rows)
    a = {}; b = {}; ab = {}
    for r in rows:
        a[r[col]] = a.get(r[col], 0) + 1; b[r["burnt"]] = b.get(r["burnt"], 0) + 1
        ab[(r[col], r["burnt"])] = ab.get((r[col], r["burnt"]), 0) + 1
    return sum((ab.get((x, y), 0) - a[x] * b[y] / n) ** 2 / (a[x] * b[y] / n) for x in a for y in b)
kept = []
for col in ["oven_c", "proof_min", "room_c"]:
    f = anova_f(col)
    if f > 30: kept.append(col)
    elif f >= 1.5: sys.exit("fixture: F of %s is %g, too near the edge" % (col, f))
c = chi2("flour")
if c >= 3: sys.exit("fixture: chi-squared of flour is %g, too near the edge" % c)
# batch: 400 distinct integers in 400 rows, an ID (sheaf's rule: distinct
# share >= 0.95 of an integer column), never kept.
for col in sorted(kept): print("kept", col)
PYEOF
PYRC=$?
check reference_computed "python exit $PYRC: $(tr '\n' ' ' <"$T/want")" [ "$PYRC" -eq 0 ] || exit 0

head -n 1 "$T/example.out" >"$T/got_rows"
check rows_match "got '$(cat "$T/got_rows")', want '$(head -n 1 "$T/want")'" \
    [ "$(cat "$T/got_rows")" = "$(head -n 1 "$T/want")" ]
got_mean=$(sed -n 's/^mean oven_c //p' "$T/example.out")
want_mean=$(sed -n 's/^mean oven_c //p' "$T/want")
check mean_matches_statistics_fmean "got $got_mean, want $want_mean" \
    awk -v g="$got_mean" -v w="$want_mean" 'BEGIN { d = g - w; exit !(g != "" && d < 2e-6 && d > -2e-6) }'
grep '^kept ' "$T/example.out" | awk '{ print $1, $2 }' | sort >"$T/got_kept"
grep '^kept ' "$T/want" >"$T/want_kept"
check kept_columns_match "got '$(tr '\n' ' ' <"$T/got_kept")', want '$(tr '\n' ' ' <"$T/want_kept")'" \
    cmp -s "$T/got_kept" "$T/want_kept"
check kept_ranked_from_one "ranks: $(grep -o 'rank [0-9]*' "$T/example.out" | tr '\n' ' ')" \
    grep -q '^kept .* rank 1$' "$T/example.out"

# The example's error path: a missing file, one line naming it, exit 1.
run "$T/example" "$T/no-such-bakery.csv" burnt oven_c
check example_missing_file "exit $RC: $(err_text)" \
    eval '[ "$RC" -eq 1 ] && [ "$(wc -l <"$T/err")" -eq 1 ] && grep -q "no-such-bakery.csv" "$T/err"'
run "$T/example" "$T/bakery.csv" burnt oven_temp
check example_unknown_column "exit $RC: $(err_text)" \
    eval '[ "$RC" -eq 1 ] && grep -q "oven_c" "$T/err"'
