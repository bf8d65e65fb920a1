#!/usr/bin/python3
"""End-to-end column statistics of `sheaf scan` + `sheaf info --format json`
against reference computations.

References, named again beside each check:
  - numpy 1.24 / scipy / pandas from Debian's packages (mean, var(ddof=1),
    std(ddof=1), min, max, scipy.stats.skew(bias=True),
    scipy.stats.kurtosis(fisher=True, bias=True), numpy.quantile(method=
    'linear'), pandas nunique / value_counts on the raw text);
  - exact rational arithmetic (Python's fractions.Fraction) on the decimal
    text of the cells;
  - the certified values of the NIST StRD one-way ANOVA datasets
    (../shared/data/nist_anova, certified "Within" mean square);
  - NIST StRD univariate NumAcc1-4, recalled from memory (see below).

Data: ../shared/data/open/*.csv (or $SHEAF_DATA/open) and the open datasets
shipped by Debian's python3-statsmodels.  Missing data gives "SKIP name:
reason" lines.  Prints one "PASS name" / "FAIL name: why" line per check and
exits 0.
"""
import gzip
import json
import math
import os
import re
import shutil
import subprocess
import sys
import tempfile
from fractions import Fraction
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), ".."))
from refcheck import check, counts, fail, ok, skip  # noqa: E402  (shared PASS/FAIL lines)
from refcheck import DATA, MISSING, NONFINITE, NUMBER, ROOT, SHEAF, SM  # noqa: E402,F401

import numpy as np
import pandas as pd
from scipy import stats

os.chdir(ROOT)

TOP = 5


def close(name, got, want, rel=1e-12, scale=None):
    """|got - want| <= rel * max(|want|, scale)."""
    if got is None or want is None or (isinstance(want, float) and math.isnan(want)):
        return check(name, got is None and (want is None or math.isnan(want)),
                     "got %r, want %r" % (got, want))
    floor = abs(want) if scale is None else max(abs(want), scale)
    tol = rel * floor
    return check(name, abs(got - want) <= tol,
                 "got %.17g, want %.17g (|diff| %.3g > tol %.3g)"
                 % (got, want, abs(got - want), tol))


TMP = tempfile.mkdtemp(prefix="sheaf-ref-")


def run(args, stdin=None):
    p = subprocess.run(args, input=stdin, stdout=subprocess.PIPE,
                       stderr=subprocess.PIPE)
    return p.returncode, p.stdout, p.stderr


_n = [0]


def scan(paths, extra=(), stdin=None, top=TOP):
    """Scans, returns (info dict or None, error text)."""
    _n[0] += 1
    out = os.path.join(TMP, "s%d.sheaf" % _n[0])
    rc, _, err = run([SHEAF, "scan", "-q"] + list(paths) + ["-o", out] + list(extra),
                     stdin=stdin)
    if rc != 0:
        return None, "scan exit %d: %s" % (rc, err.decode(errors="replace").strip())
    rc, js, err = run([SHEAF, "info", "--format", "json", "--top-values", str(top), out])
    if rc != 0:
        return None, "info exit %d: %s" % (rc, err.decode(errors="replace").strip())
    try:
        return json.loads(js), ""
    except ValueError as e:
        return None, "info printed bad JSON: %s" % e


def parse_cells(raw):
    """Raw cells -> (finite floats, non-numeric count, non-finite count)."""
    vals, text, nonfin = [], 0, 0
    for s in raw:
        t = s.strip(" ")
        if NUMBER.match(t):
            vals.append(float(t))
        elif NONFINITE.match(t):
            nonfin += 1
        else:
            text += 1
    return np.array(vals, dtype=float), text, nonfin


def exact_shape(raw_numbers):
    """Exact g1 and excess g2 (biased moment ratios) of decimal strings,
    by fractions.Fraction, rounded once to double."""
    xs = [Fraction(s.strip(" ")) for s in raw_numbers]
    n = len(xs)
    mean = sum(xs) / n
    d = [x - mean for x in xs]
    m2 = sum(e * e for e in d) / n
    m3 = sum(e ** 3 for e in d) / n
    m4 = sum(e ** 4 for e in d) / n
    g1 = math.copysign(math.sqrt(float(m3 * m3 / m2 ** 3)), float(m3))
    return g1, float(m4 / (m2 * m2) - 3)


