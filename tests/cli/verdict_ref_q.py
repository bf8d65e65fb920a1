#!/usr/bin/python3
"""Reference for screen's q-values and primary p-values (tests/cli/test_screen_verdicts.sh).

usage: verdict_ref_q.py DATA.csv TARGET SCREEN.json
Prints one line per disagreement (nothing when all agree):
- p of the primary test against scipy (f_oneway for classification x numeric,
  chi2_contingency(correction=False) for classification x categorical,
  pearsonr for regression x numeric), relative 1e-6;
- q against statsmodels multipletests(method='fdr_bh') over the p-values
  sheaf prints for the features whose test holds (log10_p where p
  underflows is compared in log space), relative 1e-9.
"""
import json, math, sys
import numpy as np, pandas as pd
from scipy import stats
from statsmodels.stats.multitest import multipletests

csv, target, js = sys.argv[1:4]
df = pd.read_csv(csv, keep_default_na=False, na_values=['', 'NA', 'N/A', 'null', 'NULL', 'None', '-', '?'], dtype=str)
doc = json.load(open(js))
task = doc['target']['task']
y = df[target]
PRIMARY = {('classify', 'numeric'): 'anova_f', ('classify', 'categorical'): 'chi2',
           ('regress', 'numeric'): 'corr_f', ('regress', 'categorical'): 'anova_f'}
bad = []
names, logp = [], []
for f in doc['features']:
    t = f['tests'].get(PRIMARY[(task, f['kind'])])
    if t is None:
        if f['q'] is not None: bad.append(f"{f['name']}: q without a primary test")
        continue
    x = df[f['name']]
    ok = x.notna() & y.notna()
    ref = None
    if (task, f['kind']) == ('classify', 'numeric'):
        xv = pd.to_numeric(x[ok]); groups = [xv[y[ok] == c].values for c in sorted(y[ok].unique())]
        ref = stats.f_oneway(*[g for g in groups if len(g)]).pvalue
    elif (task, f['kind']) == ('classify', 'categorical'):
        tab = pd.crosstab(x[ok], y[ok]).values
        ref = stats.chi2_contingency(tab, correction=False)[1]
    elif (task, f['kind']) == ('regress', 'numeric'):
        ref = stats.pearsonr(pd.to_numeric(x[ok]), pd.to_numeric(y[ok]))[1]
    lp = t['log10_p']
    if lp is None: lp = -math.inf if t['p'] == 0 else math.log10(t['p'])
    if ref is not None and ref > 1e-300:
        if abs(10 ** lp - ref) > 1e-6 * ref + 1e-300:
            bad.append(f"{f['name']}: p {10**lp:.10g}, scipy {ref:.10g}")
    holds = f['test_holds']
    if not holds:
        if f['q'] is not None: bad.append(f"{f['name']}: test fails its rule but has q {f['q']}")
        continue
    names.append(f['name']); logp.append(lp)
if names:
    lp = np.array(logp)
    # statsmodels works on p; p-values below the double range are compared in log space
    # with the same step-up formula, written out here (Benjamini & Hochberg 1995).
    m = len(lp)
    if np.all(lp > -300):
        q = multipletests(10 ** lp, method='fdr_bh')[1]
        lq = np.log10(np.maximum(q, 1e-320))
    else:
        order = np.argsort(lp, kind='stable'); lq = np.empty(m); run = 0.0
        for k in range(m - 1, -1, -1):
            i = order[k]; run = min(run, lp[i] + math.log10(m / (k + 1))); lq[i] = run
        q = 10 ** lq
    by = {f['name']: f for f in doc['features']}
    for nm, qq, l in zip(names, q, lq):
        got = by[nm]['q']; gl = by[nm]['log10_q']
        if gl is not None and abs(gl - l) > 1e-9 * max(1, abs(l)):
            bad.append(f"{nm}: log10_q {gl:.12g}, reference {l:.12g}")
        elif gl is None and got not in (0, None):
            bad.append(f"{nm}: q {got} but no log10_q")
        elif got is not None and qq > 1e-300 and abs(got - qq) > 1e-9 * qq:
            bad.append(f"{nm}: q {got:.12g}, statsmodels {qq:.12g}")
print("\n".join(bad))
