#!/usr/bin/python3
"""End-to-end checks of `sheaf screen`: the relevance tests, mutual
information, Benjamini-Hochberg q-values, the column flags, the decisions on
the demo table's planted structure and the ranking options, against
reference computations.

References, named again beside each check:
  - scipy 1.10 from Debian's packages: scipy.stats.f_oneway (one-way ANOVA F),
    scipy.stats.pearsonr (r and its p-value), scipy.stats.chi2_contingency
    (correction=False) and scipy.stats.contingency.association
    (method='cramer');
  - statsmodels 0.13 from Debian's packages: statsmodels.stats.oneway.
    anova_oneway(use_var='unequal') (Welch's F) and statsmodels.stats.
    multitest.multipletests(method='fdr_bh');
  - pandas 1.5 from Debian's packages: pandas.crosstab for contingency tables,
    with a plug-in mutual information computed here in numpy;
  - the certified F statistics of the NIST StRD one-way ANOVA datasets
    (../shared/data/nist_anova, Simon & Lesage 1989).

Data: ../shared/data/open/*.csv (or $SHEAF_DATA/open), the Longley data shipped
by Debian's python3-statsmodels, the NIST StRD ANOVA files, tables generated
here with a fixed seed and the demo generator's table (build/demo/generate,
whose planted structure demo/README.md describes).  Missing data gives
"SKIP name: reason" lines.  Prints one "PASS name" / "FAIL name: why" line per
check and exits 0.

Tolerances: statistics and degrees of freedom to 1e-9 relative, p-values to
1e-6 relative or 1e-300 absolute (tiny p-values), r to 1e-12 absolute, mutual
information to 1e-10 relative (1e-13 absolute), q-values to 1e-9 relative or
1e-300 absolute.
"""
import json
import math
import os
import re
import shutil
import subprocess
import sys
import tempfile
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), ".."))
from refcheck import check, counts, fail, ok, skip  # noqa: E402  (shared PASS/FAIL lines)
from refcheck import DATA, MISSING, NONFINITE, NUMBER, ROOT, SHEAF, SM, run  # noqa: E402,F401

import numpy as np
import pandas as pd
from scipy import stats
from scipy.stats import contingency
from statsmodels.stats.multitest import multipletests
from statsmodels.stats.oneway import anova_oneway

os.chdir(ROOT)
GENERATE = "build/demo/generate"


STAT_REL = 1e-9
P_REL, P_ABS = 1e-6, 1e-300


def close(got, want, rel, absolute=0.0):
    """got within rel of want (relative) or within absolute."""
    if got is None or want is None:
        return False
    if math.isinf(want) or math.isinf(got):
        return got == want
    d = abs(got - want)
    return d <= rel * abs(want) or d <= absolute


TMP = tempfile.mkdtemp(prefix="sheaf-screen-")
_n = [0]


def new_path(ext=".sheaf"):
    _n[0] += 1
    return os.path.join(TMP, "s%d%s" % (_n[0], ext))


def scan_file(paths, extra=()):
    """Scans into a new summary; returns (path or None, error text)."""
    out = new_path()
    rc, _, err = run([SHEAF, "scan", "-q"] + list(paths) + ["-o", out] + list(extra))
    if rc != 0:
        return None, "scan exit %d: %s" % (rc, err)
    return out, ""


def screen_json(summary, extra=()):
    """`sheaf screen --format json`; returns (dict or None, error text)."""
    rc, js, err = run([SHEAF, "screen", summary, "--format", "json"] + list(extra))
    if rc != 0:
        return None, "screen exit %d: %s" % (rc, err)
    try:
        return json.loads(js), ""
    except ValueError as e:
        return None, "screen printed bad JSON: %s" % e


def scan_screen(tag, paths, scan_extra=(), screen_extra=()):
    """Scan then screen; a failure is reported under tag and gives None."""
    s, err = scan_file(paths, scan_extra)
    if s is None:
        fail(tag + ".scan", err)
        return None, None
    js, err = screen_json(s, screen_extra)
    if js is None:
        fail(tag + ".screen", err)
        return None, s
    return js, s


def features_by_name(js):
    return {f["name"]: f for f in js["features"]}


def raw_table(path):
    """pandas (Debian): every cell as its raw text, nothing converted."""
    return pd.read_csv(path, dtype=str, keep_default_na=False, na_filter=False)


def numeric_series(raw, name):
    """The cells sheaf parses as numbers, NaN elsewhere."""
    col = []
    for s in raw[name].tolist():
        t = s.strip(" ")
        col.append(float(t) if t not in MISSING and NUMBER.match(t) else np.nan)
    return pd.Series(col, index=raw.index, dtype=float)


def text_series(raw, name):
    """The raw text, None where the cell is a missing spelling."""
    return raw[name].map(lambda s: None if s.strip(" ") in MISSING else s.strip(" "))


# ---------------------------------------------------------------------------
# Every screen result: q-values vs statsmodels multipletests

