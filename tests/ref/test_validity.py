#!/usr/bin/python3
"""End-to-end checks of screen's validity rules on open data: the expected
mutual information and the adjusted MI, Cochran's rule, the level-size rule,
columns that mirror the target, the one ID-like rule of screen and pca,
--task regress on a text target, the signed r of the text output, and the
decisions on the open datasets before and after these rules.

References, named again beside each check:
  - scikit-learn 1.2.1 from Debian's python3-sklearn:
    sklearn.metrics.adjusted_mutual_info_score(average_method='max') (AMI_max
    of Vinh, Epps & Bailey 2010) and sklearn.metrics.mutual_info_score; the
    expected MI is recovered from them as E = (I - AMI H_max) / (1 - AMI);
  - scipy 1.10 from Debian's packages: scipy.stats.contingency.expected_freq
    (the expected counts of Cochran's rule), scipy.stats.pearsonr (the sign
    and size of r);
  - pandas 1.5 from Debian's packages: crosstab, value_counts, groupby
    min/max;
  - the kept columns of each open dataset before these rules: `sheaf screen`
    at commit a59e579 (main before issue 13), recorded below.

Data: ../shared/data/open/{iris,mpg,penguins,tips}.csv (or $SHEAF_DATA/open),
copies of them with a planted column, and a 12-row table written here.
Missing data or packages give "SKIP name: reason" lines.  Prints one
"PASS name" / "FAIL name: why" line per check and exits 0.
"""
import json
import math
import os
import shutil
import sys
import tempfile
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), ".."))
from refcheck import check, fail, skip  # noqa: E402  (shared PASS/FAIL lines)
from refcheck import DATA, MISSING, ROOT, SHEAF, run  # noqa: E402

import numpy as np
import pandas as pd
from scipy import stats
from scipy.stats import contingency

try:
    from sklearn.metrics import adjusted_mutual_info_score, mutual_info_score
except ImportError:  # python3-sklearn is in the Makefile's DEB_PKGS
    adjusted_mutual_info_score = mutual_info_score = None

os.chdir(ROOT)
TMP = tempfile.mkdtemp(prefix="sheaf-validity-")
_n = [0]

# The kept columns (rank order) of `sheaf screen` at a59e579, before the
# validity rules of issue 13; the redundant member of a pair is not kept.
BEFORE = {
    ("iris", "species"): ["petal_length", "sepal_length", "sepal_width"],
    ("penguins", "species"): ["flipper_length_mm", "bill_length_mm", "bill_depth_mm",
                              "body_mass_g", "island"],
    ("tips", "smoker"): ["day"],
    ("tips", "tip"): ["total_bill", "size"],
    ("mpg", "origin"): ["displacement", "weight", "mpg", "horsepower", "name", "acceleration",
                        "model_year"],
    ("mpg", "mpg"): ["weight", "displacement", "horsepower", "model_year", "origin", "name",
                     "acceleration"],
}


def new_path(ext=".sheaf"):
    _n[0] += 1
    return os.path.join(TMP, "v%d%s" % (_n[0], ext))


def scan(paths, extra=()):
    out = new_path()
    rc, _, err = run([SHEAF, "scan", "-q"] + list(paths) + ["-o", out] + list(extra))
    return (out if rc == 0 else None), rc, err


def screen(summary, extra=(), fmt="json"):
    rc, out, err = run([SHEAF, "screen", summary, "--format", fmt] + list(extra))
    if rc != 0:
        return None, "screen exit %d: %s" % (rc, err)
    return (json.loads(out) if fmt == "json" else out.decode()), ""


def scan_screen(tag, paths, scan_extra=(), screen_extra=()):
    s, rc, err = scan(paths, scan_extra)
    if s is None:
        fail(tag + ".scan", "exit %d: %s" % (rc, err))
        return None, None
    js, err = screen(s, screen_extra)
    if js is None:
        fail(tag + ".screen", err)
    return js, s


