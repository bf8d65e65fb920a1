#!/usr/bin/python3
"""Digits of sheaf's screening statistics against exact rational arithmetic
(issue 13, "Numbers that stay exact where the README promises it").

References, named again beside each check:
  - exact rational arithmetic (Python's fractions.Fraction, and integers
    at a common decimal scale) on the cells' decimal text: the ANOVA F of
    every open-dataset case of tests/ref/test_screen.py and of randhie
    (Debian's python3-statsmodels) by hlthg;
  - scipy.stats.f_oneway and pearsonr (Debian's python3-scipy), whose digits
    against the exact value are printed beside sheaf's;
  - the NIST StRD linear regression dataset Norris (certified F statistic
    5436385.54079785), and the F test of r of the regression cases of
    tests/ref/test_screen.py against fractions;
  - numpy's deciles and Pearson's chi-squared df for the bins of a
    continuous target with an offset;

Data: ../shared/data/open/*.csv (or $SHEAF_DATA/open) and the statsmodels
datasets; an absent file gives a SKIP line.  Prints one "PASS name" /
"FAIL name: why" line per check and exits 0.
"""
import csv
import json
import math
import os
import shutil
import sys
import tempfile
from decimal import Decimal, InvalidOperation
from fractions import Fraction
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), ".."))
from refcheck import check, fail, skip  # noqa: E402
from refcheck import DATA, MISSING, NUMBER, ROOT, SHEAF, SM, run  # noqa: E402

import numpy as np
from scipy import stats

os.chdir(ROOT)
TMP = tempfile.mkdtemp(prefix="sheaf-exact-")
_n = [0]


def scan_screen(path, extra):
    """Scans path with extra options; returns (screen JSON or None, why)."""
    _n[0] += 1
    out = os.path.join(TMP, "s%d.sheaf" % _n[0])
    rc, _, err = run([SHEAF, "scan", "-q", path, "-o", out] + list(extra))
    if rc != 0:
        return None, "scan exit %d: %s" % (rc, err)
    rc, js, err = run([SHEAF, "screen", "--format", "json", out])
    if rc != 0:
        return None, "screen exit %d: %s" % (rc, err)
    return json.loads(js), ""


def number(cell):
    """A cell's exact value as sheaf reads it (Decimal), or None."""
    t = cell.strip(" ")
    if t in MISSING or not NUMBER.match(t):
        return None
    try:
        return Decimal(t)
    except InvalidOperation:
        return None


def digits(got, exact):
    """Correct decimal digits of got: -log10 of the relative error."""
    if got is None:
        return float("nan")
    e = abs(Fraction(got) - exact) / abs(exact)
    return 17.0 if e == 0 else -math.log10(float(e))


def exact_anova(groups):
    """One-way ANOVA F of groups of Decimals, exactly: integer sums at a
    common scale, F = (SSB / (k - 1)) / (SSW / (N - k)) with
    SSB = sum S_g^2 / n_g - S^2 / N and SSW = sum Q_g - sum S_g^2 / n_g."""
    scale = max(max(0, -x.as_tuple().exponent) for g in groups for x in g)
    ints = [[int(x.scaleb(scale)) for x in g] for g in groups]
    n_all = sum(len(g) for g in ints)
    k = len(ints)
    sums = [sum(g) for g in ints]
    between = sum(Fraction(s * s, len(g)) for s, g in zip(sums, ints))
    ssb = between - Fraction(sum(sums) ** 2, n_all)
    ssw = sum(sum(v * v for v in g) for g in ints) - between
    return (ssb / (k - 1)) / (ssw / (n_all - k))


def grouped(rows, key_col, value_col):
    """Numbers of value_col grouped by the (non-missing) text of key_col."""
    g = {}
    for r in rows:
        key = r[key_col]
        if key in MISSING:
            continue
        v = number(r[value_col])
        if v is not None:
            g.setdefault(key, []).append(v)
    return [v for v in g.values() if v]


def open_path(tag):
    if tag == "randhie":
        return os.path.join(SM, "randhie", "randhie.csv")
    return os.path.join(DATA, "open", tag + ".csv")