def primary_p(js, f):
    """The p-value behind q: ANOVA F for a numeric feature of a class target,
    chi-squared for a categorical one; the F test of r for a numeric feature
    of a continuous target, ANOVA F for a categorical one."""
    task = (js.get("target") or {}).get("task")
    t = f["tests"]
    if task == "classify":
        key = "anova_f" if f["kind"] == "numeric" else "chi2"
    elif task == "regress":
        key = "corr_f" if f["kind"] == "numeric" else "anova_f"
    else:
        return None
    return t[key]["p"] if key in t else None


def check_bh(tag, js):
    """q-values vs statsmodels.stats.multitest.multipletests(method='fdr_bh')
    (Debian) over the p-values the same JSON reports."""
    names, ps, bad = [], [], []
    for f in js["features"]:
        p = primary_p(js, f)
        if p is not None and not f["test_holds"]:
            # a test that fails its validity rule takes no part in the q-values
            if f["q"] is not None or f["decision"] == "keep":
                bad.append("%s: unreliable test with q %r, %s" % (f["name"], f["q"], f["decision"]))
            continue
        if p is None:
            if f["q"] is not None:
                bad.append("%s: q %r without a primary test" % (f["name"], f["q"]))
            continue
        names.append(f["name"])
        ps.append(p)
    if not ps:
        return check(tag + ".bh_q_vs_statsmodels", not bad, "; ".join(bad) or "no tested feature")
    want = multipletests(np.array(ps), method="fdr_bh")[1]
    byname = features_by_name(js)
    for n, w in zip(names, want):
        g = byname[n]["q"]
        if not close(g, float(w), 1e-9, P_ABS):
            bad.append("%s: sheaf q %r, statsmodels %r" % (n, g, float(w)))
    check("%s.bh_q_vs_statsmodels.%d_tests" % (tag, len(ps)), not bad, "; ".join(bad[:3]))


# ---------------------------------------------------------------------------
# Data

def open_sets():
    out = {}
    for tag in ("penguins", "mpg", "iris", "tips"):
        p = os.path.join(DATA, "open", tag + ".csv")
        if os.path.exists(p):
            out[tag] = p
        else:
            skip(tag, "%s not found" % p)
    p = os.path.join(SM, "longley", "longley.csv")
    if os.path.exists(p):
        out["longley"] = p
    else:
        skip("longley", "%s not found (python3-statsmodels)" % p)
    return out


# ---------------------------------------------------------------------------
# Classification target, numeric features: ANOVA F and Welch's F

def compare_class_numeric(tag, path, target, js):
    raw = raw_table(path)
    y = text_series(raw, target)
    byname = features_by_name(js)
    numeric = [f["name"] for f in js["features"] if f["kind"] == "numeric"]
    if not check(tag + ".has_numeric_features", numeric, "no numeric feature in %s" % list(byname)):
        return
    for name in numeric:
        f = byname[name]
        x = numeric_series(raw, name)
        keep = x.notna() & y.notna()  # rows with a missing feature or class are left out
        levels = sorted(set(y[keep]))
        groups = [x[keep & (y == c)].to_numpy() for c in levels]
        t = tag + "." + name
        if f["flags"]:
            fail(t + ".tested", "flagged %s, not tested" % f["flags"])
            continue
        a = f["tests"].get("anova_f")
        # scipy.stats.f_oneway (Debian)
        want = stats.f_oneway(*groups)
        df1, df2 = len(groups) - 1, int(keep.sum()) - len(groups)
        if a is None:
            fail(t + ".anova_f_vs_scipy", "no anova_f")
        else:
            check(t + ".anova_f_vs_scipy",
                  close(a["stat"], float(want.statistic), STAT_REL)
                  and a["df1"] == df1 and a["df2"] == df2
                  and close(a["p"], float(want.pvalue), P_REL, P_ABS),
                  "sheaf F %r df %r,%r p %r; scipy F %r df %d,%d p %r"
                  % (a["stat"], a["df1"], a["df2"], a["p"], float(want.statistic), df1, df2,
                     float(want.pvalue)))
        w = f["tests"].get("welch_f")
        # statsmodels.stats.oneway.anova_oneway(use_var='unequal') (Debian)
        ww = anova_oneway(groups, use_var="unequal")
        wdf1, wdf2 = (float(v) for v in ww.df)
        if w is None:
            fail(t + ".welch_f_vs_statsmodels", "no welch_f")
        else:
            check(t + ".welch_f_vs_statsmodels",
                  close(w["stat"], float(ww.statistic), STAT_REL)
                  and close(w["df1"], wdf1, STAT_REL) and close(w["df2"], wdf2, STAT_REL)
                  and close(w["p"], float(ww.pvalue), P_REL, P_ABS),
                  "sheaf F %r df %r,%r p %r; statsmodels F %r df %r,%r p %r"
                  % (w["stat"], w["df1"], w["df2"], w["p"], float(ww.statistic), wdf1, wdf2,
                     float(ww.pvalue)))