def by_name(js):
    return {f["name"]: f for f in js["features"]}


def kept(js):
    return [f["name"] for f in sorted((f for f in js["features"] if f["rank"]),
                                      key=lambda f: f["rank"])]


def text(raw, name):
    return raw[name].map(lambda s: None if s.strip(" ") in MISSING else s.strip(" "))


def open_path(tag):
    p = os.path.join(DATA, "open", tag + ".csv")
    return p if os.path.exists(p) else None


# ---------------------------------------------------------------------------
# The decisions on the open datasets

def test_open_decisions():
    for (tag, target), before in BEFORE.items():
        p = open_path(tag)
        name = "open.%s_by_%s" % (tag, target)
        if p is None:
            skip(name, "%s.csv not found under %s/open" % (tag, DATA))
            continue
        js, _ = scan_screen(name, [p], ["--target", target])
        if js is None:
            continue
        if tag == "mpg":
            # the car name (305 distinct values in 398 rows) is no longer kept
            want = [c for c in before if c != "name"]
            f = by_name(js)["name"]
            check(name + ".name_not_kept",
                  f["decision"] == "drop" and f.get("test_holds") is False and f["q"] is None,
                  "name %r" % {k: f.get(k) for k in ("decision", "test_holds", "q", "reasons")})
        else:
            want = before
        check(name + ".kept_as_before", kept(js) == want,
              "kept %s, before %s" % (kept(js), want))


# ---------------------------------------------------------------------------
# Cochran's rule and the level-size rule, against scipy and pandas

def cochran_reference(ct):
    # scipy.stats.contingency.expected_freq (Debian): row sum x column sum / N
    e = contingency.expected_freq(ct)
    return e.size, int((e < 5).sum()), float((e < 5).mean()), float(e.min())


def test_cochran():
    cases = (("mpg", "origin", "name", False), ("penguins", "species", "island", True),
             ("penguins", "species", "sex", True), ("tips", "smoker", "day", True),
             ("tips", "sex", "time", True))
    for tag, target, feature, holds in cases:
        p = open_path(tag)
        name = "cochran.%s_by_%s.%s" % (tag, target, feature)
        if p is None:
            skip(name, "no %s.csv" % tag)
            continue
        js, _ = scan_screen(name, [p], ["--target", target])
        if js is None:
            continue
        raw = pd.read_csv(p, dtype=str, keep_default_na=False, na_filter=False)
        x, y = text(raw, feature), text(raw, target)
        keep = x.notna() & y.notna()
        ct = pd.crosstab(x[keep], y[keep]).to_numpy()  # pandas.crosstab (Debian)
        cells, small, share, smallest = cochran_reference(ct)
        v = by_name(js)[feature]["tests"]["chi2"].get("validity", {})
        check(name + ".vs_scipy_expected_freq",
              v.get("rule") == "cochran_1954" and v.get("holds") == holds
              and v.get("expected_counts") == cells and v.get("below_5") == small
              and abs(v.get("share_below_5", -1) - share) <= 1e-12
              and abs(v.get("smallest_expected", -1) - smallest) <= 1e-12 * smallest,
              "sheaf %r; scipy cells %d below 5 %d share %r smallest %r (holds %r)"
              % (v, cells, small, share, smallest, holds))