def exact_mean_var(raw_numbers):
    """Exact mean and sample variance (Fraction) of decimal strings."""
    xs = [Fraction(s.strip(" ")) for s in raw_numbers]
    n = len(xs)
    mean = sum(xs) / n
    var = sum((x - mean) ** 2 for x in xs) / (n - 1) if n > 1 else None
    return mean, var


# ---------------------------------------------------------------------------
# Per-column comparison of one dataset.

def compare_dataset(tag, path, info, extra_missing=None, shape_ref="scipy"):
    missing = MISSING if extra_missing is None else extra_missing
    # pandas from Debian: raw text of every cell, nothing converted.
    df = pd.read_csv(path, dtype=str, keep_default_na=False, na_filter=False)
    check("%s.rows" % tag, info["rows"] == len(df),
          "rows %d, pandas %d" % (info["rows"], len(df)))
    names = [c["name"] for c in info["columns"]]
    check("%s.columns" % tag, names == list(df.columns),
          "sheaf %s, pandas %s" % (names, list(df.columns)))
    for c in info["columns"]:
        name = c["name"]
        if name not in df.columns:
            continue
        t = "%s.%s" % (tag, name)
        raw = df[name].tolist()
        present = [s for s in raw if s not in missing]
        # missing cells: count of the spellings in the raw text (pandas)
        check(t + ".missing", c["missing"] == len(raw) - len(present),
              "sheaf %d, reference %d" % (c["missing"], len(raw) - len(present)))
        # distinct: pandas nunique of the raw non-missing strings
        want = pd.Series(present, dtype=object).nunique()
        if c["distinct_exact"]:
            check(t + ".distinct", c["distinct"] == want,
                  "sheaf %r, pandas nunique %d" % (c["distinct"], want))
        else:
            # HyperLogLog p=14: standard error 0.81%; allow 4 sigma.
            check(t + ".distinct_estimate", abs(c["distinct"] - want) <= 0.033 * want
                  and want > 1024, "sheaf ~%r, pandas nunique %d" % (c["distinct"], want))
        # top values: pandas value_counts of the raw strings; ties at the
        # boundary may be broken either way, so compare counts and each
        # reported value's own count.
        vc = pd.Series(present, dtype=object).value_counts()
        want_counts = sorted(vc.tolist(), reverse=True)[:TOP]
        got_counts = [e["count"] for e in c["top"]]
        bad = [(e["value"], e["count"], int(vc.get(e["value"], 0))) for e in c["top"]
               if int(vc.get(e["value"], 0)) != e["count"]]
        check(t + ".top", got_counts == want_counts and not bad,
              "sheaf counts %s, value_counts %s; mismatched (value, sheaf, pandas) %s"
              % (got_counts, want_counts, bad[:3]))

        x, n_text, n_nonfin = parse_cells(present)
        # kind: numeric when numbers (finite or not) are >= 99% of the
        # present cells (info's default --numeric-share)
        numeric = not present or (len(x) + n_nonfin) >= 0.99 * len(present)
        check(t + ".kind", c["kind"] == ("numeric" if numeric else "categorical"),
              "kind %s with %d numbers, %d non-finite and %d text cells"
              % (c["kind"], len(x), n_nonfin, n_text))
        if not numeric:
            continue
        check(t + ".n", c["n"] == len(x), "sheaf %d, reference %d" % (c["n"], len(x)))
        check(t + ".non_numeric", c["non_numeric"] == n_text,
              "sheaf %d, reference %d" % (c["non_numeric"], n_text))
        check(t + ".non_finite", c["non_finite"] == n_nonfin,
              "sheaf %d, reference %d" % (c["non_finite"], n_nonfin))
        if len(x) == 0:
            continue
        scale = float(np.max(np.abs(x)))
        # numpy from Debian: mean, var(ddof=1), std(ddof=1), min, max
        close(t + ".mean", c["mean"], float(np.mean(x)), scale=scale)
        close(t + ".min", c["min"], float(np.min(x)))
        close(t + ".max", c["max"], float(np.max(x)))
        if len(x) > 1:
            close(t + ".variance", c["variance"], float(np.var(x, ddof=1)))
            close(t + ".sd", c["sd"], float(np.std(x, ddof=1)))
        if len(x) > 2 and np.var(x) > 0 and shape_ref == "scipy":
            # scipy.stats.skew(bias=True): g1; kurtosis(fisher=True, bias=True): g2
            close(t + ".skewness", c["skewness"], float(stats.skew(x, bias=True)), scale=1.0)
            close(t + ".kurtosis", c["kurtosis"],
                  float(stats.kurtosis(x, fisher=True, bias=True)), scale=1.0)
        elif len(x) > 2 and np.var(x) > 0:
            # exact g1, g2 (fractions.Fraction): scipy's double two-pass
            # loses digits on values with many constant leading digits.
            nums = [s for s in present if NUMBER.match(s.strip(" "))]
            g1, g2 = exact_shape(nums)
            close(t + ".skewness", c["skewness"], g1, scale=1.0)
            close(t + ".kurtosis", c["kurtosis"], g2, scale=1.0)
        check_quantiles(t, c, x, len(set(present)))