# The open-dataset cases of tests/ref/test_screen.py (class targets with
# numeric features; regression targets with categorical features), and
# randhie by hlthg (issue 13: fmde had 11 correct digits, scipy 13.5).
ANOVA_CASES = [
    ("iris", "species", []), ("penguins", "species", []), ("tips", "day", []),
    ("mpg", "cylinders", ["--task", "classify"]), ("penguins", "sex", []), ("tips", "sex", []),
    ("tips", "tip", ["--task", "regress"]), ("mpg", "mpg", ["--task", "regress"]),
    ("penguins", "body_mass_g", ["--task", "regress"]), ("tips", "size", ["--task", "regress"]),
    ("mpg", "cylinders", ["--task", "regress"]), ("mpg", "horsepower", ["--task", "regress"]),
    ("randhie", "hlthg", []),
]


def test_anova_to_13_digits():
    """Every ANOVA F of the open-dataset cases to 13 digits of the exact
    value (fractions); scipy.stats.f_oneway's digits beside."""
    for tag, target, extra in ANOVA_CASES:
        path = open_path(tag)
        name = "anova_exact.%s_by_%s%s" % (tag, target, "".join(extra).replace("--task", "."))
        if not os.path.exists(path):
            skip(name, "%s not found" % path)
            continue
        js, why = scan_screen(path, ["--target", target] + extra)
        if js is None:
            fail(name, why)
            continue
        with open(path, newline="") as f:
            rows = list(csv.DictReader(f))
        classify = js["target"]["task"] == "classify"
        worst, notes, tested = 99.0, [], 0
        for feat in js["features"]:
            a = feat["tests"].get("anova_f")
            if a is None:
                continue
            groups = grouped(rows, target, feat["name"]) if classify else \
                grouped(rows, feat["name"], target)
            exact = exact_anova(groups)
            if exact == 0:
                continue
            tested += 1
            scipy_f = float(stats.f_oneway(*[np.array([float(x) for x in g]) for g in groups]).statistic)
            d, ds = digits(a["stat"], exact), digits(scipy_f, exact)
            worst = min(worst, d)
            notes.append("%s %.2f (scipy %.2f)" % (feat["name"], d, ds))
        check(name + ".%d_features_to_13_digits" % tested, tested > 0 and worst >= 13.0,
              "digits vs fractions: " + ", ".join(notes))


def exact_corr_f(xs, ys):
    """F = (n - 2) r^2 / (1 - r^2) of paired Decimals, exactly (Fraction)."""
    n = len(xs)
    fx, fy = [Fraction(v) for v in xs], [Fraction(v) for v in ys]
    sx, sy = sum(fx), sum(fy)
    a = n * sum(v * v for v in fx) - sx * sx
    b = n * sum(v * v for v in fy) - sy * sy
    c = n * sum(u * v for u, v in zip(fx, fy)) - sx * sy
    return (n - 2) * c * c / (a * b - c * c)


def norris_csv():
    """NIST StRD Norris (../shared/data/nist_linregress) as a CSV of y, x."""
    src = os.path.join(DATA, "nist_linregress", "Norris.dat")
    if not os.path.exists(src):
        return None
    out = os.path.join(TMP, "norris.csv")
    with open(src) as f, open(out, "w") as g:
        g.write("y,x\n")
        for k, line in enumerate(f, 1):
            parts = line.split()
            if k >= 61 and len(parts) == 2:
                g.write("%s,%s\n" % tuple(parts))
    return out


REGRESSION_CASES = [("norris", "y"), ("tips", "tip"), ("mpg", "mpg"),
                    ("penguins", "body_mass_g"), ("longley", "TOTEMP"), ("randhie", "lpi")]