def test_level_sizes():
    p = open_path("mpg")
    if p is None:
        skip("levels.mpg_by_mpg", "no mpg.csv")
        return
    js, _ = scan_screen("levels.mpg_by_mpg", [p], ["--target", "mpg"])
    if js is None:
        return
    raw = pd.read_csv(p, dtype=str, keep_default_na=False, na_filter=False)
    y = pd.to_numeric(text(raw, "mpg"), errors="coerce")
    for feature, holds in (("name", False), ("origin", True)):
        x = text(raw, feature)
        keep = x.notna() & y.notna()
        counts = x[keep].value_counts()  # pandas value_counts (Debian): rows per level
        thin = counts[counts < 5]
        share = float(thin.sum() / counts.sum())
        v = by_name(js)[feature]["tests"]["anova_f"].get("validity", {})
        check("levels.mpg_by_mpg.%s.vs_pandas_value_counts" % feature,
              v.get("rule") == "level_sizes" and v.get("holds") == holds
              and v.get("levels") == len(counts) and v.get("below_5") == len(thin)
              and abs(v.get("row_share_in_levels_below_5", -1) - share) <= 1e-12
              and v.get("smallest_level_rows") == int(counts.min()),
              "sheaf %r; pandas levels %d thin %d share %r smallest %d"
              % (v, len(counts), len(thin), share, int(counts.min())))


# ---------------------------------------------------------------------------
# Expected and adjusted mutual information, against scikit-learn

def test_adjusted_mi():
    if adjusted_mutual_info_score is None:
        skip("ami", "python3-sklearn is not installed")
        return
    cases = (("mpg", "origin", "name"), ("penguins", "species", "island"),
             ("penguins", "species", "sex"), ("penguins", "sex", "island"),
             ("tips", "sex", "day"), ("tips", "sex", "time"), ("tips", "sex", "smoker"),
             ("tips", "smoker", "day"))
    for tag, target, feature in cases:
        p = open_path(tag)
        name = "ami.%s_by_%s.%s" % (tag, target, feature)
        if p is None:
            skip(name, "no %s.csv" % tag)
            continue
        js, _ = scan_screen(name, [p], ["--target", target])
        if js is None:
            continue
        raw = pd.read_csv(p, dtype=str, keep_default_na=False, na_filter=False)
        x, y = text(raw, feature), text(raw, target)
        keep = x.notna() & y.notna()
        xs, ys = list(x[keep]), list(y[keep])
        # sklearn.metrics.adjusted_mutual_info_score(average_method='max'),
        # mutual_info_score (Debian's scikit-learn 1.2.1)
        a = float(adjusted_mutual_info_score(xs, ys, average_method="max"))
        i = float(mutual_info_score(xs, ys))
        h = max(float(stats.entropy(pd.Series(xs).value_counts())),
                float(stats.entropy(pd.Series(ys).value_counts())))
        e = (i - a * h) / (1 - a)
        m = by_name(js)[feature]["tests"].get("mutual_information", {})
        check(name + ".expected_vs_sklearn",
              abs(m.get("expected_nats", -1) - e) <= 1e-9 * e
              and m.get("expected_approximated_cells") == 0,
              "sheaf %r, scikit-learn %r" % (m.get("expected_nats"), e))
        check(name + ".adjusted_vs_sklearn", abs(m.get("adjusted", -9) - a) <= 1e-9,
              "sheaf %r, scikit-learn %r" % (m.get("adjusted"), a))


# ---------------------------------------------------------------------------
# Columns that mirror the target

def planted(tag, column, values):
    """A copy of an open dataset with one more column."""
    raw = pd.read_csv(open_path(tag), dtype=str, keep_default_na=False, na_filter=False)
    raw[column] = values(raw)
    out = new_path(".csv")
    raw.to_csv(out, index=False)
    return out, raw


