#!/usr/bin/python3
"""End-to-end PCA of `sheaf scan` + `sheaf pca` / `sheaf project` against
reference computations.

References, named again beside each check:
  - pandas from Debian's packages: DataFrame.corr() / DataFrame.cov(), the
    pairwise-complete Pearson r / sample covariance (min_periods=1);
    Series.mean() and Series.std(ddof=1) for standardising scores;
  - numpy from Debian's packages: numpy.linalg.eigh of that matrix
    (eigenvalues reversed to decreasing order; eigenvectors compared up to
    sign), and the projection Z @ V;
  - the definitions of the Kaiser rule (eigenvalues above their mean) and
    the broken-stick rule (b_k = (1/p) sum_{i=k}^p 1/i), computed here.

Data: ../shared/data/open/*.csv (or $SHEAF_DATA/open), the open datasets
shipped by Debian's python3-statsmodels, and tables generated here with a
fixed numpy seed (a 300-column table driven by 5 hidden factors).  Missing
data gives "SKIP name: reason" lines.  Prints one "PASS name" / "FAIL name:
why" line per check and exits 0.
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
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), ".."))
from refcheck import check, counts, fail, ok, skip  # noqa: E402  (shared PASS/FAIL lines)
from refcheck import DATA, MISSING, NONFINITE, NUMBER, ROOT, SHEAF, SM  # noqa: E402,F401

import numpy as np
import pandas as pd

os.chdir(ROOT)



TMP = tempfile.mkdtemp(prefix="sheaf-pca-")


def run(args, stdin=None):
    p = subprocess.run(args, input=stdin, stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    return p.returncode, p.stdout, p.stderr


_n = [0]


def scan(path, extra=()):
    """Scans; returns (summary path or None, error text)."""
    _n[0] += 1
    out = os.path.join(TMP, "s%d.sheaf" % _n[0])
    rc, _, err = run([SHEAF, "scan", "-q", path, "-o", out] + list(extra))
    if rc != 0:
        return None, "scan exit %d: %s" % (rc, err.decode(errors="replace").strip())
    return out, ""


def pca_json(summary, extra=()):
    """Returns (dict or None, stderr text, error text)."""
    rc, js, err = run([SHEAF, "pca", "--format", "json", summary] + list(extra))
    etext = err.decode(errors="replace")
    if rc != 0:
        return None, etext, "pca exit %d: %s" % (rc, etext.strip())
    try:
        return json.loads(js), etext, ""
    except ValueError as e:
        return None, etext, "pca printed bad JSON: %s" % e


def numeric_frame(path):
    """pandas frame of floats (NaN for missing and non-numeric cells) and the
    raw text frame, read the way sheaf reads cells."""
    raw = pd.read_csv(path, dtype=str, keep_default_na=False, na_filter=False)
    num = {}
    for c in raw.columns:
        vals = []
        for s in raw[c].tolist():
            t = s.strip(" ")
            vals.append(float(t) if s not in MISSING and NUMBER.match(t) else np.nan)
        num[c] = vals
    return raw, pd.DataFrame(num, columns=list(raw.columns))


def expected_columns(raw, num, target=None):
    """The automatic choice by its definition: numeric (numbers >= 99% of
    present cells), at least two numbers, variance > 0 and more than one
    distinct text, not ID-like (all numbers integers and distinct texts >=
    95% of present cells, with at least 20 present cells or, below that, the
    numbers a run of consecutive integers: the rule screen uses too), not the
    target."""
    keep = []
    for c in raw.columns:
        if c == target:
            continue
        present = [s for s in raw[c].tolist() if s not in MISSING]
        nonfin = sum(1 for s in present if NONFINITE.match(s.strip(" ")))
        x = num[c].dropna().to_numpy()
        if present and len(x) + nonfin < 0.99 * len(present):
            continue
        if len(x) < 2 or not np.var(x) > 0 or len(set(present)) <= 1:
            continue
        if np.all(x == np.round(x)) and len(set(present)) >= 0.95 * len(present) and (
                len(present) >= 20 or x.max() - x.min() + 1 == len(set(x))):
            continue
        keep.append(c)
    return keep


def reference_eigen(mat):
    """numpy.linalg.eigh, decreasing, each vector signed so its
    largest-magnitude entry is positive (sheaf's convention)."""
    w, v = np.linalg.eigh(mat)
    w, v = w[::-1], v[:, ::-1].copy()
    for k in range(v.shape[1]):
        j = int(np.argmax(np.abs(v[:, k])))
        if v[j, k] < 0:
            v[:, k] = -v[:, k]
    return w, v


def broken_stick_k(share):
    p = len(share)
    k = 0
    while k < p and share[k] > sum(1.0 / i for i in range(k + 1, p + 1)) / p:
        k += 1
    return k


def compare_pca(tag, got, mat, eig_rel=1e-10, vec_tol=1e-8):
    """Eigenvalues, shares, guides and loadings of one `sheaf pca --format
    json` output against numpy.linalg.eigh of the pandas matrix."""
    p = mat.shape[0]
    w, v = reference_eigen(mat)
    ge = np.array(got["eigenvalues"], dtype=float)
    if not check(tag + ".count", len(ge) == p, "%d eigenvalues, want %d" % (len(ge), p)):
        return None
    # numpy.linalg.eigh: eigenvalues to 1e-10 relative, plus 1e-13 of the
    # largest: rounding the matrix entries (both sides compute them
    # differently) moves every eigenvalue by up to about eps times the norm
    # (Weyl's inequality), which dominates for the small eigenvalues of an
    # ill-conditioned covariance matrix.
    tol = eig_rel * np.abs(w) + 1e-13 * abs(w[0])
    bad = [(k, ge[k], w[k]) for k in range(p) if abs(ge[k] - max(w[k], 0.0)) > tol[k]]
    check(tag + ".eigenvalues", not bad,
          "; ".join("l%d sheaf %.17g numpy %.17g" % b for b in bad[:3]))
    check(tag + ".decreasing", all(ge[k] >= ge[k + 1] for k in range(p - 1)), str(ge))
    share = np.array(got["share"])
    check(tag + ".shares_sum_to_1", abs(share.sum() - 1) < 1e-12 and
          abs(got["cumulative"][-1] - 1) < 1e-12, "sum %.17g" % share.sum())
    wc = np.maximum(w, 0)
    check(tag + ".share", np.allclose(share, wc / wc.sum(), rtol=1e-10, atol=1e-13),
          "sheaf %s, numpy %s" % (share[:3], (wc / wc.sum())[:3]))
    # Kaiser: eigenvalues above their mean; broken stick: by the definition
    kaiser = 0
    while kaiser < p and wc[kaiser] > wc.mean() * (1 + 1e-12):
        kaiser += 1
    check(tag + ".kaiser_k", got["kaiser_k"] == kaiser,
          "sheaf %d, definition %d" % (got["kaiser_k"], kaiser))
    check(tag + ".broken_stick_k", got["broken_stick_k"] == broken_stick_k(wc / wc.sum()),
          "sheaf %d, definition %d" % (got["broken_stick_k"], broken_stick_k(wc / wc.sum())))
    L = np.array(got["loadings"], dtype=float)
    if not check(tag + ".loadings_shape", L.shape == (got["k"], p), "shape %s" % (L.shape,)):
        return None
    # loadings against numpy eigenvectors up to sign, 1e-8
    bad = []
    for k in range(L.shape[0]):
        d = min(np.max(np.abs(L[k] - v[:, k])), np.max(np.abs(L[k] + v[:, k])))
        if d > vec_tol:
            bad.append("PC%d max |diff| %.3g" % (k + 1, d))
    check(tag + ".loadings", not bad, "; ".join(bad[:3]))
    signs = [L[k][int(np.argmax(np.abs(L[k])))] > 0 for k in range(L.shape[0])]
    check(tag + ".sign_largest_positive", all(signs), "components %s" %
          [k + 1 for k, s in enumerate(signs) if not s])
    return v


def read_scores(path):
    if path.endswith(".gz"):
        text = gzip.open(path, "rt").read()
    else:
        text = open(path).read()
    lines = text.split("\n")
    return lines


def compare_scores(tag, data, summary, got, num, basis="correlation", extra=()):
    """`sheaf project` scores against numpy: standardise with the pandas mean
    and std(ddof=1) (or only centre for a covariance basis), fill missing
    with 0 after standardising, multiply by the eigenvectors (sheaf's sign
    convention); 1e-9 relative to max(1, |score|)."""
    cols = got["columns"]
    k = got["k"]
    out = os.path.join(TMP, tag + ".scores.csv")
    args = [SHEAF, "project", data, "--summary", summary, "--components", str(k), "-o", out]
    if basis != "correlation":
        args += ["--basis", basis]
    rc, _, err = run(args + list(extra))
    if not check(tag + ".project_exit", rc == 0, "exit %d: %s" % (rc, err.decode(errors="replace"))):
        return
    lines = read_scores(out)
    check(tag + ".project_header", lines[0] == ",".join("PC%d" % (i + 1) for i in range(k)),
          "header %r" % lines[0])
    rows = [ln for ln in lines[1:] if ln]
    check(tag + ".project_rows", len(rows) == len(num), "%d rows, data %d" % (len(rows), len(num)))
    S = np.array([[float(x) for x in ln.split(",")] for ln in rows])
    X = num[cols]
    Z = X - X.mean()
    if basis == "correlation":
        Z = Z / X.std(ddof=1)
    Z = Z.fillna(0.0).to_numpy()
    L = np.array(got["loadings"], dtype=float)
    want = Z @ L.T
    if S.shape != want.shape:
        return fail(tag + ".scores", "shape %s vs %s" % (S.shape, want.shape))
    err_ = np.abs(S - want) / np.maximum(1.0, np.abs(want))
    check(tag + ".scores", err_.max() <= 1e-9, "max relative error %.3g at row %d"
          % (err_.max(), int(np.argmax(err_.max(axis=1)))))
    # the text is printf %.10g of the score (10 significant digits)
    cells = [c for ln in rows[:200] for c in ln.split(",")]
    badf = [c for c in cells if c != "%.10g" % float(c) and c != "0"]
    check(tag + ".scores_format_g10", not badf, "cells %s" % badf[:3])


def datasets():
    out = []
    for tag in ("penguins", "mpg", "iris", "tips"):
        p = os.path.join(DATA, "open", tag + ".csv")
        if os.path.exists(p):
            out.append((tag, p))
        else:
            skip(tag, "%s not found" % p)
    for tag, rel in (("longley", "longley/longley.csv"), ("stackloss", "stackloss/stackloss.csv"),
                     ("macrodata", "macrodata/macrodata.csv"), ("fair", "fair/fair.csv"),
                     ("star98", "star98/star98.csv"), ("randhie", "randhie/randhie.csv")):
        p = os.path.join(SM, rel)
        if os.path.exists(p):
            out.append((tag, p))
        else:
            skip(tag, "%s not found (python3-statsmodels)" % p)
    return out


# ---------------------------------------------------------------------------

def test_datasets(sets):
    """Correlation basis on every dataset (penguins and mpg have missing
    cells: the pandas matrix is pairwise complete, as sheaf's is)."""
    for tag, path in sets:
        s, err = scan(path)
        if not s:
            fail(tag + ".scan", err)
            continue
        raw, num = numeric_frame(path)
        want_cols = expected_columns(raw, num)
        p = len(want_cols)
        got, _, err = pca_json(s, ["--components", str(max(p, 1))])
        if got is None:
            fail(tag + ".pca", err)
            continue
        if not check(tag + ".columns", got["columns"] == want_cols,
                     "sheaf %s, definition %s" % (got["columns"], want_cols)):
            continue
        left = {e["column"] for e in got["excluded"]}
        check(tag + ".excluded_listed", left == set(raw.columns) - set(want_cols),
              "excluded %s" % sorted(left))
        # pandas DataFrame.corr(): pairwise-complete Pearson r
        mat = num[want_cols].corr().to_numpy()
        compare_pca(tag, got, mat)
        if tag in ("penguins", "mpg", "iris", "longley", "star98"):
            compare_scores(tag, path, s, got, num)


def test_covariance(sets):
    """--basis covariance: pandas DataFrame.cov() (pairwise complete, n-1),
    and scores from centred values."""
    for tag in ("mpg", "longley", "penguins"):
        path = dict(sets).get(tag)
        if not path:
            continue
        s, err = scan(path)
        if not s:
            fail(tag + ".cov.scan", err)
            continue
        raw, num = numeric_frame(path)
        cols = expected_columns(raw, num)
        got, _, err = pca_json(s, ["--basis", "covariance", "--components", str(len(cols))])
        if got is None:
            fail(tag + ".cov.pca", err)
            continue
        check(tag + ".cov.basis", got["basis"] == "covariance", got["basis"])
        compare_pca(tag + ".cov", got, num[got["columns"]].cov().to_numpy())
        compare_scores(tag + ".cov", path, s, got, num, basis="covariance")


def test_hidden_factors():
    """300 columns = 5 hidden factors (numpy, seed 20240611) times random
    loadings plus independent noise: five dominant eigenvalues, the fifth
    far above the sixth; the broken-stick rule stops at 5."""
    rng = np.random.default_rng(20240611)
    n, p, f = 3000, 300, 5
    F = rng.standard_normal((n, f))
    W = rng.standard_normal((f, p))
    X = F @ W + 0.6 * rng.standard_normal((n, p))
    X = X * rng.uniform(0.5, 20, p) + rng.uniform(-100, 100, p)
    path = os.path.join(TMP, "factors.csv")
    pd.DataFrame(X, columns=["v%03d" % j for j in range(p)]).to_csv(
        path, index=False, float_format="%.9g")
    s, err = scan(path)
    if not s:
        return fail("factors.scan", err)
    got, _, err = pca_json(s, ["--components", "6"])
    if got is None:
        return fail("factors.pca", err)
    e = got["eigenvalues"]
    check("factors.columns", len(got["columns"]) == p, "%d columns" % len(got["columns"]))
    check("factors.five_dominant", e[4] > 10 * e[5] and e[5] < 2,
          "eigenvalues %s" % ["%.4g" % x for x in e[:8]])
    check("factors.broken_stick_5", got["broken_stick_k"] == 5, "%d" % got["broken_stick_k"])
    check("factors.shares_sum_to_1", abs(sum(got["share"]) - 1) < 1e-12, "%.17g" % sum(got["share"]))
    num = pd.read_csv(path)
    mat = num.corr().to_numpy()
    compare_pca("factors", got, mat)
    got2, _, err = pca_json(s, ["--share", "0.5"])
    if got2:
        want = int(np.searchsorted(np.array(got["cumulative"]) >= 0.5 - 1e-12, True)) + 1
        check("factors.share_rule", got2["k"] == want and got2["k_rule"] == "share",
              "k %d, want %d" % (got2["k"], want))


def test_missing_cells_indefinite():
    """Pairwise-complete r from disjoint row sets: r(a,b) = 1, r(b,c) = 1,
    r(a,c) = -1 gives eigenvalues 2, 2, -1 (characteristic polynomial
    -(l-2)^2 (l+1)); the -1 is reported on stderr and set to 0."""
    path = os.path.join(TMP, "indef.csv")
    with open(path, "w") as fh:
        fh.write("a,b,c\n1,1,\n2,2,\n3,3,\n5,5,\n,1.5,1.5\n,2.5,2.5\n,4.5,4.5\n,7.5,7.5\n"
                 "1,,-0.5\n2,,-1\n4,,-2\n8,,-4\n")
    s, err = scan(path)
    if not s:
        return fail("indefinite.scan", err)
    got, etext, err = pca_json(s)
    if got is None:
        return fail("indefinite.pca", err)
    check("indefinite.clamped", got["clamped_negative"] == 1 and
          abs(got["most_negative_eigenvalue"] + 1) < 1e-12 and got["eigenvalues"][2] == 0,
          "clamped %r, most negative %r" % (got["clamped_negative"], got["most_negative_eigenvalue"]))
    check("indefinite.warning", "warning" in etext and "negative eigenvalue" in etext and "-1" in etext,
          etext.strip())
    _, num = numeric_frame(path)
    w, _ = reference_eigen(num.corr().to_numpy())
    check("indefinite.numpy_agrees", abs(w[-1] + 1) < 1e-12, "numpy %s" % w)


def test_outputs(sets):
    """CSV loadings layout, text output, --carry with RFC 4180 quoting,
    compressed outputs, error paths that write nothing."""
    path = dict(sets).get("penguins")
    if not path:
        return skip("outputs", "penguins.csv not found")
    s, err = scan(path)
    if not s:
        return fail("outputs.scan", err)
    got, _, _ = pca_json(s, ["--components", "2"])
    rc, out, err = run([SHEAF, "pca", s, "--format", "csv", "--components", "2"])
    lines = out.decode().strip().split("\n")
    check("outputs.csv_header", rc == 0 and lines[0] == "column,PC1,PC2", repr(lines[:1]))
    ok_rows = len(lines) == 1 + len(got["columns"]) and all(
        ln.split(",")[0] == c and
        all(abs(float(x) - got["loadings"][k][i]) < 1e-15 for k, x in enumerate(ln.split(",")[1:]))
        for i, (ln, c) in enumerate(zip(lines[1:], got["columns"])))
    check("outputs.csv_rows_match_json", ok_rows, repr(lines[1:3]))
    rc, out, err = run([SHEAF, "pca", s])
    text = out.decode()
    check("outputs.text", rc == 0 and "PC1" in text and "Kaiser" in text and
          "species (categorical)" in text and "flipper_length_mm" in text, text[:300])
    check("outputs.default_k_is_kaiser", got is not None and
          pca_json(s)[0]["k"] == max(1, got["kaiser_k"]), "")

    # --carry: raw text in front, re-quoted when it holds a comma or quote
    data = os.path.join(TMP, "carry.csv")
    with open(data, "w") as fh:
        fh.write('tag,x,y,z\n"a,1",1.5,2,3.25\n"say ""hi""",2.5,1,4.5\n'
                 'plain,NA,4,1.25\nlast,4.5,?,6\n')
    s2, err = scan(data)
    if not s2:
        return fail("outputs.carry_scan", err)
    out = os.path.join(TMP, "carry.scores.csv")
    rc, _, err = run([SHEAF, "project", data, "--summary", s2, "--components", "2", "--carry", "tag,y",
                      "-o", out])
    if check("outputs.carry_exit", rc == 0, err.decode(errors="replace")):
        lines = open(out).read().split("\n")
        check("outputs.carry_header", lines[0] == "tag,y,PC1,PC2", lines[0])
        check("outputs.carry_quoting", lines[1].startswith('"a,1",2,') and
              lines[2].startswith('"say ""hi""",1,') and lines[4].startswith("last,?,"),
              repr(lines[1:5]))
        df = pd.read_csv(out, keep_default_na=False)
        check("outputs.carry_reads_back", df["tag"].tolist() == ["a,1", 'say "hi"', "plain", "last"],
              str(df["tag"].tolist()))

    # compressed outputs decode to the plain bytes
    plain = os.path.join(TMP, "p.csv")
    run([SHEAF, "project", path, "--summary", s, "--components", "3", "-o", plain])
    ref = open(plain, "rb").read()
    gz = os.path.join(TMP, "p.csv.gz")
    rc, _, err = run([SHEAF, "project", path, "--summary", s, "--components", "3", "-o", gz])
    check("outputs.gzip", rc == 0 and gzip.open(gz).read() == ref, err.decode(errors="replace"))
    if shutil.which("zstd"):
        zs = os.path.join(TMP, "p.csv.zst")
        rc, _, err = run([SHEAF, "project", path, "--summary", s, "--components", "3", "-o", zs])
        rc2, dec, _ = run(["zstd", "-dc", zs])
        check("outputs.zstd", rc == 0 and rc2 == 0 and dec == ref, err.decode(errors="replace"))
    else:
        skip("outputs.zstd", "zstd command not found")
    rc, dec, _ = run([SHEAF, "project", path, "--summary", s, "--components", "3"])
    check("outputs.stdout_same", rc == 0 and dec == ref, "")

    # a data file without a basis column: exit 3, names file and column, no output
    bad = os.path.join(TMP, "nope.csv")
    rc, _, err = run([SHEAF, "project", dict(sets).get("iris", path), "--summary", s, "-o", bad])
    e = err.decode(errors="replace")
    check("outputs.missing_column", rc == 3 and "bill_length_mm" in e and "line 1" in e and
          not os.path.exists(bad) and not any(f.startswith("nope.csv.tmp") for f in os.listdir(TMP)),
          "exit %d: %s" % (rc, e.strip()))
    # an unterminated quote half-way: exit 3 with the line, no output
    trunc = os.path.join(TMP, "trunc.csv")
    src = open(path).read().split("\n")
    with open(trunc, "w") as fh:
        fh.write("\n".join(src[:200]) + '\n"Adelie,Torgersen,39.1,18.7,181,3750,MALE\n')
    bad2 = os.path.join(TMP, "trunc.scores.csv")
    rc, _, err = run([SHEAF, "project", trunc, "--summary", s, "-o", bad2])
    e = err.decode(errors="replace")
    check("outputs.unterminated_quote", rc == 3 and "line 201" in e and trunc in e and
          not os.path.exists(bad2), "exit %d: %s" % (rc, e.strip()))
    # usage errors
    rc, _, err = run([SHEAF, "pca", s, "--columns", "bill_length_mm,nosuch"])
    check("outputs.unknown_column", rc == 2 and b"nosuch" in err, err.decode(errors="replace"))
    rc, _, err = run([SHEAF, "pca", s, "--columns", "bill_length_mm,species"])
    check("outputs.categorical_column", rc == 2 and b"species" in err, err.decode(errors="replace"))
    rc, _, err = run([SHEAF, "pca", s, "--components", "2", "--share", "0.9"])
    check("outputs.k_and_share", rc == 2, err.decode(errors="replace"))

    # --columns-from and --exclude choose the same columns as --columns
    kl = os.path.join(TMP, "keep.txt")
    with open(kl, "w") as fh:
        fh.write("# kept by a screen\nbody_mass_g\nbill_length_mm\n\n")
    a, _, _ = pca_json(s, ["--columns-from", kl])
    b, _, _ = pca_json(s, ["--columns", "bill_length_mm,body_mass_g"])
    c, _, _ = pca_json(s, ["--exclude", "bill_depth_mm,flipper_length_mm"])
    check("outputs.keep_list", a and b and c and a["columns"] == b["columns"] == c["columns"] ==
          ["bill_length_mm", "body_mass_g"] and a["eigenvalues"] == c["eigenvalues"],
          "%s / %s / %s" % (a and a["columns"], b and b["columns"], c and c["columns"]))


def test_target():
    """The target is left out (listed with reason 'target') unless
    --with-target."""
    path = dict(datasets_quiet()).get("mpg")
    if not path:
        return skip("target", "mpg.csv not found")
    s, err = scan(path, ["--target", "mpg"])
    if not s:
        return fail("target.scan", err)
    a, _, _ = pca_json(s)
    b, _, _ = pca_json(s, ["--with-target"])
    check("target.left_out", a and "mpg" not in a["columns"] and
          {"column": "mpg", "reason": "target"} in a["excluded"], str(a and a["excluded"]))
    check("target.with_target", b and b["columns"][0] == "mpg", str(b and b["columns"]))


def test_automatic_choice():
    """Generated table (numpy, seed 7): row number (ID-like), a constant, a
    text column, a column with 2% non-numeric cells (still numeric) and
    three numeric ones: the choice follows the definition and every column
    left out is listed with its reason."""
    rng = np.random.default_rng(7)
    n = 400
    x = rng.standard_normal(n)
    df = pd.DataFrame({
        "row": np.arange(1, n + 1),
        "flat": np.full(n, 3.5),
        "colour": rng.choice(["red", "green", "blue"], n),
        "u": np.round(x * 10 + 50, 3),
        "v": np.round(-x + rng.standard_normal(n), 4),
        "w": rng.integers(0, 20, n),
        "mostly": [("oops" if i % 200 == 0 else "%.3f" % t) for i, t in enumerate(rng.random(n))],
    })
    path = os.path.join(TMP, "choice.csv")
    df.to_csv(path, index=False)
    s, err = scan(path)
    if not s:
        return fail("choice.scan", err)
    got, _, err = pca_json(s)
    if got is None:
        return fail("choice.pca", err)
    raw, num = numeric_frame(path)
    want = expected_columns(raw, num)
    check("choice.columns", got["columns"] == want == ["u", "v", "w", "mostly"],
          "sheaf %s, definition %s" % (got["columns"], want))
    reasons = {e["column"]: e["reason"] for e in got["excluded"]}
    check("choice.reasons", reasons == {"row": "ID-like", "flat": "constant",
                                        "colour": "categorical"}, str(reasons))
    mat = num[want].corr().to_numpy()
    compare_pca("choice", got, mat)
    # a non-numeric cell contributes zero, like a missing one
    compare_scores("choice", path, s, got, num)


def datasets_quiet():
    out = []
    for tag in ("mpg",):
        p = os.path.join(DATA, "open", tag + ".csv")
        if os.path.exists(p):
            out.append((tag, p))
    return out


def main():
    if not os.access(SHEAF, os.X_OK):
        fail("binary", "%s not found (run make first)" % os.path.abspath(SHEAF))
        return
    sets = datasets()
    try:
        test_datasets(sets)
        test_covariance(sets)
        test_hidden_factors()
        test_missing_cells_indefinite()
        test_outputs(sets)
        test_target()
        test_automatic_choice()
    finally:
        shutil.rmtree(TMP, ignore_errors=True)


if __name__ == "__main__":
    try:
        main()
    except Exception as e:  # a crash of the script is one failed check, not a silent stop
        import traceback
        traceback.print_exc()
        fail("test_pca.py", "%s: %s" % (type(e).__name__, e))
    sys.exit(0)