def linear_neighbours(xs, p):
    """numpy.quantile(method='linear') of sorted xs: (x_j, x_j+1, g)."""
    h = (len(xs) - 1) * p
    j = min(max(int(math.floor(h)), 0), len(xs) - 1)
    return xs[j], xs[min(j + 1, len(xs) - 1)], h - j


def check_quantiles(t, c, x, distinct_texts):
    """Quantiles by numpy.quantile(method='linear') (Debian numpy 1.24, its
    default; Hyndman & Fan definition 7): exact (within 4 ulps of numpy) when
    the value table holds every number, i.e. at most --max-levels (1024)
    distinct cells; otherwise within the reported bound
    eps ((1 - g)|x_j| + g|x_j+1|) of numpy's value."""
    rel = c["quantile_relative_error"]
    exact = distinct_texts <= 1024
    if not check(t + ".quantiles_exact_iff_table_holds_all",
                 c.get("quantiles_exact") == exact and (rel == 0) == exact,
                 "quantiles_exact %r, relative error %r, %d distinct cells"
                 % (c.get("quantiles_exact"), rel, distinct_texts)):
        return
    if not exact and not check(t + ".quantile_bound", rel is not None and 0 < rel < 1,
                               "quantile_relative_error %r" % rel):
        return
    xs = np.sort(x)
    bad = []
    for key, got in sorted(c["quantiles"].items()):
        q = float(np.quantile(x, float(key), method="linear"))
        a, b, g = linear_neighbours(xs, float(key))
        if exact:
            tol = 4 * np.spacing(max(abs(a), abs(b)))
        else:
            tol = rel * ((1 - g) * abs(a) + g * abs(b)) * (1 + 1e-12) + 4 * np.spacing(abs(q))
        if got is None or abs(got - q) > tol:
            bad.append("%s: sheaf %r, numpy %r, tol %.3g" % (key, got, q, tol))
    check(t + ".quantiles_vs_numpy_linear", not bad and len(c["quantiles"]) == 7,
          "; ".join(bad) or "keys %s" % sorted(c["quantiles"]))


def datasets():
    """(tag, path) of the open datasets, with SKIP lines for absent ones."""
    out = []
    for tag in ("penguins", "mpg", "iris", "tips"):
        p = os.path.join(DATA, "open", tag + ".csv")
        if os.path.exists(p):
            out.append((tag, p))
        else:
            skip(tag, "%s not found" % p)
    for tag, rel in (("longley", "longley/longley.csv"), ("fair", "fair/fair.csv"),
                     ("stackloss", "stackloss/stackloss.csv"),
                     ("star98", "star98/star98.csv"), ("macrodata", "macrodata/macrodata.csv"),
                     ("grunfeld", "grunfeld/grunfeld.csv"), ("randhie", "randhie/randhie.csv")):
        p = os.path.join(SM, rel)
        if os.path.exists(p):
            out.append((tag, p))
        else:
            skip(tag, "%s not found (python3-statsmodels)" % p)
    return out


def strip_sources(info):
    d = dict(info)
    d.pop("sources", None)
    return d


