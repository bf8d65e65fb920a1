#!/usr/bin/python3
"""End-to-end checks of the target (`sheaf scan --target`), the per-class
moments, the co-moment matrix (`sheaf corr`), the --mem limit and the
checksummed sections, against reference computations.

References, named again beside each check:
  - pandas 1.5 from Debian's packages: DataFrame.corr() and DataFrame.cov()
    (pairwise-complete, Pearson, ddof=1), DataFrame.notna() counts,
    DataFrame.groupby(...).agg(count, mean, var);
  - numpy from Debian's packages: numpy.quantile(method='linear');
  - exact rational arithmetic (Python's fractions.Fraction) for columns with
    many shared leading digits, where a double two-pass loses digits.

Data: ../shared/data/open/*.csv (or $SHEAF_DATA/open), the open datasets
shipped by Debian's python3-statsmodels (fertility and co2 carry missing
values), and tables generated here with a fixed seed.  Missing data gives
"SKIP name: reason" lines.  Prints one "PASS name" / "FAIL name: why" line
per check and exits 0.
"""
import json
import math
import os
import re
import shutil
import struct
import subprocess
import sys
import tempfile
from fractions import Fraction
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), ".."))
from refcheck import check, counts, fail, ok, skip  # noqa: E402  (shared PASS/FAIL lines)
from refcheck import (DATA, MISSING, NUMBER, ROOT, SHEAF, SM,  # noqa: E402,F401
                      corr_differences, fclose, moment_differences, run)

import numpy as np
import pandas as pd

os.chdir(ROOT)



def near(got, want, tol):
    """got within tol of want; None matches NaN/None only."""
    if want is None or (isinstance(want, float) and math.isnan(want)):
        return got is None
    return got is not None and abs(got - want) <= tol


TMP = tempfile.mkdtemp(prefix="sheaf-target-")


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


def info_of(summary):
    rc, js, err = run([SHEAF, "info", "--format", "json", summary])
    if rc != 0:
        return None, "info exit %d: %s" % (rc, err)
    try:
        return json.loads(js), ""
    except ValueError as e:
        return None, "info printed bad JSON: %s" % e


def corr_of(summary, covariance=False):
    args = [SHEAF, "corr", "--format", "json", summary]
    if covariance:
        args += ["--basis", "covariance"]
    rc, js, err = run(args)
    if rc != 0:
        return None, "corr exit %d: %s" % (rc, err)
    try:
        return json.loads(js), ""
    except ValueError as e:
        return None, "corr printed bad JSON: %s" % e


def scan(paths, extra=()):
    """Scans; returns (info dict, summary path) or (None, error text)."""
    s, err = scan_file(paths, extra)
    if s is None:
        return None, err
    info, err = info_of(s)
    return (info, s) if info is not None else (None, err)


def raw_table(path):
    """pandas (Debian): every cell as its raw text, nothing converted."""
    return pd.read_csv(path, dtype=str, keep_default_na=False, na_filter=False)


def numeric_frame(raw, names):
    """The cells sheaf parses as numbers, NaN elsewhere (missing spellings and
    text cells are not values)."""
    out = {}
    for c in names:
        col = []
        for s in raw[c].tolist():
            t = s.strip(" ")
            col.append(float(t) if t not in MISSING and NUMBER.match(t) else np.nan)
        out[c] = np.array(col, dtype=float)
    return pd.DataFrame(out, columns=list(names))


def col_by_name(info, name):
    for c in info["columns"]:
        if c["name"] == name:
            return c
    return None


# ---------------------------------------------------------------------------
# Data

def open_sets():
    out = []
    for tag in ("penguins", "mpg", "iris", "tips"):
        p = os.path.join(DATA, "open", tag + ".csv")
        if os.path.exists(p):
            out.append((tag, p))
        else:
            skip(tag, "%s not found" % p)
    for tag, rel in (("fertility", "fertility/fertility.csv"), ("co2", "co2/co2.csv")):
        p = os.path.join(SM, rel)
        if os.path.exists(p):
            out.append((tag, p))
        else:
            skip(tag, "%s not found (python3-statsmodels)" % p)
    return out


