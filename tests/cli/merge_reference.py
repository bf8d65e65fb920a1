# merge_reference.py CSV SUMMARY [TARGET]: compares sheaf's info/corr (--format json) of
# SUMMARY with pandas/numpy/scipy figures computed from CSV (the whole table):
# n, mean, variance (ddof 1), min, max, exact quantiles (numpy 'linear'),
# distinct (when exact), class rows, Pearson r (pairwise complete, pandas
# DataFrame.corr), and, for a class target, ANOVA F (scipy.stats.f_oneway).
# Means and variances are exact (Python's fractions): means to 1e-13 of
# |mean| + sd, variances to 1e-9 relative.  Prints one line per difference beyond 1e-9 relative.
import json, os, subprocess, sys, math
from fractions import Fraction
import numpy as np, pandas as pd
from scipy.stats import f_oneway
S = os.environ["SHEAF_BIN"]
csv, summ = sys.argv[1], sys.argv[2]
target = sys.argv[3] if len(sys.argv) > 3 else None
na = ["NA", "N/A", "null", "NULL", "None", "-", "?", ""]
raw = pd.read_csv(csv, dtype=str, keep_default_na=False)
def num(s):
    try:
        if s.strip() != s or s.lower() in [x.lower() for x in na]: return None
        v = float(s)
        return v if math.isfinite(v) else None
    except ValueError:
        return None
info = json.loads(subprocess.run([S, "info", "--format", "json", "--top-values", "100000", summ], capture_output=True).stdout)
corr = json.loads(subprocess.run([S, "corr", "--format", "json", summ], capture_output=True).stdout)
bad = []
def close(a, b, tol=1e-9):
    if a is None or b is None: return a is None and b is None
    return abs(a - b) <= tol * max(abs(a), abs(b), 1e-300)
nums = {}
for c in info["columns"]:
    name = c["name"]
    col = raw[name]
    vals = [num(x) for x in col]
    fin = [v for v in vals if v is not None]
    present = [x for x in col if x.lower() not in [y.lower() for y in na]]
    if c.get("n") != len(fin): bad.append("%s: n %s, ref %d" % (name, c.get("n"), len(fin)))
    if c.get("distinct_exact") and c.get("distinct") != len(set(present)):
        bad.append("%s: distinct %s, ref %d" % (name, c.get("distinct"), len(set(present))))
    if c["kind"] == "numeric" and len(fin) >= 2:
        nums[name] = vals
        exact = [Fraction(x) for x in col if num(x) is not None]
        mean = sum(exact) / len(exact)
        var = sum((x - mean) ** 2 for x in exact) / (len(exact) - 1)
        if abs(c["mean"] - float(mean)) > 1e-13 * (abs(float(mean)) + float(var) ** 0.5): bad.append("%s: mean %r, exact %r" % (name, c["mean"], float(mean)))
        if not close(c["variance"], float(var), 1e-9): bad.append("%s: variance %r, exact %r" % (name, c["variance"], float(var)))
        if c["min"] != min(fin) or c["max"] != max(fin): bad.append("%s: min/max" % name)
        if c.get("quantiles_exact"):
            for q, v in c["quantiles"].items():
                r = float(np.quantile(np.array(fin), float(q), method="linear"))
                if not close(v, r, 1e-12): bad.append("%s: quantile %s %r, numpy %r" % (name, q, v, r))
# Pearson r (pairwise complete) from exact fractions
cols = corr["columns"]
for i, a in enumerate(cols):
    for j, b in enumerate(cols):
        if j <= i or a not in nums or b not in nums: continue
        pr = [(Fraction(raw[a][k]), Fraction(raw[b][k])) for k in range(len(raw)) if nums[a][k] is not None and nums[b][k] is not None]
        if len(pr) < 3: continue
        mx = sum(p[0] for p in pr) / len(pr); my = sum(p[1] for p in pr) / len(pr)
        sxy = sum((p[0] - mx) * (p[1] - my) for p in pr); sxx = sum((p[0] - mx) ** 2 for p in pr); syy = sum((p[1] - my) ** 2 for p in pr)
        if sxx == 0 or syy == 0: continue
        r = float(sxy) / math.sqrt(float(sxx) * float(syy))
        v = corr["matrix"][i][j]
        if v is None or not close(v, r, 1e-9): bad.append("r(%s,%s) %r, exact %r" % (a, b, v, r))
if target and info.get("target", {}).get("levels"):
    ref = raw[target][[x.lower() not in [y.lower() for y in na] for x in raw[target]]].value_counts()
    got = {l["value"]: l["rows"] for l in info["target"]["levels"]}
    if got != {k: int(v) for k, v in ref.items()}: bad.append("target classes %r vs %r" % (got, dict(ref)))
for l in bad: print(l)