def test_class_numeric(sets):
    # mpg cylinders: a numeric column taken as classes
    for tag, target, extra in (("iris", "species", []), ("penguins", "species", []),
                               ("tips", "day", []), ("mpg", "cylinders", ["--task", "classify"]),
                               ("penguins", "sex", [])):  # 11 rows without a class
        if tag not in sets:
            continue
        name = "anova.%s_by_%s" % (tag, target)
        js, _ = scan_screen(name, [sets[tag]], ["--target", target] + extra)
        if js is None:
            continue
        check(name + ".task_classify", js["target"]["task"] == "classify",
              "target %r" % js["target"])
        compare_class_numeric(name, sets[tag], target, js)
        check_bh(name, js)


# ---------------------------------------------------------------------------
# Regression target: F test of Pearson r; ANOVA F of the target across levels

def compare_regress(tag, path, target, js, categorical_checks, flagged=None):
    """flagged: numeric features expected flagged (name: flags), not tested."""
    raw = raw_table(path)
    y = numeric_series(raw, target)
    byname = features_by_name(js)
    check(tag + ".task_regress", js["target"]["task"] == "regress", "target %r" % js["target"])
    numeric = [f["name"] for f in js["features"] if f["kind"] == "numeric"]
    for name in numeric:
        f = byname[name]
        t = tag + "." + name
        if flagged and name in flagged:
            check(t + ".flagged_" + "_".join(flagged[name]), f["flags"] == flagged[name],
                  "flags %s, want %s" % (f["flags"], flagged[name]))
            continue
        if f["flags"]:
            fail(t + ".tested", "flagged %s, not tested" % f["flags"])
            continue
        x = numeric_series(raw, name)
        keep = x.notna() & y.notna()
        n = int(keep.sum())
        # scipy.stats.pearsonr (Debian), pairwise-complete rows
        pr = stats.pearsonr(x[keep].to_numpy(), y[keep].to_numpy())
        r = float(pr.statistic)
        want_f = r * r * (n - 2) / (1 - r * r)
        c = f["tests"].get("corr_f")
        if c is None:
            fail(t + ".corr_f_vs_scipy_pearsonr", "no corr_f")
            continue
        check(t + ".corr_f_vs_scipy_pearsonr",
              abs(c["r"] - r) <= 1e-12 and close(c["stat"], want_f, STAT_REL)
              and c["df1"] == 1 and c["df2"] == n - 2
              and close(c["p"], float(pr.pvalue), P_REL, P_ABS),
              "sheaf r %r F %r df %r,%r p %r; scipy r %r F %r df 1,%d p %r"
              % (c["r"], c["stat"], c["df1"], c["df2"], c["p"], r, want_f, n - 2,
                 float(pr.pvalue)))
    for name in categorical_checks:
        f = byname.get(name)
        t = tag + "." + name
        if f is None or f["kind"] != "categorical":
            fail(t + ".anova_f_vs_scipy", "no categorical feature %s" % name)
            continue
        x = text_series(raw, name)
        keep = x.notna() & y.notna()
        levels = sorted(set(x[keep]))
        groups = [y[keep & (x == v)].to_numpy() for v in levels]
        # scipy.stats.f_oneway (Debian): the target grouped by the feature's levels
        want = stats.f_oneway(*groups)
        df1, df2 = len(groups) - 1, int(keep.sum()) - len(groups)
        a = f["tests"].get("anova_f")
        if a is None:
            fail(t + ".anova_f_vs_scipy", "no anova_f (flags %s)" % f["flags"])
            continue
        check(t + ".anova_f_vs_scipy",
              close(a["stat"], float(want.statistic), STAT_REL)
              and a["df1"] == df1 and a["df2"] == df2
              and close(a["p"], float(want.pvalue), P_REL, P_ABS),
              "sheaf F %r df %r,%r p %r; scipy F %r df %d,%d p %r"
              % (a["stat"], a["df1"], a["df2"], a["p"], float(want.statistic), df1, df2,
                 float(want.pvalue)))


def test_regress(sets):
    cases = [("tips", "tip", ["day", "sex", "smoker", "time"]),
             ("mpg", "mpg", ["origin", "name"]),
             ("longley", "TOTEMP", []),
             ("penguins", "body_mass_g", ["species", "island", "sex"]),
             # integer targets with few values (kept as classes, tested as continuous)
             ("tips", "size", ["day", "sex", "smoker", "time"]),
             ("mpg", "cylinders", ["origin"]),
             # 6 rows without a target value
             ("mpg", "horsepower", ["origin", "name"])]
    for tag, target, cats in cases:
        if tag not in sets:
            continue
        name = "regress.%s_by_%s" % (tag, target)
        js, _ = scan_screen(name, [sets[tag]], ["--target", target, "--task", "regress"])
        if js is None:
            continue
        # longley (16 rows): Obs 1..16 and YEAR 1947..1962 are runs of
        # consecutive integers, one per row: ID-like by the one rule of
        # screen and pca (stats/validity.h), so flagged and not tested
        flagged = {"Obs": ["names_rows"], "YEAR": ["names_rows"]} if tag == "longley" else None
        compare_regress(name, sets[tag], target, js, cats, flagged)
        check_bh(name, js)