def generated_missing(rows=4000, seed=20240611):
    """A made-up table: five correlated numeric columns, an integer count, a
    text group and a text label; 20% of the cells missing (spelled '' or
    'NA'), numpy default_rng with a fixed seed."""
    rng = np.random.default_rng(seed)
    z = rng.normal(size=(rows, 3))
    x1 = 10 + 3 * z[:, 0]
    x2 = 0.5 * x1 + z[:, 1]
    x3 = -2 * x1 + 0.3 * x2 + 5 * z[:, 2]
    x4 = np.exp(z[:, 2] / 2) * 1000
    x5 = rng.uniform(-1, 1, rows) * 1e-3
    cnt = rng.poisson(4, rows)
    grp = rng.choice(["north", "south", "east", "west"], rows)
    label = np.where(x1 + z[:, 1] > 10.5, "high", "low")
    label = np.where(rng.uniform(size=rows) < 0.1, "mid", label)
    cols = [("x1", ["%.6f" % v for v in x1]), ("x2", ["%.6f" % v for v in x2]),
            ("x3", ["%.5f" % v for v in x3]), ("x4", ["%.4f" % v for v in x4]),
            ("x5", ["%.9f" % v for v in x5]), ("count", [str(v) for v in cnt]),
            ("grp", list(grp)), ("label", list(label))]
    holes = rng.uniform(size=(rows, len(cols))) < 0.2
    spell = rng.choice(["", "NA"], size=(rows, len(cols)))
    p = os.path.join(TMP, "generated_missing.csv")
    with open(p, "w") as f:
        f.write(",".join(n for n, _ in cols) + "\n")
        for r in range(rows):
            f.write(",".join(spell[r, j] if holes[r, j] else cols[j][1][r]
                             for j in range(len(cols))) + "\n")
    return p


# ---------------------------------------------------------------------------
# Correlations and covariances vs pandas

def compare_corr(tag, path, summary, info):
    raw = raw_table(path)
    # corr lists the numeric columns that hold at least one number
    numeric = [c["name"] for c in info["columns"] if c["kind"] == "numeric" and c["n"] > 0]
    cr, err = corr_of(summary)
    cv, err2 = corr_of(summary, covariance=True)
    if cr is None or cv is None:
        return fail(tag + ".corr", err or err2)
    check(tag + ".corr.columns", cr["columns"] == numeric and cv["columns"] == numeric,
          "corr columns %s, info numeric columns %s" % (cr["columns"], numeric))
    check(tag + ".corr.header", cr["statistic"] == "correlation"
          and cv["statistic"] == "covariance" and cr["rows"] == len(raw),
          "statistic %r/%r, rows %r (pandas %d)" % (cr["statistic"], cv["statistic"],
                                                    cr["rows"], len(raw)))
    if cr["columns"] != cv["columns"]:
        return fail(tag + ".corr_vs_pandas", "corr and covariance list different columns")
    names = cr["columns"]
    df = numeric_frame(raw, names)
    # pandas (Debian): pairwise-complete Pearson r and covariance (ddof=1)
    want_r = df.corr().to_numpy()
    want_c = df.cov().to_numpy()
    mask = df.notna().to_numpy().astype(np.int64)
    want_n = mask.T @ mask  # pandas notna counts of each pair
    got_n = np.array(cr["pairs_n"], dtype=np.int64)
    check(tag + ".pairs_n", got_n.shape == want_n.shape and (got_n == want_n).all()
          and cv["pairs_n"] == cr["pairs_n"],
          "first difference %s" % (next(((names[i], names[j], int(got_n[i, j]),
                                          int(want_n[i, j]))
                                         for i in range(len(names)) for j in range(len(names))
                                         if got_n.shape == want_n.shape
                                         and got_n[i, j] != want_n[i, j]), None),))
    var = np.diag(want_c)
    bad_r, bad_c, worst = [], [], 0.0
    k = len(names)
    for i in range(k):
        for j in range(k):
            g = cr["matrix"][i][j]
            w = float(want_r[i, j])
            if not near(g, w, 1e-12):  # 1e-12 absolute on r
                bad_r.append("%s,%s: sheaf %r, pandas %r" % (names[i], names[j], g, w))
            elif g is not None:
                worst = max(worst, abs(g - w))
            g = cv["matrix"][i][j]
            w = float(want_c[i, j])
            sc = abs(w)
            if not (math.isnan(var[i]) or math.isnan(var[j])):
                sc = max(sc, math.sqrt(abs(var[i] * var[j])))
            if not near(g, w, 1e-12 * sc):  # 1e-12 of the pair's scale
                bad_c.append("%s,%s: sheaf %r, pandas %r" % (names[i], names[j], g, w))
    check(tag + ".corr_vs_pandas", not bad_r, "%d of %d entries: %s" % (len(bad_r), k * k,
                                                                         "; ".join(bad_r[:3])))
    check(tag + ".cov_vs_pandas", not bad_c, "%d of %d entries: %s" % (len(bad_c), k * k,
                                                                        "; ".join(bad_c[:3])))
    return worst