def same_counts(name, a, b):
    """Counts, extremes and quantiles equal; moments to 1e-12."""
    if a is None or b is None:
        return fail(name, "no summary")
    why = []
    for k in ("rows", "bytes", "short_rows", "long_rows"):
        if a[k] != b[k]:
            why.append("%s %r vs %r" % (k, a[k], b[k]))
    for ca, cb in zip(a["columns"], b["columns"]):
        for k in ("name", "kind", "n", "missing", "non_numeric", "non_finite", "zeros",
                  "integers", "min", "max", "distinct", "distinct_exact", "top",
                  "quantiles", "quantile_relative_error"):
            if ca.get(k) != cb.get(k):
                why.append("%s.%s %r vs %r" % (ca["name"], k, ca.get(k), cb.get(k)))
        for k in ("mean", "variance", "sd", "skewness", "kurtosis"):
            x, y = ca.get(k), cb.get(k)
            if x is None or y is None:
                if x != y:
                    why.append("%s.%s %r vs %r" % (ca["name"], k, x, y))
                continue
            if k in ("skewness", "kurtosis"):
                sc = 1.0
            elif k == "mean":
                sc = max(abs(ca["min"] or 0), abs(ca["max"] or 0))
            else:
                sc = abs(y)
            if abs(x - y) > 1e-12 * sc:
                why.append("%s.%s %.17g vs %.17g" % (ca["name"], k, x, y))
    if len(a["columns"]) != len(b["columns"]):
        why.append("%d vs %d columns" % (len(a["columns"]), len(b["columns"])))
    check(name, not why, "; ".join(why[:4]))


# ---------------------------------------------------------------------------

def test_open_datasets(sets):
    for tag, path in sets:
        info, err = scan([path])
        if info is None:
            fail(tag + ".scan", err)
            continue
        compare_dataset(tag, path, info)


def test_mpg_question_mark(sets):
    """mpg as distributed with '?' for missing horsepower (here written from
    the empty cells): same statistics, '?' counted as missing."""
    src = dict(sets).get("mpg")
    if not src:
        return skip("mpg_qmark", "mpg.csv not found")
    lines = open(src).read().split("\n")
    head = lines[0].split(",")
    hp = head.index("horsepower")
    out = []
    for ln in lines[1:]:
        if not ln:
            continue
        f = ln.split(",")
        if f[hp] == "":
            f[hp] = "?"
        out.append(",".join(f))
    p = os.path.join(TMP, "mpg_qmark.csv")
    with open(p, "w") as fh:
        fh.write(lines[0] + "\n" + "\n".join(out) + "\n")
    check("mpg_qmark.has_question_marks", sum(1 for ln in out if ",?," in ln) > 0,
          "no '?' cell written")
    info, err = scan([p])
    if info is None:
        return fail("mpg_qmark.scan", err)
    compare_dataset("mpg_qmark", p, info)
    base, err = scan([src])
    if base:
        a = [c for c in info["columns"] if c["name"] == "horsepower"][0]
        b = [c for c in base["columns"] if c["name"] == "horsepower"][0]
        keys = ("n", "missing", "mean", "variance", "quantiles", "distinct")
        check("mpg_qmark.horsepower_same_as_empty",
              all(a[k] == b[k] for k in keys),
              "; ".join("%s %r vs %r" % (k, a[k], b[k]) for k in keys if a[k] != b[k]))


def test_spellings():
    """Every default missing spelling is missing, in any letter case; other text is counted as
    raw text ('1' and '1.0' are two distinct values, ' 3 ' keeps its
    spaces as a value but parses as 3); inf/nan spellings are non-finite."""
    a = ["1", "1.0", "1", "2", "NA", "N/A", "null", "NULL", "None", "-", "?", "",
         " 3 ", "+4", ".5", "5.", "1e2", "-2.5E-1", "1", "2"]
    b = ["x", "inf", "-inf", "NaN", "Infinity", "nan", "7", "8", "9", "10",
         "11", "12", "13", "14", "15", "16", "17", "18", "19", "20"]
    cc = ["na", "n/a", "none", "Null", "--", "??", "NA ", " NA", "'NA'", "nil",
          "a", "b", "a", "a", "b", "c", "NA", "", "?", "-"]
    p = os.path.join(TMP, "spellings.csv")
    with open(p, "w") as f:
        f.write("a,b,c\n")
        for row in zip(a, b, cc):
            f.write(",".join(row) + "\n")
    info, err = scan([p])
    if info is None:
        return fail("spellings.scan", err)
    compare_dataset("spellings", p, info)
    ca = info["columns"][0]
    check("spellings.a.missing_is_8", ca["missing"] == 8, "missing %r" % ca["missing"])
    # '1', '1.0', '2', ' 3 ', '+4', '.5', '5.', '1e2', '-2.5E-1' (raw text)
    check("spellings.a.distinct_raw_text", ca["distinct"] == 9, "distinct %r" % ca["distinct"])
    cb = info["columns"][1]
    check("spellings.b.non_finite_is_5", cb["non_finite"] == 5,
          "non_finite %r" % cb["non_finite"])
    # Spellings match in any letter case (na, n/a, none, Null are missing);
    # spaces, quotes and other words still make a value.
    check("spellings.c.other_cases_missing_near_spellings_not", info["columns"][2]["missing"] == 8,
          "missing %r (na, n/a, none, Null, NA, '', ?, - are spellings; 'NA ', ' NA', "
          "\"'NA'\", nil, --, ?? are not)" % info["columns"][2]["missing"])