# ---------------------------------------------------------------------------
# Categorical feature, class target: chi-squared, Cramer's V, mutual information

def plug_in_mi(table):
    """numpy plug-in mutual information of a count table (rows = feature
    levels, columns = classes), Miller-Madow corrected, and normalised by the
    target entropy; also the non-empty row and column counts."""
    t = np.asarray(table, dtype=float)
    t = t[t.sum(axis=1) > 0][:, t.sum(axis=0) > 0]
    n = t.sum()
    pxy = t / n
    px = pxy.sum(axis=1, keepdims=True)
    py = pxy.sum(axis=0, keepdims=True)
    nz = pxy > 0
    mi = float(np.sum(pxy[nz] * np.log(pxy[nz] / (px @ py)[nz])))
    r, c = t.shape
    cells = int(nz.sum())
    mm = mi + ((r - 1) + (c - 1) - (cells - 1)) / (2 * n)
    hy = float(-np.sum(py * np.log(py)))
    return mi, mm, mi / hy, r, c


def compare_categorical_class(tag, path, target, js, names):
    raw = raw_table(path)
    y = text_series(raw, target)
    byname = features_by_name(js)
    for name in names:
        t = tag + "." + name
        f = byname.get(name)
        if f is None or f["kind"] != "categorical":
            fail(t + ".chi2_vs_scipy", "no categorical feature %s" % name)
            continue
        x = text_series(raw, name)
        keep = x.notna() & y.notna()
        # pandas.crosstab (Debian): levels x classes
        ct = pd.crosstab(x[keep], y[keep]).to_numpy()
        # scipy.stats.chi2_contingency(correction=False) (Debian)
        chi2, p, dof, _ = stats.chi2_contingency(ct, correction=False)
        # scipy.stats.contingency.association(method='cramer') (Debian)
        v = float(contingency.association(ct, method="cramer", correction=False))
        c = f["tests"].get("chi2")
        if c is None:
            fail(t + ".chi2_vs_scipy", "no chi2 (flags %s)" % f["flags"])
        else:
            check(t + ".chi2_vs_scipy",
                  close(c["stat"], float(chi2), STAT_REL) and c["df"] == dof
                  and close(c["p"], float(p), P_REL, P_ABS),
                  "sheaf %r df %r p %r; scipy %r df %d p %r"
                  % (c["stat"], c["df"], c["p"], float(chi2), dof, float(p)))
            check(t + ".cramers_v_vs_scipy", close(c["cramers_v"], v, STAT_REL),
                  "sheaf %r, scipy %r" % (c["cramers_v"], v))
        m = f["tests"].get("mutual_information")
        mi, mm, nm, r, cc = plug_in_mi(ct)
        if m is None:
            fail(t + ".mi_vs_numpy_plug_in", "no mutual_information")
            continue
        check(t + ".mi_vs_numpy_plug_in",
              close(m["nats"], mi, 1e-10, 1e-13) and close(m["nats_corrected"], mm, 1e-10, 1e-13)
              and close(m["normalized"], nm, 1e-10, 1e-13)
              and m["feature_bins"] == r and m["target_bins"] == cc,
              "sheaf %r; numpy nats %r corrected %r normalized %r bins %d x %d"
              % (m, mi, mm, nm, r, cc))


def test_categorical_class(sets):
    # penguins: 11 rows without sex, left out of its table
    for tag, target, names in (("penguins", "species", ["island", "sex"]),
                               ("tips", "sex", ["day", "time", "smoker"]),
                               ("penguins", "sex", ["species", "island"])):
        if tag not in sets:
            continue
        name = "chi2.%s_by_%s" % (tag, target)
        js, _ = scan_screen(name, [sets[tag]], ["--target", target])
        if js is None:
            continue
        compare_categorical_class(name, sets[tag], target, js, names)
        if tag == "tips":
            # the numeric features of the same summary, against the same references
            compare_class_numeric(name, sets[tag], target, js)
        check_bh(name, js)


# ---------------------------------------------------------------------------
# NIST StRD one-way ANOVA: certified F

def read_nist(path):
    """(certified F, df between, df within, [(treatment, response text)]),
    after the layout the file's header states: certified values in lines
    41-47, data from line 61."""
    lines = open(path).read().splitlines()
    f_cert = df1 = df2 = None
    for ln in lines[40:47]:
        tok = ln.split()
        nums = []
        for w in tok:
            try:
                nums.append(float(w))
            except ValueError:
                pass
        if tok and tok[0] == "Between":
            df1, f_cert = int(nums[0]), nums[3]
        elif tok and tok[0] == "Within":
            df2 = int(nums[0])
    data = [ln.split()[:2] for ln in lines[60:] if ln.strip()]
    return f_cert, df1, df2, data