def test_correlation_f_to_13_digits():
    """The F test of Pearson r for every numeric feature of a regression
    target, to 13 digits of the exact value (fractions, pairwise-complete
    rows); NIST StRD Norris also against its certified F 5436385.54079785
    (issue 13: 11.85 digits before).  scipy.stats.pearsonr's F digits beside."""
    for tag, target in REGRESSION_CASES:
        if tag == "norris":
            path = norris_csv()
        elif tag == "longley":
            path = os.path.join(SM, "longley", "longley.csv")
        else:
            path = open_path(tag)
        name = "corr_f_exact.%s_by_%s" % (tag, target)
        if not path or not os.path.exists(path):
            skip(name, "%s not found" % (path or "Norris.dat"))
            continue
        js, why = scan_screen(path, ["--target", target, "--task", "regress"])
        if js is None:
            fail(name, why)
            continue
        with open(path, newline="") as f:
            rows = list(csv.DictReader(f))
        worst, notes, tested = 99.0, [], 0
        for feat in js["features"]:
            c = feat["tests"].get("corr_f")
            if c is None:
                continue
            pairs = [(number(r[feat["name"]]), number(r[target])) for r in rows]
            pairs = [(x, y) for x, y in pairs if x is not None and y is not None]
            exact = exact_corr_f([x for x, _ in pairs], [y for _, y in pairs])
            tested += 1
            pr = stats.pearsonr([float(x) for x, _ in pairs], [float(y) for _, y in pairs])
            rr = float(pr.statistic)
            scipy_f = (len(pairs) - 2) * rr * rr / (1 - rr * rr)
            d, ds = digits(c["stat"], exact), digits(scipy_f, exact)
            worst = min(worst, d)
            notes.append("%s %.2f (scipy %.2f)" % (feat["name"], d, ds))
            if tag == "norris":
                cert = Fraction("5436385.54079785")
                check(name + ".certified_f", digits(c["stat"], cert) >= 13.0,
                      "sheaf F %r: %.2f digits of the certified 5436385.54079785"
                      % (c["stat"], digits(c["stat"], cert)))
        check(name + ".%d_features_to_13_digits" % tested, tested > 0 and worst >= 13.0,
              "digits vs fractions: " + ", ".join(notes))


def test_continuous_target_bins():
    """A continuous target is cut into the intended 10 bins whatever its
    offset (issue 13: 1000 + x, x in [0, 1.3), fell into one target bucket,
    so chi-squared and MI were not computed; 25 +/- 1 got 3 bins).  The
    references: numpy's deciles of the target (Debian numpy) hold 10% of the
    rows each, so 10 bins of about equal frequency exist; chi-squared's df
    is (feature bins - 1)(target bins - 1) (Pearson 1900); and a feature
    made from the target is related (p < 1e-10) while pure noise is not
    (p > 1e-4)."""
    import random
    rnd = random.Random(13)
    cases = {"offset_1000": lambda: 1000 + 1.3 * rnd.random(),
             "25_plus_minus_1": lambda: 25 + max(-1.0, min(1.0, rnd.gauss(0, 0.5)))}
    for tag, draw in cases.items():
        name = "target_bins." + tag
        path = os.path.join(TMP, tag + ".csv")
        ys = []
        with open(path, "w") as f:
            f.write("y,signal,noise\n")
            for _ in range(4000):
                y = draw()
                ys.append(y)
                f.write("%.6f,%.4f,%.4f\n" % (y, y + rnd.gauss(0, 0.2), rnd.random()))
        deciles = np.quantile(ys, np.linspace(0, 1, 11))
        share = np.histogram(ys, bins=deciles)[0] / len(ys)
        check(name + ".numpy_deciles_hold_10pct", np.all(abs(share - 0.1) < 0.01),
              "decile shares %s" % share)
        js, why = scan_screen(path, ["--target", "y"])
        if js is None:
            fail(name, why)
            continue
        for feat in js["features"]:
            t = feat["tests"]
            mi, chi = t.get("mutual_information"), t.get("chi2")
            tb = mi and mi["target_bins"]
            fb = mi and mi["feature_bins"]
            check("%s.%s.ten_target_bins" % (name, feat["name"]),
                  mi is not None and chi is not None and tb == 10
                  and chi["df"] == (fb - 1) * (tb - 1),
                  "mutual information %r, chi-squared %r" % (mi, chi))
            if chi is None:
                continue
            related = feat["name"] == "signal"
            check("%s.%s.%s" % (name, feat["name"], "related" if related else "not_related"),
                  chi["p"] < 1e-10 if related else chi["p"] > 1e-4,
                  "chi-squared p %r" % chi["p"])


def main():
    if not os.access(SHEAF, os.X_OK):
        fail("binary", "%s not found (run make first)" % os.path.abspath(SHEAF))
        return
    try:
        test_anova_to_13_digits()
        test_correlation_f_to_13_digits()
        test_continuous_target_bins()
    finally:
        shutil.rmtree(TMP, ignore_errors=True)


if __name__ == "__main__":
    try:
        main()
    except Exception as e:  # a crash of the script is one failed check, not a silent stop
        fail("test_exact.py", "%s: %s" % (type(e).__name__, e))
    sys.exit(0)
