#!/usr/bin/python3
"""Writes the input tables of tests/cli/test_screen_verdicts.sh into DIR (usage: verdict_inputs.py DIR).

Invented data, fixed seeds; every table is small (at most 4,000 rows).
"""
import csv, os, sys
import numpy as np, pandas as pd

out = sys.argv[1]
os.makedirs(out, exist_ok=True)
P = lambda name: os.path.join(out, name)


def write_rows(name, rows):
    with open(P(name), 'w', newline='') as f:
        w = csv.DictWriter(f, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(rows)


# const.csv: one value spelled several ways, constant apart from missing cells
# or one value, constant text, constant in each half but not across them.
rng = np.random.default_rng(1)
rows = []
for i in range(200):
    y = 'a' if i % 2 else 'b'
    rows.append(dict(y=y, sig=f"{rng.normal() + (1.5 if y == 'a' else 0):.4f}",
                     one_onedot="1" if i % 2 else "1.0", zero_negzero="0" if i % 3 else "-0",
                     spaced="5" if i % 2 else " 5", e3="1e3" if i % 2 else "1000",
                     const_miss="7" if i % 5 else "", const_one_off="7" if i != 17 else "8",
                     const_text="alpha", two_nights="3" if i < 100 else "4"))
write_rows('const.csv', rows)

# miss.csv: 100 rows; exactly 50%, 49%, 55%, 54% missing; spellings, blank cells.
rows = []
for i in range(100):
    rows.append(dict(half="" if i < 50 else f"{i * 0.5}", below="" if i < 49 else f"{i * 0.5}",
                     m55="" if i < 55 else f"{np.sin(i * 0.7):.4f}", m54="" if i < 54 else f"{np.cos(i * 1.3):.4f}",
                     spell=["NA", "n/a", "NULL", "None", "-", "?", "na", "null"][i % 8] if i < 60 else f"{i * 0.5}",
                     ws="   " if i < 60 else f"{i * 0.5}", val=f"{i * 0.25}"))
write_rows('miss.csv', rows)

# dup.csv: numeric copies (one row off, reformatted, negated, scaled, with
# missing cells elsewhere) and text copies (exact, case, trailing space).
rng = np.random.default_rng(7)
rows = []
for i in range(300):
    x = rng.normal(10, 2); z = rng.normal()
    cat = rng.choice(['red', 'green', 'blue', 'gray'])
    rows.append(dict(x=f"{x:.3f}", x_fmt=f"{x:.3f}" if i % 2 else f"{x:.3f}0",
                     x_e=f"{x:.3f}" if i % 2 else f"{x / 10:.4f}e1",
                     x_neg=f"{-x:.3f}", x_scaled=f"{3 * round(x, 3) + 1:.3f}",
                     x_miss=f"{x:.3f}" if i % 7 else "", x_oneoff=f"{x:.3f}" if i != 5 else f"{x + 0.5:.3f}",
                     z=f"{z:.3f}", z_miss=f"{z:.3f}" if i % 5 else "",
                     cat=cat, cat_copy=cat, cat_case=cat.upper() if i % 2 else cat,
                     cat_sp=(cat + " ") if i % 3 == 0 else cat))
write_rows('dup.csv', rows)

# late.csv: 4,000 rows; 'code' is 30 distinct codes and then '0' (99.25%),
# 'code_late' is '0' first and the 30 codes last.  Scanned with --max-levels 16.
rows = [dict(code=str(100 + i) if i < 30 else "0", code_late=str(100 + i) if i >= 3970 else "0",
             v=str(i % 7)) for i in range(4000)]
write_rows('late.csv', rows)

# idN.csv: identifiers and look-alikes, N = 19, 20, 1100.
for n in (19, 20, 1100):
    rng = np.random.default_rng(3)
    rows = []
    for i in range(n):
        rows.append(dict(hexid=f"{rng.integers(0, 2**48):012x}", step3=str(5000 + i * 3),
                         uf=f"{rng.normal(50, 10):.6f}",
                         ts=f"2024-06-01T{(i // 3600) % 24:02d}:{(i // 60) % 60:02d}:{i % 60:02d}",
                         epoch=str(1717200000 + i), epoch_ms=f"{1717200000 + i + rng.random():.3f}",
                         near96=str(i if i % 25 else i - 1), near93=str(i if i % 15 else i - 1),
                         v=str(rng.integers(0, 5))))
    write_rows(f'id{n}.csv', rows)

# hll.csv: 3,000 rows, columns of 2,820 .. 2,880 distinct integers (past the
# 1,024-entry value table: HyperLogLog estimates near the 95% ID-like share).
rng = np.random.default_rng(11)
cols = {}
for d in range(2820, 2881, 6):
    base = rng.choice(10**9, d, replace=False)
    cols[f"d{d}"] = rng.permutation(np.concatenate([base, rng.choice(base, 3000 - d)]))
pd.DataFrame(cols).to_csv(P('hll.csv'), index=False)

# sel.csv: classification; features of graded strength, a copy, an exact
# -2x twin, a column whose classes lie apart, a many-level text column
# (Cochran fails), flagged columns.
rng = np.random.default_rng(5)
n = 400
y = rng.choice(['ok', 'late', 'lost'], n, p=[.5, .3, .2])
yc = pd.Series(y).map({'ok': 0, 'late': 1, 'lost': 2}).values
d = {'y': y}
for j, eff in enumerate([0, 0, 0, 0.05, 0.1, 0.15, 0.2, 0.3, 0.5, 1.0]):
    d[f"f{j}"] = np.round(rng.normal(size=n) + eff * yc, 4)
d['f9_copy'] = d['f9']
d['f3_twin'] = np.round(-d['f3'] * 2, 4)
d['mirror'] = np.round(yc * 10 + rng.normal(size=n) * 0.1, 3)
d['manylev'] = [f"L{rng.integers(0, 150)}" for _ in range(n)]
d['cat_sig'] = [rng.choice(['a', 'b']) if c == 0 else rng.choice(['a', 'b', 'b']) for c in yc]
d['cat_null'] = rng.choice(['u', 'v', 'w'], n)
d['const'] = 1
d['sparse'] = np.where(rng.random(n) < 0.6, np.nan, rng.normal(size=n))
pd.DataFrame(d).to_csv(P('sel.csv'), index=False)

# reg.csv: regression on t.
rng = np.random.default_rng(21)
n = 500
t = np.round(rng.normal(100, 15, n), 2)
d = {'t': t}
for j, eff in enumerate([0, 0, 0.02, 0.05, 0.1, 0.2, 0.4]):
    d[f"g{j}"] = np.round(rng.normal(size=n) + eff * (t - 100) / 15, 4)
d['leak'] = np.round(t * 2 + rng.normal(size=n) * 0.2, 3)
d['lev'] = [f"s{rng.integers(0, 4)}" for _ in range(n)]
d['lev_sig'] = np.where(t > 100, 'hi', 'lo')
d['lev_thin'] = [f"u{rng.integers(0, 300)}" for _ in range(n)]
d['g6_miss'] = np.where(rng.random(n) < 0.3, np.nan, d['g6'])
pd.DataFrame(d).to_csv(P('reg.csv'), index=False)

# tie.csv: tie_b, tie_a, tie_c hold the same values within each class (a
# permutation inside each class), so their ANOVA F, p, q, MI are equal
# exactly; column order puts tie_b first.
rng = np.random.default_rng(9)
n = 300
y = rng.choice(['A', 'B'], n)
a = np.round(rng.normal(size=n) + (y == 'A') * 0.8, 3)
perm = []
for _ in range(2):
    b = a.copy()
    for c in ['A', 'B']:
        idx = np.where(y == c)[0]
        b[idx] = a[rng.permutation(idx)]
    perm.append(b)
pd.DataFrame({'noise': np.round(rng.normal(size=n), 3), 'tie_b': perm[0], 'y': y, 'tie_a': a,
              'tie_c': perm[1]}).to_csv(P('tie.csv'), index=False)