def digits(got, want):
    """Significant digits in agreement (log relative error), 16 when equal."""
    if got == want:
        return 16.0
    return -math.log10(abs(got - want) / abs(want))


def test_nist():
    d = os.path.join(DATA, "nist_anova")
    names = ["SiRstv", "SmLs01", "SmLs02", "SmLs03", "AtmWtAg", "SmLs04", "SmLs05", "SmLs06",
             "SmLs07", "SmLs08", "SmLs09"]
    for n in names:
        p = os.path.join(d, n + ".dat")
        t = "nist." + n
        if not os.path.exists(p):
            skip(t, "%s not found" % p)
            continue
        f_cert, df1, df2, data = read_nist(p)
        csv = os.path.join(TMP, n + ".csv")
        with open(csv, "w") as fh:
            fh.write("treatment,response\n")
            for a, b in data:
                fh.write("%s,%s\n" % (a, b))
        # 1K chunks: the same sums merged from many partial summaries
        for extra, tt in (([], t), (["--chunk-size", "1K"], t + ".chunk_1K")):
            if extra and len(data) < 1000:
                continue
            js, _ = scan_screen(tt, [csv], ["--target", "treatment", "--task", "classify"] + extra)
            if js is None:
                continue
            f = features_by_name(js).get("response")
            a = (f or {}).get("tests", {}).get("anova_f")
            if a is None:
                fail(tt + ".anova_f_certified", "no anova_f for response: %r" % f)
                continue
            need = 10 if n in ("SmLs07", "SmLs08", "SmLs09") else 12
            got = digits(a["stat"], f_cert)
            # NIST StRD certified F (the 'Between' line of the file)
            check("%s.anova_f_certified_%d_digits" % (tt, need), got >= need,
                  "sheaf F %r, certified %r: %.1f digits" % (a["stat"], f_cert, got))
            check(tt + ".df_certified", a["df1"] == df1 and a["df2"] == df2,
                  "sheaf df %r,%r; certified %d,%d" % (a["df1"], a["df2"], df1, df2))


# ---------------------------------------------------------------------------
# Flags on a generated table