def test_compressed(sets):
    """gzip (python gzip module), two-member gzip (header member + rest) and
    zstd (zstd CLI) give the same info JSON as the plain file, apart from
    the sources block."""
    have_zstd = shutil.which("zstd") is not None
    if not have_zstd:
        skip("compressed.zstd", "zstd command not found")
    for tag in ("penguins", "tips", "fair"):
        path = dict(sets).get(tag)
        if not path:
            continue
        data = open(path, "rb").read()
        plain, err = scan([path])
        if plain is None:
            fail(tag + ".compressed.plain_scan", err)
            continue
        gz = os.path.join(TMP, tag + ".csv.gz")
        with open(gz, "wb") as f:
            f.write(gzip.compress(data))
        cut = data.index(b"\n") + 1
        mm = os.path.join(TMP, tag + ".multi.gz")
        with open(mm, "wb") as f:
            f.write(gzip.compress(data[:cut]) + gzip.compress(data[cut:]))
        variants = [("gzip", gz, "gzip"), ("gzip_multimember", mm, "gzip")]
        if have_zstd:
            zs = os.path.join(TMP, tag + ".csv.zst")
            rc = subprocess.run(["zstd", "-q", "-f", "-19", path, "-o", zs]).returncode
            if rc == 0:
                variants.append(("zstd", zs, "zstd"))
            else:
                fail(tag + ".compressed.zstd_cli", "zstd exited %d" % rc)
        for label, p, fmt in variants:
            info, err = scan([p])
            name = "%s.%s_same_as_plain" % (tag, label)
            if info is None:
                fail(name, err)
                continue
            a, b = strip_sources(info), strip_sources(plain)
            diff = [k for k in set(a) | set(b) if a.get(k) != b.get(k)]
            if "columns" in diff:
                diff.remove("columns")
                diff += ["column " + x["name"] for x, y in zip(a["columns"], b["columns"])
                         if x != y]
            check(name, not diff, "differs in %s" % diff[:5])
            s = info["sources"][0]
            check("%s.%s_source_format" % (tag, label),
                  s["format"] == fmt and s["raw_bytes"] == os.path.getsize(p)
                  and s["size_bytes"] == os.path.getsize(p),
                  "source %r, file size %d" % (s, os.path.getsize(p)))


def test_chunk_sizes(sets):
    """--chunk-size 1K, 7K and 4M: counts identical, moments to 1e-12."""
    for tag in ("fair", "randhie", "penguins", "tips"):
        path = dict(sets).get(tag)
        if not path:
            continue
        base, err = scan([path], ["--chunk-size", "4M"])
        if base is None:
            fail(tag + ".chunk_4M", err)
            continue
        for size in ("1K", "7K"):
            info, err = scan([path], ["--chunk-size", size])
            if info is None:
                fail("%s.chunk_%s" % (tag, size), err)
                continue
            same_counts("%s.chunk_%s_same_as_4M" % (tag, size), info, base)


def test_stdin(sets):
    """'-' reads standard input: same statistics as the file."""
    for tag in ("penguins", "fair"):
        path = dict(sets).get(tag)
        if not path:
            continue
        base, err = scan([path])
        info, err2 = scan(["-"], stdin=open(path, "rb").read())
        if base is None or info is None:
            fail(tag + ".stdin", err or err2)
            continue
        same_counts(tag + ".stdin_same_as_file", info, base)
        check(tag + ".stdin_source_path", info["sources"][0]["path"] == "-",
              "path %r" % info["sources"][0]["path"])
        gz = gzip.compress(open(path, "rb").read())
        info, err = scan(["-"], stdin=gz)
        if info is None:
            fail(tag + ".stdin_gzip", err)
        else:
            same_counts(tag + ".stdin_gzip_same_as_file", info, base)


# ---------------------------------------------------------------------------
# NIST StRD

def write_column(path, name, values):
    with open(path, "w") as f:
        f.write(name + "\n")
        for v in values:
            f.write(v + "\n")