def test_mirrors():
    if open_path("iris") is None or open_path("tips") is None or open_path("penguins") is None:
        skip("mirror", "open datasets not found")
        return
    # iris with a numeric code of the species: every class apart
    codes = {"setosa": "1", "versicolor": "2", "virginica": "3"}
    p, raw = planted("iris", "code", lambda r: r["species"].map(codes))
    js, s = scan_screen("mirror.iris_code", [p], ["--target", "species"])
    if js is not None:
        f = by_name(js)["code"]
        check("mirror.iris_code.flagged_and_dropped",
              f["flags"] == ["mirrors_target"] and f["decision"] == "drop"
              and any("every class lies apart" in r for r in f["reasons"]), "code %r" % f)
        # pandas groupby min/max (Debian): in iris itself, no column sets
        # every class apart (setosa alone lies apart on the petals)
        for c in ("sepal_length", "sepal_width", "petal_length", "petal_width"):
            g = raw.assign(v=raw[c].astype(float)).groupby("species")["v"].agg(["min", "max"])
            g = g.sort_values("min")
            apart = all(g["max"].iloc[k] < g["min"].iloc[k + 1] for k in range(len(g) - 1))
            check("mirror.iris.%s_as_pandas_says" % c,
                  ("mirrors_target" in by_name(js)[c]["flags"]) == apart,
                  "flags %s, pandas every class apart %r" % (by_name(js)[c]["flags"], apart))
        js2, err = screen(s, ["--keep-mirrors"])
        if js2 is None:
            fail("mirror.iris_code.keep_mirrors", err)
        else:
            f = by_name(js2)["code"]
            check("mirror.iris_code.keep_mirrors_keeps_it",
                  f["flags"] == ["mirrors_target"] and f["decision"] == "keep" and f["rank"] == 1,
                  "code %r" % f)
    # tips with the tip in cents: |r| = 1 with the target (scipy.stats.pearsonr)
    p, raw = planted("tips", "tip_cents",
                     lambda r: (r["tip"].astype(float) * 100).round().astype(int).astype(str))
    r = float(stats.pearsonr(raw["tip_cents"].astype(float), raw["tip"].astype(float)).statistic)
    js, _ = scan_screen("mirror.tips_cents", [p], ["--target", "tip"])
    if js is not None:
        f = by_name(js)["tip_cents"]
        check("mirror.tips_cents.flagged_and_dropped",
              f["flags"] == ["mirrors_target"] and f["decision"] == "drop"
              and abs(f["tests"]["corr_f"]["r"] - r) <= 1e-12,
              "tip_cents %r; scipy r %r" % (f, r))
        check("mirror.tips_cents.others_kept_as_before",
              kept(js) == BEFORE[("tips", "tip")], "kept %s" % kept(js))
    # penguins with the species as a letter: adjusted MI 1 (scikit-learn)
    p, raw = planted("penguins", "letter", lambda r: r["species"].str[0])
    js, _ = scan_screen("mirror.penguins_letter", [p], ["--target", "species"])
    if js is not None:
        f = by_name(js)["letter"]
        a = f["tests"].get("mutual_information", {}).get("adjusted")
        if adjusted_mutual_info_score is not None:
            want = float(adjusted_mutual_info_score(raw["letter"], raw["species"],
                                                    average_method="max"))
            check("mirror.penguins_letter.adjusted_vs_sklearn",
                  a is not None and abs(a - want) <= 1e-9, "sheaf %r, scikit-learn %r" % (a, want))
        check("mirror.penguins_letter.flagged_and_dropped",
              f["flags"] == ["mirrors_target"] and f["decision"] == "drop",
              "letter %r" % f)


# ---------------------------------------------------------------------------
# One ID-like rule, the task check, the sign of r

def test_id_like_one_rule():
    p = new_path(".csv")
    with open(p, "w") as f:
        f.write("id,a,b,count\n")
        for i in range(1, 13):
            f.write("%d,%d.5,%d,%d\n" % (i, i * 7 % 5, i * i % 11, 3 * i * i + 1))
    s, rc, err = scan([p])
    if s is None:
        fail("id_like.scan", "exit %d: %s" % (rc, err))
        return
    js, err = screen(s)
    rc, out, perr = run([SHEAF, "pca", s])
    if js is None or rc != 0:
        fail("id_like.screen_and_pca_agree", err or perr)
        return
    left = [ln for ln in out.decode().splitlines() if ln.startswith("left out")]
    pca_id = {c.split(" (")[0].strip() for ln in left for c in ln.split(":", 1)[1].split(",")
              if "ID-like" in c}
    screen_id = {f["name"] for f in js["features"] if "names_rows" in f["flags"]}
    # by the rule (stats/validity.h): id = 1..12 is a run of consecutive
    # integers; count (distinct, with gaps) is not ID-like below 20 rows
    check("id_like.screen_and_pca_agree", screen_id == pca_id == {"id"},
          "screen %s, pca %s (%s)" % (sorted(screen_id), sorted(pca_id), left))