def flag_table(rows=1000, seed=20240917):
    """A made-up table (numpy default_rng, fixed seed): a constant column, a
    near-constant one (99.5% one value), an integer ID, a text ID, a column
    60% empty, a text column of about 300 levels, a column of small variance
    and a few ordinary columns; the target 'label' follows x_signal."""
    rng = np.random.default_rng(seed)
    near = np.zeros(rows, dtype=int)
    near[rng.choice(rows, rows // 200, replace=False)] = 1  # 0.5% ones
    int_id = rng.permutation(rows) + 500000
    text_id = ["c%012x" % v for v in rng.choice(2 ** 47, rows, replace=False)]
    mm = ["%.3f" % v for v in rng.normal(5, 2, rows)]
    for i in rng.choice(rows, rows * 6 // 10, replace=False):  # exactly 60% empty
        mm[i] = ""
    high = ["site-%03d" % v for v in rng.integers(0, 300, rows)]
    sig = rng.normal(size=rows)
    noise = rng.normal(size=rows)
    small = rng.normal(0, 0.01, rows)
    grp = rng.choice(["north", "south", "east", "west"], rows)
    cnt = rng.poisson(4, rows)
    label = np.where(sig + 0.5 * rng.normal(size=rows) > 0, "hi", "lo")
    # just inside the thresholds: 98% one value, 40% empty, 90% distinct integers
    near98 = np.zeros(rows, dtype=int)
    near98[rng.choice(rows, rows // 50, replace=False)] = 1
    miss40 = ["%.3f" % v for v in rng.normal(size=rows)]
    for i in rng.choice(rows, rows * 4 // 10, replace=False):
        miss40[i] = ""
    int90 = np.arange(rows) + 7000
    int90[rng.choice(rows, rows // 10, replace=False)] = 7000  # 90% distinct
    # exactly at the thresholds: 99% one value, 50% empty, 95% distinct
    near99 = np.zeros(rows, dtype=int)
    near99[rng.choice(rows, rows // 100, replace=False)] = 1
    miss50 = ["%.3f" % v for v in rng.normal(size=rows)]
    for i in rng.choice(rows, rows // 2, replace=False):
        miss50[i] = ""
    int95 = np.arange(rows) + 3000
    int95[rng.choice(rows, rows // 20 + 1, replace=False)] = 2999  # 95% distinct
    cols = [("const_col", ["4.5"] * rows), ("near_const", [str(v) for v in near]),
            ("int_id", [str(v) for v in int_id]), ("text_id", text_id),
            ("mostly_missing", mm), ("high_card", high),
            ("x_signal", ["%.4f" % v for v in sig]), ("x_noise", ["%.4f" % v for v in noise]),
            ("small_var", ["%.5f" % v for v in small]), ("grp", list(grp)),
            ("count", [str(v) for v in cnt]), ("near_98", [str(v) for v in near98]),
            ("missing_40", miss40), ("int_90", [str(v) for v in int90]),
            ("near_99", [str(v) for v in near99]), ("missing_50", miss50),
            ("int_95", [str(v) for v in int95]),
            ("label", list(label))]
    p = os.path.join(TMP, "flags.csv")
    with open(p, "w") as f:
        f.write(",".join(n for n, _ in cols) + "\n")
        for r in range(rows):
            f.write(",".join(c[r] for _, c in cols) + "\n")
    return p


def check_flags(tag, js, want, tested=True):
    """Each named feature carries exactly the flags wanted; a flagged one is
    dropped with its flags as the reasons and no test; an unflagged one is
    tested (when tested: there is a target)."""
    byname = features_by_name(js)
    for name, flags in want.items():
        f = byname.get(name)
        t = "%s.%s" % (tag, name)
        if f is None:
            fail(t, "no feature %s" % name)
            continue
        if flags:
            check(t + ".flags_" + "_".join(flags), f["flags"] == flags,
                  "flags %s, want %s" % (f["flags"], flags))
            check(t + ".dropped_untested",
                  f["decision"] == "drop" and f["reasons"] == flags and f["tests"] == {}
                  and f["q"] is None and f["rank"] is None,
                  "decision %r reasons %r tests %r q %r rank %r"
                  % (f["decision"], f["reasons"], list(f["tests"]), f["q"], f["rank"]))
        else:
            check(t + ".no_flag" + ("_tested" if tested else ""),
                  f["flags"] == [] and (bool(f["tests"]) or not tested),
                  "flags %s, tests %s" % (f["flags"], list(f["tests"])))


def test_flags():
    p = flag_table()
    base = {"const_col": ["no_information"], "near_const": ["little_information"], "int_id": ["names_rows"],
            "mostly_missing": ["too_sparse"], "x_signal": [], "x_noise": [],
            "small_var": [], "grp": [], "count": [], "near_98": [], "missing_40": [],
            "int_90": [], "near_99": ["little_information"], "missing_50": ["too_sparse"]}
    # --max-levels 50: the text columns' value tables overflow
    js, s = scan_screen("flags.max_levels_50", [p], ["--target", "label", "--max-levels", "50"])
    if js is not None:
        want = dict(base, text_id=["names_rows", "too_many_levels"], high_card=["too_many_levels"])
        check_flags("flags.max_levels_50", js, want)
        x = features_by_name(js).get("x_signal") or {}
        check("flags.max_levels_50.x_signal_kept", x.get("decision") == "keep",
              "x_signal %r" % x)
        check_bh("flags.max_levels_50", js)
        # thresholds: --missing-share above 0.6 clears mostly_missing, --min-variance flags small_var
        js2, err = screen_json(s, ["--missing-share", "0.7", "--min-variance", "0.001"])
        if js2 is None:
            fail("flags.thresholds.screen", err)
        else:
            check_flags("flags.thresholds", js2,
                        {"mostly_missing": [], "small_var": ["little_information"],
                         "x_noise": [], "const_col": ["no_information"]})
    # default --max-levels (1024): 1000 distinct texts fit, nothing overflows
    js, _ = scan_screen("flags.default_levels", [p], ["--target", "label"])
    if js is not None:
        # exact distinct counts: 95% distinct integers are ID-like
        check_flags("flags.default_levels", js, dict(base, text_id=["names_rows"], high_card=[],
                                                     int_95=["names_rows"]))
        # about 300 levels of about 3 rows against the classes: tested, but
        # its chi-squared fails Cochran's rule (expected counts below 5), so
        # it has no q and is not kept
        hc = features_by_name(js).get("high_card", {})
        v = hc.get("tests", {}).get("chi2", {}).get("validity", {})
        check("flags.default_levels.high_card.chi2_fails_cochran",
              v.get("holds") is False and hc.get("test_holds") is False
              and hc.get("decision") == "drop", "high_card %r" % hc)


def test_id_min_present():
    """The share rule alone decides from 20 present cells: unique integers
    that are not a run of consecutive integers (step 7) and unique texts in
    19 rows are not flagged, in 20 rows they are (no target: flags only)."""
    for rows, want in ((19, []), (20, ["names_rows"])):
        p = os.path.join(TMP, "ids_%d.csv" % rows)
        with open(p, "w") as f:
            f.write("n,code,x\n")
            for i in range(rows):
                f.write("%d,k%03d,%.2f\n" % (1000 + 7 * i, i, (i * 37 % 11) / 3.0))
        tag = "flags.id_min_present.%d_rows" % rows
        js, _ = scan_screen(tag, [p])
        if js is None:
            continue
        check_flags(tag, js, {"n": want, "code": want}, tested=False)


# ---------------------------------------------------------------------------
# Planted structure of the demo table

CLASS_DRIVERS = {"return_dev_c", "door_open_min", "compressor_duty_pct", "transit_h",
                 "cargo_kind"}
ENERGY_DRIVERS = {"transit_h", "compressor_duty_pct", "ambient_c"}
NOISE = ["vibration_g", "battery_v", "dust_mg_m3", "co2_ppm", "fan_rpm", "rssi_dbm"]
SEEDS = (11, 12, 13)


def demo_table(seed):
    if not os.access(GENERATE, os.X_OK):
        run(["make", "-s", GENERATE])
    if not os.access(GENERATE, os.X_OK):
        return None, "%s not built (make %s)" % (GENERATE, GENERATE)
    p = os.path.join(TMP, "legs-%d.csv" % seed)
    rc, _, err = run([GENERATE, "--rows", "200000", "--seed", str(seed), "-o", p])
    if rc != 0:
        return None, "generate exit %d: %s" % (rc, err)
    return p, ""


def by_rank(js):
    return [f["name"] for f in sorted((f for f in js["features"] if f["rank"]),
                                      key=lambda f: f["rank"])]


def check_common_demo(tag, js):
    byname = features_by_name(js)
    sr, rid = byname.get("schema_rev", {}), byname.get("reading_id", {})
    check(tag + ".schema_rev_no_information", "no_information" in sr.get("flags", [])
          and sr.get("decision") == "drop", "schema_rev %r" % sr)
    check(tag + ".reading_id_names_rows", "names_rows" in rid.get("flags", [])
          and rid.get("decision") == "drop", "reading_id %r" % rid)
    low = [(n, byname[n]["q"]) for n in NOISE
           if n in byname and (byname[n]["q"] is None or byname[n]["q"] < 0.05)]
    check(tag + ".noise_q_above_0.05_at_most_one_below", len(low) <= 1
          and all(n in byname for n in NOISE), "noise with q < 0.05 or untested: %s" % low)


def test_demo():
    ranked_class = None
    for seed in SEEDS:
        p, err = demo_table(seed)
        if p is None:
            skip("demo.seed_%d" % seed, err)
            continue
        tag = "demo.seed_%d.arrival_condition" % seed
        js, s = scan_screen(tag, [p], ["--target", "arrival_condition"])
        if js is not None:
            check(tag + ".task_classify", js["target"]["task"] == "classify", "%r" % js["target"])
            order = by_rank(js)
            top = set(order[:len(CLASS_DRIVERS)])
            check(tag + ".drivers_rank_top_%d" % len(CLASS_DRIVERS), top == CLASS_DRIVERS,
                  "ranks 1..%d: %s; want %s" % (len(CLASS_DRIVERS), order[:len(CLASS_DRIVERS)],
                                                sorted(CLASS_DRIVERS)))
            check_common_demo(tag, js)
            check_bh(tag, js)
            if ranked_class is None:
                ranked_class = (tag, s, js)
        tag = "demo.seed_%d.energy_kwh" % seed
        js, s = scan_screen(tag, [p], ["--target", "energy_kwh"])
        if js is None:
            continue
        check(tag + ".task_regress", js["target"]["task"] == "regress", "%r" % js["target"])
        byname = features_by_name(js)
        order = by_rank(js)
        amb = byname.get("ambient_c", {}), byname.get("ambient_aux_c", {})
        kept_amb = [f.get("name") for f in amb if f.get("decision") == "keep"]
        # the ambient driver counts through whichever thermometer stays
        want = (ENERGY_DRIVERS - {"ambient_c"}) | set(kept_amb[:1] or ["ambient_c"])
        check(tag + ".drivers_rank_top_3", set(order[:3]) == want,
              "ranks 1..3: %s; want %s" % (order[:3], sorted(want)))
        pairs = [{pp["a"], pp["b"]} for pp in js["redundant_pairs"]]
        check(tag + ".ambient_pair_redundant", {"ambient_c", "ambient_aux_c"} in pairs,
              "redundant_pairs %s" % js["redundant_pairs"])
        dropped = [f for f in amb if f.get("decision") == "drop"]
        other = {"ambient_c": "ambient_aux_c", "ambient_aux_c": "ambient_c"}
        check(tag + ".one_ambient_dropped_as_redundant",
              len(kept_amb) == 1 and len(dropped) == 1
              and any(r.startswith("redundant with " + other[dropped[0]["name"]])
                      for r in dropped[0]["reasons"]),
              "ambient_c %r; ambient_aux_c %r"
              % ([amb[0].get("decision"), amb[0].get("reasons")],
                 [amb[1].get("decision"), amb[1].get("reasons")]))
        check_common_demo(tag, js)
        check_bh(tag, js)
    if ranked_class is not None:
        test_options(*ranked_class)


# ---------------------------------------------------------------------------
# --max-kept, --write-kept, --rank-by, --fdr, --format csv

def primary_stat(f):
    t = f["tests"]
    for k in ("corr_f", "anova_f", "chi2"):
        if k in t:
            return t[k]["stat"]
    return 0.0


def test_options(tag, summary, base):
    tag = tag + ".options"
    order = by_rank(base)
    check(tag + ".ranks_1_to_kept", sorted(f["rank"] for f in base["features"] if f["rank"])
          == list(range(1, base["kept"] + 1))
          and all((f["rank"] is not None) == (f["decision"] == "keep") for f in base["features"]),
          "kept %r, ranks %s" % (base["kept"], [(f["name"], f["rank"]) for f in base["features"]]))
    for k in (1, 3, base["kept"] + 5):
        js, err = screen_json(summary, ["--max-kept", str(k)])
        if js is None:
            fail("%s.top_%d" % (tag, k), err)
            continue
        got = by_rank(js)
        check("%s.top_%d.keeps_at_most_%d" % (tag, k, k),
              js["kept"] == len(got) == min(k, len(order)) and got == order[:k],
              "kept %r %s; without --max-kept %s" % (js["kept"], got, order))
        beyond = [f["name"] for f in js["features"]
                  if f["name"] in order[k:] and not any(r.startswith("beyond the first ")
                                                       for r in f["reasons"])]
        check("%s.top_%d.reason_beyond_top" % (tag, k), not beyond,
              "without the reason: %s" % beyond)
    for extra in ([], ["--max-kept", "3"], ["--rank-by", "mi"]):
        kl = new_path(".txt")
        js, err = screen_json(summary, extra + ["--write-kept", kl])
        t = "%s.keep_list%s" % (tag, "".join("_" + e.lstrip("-") for e in extra))
        if js is None or not os.path.exists(kl):
            fail(t, err or "no keep list written")
            continue
        lines = open(kl).read().split("\n")
        check(t + ".kept_names_in_rank_order", lines[-1] == "" and lines[:-1] == by_rank(js),
              "file %r, ranked %s" % (lines, by_rank(js)))
    js, err = screen_json(summary, ["--rank-by", "mi"])
    if js is None:
        fail(tag + ".rank_by_mi", err)
    else:
        mis = [features_by_name(js)[n]["tests"]["mutual_information"]["adjusted"]
               for n in by_rank(js)]
        check(tag + ".rank_by_mi.adjusted_mi_descending",
              len(mis) >= 2 and all(a >= b for a, b in zip(mis, mis[1:]))
              and set(by_rank(js)) == set(order),
              "ranked %s, MI %s" % (by_rank(js), mis))
    js, err = screen_json(summary, ["--rank-by", "stat"])
    if js is None:
        fail(tag + ".rank_by_stat", err)
    else:
        st = [primary_stat(features_by_name(js)[n]) for n in by_rank(js)]
        check(tag + ".rank_by_stat.statistic_descending",
              all(a >= b for a, b in zip(st, st[1:])) and set(by_rank(js)) == set(order),
              "ranked %s, stat %s" % (by_rank(js), st))
    for level in ("0.5", "1e-100"):
        js, err = screen_json(summary, ["--fdr", level])
        if js is None:
            fail("%s.q_%s" % (tag, level), err)
            continue
        lv = float(level)
        bad = []
        for f in js["features"]:
            relevant = f["q"] is not None and f["q"] < lv
            redundant = any(r.startswith("redundant with") for r in f["reasons"])
            if (f["decision"] == "keep") != (relevant and not redundant):
                bad.append("%s: q %r, %s %s" % (f["name"], f["q"], f["decision"], f["reasons"]))
        check("%s.q_%s.kept_iff_q_below" % (tag, level), not bad, "; ".join(bad[:3]))
    rc, out, err = run([SHEAF, "screen", summary, "--format", "csv"])
    if rc != 0:
        fail(tag + ".csv", "exit %d: %s" % (rc, err))
    else:
        import csv
        import io
        rows = list(csv.DictReader(io.StringIO(out.decode())))
        got = {(r["column"], r["decision"], r["rank"]) for r in rows}
        want = {(f["name"], f["decision"], str(f["rank"]) if f["rank"] else "")
                for f in base["features"]}
        check(tag + ".csv_agrees_with_json", got == want,
              "differences: %s" % sorted(got ^ want)[:4])


def main():
    if not os.access(SHEAF, os.X_OK):
        fail("binary", "%s not found (run make first)" % os.path.abspath(SHEAF))
        return
    sets = open_sets()
    try:
        test_class_numeric(sets)
        test_regress(sets)
        test_categorical_class(sets)
        test_nist()
        test_flags()
        test_id_min_present()
        test_demo()
    finally:
        shutil.rmtree(TMP, ignore_errors=True)


if __name__ == "__main__":
    try:
        main()
    except Exception as e:  # a crash of the script is one failed check, not a silent stop
        import traceback
        traceback.print_exc()
        fail("test_screen.py", "%s: %s" % (type(e).__name__, e))
    sys.exit(0)