def compare_quantiles(tag, path, info):
    """numpy.quantile(method='linear') (Debian): within 4 ulps when sheaf
    says the quantiles are exact, else within the stated bound of the two
    order statistics numpy interpolates between."""
    raw = raw_table(path)
    bad = []
    ncols = 0
    for c in info["columns"]:
        if c["kind"] != "numeric" or c["name"] not in raw.columns or not c["n"]:
            continue
        ncols += 1
        x = numeric_frame(raw, [c["name"]])[c["name"]].dropna().to_numpy()
        xs = np.sort(x)
        rel = c["quantile_relative_error"]
        exact = c.get("quantiles_exact")
        if rel is None or not (0 < rel < 1 or (exact and rel == 0)):
            bad.append("%s: quantile_relative_error %r, exact %r" % (c["name"], rel, exact))
            continue
        for key, got in sorted(c["quantiles"].items()):
            q = float(np.quantile(x, float(key), method="linear"))
            h = (len(xs) - 1) * float(key)
            j = int(np.floor(h))
            a, b, g = xs[j], xs[min(j + 1, len(xs) - 1)], h - j
            if exact:
                tol = 4 * np.spacing(max(abs(a), abs(b)))
            else:
                tol = rel * ((1 - g) * abs(a) + g * abs(b)) * (1 + 1e-12)
            if got is None or abs(got - q) > tol:
                bad.append("%s q%s: sheaf %r, numpy %r, tol %.3g" % (c["name"], key, got, q, tol))
    check("%s.quantiles_within_bound.%d_columns" % (tag, ncols), not bad and ncols > 0,
          "; ".join(bad[:4]) or "no numeric column")


def test_corr_open(sets):
    for tag, path in sets:
        if tag not in ("penguins", "mpg", "fertility", "co2"):
            continue
        info, s = scan([path])
        if info is None:
            fail(tag + ".scan", s)
            continue
        compare_corr(tag, path, s, info)
        compare_quantiles(tag, path, info)


def test_corr_generated():
    p = generated_missing()
    raw = raw_table(p)
    share = float((raw == "").to_numpy().mean() + (raw == "NA").to_numpy().mean())
    check("generated_missing.share_near_20pct", 0.18 < share < 0.22,
          "missing share %.3f" % share)
    for extra, tag in (((), "generated_missing"),
                       (("--target", "label"), "generated_missing.target_label"),
                       (("--chunk-size", "1K"), "generated_missing.chunk_1K")):
        info, s = scan([p], extra)
        if info is None:
            fail(tag + ".scan", s)
            continue
        compare_corr(tag, p, s, info)
        if not extra:
            compare_quantiles(tag, p, info)
    return p


# ---------------------------------------------------------------------------
# Shared leading digits, exact reference

def exact_pair(xs, ys):
    """Fraction-exact pairwise-complete covariance and r over the rows where
    both are present (None = missing)."""
    pairs = [(x, y) for x, y in zip(xs, ys) if x is not None and y is not None]
    n = len(pairs)
    mx = sum(x for x, _ in pairs) / n
    my = sum(y for _, y in pairs) / n
    sxy = sum((x - mx) * (y - my) for x, y in pairs)
    sxx = sum((x - mx) ** 2 for x, _ in pairs)
    syy = sum((y - my) ** 2 for _, y in pairs)
    r = math.copysign(math.sqrt(float(sxy * sxy / (sxx * syy))), float(sxy)) if sxy else 0.0
    return n, float(sxy / (n - 1)), r