def test_task_on_text_target():
    p = open_path("mpg")
    if p is None:
        skip("task", "no mpg.csv")
        return
    out = new_path()
    rc, _, err = run([SHEAF, "scan", "-q", p, "--target", "origin", "--task", "regress",
                      "-o", out])
    check("task.regress_on_text_target_is_exit_2",
          rc == 2 and len(err.splitlines()) == 1
          and "--task regress needs a numeric target" in err and "'origin' is text" in err
          and not os.path.exists(out), "exit %d, stderr %r, output left %r"
          % (rc, err, os.path.exists(out)))
    # A target of 199 numbers and one text cell passes the scan's kind rule
    # (99%), and screen --numeric-share 1 then finds it text.
    q = new_path(".csv")
    with open(q, "w") as f:
        f.write("x,y\n")
        for i in range(200):
            f.write("%d.5,%s\n" % (i % 17, "n/k" if i == 7 else "%.2f" % (i * 0.37)))
    s, rc, err = scan([q], ["--target", "y", "--task", "regress"])
    check("task.mostly_numbers_scan_ok", s is not None, "exit %d: %s" % (rc, err))
    if s is not None:
        rc, _, err = run([SHEAF, "screen", s, "--numeric-share", "1"])
        check("task.screen_finds_text_target_exit_2",
              rc == 2 and "'y' is text (1 of 200 present cells are not numbers)" in err,
              "exit %d, stderr %r" % (rc, err))


def test_signed_r():
    p = open_path("mpg")
    if p is None:
        skip("signed_r", "no mpg.csv")
        return
    s, rc, err = scan([p], ["--target", "mpg"])
    if s is None:
        fail("signed_r.scan", err)
        return
    txt, err = screen(s, fmt="text")
    if txt is None:
        fail("signed_r.screen", err)
        return
    raw = pd.read_csv(p)
    lines = txt.splitlines()
    head = lines[1].split()
    bad = []
    for c in ("weight", "model_year", "acceleration"):
        keep = raw[c].notna() & raw["mpg"].notna()
        # scipy.stats.pearsonr (Debian), pairwise-complete rows
        r = float(stats.pearsonr(raw[c][keep], raw["mpg"][keep]).statistic)
        row = next((ln.split() for ln in lines if len(ln.split()) > 2 and ln.split()[1] == c), None)
        want = "%+.3f" % r
        if row is None or "r" not in head or row[head.index("r")] != want:
            bad.append("%s: row %r, want r %s" % (c, row, want))
    check("signed_r.text_vs_scipy_pearsonr", not bad and "r" in head, "; ".join(bad) or str(head))


def main():
    if not os.access(SHEAF, os.X_OK):
        fail("binary", "%s not found (run make first)" % os.path.abspath(SHEAF))
        return
    try:
        for test in (test_open_decisions, test_cochran, test_level_sizes, test_adjusted_mi,
                     test_mirrors, test_id_like_one_rule, test_task_on_text_target,
                     test_signed_r):
            try:
                test()
            except Exception as e:  # one failed check; the other groups still run
                fail(test.__name__, "%s: %s" % (type(e).__name__, e))
    finally:
        shutil.rmtree(TMP, ignore_errors=True)


if __name__ == "__main__":
    try:
        main()
    except Exception as e:  # a crash of the script is one failed check, not a silent stop
        import traceback
        traceback.print_exc()
        fail("test_validity.py", "%s: %s" % (type(e).__name__, e))
    sys.exit(0)