def test_nist_anova():
    d = os.path.join(DATA, "nist_anova")
    files = sorted(f for f in os.listdir(d) if f.endswith(".dat")) if os.path.isdir(d) else []
    if not files:
        return skip("nist_anova", "%s not found" % d)
    for fn in files:
        tag = "nist_anova." + fn[:-4]
        lines = open(os.path.join(d, fn)).read().split("\n")
        # Certified values: the "Within ..." line of the certified block,
        # "Within <Source> df SS MS" (NIST StRD ANOVA file layout).
        cert = [ln for ln in lines[30:60] if ln.startswith("Within")]
        if len(cert) != 1:
            fail(tag + ".certified", "no 'Within' line found")
            continue
        nums = cert[0].split()[2:]
        df_w, ms_w = int(nums[0]), float(nums[2])
        groups = {}
        responses = []
        for ln in lines[60:]:
            parts = ln.split()
            if len(parts) != 2:
                continue
            groups.setdefault(parts[0], []).append(parts[1])
            responses.append(parts[1])
        k, N = len(groups), len(responses)
        check(tag + ".layout", N - k == df_w, "N-k = %d, certified df %d" % (N - k, df_w))
        pooled = 0.0
        bad = None
        for g, vals in groups.items():
            p = os.path.join(TMP, "%s_%s.csv" % (fn, g))
            write_column(p, "response", vals)
            info, err = scan([p])
            if info is None:
                bad = err
                break
            c = info["columns"][0]
            if c["n"] != len(vals) or c["variance"] is None:
                bad = "treatment %s: n %r of %d, variance %r" % (g, c["n"], len(vals),
                                                               c["variance"])
                break
            pooled += (c["n"] - 1) * c["variance"]
        if bad:
            fail(tag + ".within_mean_square", bad)
        else:
            # NIST StRD certified "Within" mean square, 12 significant digits
            close(tag + ".within_mean_square", pooled / (N - k), ms_w, rel=1e-12)
        p = os.path.join(TMP, fn + "_all.csv")
        write_column(p, "response", responses)
        info, err = scan([p])
        if info is None:
            fail(tag + ".overall_mean", err)
            continue
        # exact decimal arithmetic (fractions.Fraction on the text)
        mean, var = exact_mean_var(responses)
        close(tag + ".overall_mean", info["columns"][0]["mean"], float(mean), rel=1e-14)
        check(tag + ".overall_n", info["columns"][0]["n"] == N,
              "n %r, want %d" % (info["columns"][0]["n"], N))


def test_nist_numacc():
    # NIST StRD univariate summary statistics, NumAcc1-4.  These definitions
    # and certified values are recalled from memory of the NIST StRD pages,
    # not copied from the files (which are not in ../shared/data):
    #   NumAcc1: 10000001, 10000003, 10000002        mean 10000002,  sd 1
    #   NumAcc2: 1.2, then 1.1, 1.3 alternating (1001) mean 1.2,      sd 0.1
    #   NumAcc3: 1000000.2, then 1000000.1, 1000000.3  mean 1000000.2, sd 0.1
    #   NumAcc4: 10000000.2, then 10000000.1, 10000000.3 mean 10000000.2, sd 0.1
    def alternating(first, lo, hi):
        return [first] + [lo if i % 2 == 0 else hi for i in range(1000)]
    cases = [
        ("NumAcc1", ["10000001", "10000003", "10000002"], 10000002.0, 1.0),
        ("NumAcc2", alternating("1.2", "1.1", "1.3"), 1.2, 0.1),
        ("NumAcc3", alternating("1000000.2", "1000000.1", "1000000.3"), 1000000.2, 0.1),
        ("NumAcc4", alternating("10000000.2", "10000000.1", "10000000.3"), 10000000.2, 0.1),
    ]
    for tag, vals, mean, sd in cases:
        p = os.path.join(TMP, tag + ".csv")
        write_column(p, "y", vals)
        info, err = scan([p])
        if info is None:
            fail("nist." + tag, err)
            continue
        c = info["columns"][0]
        check("nist.%s.n" % tag, c["n"] == len(vals), "n %r" % c["n"])
        # certified values (from memory), 14 significant digits
        close("nist.%s.mean" % tag, c["mean"], mean, rel=1e-14)
        close("nist.%s.sd" % tag, c["sd"], sd, rel=1e-14)