def test_shared_leading_digits():
    """1e12 + k/64 (exact binary fractions, 13 shared leading digits) and
    epoch microseconds near 1.7e15: r and covariance vs exact rational
    arithmetic (fractions.Fraction), with 5% missing cells."""
    rng = np.random.default_rng(7)
    rows = 6000
    k = rng.integers(0, 64 * 1000, rows)
    noise = rng.integers(-40000, 40000, rows)
    cols = {
        # values whose decimal text is exactly a double
        "big": ["%d.%s" % divmod_text(1000000000000 * 64 + int(v)) for v in k],
        "epoch_us": [str(1700000000000000 + int(v) * 977 + int(e)) for v, e in zip(k, noise)],
        "small": ["%d" % (int(v) % 1000 - 500) for v in k],
        "offset": ["%.2f" % (1e6 + float(v) / 64 - float(e) / 100) for v, e in zip(k, noise)],
    }
    names = list(cols)
    holes = rng.uniform(size=(rows, len(names))) < 0.05
    p = os.path.join(TMP, "leading_digits.csv")
    with open(p, "w") as f:
        f.write(",".join(names) + "\n")
        for r in range(rows):
            f.write(",".join("" if holes[r, j] else cols[names[j]][r]
                             for j in range(len(names))) + "\n")
    exact = {c: [None if holes[r, j] else Fraction(cols[c][r]) for r in range(rows)]
             for j, c in enumerate(names)}
    check("leading_digits.text_is_exact_double",
          all(Fraction(float(s)) == Fraction(s) for s in cols["big"][:200]
              + cols["epoch_us"][:200]), "test data: decimal text not exact in double")
    for size in ("4M", "1K"):
        s, err = scan_file([p], ["--chunk-size", size])
        if s is None:
            fail("leading_digits.chunk_%s.scan" % size, err)
            continue
        cr, err = corr_of(s)
        cv, err2 = corr_of(s, covariance=True)
        if cr is None or cv is None:
            fail("leading_digits.chunk_%s.corr" % size, err or err2)
            continue
        bad_r, bad_c, bad_n = [], [], []
        for i, a in enumerate(cr["columns"]):
            for j, b in enumerate(cr["columns"]):
                if j < i:
                    continue
                n, cov, r = exact_pair(exact[a], exact[b])  # fractions.Fraction
                if cr["pairs_n"][i][j] != n:
                    bad_n.append("%s,%s: %r vs %d" % (a, b, cr["pairs_n"][i][j], n))
                if not near(cr["matrix"][i][j], r, 1e-12):
                    bad_r.append("%s,%s: sheaf %r, exact %r" % (a, b, cr["matrix"][i][j], r))
                if not near(cv["matrix"][i][j], cov, 1e-12 * abs(cov)):
                    bad_c.append("%s,%s: sheaf %r, exact %r" % (a, b, cv["matrix"][i][j], cov))
        t = "leading_digits.chunk_%s" % size
        check(t + ".columns", cr["columns"] == names, "columns %s" % cr["columns"])
        check(t + ".pairs_n", not bad_n, "; ".join(bad_n[:3]))
        check(t + ".corr_exact", not bad_r, "; ".join(bad_r[:3]))
        check(t + ".cov_exact", not bad_c, "; ".join(bad_c[:3]))