def test_epoch_microseconds():
    """16-digit integers (epoch microseconds): variance to 12 digits against
    exact rational arithmetic (fractions.Fraction)."""
    vals = [str(1700000000000000 + (i * 7919) % 1000003) for i in range(20000)]
    p = os.path.join(TMP, "epoch_us.csv")
    write_column(p, "t_us", vals)
    for size in ("4M", "1K"):
        info, err = scan([p], ["--chunk-size", size])
        if info is None:
            fail("epoch_us.chunk_%s" % size, err)
            continue
        c = info["columns"][0]
        if size == "4M":
            # 20000 distinct values overflow the value table (1024 levels):
            # distinct is the HyperLogLog estimate, still checked vs pandas.
            check("epoch_us.value_table_full", c["value_table_full"] and not c["distinct_exact"],
                  "value_table_full %r, distinct_exact %r" % (c["value_table_full"],
                                                              c["distinct_exact"]))
            compare_dataset("epoch_us", p, info, shape_ref="exact")
        mean, var = exact_mean_var(vals)
        close("epoch_us.chunk_%s.variance" % size, c["variance"], float(var), rel=1e-12)
        close("epoch_us.chunk_%s.mean" % size, c["mean"], float(mean), rel=1e-15)
        check("epoch_us.chunk_%s.min_max" % size,
              c["min"] == float(min(vals, key=int)) and c["max"] == float(max(vals, key=int)),
              "min %r max %r" % (c["min"], c["max"]))


def test_exact_quantiles():
    """Medians and quantiles are exact when the value table holds every
    number, and marked '~' only where a bucket estimate is used.  Reference:
    numpy.quantile(method='linear') (Debian numpy 1.24), and for the exact
    cases exact rational arithmetic (fractions.Fraction) of the same
    definition: x_j + g (x_j+1 - x_j), h = (n - 1) p, j = floor(h), g = h - j."""
    probs = (0.01, 0.05, 0.25, 0.5, 0.75, 0.95, 0.99)
    long_a = "1000000000000.000000000000000001"   # 32 characters: the label is whole
    long_b = "1000000000000.0000000000000000025"  # 33: cut at 32 bytes
    cases = [
        ("one_four_six_ten", ["1", "4", "6", "10"], True, 5.0),
        ("fours_and_sixes", ["4", "6"] * 10, True, 5.0),
        ("fours_and_sixes_odd", ["4", "6"] * 10 + ["4"], True, 4.0),
        ("mixed_spellings", ["2.50", "2.5", "-1e0", "7", "0.000", "3.25"], True, None),
        ("prices", ["%d.%02d" % (i * 37 % 1000, i * 13 % 100) for i in range(500)], True, None),
        ("whole_long_label", [long_a, "1000000000000", "1000000000000.000000000000000003"], True, None),
        ("label_cut_short", [long_b, "1000000000000", "1000000000000.000000000000000003"], False, None),
        ("table_overflowed", [str(i) for i in range(3000)], False, None),
    ]
    for tag, vals, exact, median in cases:
        t = "quantiles." + tag
        p = os.path.join(TMP, tag + ".csv")
        write_column(p, "v", vals)
        info, err = scan([p])
        if info is None:
            fail(t, err)
            continue
        c = info["columns"][0]
        if not check(t + ".exact_flag", c["quantiles_exact"] == exact
                     and (c["quantile_relative_error"] == 0) == exact,
                     "quantiles_exact %r, relative error %r" % (c["quantiles_exact"],
                                                               c["quantile_relative_error"])):
            continue
        x = np.array([float(v) for v in vals])
        xs = sorted(Fraction(v) for v in vals)
        bad = []
        for pr in probs:
            got = c["quantiles"]["%g" % pr]
            q = float(np.quantile(x, pr, method="linear"))
            if exact:
                h = (len(xs) - 1) * pr  # the double product numpy forms
                j = int(math.floor(h))
                g = Fraction(h - j)
                a, b = xs[j], xs[min(j + 1, len(xs) - 1)]
                want = float(a + g * (b - a))
                ok_ = abs(got - want) <= 2 * np.spacing(abs(want)) and \
                    abs(got - q) <= 4 * np.spacing(abs(q))
            else:
                a, b, g = linear_neighbours(np.sort(x), pr)
                tol = c["quantile_relative_error"] * ((1 - g) * abs(a) + g * abs(b)) * (1 + 1e-12)
                want = q
                ok_ = abs(got - q) <= tol + 4 * np.spacing(abs(q))
            if not ok_:
                bad.append("p %g: sheaf %r, exact %r, numpy %r" % (pr, got, want, q))
        check(t + ".vs_numpy_linear_and_fractions", not bad, "; ".join(bad))
        if median is not None:
            check(t + ".median", c["quantiles"]["0.5"] == median,
                  "median %r, want %r (numpy.median)" % (c["quantiles"]["0.5"], median))
        # text output: '~' only on an estimate
        out = os.path.join(TMP, "s%d.sheaf" % _n[0])
        rc, txt, _ = run([SHEAF, "info", out])
        row = [ln for ln in txt.decode().splitlines() if ln.startswith("v ")]
        med = row[0].split()[7] if row else ""
        check(t + ".text_marks_estimates_only", rc == 0 and med.startswith("~") == (not exact)
              and (median is None or float(med.lstrip("~")) == median),
              "median cell %r" % med)