def divmod_text(v):
    """v/64 as exact decimal text parts (integer part, fraction digits)."""
    q, r = divmod(v, 64)
    frac = Fraction(r, 64)
    digits = str(frac.numerator * 10 ** 6 // frac.denominator).rjust(6, "0")
    return q, digits


# ---------------------------------------------------------------------------
# Per-class moments vs pandas groupby

def compare_by_class(tag, path, target, info, raw=None):
    raw = raw_table(path) if raw is None else raw
    t = info.get("target") or {}
    if not check(tag + ".target_classify", t.get("name") == target
                 and t.get("task") == "classify", "target %r" % t):
        return
    tv = raw[target].map(lambda s: s.strip(" "))
    has_t = ~tv.isin(MISSING)
    # pandas value_counts of the raw target text
    vc = tv[has_t].value_counts()
    got_levels = {e["value"]: e["rows"] for e in t["levels"]}
    check(tag + ".levels_rows", got_levels == {k: int(v) for k, v in vc.items()},
          "sheaf %s, pandas %s" % (got_levels, dict(vc)))
    numeric = [c["name"] for c in info["columns"] if c["kind"] == "numeric"]
    df = numeric_frame(raw, numeric)
    df["__class"] = tv.where(has_t, None)
    bad_n, bad_m, bad_v, ncols = [], [], [], 0
    for name in numeric:
        c = col_by_name(info, name)
        bc = {e["class"]: e for e in (c.get("by_class") or [])}
        # pandas groupby (Debian): count, mean, var(ddof=1) over present cells
        g = df[[name, "__class"]].dropna(subset=["__class"]).groupby("__class")[name]
        want = g.agg(["count", "mean", "var"])
        ncols += 1
        for cls in set(bc) | set(want.index):
            e = bc.get(cls)
            if cls not in want.index:
                if e and e["n"]:
                    bad_n.append("%s/%s: sheaf n %r, pandas none" % (name, cls, e["n"]))
                continue
            wn, wm, wv = int(want.loc[cls, "count"]), want.loc[cls, "mean"], want.loc[cls, "var"]
            gn = e["n"] if e else 0
            if gn != wn:
                bad_n.append("%s/%s: sheaf n %r, pandas %d" % (name, cls, gn, wn))
                continue
            if wn == 0:
                continue
            if not near(e["mean"], float(wm), 1e-12 * max(abs(wm), 1e-300)):
                bad_m.append("%s/%s: sheaf %r, pandas %r" % (name, cls, e["mean"], wm))
            if wn > 1 and not near(e["variance"], float(wv), 1e-12 * abs(wv)):
                bad_v.append("%s/%s: sheaf %r, pandas %r" % (name, cls, e["variance"], wv))
        # rows with a missing target stay in the column counts
        check("%s.%s.n_counts_all_rows" % (tag, name), c["n"] == int(df[name].notna().sum()),
              "n %r, pandas notna %d" % (c["n"], int(df[name].notna().sum())))
    check("%s.by_class_n.%d_columns" % (tag, ncols), not bad_n, "; ".join(bad_n[:3]))
    check("%s.by_class_mean" % tag, not bad_m, "; ".join(bad_m[:3]))
    check("%s.by_class_variance" % tag, not bad_v, "; ".join(bad_v[:3]))


def test_by_class(sets):
    d = dict(sets)
    for tag, target in (("iris", "species"), ("penguins", "species"), ("tips", "day"),
                        ("penguins", "sex"), ("mpg", "cylinders")):
        path = d.get(tag)
        if not path:
            continue
        name = "%s.by_%s" % (tag, target)
        info, s = scan([path], ["--target", target])
        if info is None:
            fail(name + ".scan", s)
            continue
        compare_by_class(name, path, target, info)
        if target == "sex":
            # penguins: 11 rows without sex; they are not in any class
            raw = raw_table(path)
            nt = int(raw["sex"].isin(MISSING).sum())
            c = col_by_name(info, "bill_length_mm")
            tot = sum(e["n"] for e in c.get("by_class") or [])
            check(name + ".missing_target_left_out",
                  nt > 0 and tot + sum(1 for a, b in zip(raw["sex"], raw["bill_length_mm"])
                                       if a in MISSING and b not in MISSING) == c["n"]
                  and sum(e["rows"] for e in info["target"]["levels"]) == len(raw) - nt,
                  "by_class n total %d, column n %d, %d rows without sex" % (tot, c["n"], nt))
            check(name + ".rows_all_counted", info["rows"] == len(raw),
                  "rows %r, pandas %d" % (info["rows"], len(raw)))


# ---------------------------------------------------------------------------
# Target task decision

def write_table(name, header, rows):
    p = os.path.join(TMP, name)
    with open(p, "w") as f:
        f.write(",".join(header) + "\n")
        for r in rows:
            f.write(",".join(str(v) for v in r) + "\n")
    return p


def target_of(path, extra):
    info, s = scan([path], extra)
    if info is None:
        return None, s
    return info, ""


def test_task_decision(sets):
    rng = np.random.default_rng(99)
    n = 600
    xs = rng.normal(size=n)

    def task_case(name, path, extra, task, declared, dropped=False, nlevels=None):
        info, err = target_of(path, extra)
        if info is None:
            return fail(name, err)
        t = info.get("target") or {}
        why = "target %s" % json.dumps({k: v for k, v in t.items() if k != "levels"})
        why += ", %d levels" % len(t.get("levels") or [])
        cond = (t.get("task") == task and t.get("declared_task") == declared
                and t.get("classes_dropped") == dropped)
        if nlevels is not None:
            cond = cond and len(t.get("levels") or []) == nlevels
        check(name, cond, why)
        return info

    # text target -> classify
    p = write_table("text_target.csv", ["x", "kind"],
                    [("%.4f" % x, ["ant", "bee", "cat"][i % 3]) for i, x in enumerate(xs)])
    task_case("task.text_target_classify", p, ["--target", "kind"], "classify", "auto",
              nlevels=3)
    # numeric target with 50 distinct integers -> classify
    p50 = write_table("int50.csv", ["x", "code"], [("%.4f" % x, i % 50) for i, x in enumerate(xs)])
    info = task_case("task.int_50_levels_classify", p50, ["--target", "code"], "classify",
                     "auto", nlevels=50)
    if info:
        c = col_by_name(info, "x")
        check("task.int_50_levels_classify.by_class", len(c.get("by_class") or []) == 50,
              "by_class entries %d" % len(c.get("by_class") or []))
    # 51 distinct integers -> regress (not a class count problem)
    p51 = write_table("int51.csv", ["x", "code"], [("%.4f" % x, i % 51) for i, x in enumerate(xs)])
    info, err = target_of(p51, ["--target", "code"])
    if info is None:
        fail("task.int_51_levels_regress", err)
    else:
        t = info["target"]
        check("task.int_51_levels_regress", t["task"] == "regress" and t["declared_task"] == "auto",
              "target task %r declared %r" % (t["task"], t["declared_task"]))
    # continuous numeric -> regress, even with few distinct values
    pc = write_table("cont.csv", ["x", "y"], [("%.4f" % x, "%.1f" % (i % 7 + 0.5))
                                              for i, x in enumerate(xs)])
    task_case("task.few_decimals_regress", pc, ["--target", "y"], "regress", "auto")
    mpg = dict(sets).get("mpg")
    if mpg:
        task_case("task.mpg_continuous_regress", mpg, ["--target", "mpg"], "regress", "auto")
        task_case("task.mpg_cylinders_classify", mpg, ["--target", "cylinders"], "classify",
                  "auto", nlevels=5)
        # --task overrides the decision both ways
        task_case("task.override_regress", mpg, ["--target", "cylinders", "--task", "regress"],
                  "regress", "regress")
        info = task_case("task.override_classify", mpg, ["--target", "mpg", "--task", "classify"],
                         "classify", "classify")
        if info:
            compare_by_class("task.override_classify.mpg", mpg, "mpg", info)
        # a numeric target above --max-classes continues as regression
        out = new_path()
        rc, _, err = run([SHEAF, "scan", "-q", mpg, "--target", "cylinders", "--max-classes", "3",
                          "-o", out])
        check("task.numeric_over_max_classes.exit_0", rc == 0, "exit %d: %s" % (rc, err))
        if rc == 0:
            info, err = info_of(out)
            t = (info or {}).get("target") or {}
            check("task.numeric_over_max_classes.regress",
                  t.get("task") == "regress" and t.get("classes_dropped") is True
                  and t.get("max_classes") == 3,
                  "target %r" % {k: v for k, v in t.items() if k != "levels"})
            c = col_by_name(info, "weight") if info else None
            check("task.numeric_over_max_classes.no_by_class", c and "by_class" not in c
                  and c["n"] == 398, "column %r" % (c and {k: c.get(k) for k in ("n", "by_class")}))
        # a text target above --max-classes is an input error
        out = new_path()
        rc, _, err = run([SHEAF, "scan", "-q", mpg, "--target", "name", "--max-classes", "20",
                          "-o", out])
        check("task.text_over_max_classes.exit_3", rc == 3, "exit %d" % rc)
        check("task.text_over_max_classes.message", "--max-classes" in err, "stderr: %s" % err)
        check("task.text_over_max_classes.no_output", not os.path.exists(out), "output exists")
    else:
        skip("task.mpg", "mpg.csv not found")
    # the numeric rule at a generated --max-classes border
    task_case("task.int_50_with_max_classes_50", p50, ["--target", "code", "--max-classes", "50"],
              "classify", "auto", nlevels=50)
    task_case("task.int_50_with_max_classes_49", p50, ["--target", "code", "--max-classes", "49"],
              "regress", "auto", dropped=True, nlevels=0)
    # missing target cells: not a class, but the rows count everywhere else
    pm = write_table("missing_target.csv", ["x", "kind"],
                     [("%.4f" % x, "" if i % 5 == 0 else ("NA" if i % 7 == 0 else
                                                          ["ant", "bee"][i % 2]))
                      for i, x in enumerate(xs)])
    info, err = target_of(pm, ["--target", "kind"])
    if info is None:
        fail("task.missing_target", err)
    else:
        compare_by_class("task.missing_target", pm, "kind", info)
        lv = sum(e["rows"] for e in info["target"]["levels"])
        want = sum(1 for i in range(n) if not (i % 5 == 0 or i % 7 == 0))
        check("task.missing_target.levels_exclude_missing", lv == want and info["rows"] == n,
              "levels rows %d (want %d), rows %d" % (lv, want, info["rows"]))
    out = new_path()
    rc, _, err = run([SHEAF, "scan", "-q", pm, "--target", "no_such", "-o", out])
    check("task.unknown_target.exit_2", rc == 2, "exit %d: %s" % (rc, err))


# ---------------------------------------------------------------------------
# Chunk-size invariance with a target

def same_with_target(name, a, b, ca, cb):
    why = []
    for k in ("rows", "bytes", "short_rows", "long_rows"):
        if a[k] != b[k]:
            why.append("%s %r vs %r" % (k, a[k], b[k]))
    if a.get("target") != b.get("target"):
        why.append("target %r vs %r" % (a.get("target"), b.get("target")))
    if len(a["columns"]) != len(b["columns"]):
        why.append("%d vs %d columns" % (len(a["columns"]), len(b["columns"])))

    for x, y in zip(a["columns"], b["columns"]):
        nm = x["name"]
        # the top list of an overflowed value table (distinct_exact false)
        # is a first-come sample, not a count: compared only when exact
        keys = ["name", "kind", "n", "missing", "non_numeric", "non_finite", "zeros",
                "integers", "min", "max", "distinct", "distinct_exact", "quantiles"]
        if y.get("distinct_exact"):
            keys.append("top")
        for k in keys:
            if x.get(k) != y.get(k):
                why.append("%s.%s %r vs %r" % (nm, k, x.get(k), y.get(k)))
        moment_differences(nm, x, y, max(abs(x["min"] or 0), abs(x["max"] or 0)), why)
    corr_differences(ca, cb, why)
    check(name, not why, "; ".join(why[:4]))


def test_chunk_sizes(sets, generated):
    big = generated_missing(rows=20000, seed=31)
    cases = [("generated_20000.label", big, ["--target", "label"]),
             ("generated_20000.count_int", big, ["--target", "count"]),
             ("generated_20000.x1_regress", big, ["--target", "x1"])]
    d = dict(sets)
    if "penguins" in d:
        cases.append(("penguins.species", d["penguins"], ["--target", "species"]))
    if "mpg" in d:
        cases.append(("mpg.cylinders", d["mpg"], ["--target", "cylinders"]))
    for tag, path, extra in cases:
        base = None
        for size in ("4M", "1K", "7K"):
            info, s = scan([path], extra + ["--chunk-size", size])
            cr, err = corr_of(s) if info is not None else (None, s)
            if info is None or cr is None:
                fail("chunk.%s.%s" % (tag, size), err)
                break
            if base is None:
                base = (info, cr)
                check("chunk.%s.has_target" % tag, info.get("target") is not None,
                      "no target block")
                continue
            same_with_target("chunk.%s.%s_same_as_4M" % (tag, size), info, base[0], cr, base[1])


# ---------------------------------------------------------------------------
# --mem

def test_mem_limit():
    rng = np.random.default_rng(5)
    p = os.path.join(TMP, "wide300.csv")
    with open(p, "w") as f:
        f.write(",".join("w%d" % i for i in range(300)) + "\n")
        for _ in range(200):
            f.write(",".join("%.3f" % v for v in rng.normal(size=300)) + "\n")
    out = new_path()
    rc, _, err = run([SHEAF, "scan", "-q", p, "--mem", "5M", "-o", out])
    check("mem.300_columns_5M.exit_6", rc == 6, "exit %d: %s" % (rc, err))
    check("mem.300_columns_5M.says_need",
          re.search(r"needs? [0-9.]+ ?[KMG]i?B", err) is not None, "stderr: %s" % err)
    check("mem.300_columns_5M.mentions_columns", "--columns" in err, "stderr: %s" % err)
    check("mem.300_columns_5M.one_line", err.count("\n") == 0 and err != "", "stderr: %r" % err)
    check("mem.300_columns_5M.no_output", not os.path.exists(out), "output exists")
    info, s = scan([p])
    check("mem.300_columns_default.ok", info is not None and len(info["columns"]) == 300,
          s if info is None else "%d columns" % len(info["columns"]))
    if info is not None:
        cr, err = corr_of(s)
        check("mem.300_columns_default.corr", cr is not None and len(cr["columns"]) == 300,
              err or "%d columns" % len(cr["columns"]))
    # --mem bounds the whole scan: 20 columns need their co-moments (0.1 MiB)
    # and buffers for 8 chunks of 256 KiB at -j2, so 5 MiB fits them, not 300 columns.
    info, s = scan([p], ["--mem", "5M", "-j", "2",
                         "--columns", ",".join("w%d" % i for i in range(20))])
    check("mem.5M_with_20_columns.ok", info is not None and len(info["columns"]) == 20,
          s if info is None else "%d columns" % len(info["columns"]))


# ---------------------------------------------------------------------------
# Large finite values: a summary that scan writes must read back

def test_huge_values():
    """Finite doubles whose squares overflow (1e200; hex ids such as
    '071012531246e172' that parse as 7.1e183): a scan that exits 0 must
    write a summary that info and corr read (not 'damaged', exit 4)."""
    cases = [
        ("huge_values.1e200", ["x,y", "1e200,1", "-3e200,2", "5,3", "7,4"]),
        ("huge_values.one_column", ["x", "1e200", "3e200"]),
        ("huge_values.hex_ids", ["id,v"] + ["%016x,%d" % (0x9e3779b97f4a7c15 * i % 2 ** 64, i)
                                            for i in range(1, 300)]
         + ["071012531246e172,1", "5589809229720e35,2", "0515968331862739,3"]),
    ]
    for tag, lines in cases:
        p = os.path.join(TMP, tag + ".csv")
        with open(p, "w") as f:
            f.write("\n".join(lines) + "\n")
        out = new_path()
        rc, _, err = run([SHEAF, "scan", "-q", p, "-o", out])
        if not check(tag + ".scan", rc == 0, "exit %d: %s" % (rc, err)):
            continue
        rc, _, err = run([SHEAF, "info", "--format", "json", out])
        check(tag + ".info_reads_back", rc == 0, "scan exit 0, then info exit %d: %s" % (rc, err))
        rc, _, err = run([SHEAF, "corr", "--format", "json", out])
        check(tag + ".corr_reads_back", rc == 0, "scan exit 0, then corr exit %d: %s" % (rc, err))


# ---------------------------------------------------------------------------
# Damaged sections

def sections(data):
    """Section table of a summary, after the layout in the header comment of
    src/summary/summary.c: 8-byte magic, u32 version, then sections of u32
    tag, u64 length, payload, u64 checksum.  Returns [(tag, start, payload
    start, payload end, end)] or None when the bytes do not follow it."""
    out = []
    o = 12
    while o + 12 <= len(data):
        tag, ln = struct.unpack("<4sQ", data[o:o + 12])
        tag = tag.decode("latin-1")
        # the trailer 'END.' carries the whole-file checksum as its payload
        end = o + 12 + ln + (0 if tag == "END." else 8)
        if end > len(data):
            return None
        out.append((tag, o, o + 12, o + 12 + ln, end))
        o = end
        if tag == "END.":
            break
    return out if o == len(data) else None


def test_damaged_sections(sets):
    path = dict(sets).get("penguins") or generated_missing(rows=500, seed=3)
    s, err = scan_file([path], ["--target", "species" if "penguins" in path else "label"])
    if s is None:
        return fail("damaged.scan", err)
    data = open(s, "rb").read()
    size = len(data)
    offs = {}
    secs = sections(data)
    if check("damaged.layout_parsed", secs is not None and any(t == "COMO" for t, *_ in secs),
             "section walk failed or no COMO section: %s" % (secs and [t for t, *_ in secs])):
        for tag, start, pstart, pend, end in secs:
            for o in (start, start + 5, pstart, (pstart + pend) // 2, pend - 1, pend, end - 1):
                if 0 <= o < size:
                    offs.setdefault(o, "%s+%d" % (tag, o - start))
    # plus evenly spaced offsets and the last 64 bytes
    for i in range(40):
        offs.setdefault(i * (size - 1) // 39, "even")
    for o in range(max(0, size - 64), size):
        offs.setdefault(o, "tail")
    bad = []
    for o in sorted(offs):
        d = bytearray(data)
        d[o] ^= 0x10
        p = os.path.join(TMP, "flip.sheaf")
        open(p, "wb").write(bytes(d))
        rc, outp, err = run([SHEAF, "info", "--format", "json", p])
        rc2, _, _ = run([SHEAF, "corr", "--format", "json", p])
        if rc != 4 or rc2 != 4 or outp:
            bad.append("offset %d (%s): info exit %d, corr exit %d, %d stdout bytes"
                       % (o, offs[o], rc, rc2, len(outp)))
    check("damaged.flipped_byte_refused.%d_offsets" % len(offs), not bad, "; ".join(bad[:4]))
    if secs:
        como = [x for x in secs if x[0] == "COMO"][0]
        bad = []
        for o in range(como[2], como[3], max(1, (como[3] - como[2]) // 50)):
            d = bytearray(data)
            d[o] ^= 0x01
            p = os.path.join(TMP, "flip.sheaf")
            open(p, "wb").write(bytes(d))
            rc, _, _ = run([SHEAF, "corr", "--format", "json", p])
            if rc != 4:
                bad.append("offset %d: corr exit %d" % (o, rc))
        check("damaged.comoment_payload_refused", not bad, "; ".join(bad[:4]))
    for label, cut in (("last_byte", size - 1), ("last_8", size - 8),
                       ("trailer", size - 20), ("half", size // 2)):
        p = os.path.join(TMP, "cut.sheaf")
        open(p, "wb").write(data[:cut])
        rc, _, _ = run([SHEAF, "info", "--format", "json", p])
        check("damaged.truncated_%s.exit_4" % label, rc == 4,
              "%d of %d bytes: exit %d" % (cut, size, rc))


def main():
    if not os.access(SHEAF, os.X_OK):
        fail("binary", "%s not found (run make first)" % os.path.abspath(SHEAF))
        return
    sets = open_sets()
    try:
        test_corr_open(sets)
        generated = test_corr_generated()
        test_shared_leading_digits()
        test_by_class(sets)
        test_task_decision(sets)
        test_chunk_sizes(sets, generated)
        test_mem_limit()
        test_huge_values()
        test_damaged_sections(sets)
    finally:
        shutil.rmtree(TMP, ignore_errors=True)


if __name__ == "__main__":
    try:
        main()
    except Exception as e:  # a crash of the script is one failed check, not a silent stop
        import traceback
        traceback.print_exc()
        fail("test_target.py", "%s: %s" % (type(e).__name__, e))
    sys.exit(0)