def test_wide_decimals():
    """Cells of 20 to 30 significant digits keep their columns exact: mean,
    variance, skewness and kurtosis against exact rational arithmetic
    (fractions.Fraction on the cells' text), each rounded once to a double."""
    import random
    rnd = random.Random(20)
    cases = [
        # the ten values of issue 13: exact variance 8.69e-12 (was 0)
        ("ten_values_near_1e12", ["1000000000000.0000005"] +
         ["1000000000000.00000%d" % i for i in range(1, 10)]),
        # one 20-digit cell in the middle of a column (was 1.11e-11, exact 9.55e-12)
        ("one_wide_cell_in_the_middle", ["1000000000000.000001", "1000000000000.000002",
                                         "1000000000000.0000035", "1000000000000.000004",
                                         "1000000000000.000009"]),
    ]
    for digits in (20, 24, 27, 30):
        base = rnd.randrange(10 ** 12, 10 ** 13)
        vals = []
        for _ in range(300):
            frac = rnd.randrange(10 ** (digits - 14), 10 ** (digits - 13))
            v = "%s%d.%d" % ("-" if base < 0 else "", base, frac)
            vals.append(v[:digits + 1] if len(v.replace(".", "")) > digits else v)
        cases.append(("offset_1e12_%d_digits" % digits, vals))
        # values that differ in their first digits, with long tails
        vals = ["%d.%0*d" % (rnd.randrange(-999, 1000), digits - 3, rnd.randrange(10 ** (digits - 3)))
                for _ in range(300)]
        cases.append(("spread_%d_digits" % digits, vals))
    for tag, vals in cases:
        t = "wide." + tag
        p = os.path.join(TMP, tag + ".csv")
        write_column(p, "v", vals)
        for extra, sub in (((), ""), (("--chunk-size", "1K"), ".chunk_1K")):
            info, err = scan([p], extra)
            if info is None:
                fail(t + sub, err)
                continue
            c = info["columns"][0]
            mean, var = exact_mean_var(vals)
            g1, g2 = exact_shape(vals)
            # the mean to 1e-15 of the largest |value| (the rounding of a sum)
            scale = max(abs(float(v)) for v in vals)
            close(t + sub + ".mean_vs_fractions", c["mean"], float(mean), rel=1e-15, scale=scale)
            close(t + sub + ".variance_vs_fractions", c["variance"], float(var), rel=1e-13)
            close(t + sub + ".skewness_vs_fractions", c["skewness"], g1, rel=1e-11, scale=1.0)
            close(t + sub + ".kurtosis_vs_fractions", c["kurtosis"], g2, rel=1e-11, scale=1.0)


def main():
    if not os.access(SHEAF, os.X_OK):
        fail("binary", "%s not found (run make first)" % os.path.abspath(SHEAF))
        return
    sets = datasets()
    try:
        test_open_datasets(sets)
        test_mpg_question_mark(sets)
        test_spellings()
        test_compressed(sets)
        test_chunk_sizes(sets)
        test_stdin(sets)
        test_nist_anova()
        test_nist_numacc()
        test_epoch_microseconds()
        test_exact_quantiles()
        test_wide_decimals()
    finally:
        shutil.rmtree(TMP, ignore_errors=True)


if __name__ == "__main__":
    try:
        main()
    except Exception as e:  # a crash of the script is one failed check, not a silent stop
        fail("test_columns.py", "%s: %s" % (type(e).__name__, e))
    sys.exit(0)
