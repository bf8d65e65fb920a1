"""The PASS/FAIL/SKIP line convention of the reference and CLI suites
(tests/run.sh counts the lines), shared by tests/ref/*.py."""

counts = {"pass": 0, "fail": 0}


def ok(name):
    counts["pass"] += 1
    print("PASS " + name, flush=True)


def fail(name, why):
    counts["fail"] += 1
    print("FAIL %s: %s" % (name, why), flush=True)


def skip(name, why):
    print("SKIP %s: %s" % (name, why), flush=True)


def check(name, cond, why=""):
    if cond:
        ok(name)
    else:
        fail(name, why)
    return cond


# ---------------------------------------------------------------------------
# What the reference suites share: where things are, sheaf's parsing rules,
# how sheaf is run, and how two summaries' JSON are compared.

import os
import re
import subprocess

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
SHEAF = os.environ.get("SHEAF_BIN", "./sheaf")  # relative to ROOT
DATA = os.environ.get("SHEAF_DATA") or os.path.join("..", "shared", "data")
SM = "/usr/lib/python3/dist-packages/statsmodels/datasets"

# sheaf's default missing spellings; the empty cell is always missing.  A
# spelling matches in any ASCII letter case, so every casing is listed (a
# set works with `in` and with pandas' isin).


def casings(spellings):
    out = set()
    for s in spellings:
        forms = [""]
        for ch in s:
            options = {ch.lower(), ch.upper()} if ch.isascii() and ch.isalpha() else {ch}
            forms = [f + c for f in forms for c in options]
        out.update(forms)
    return out


MISSING = casings(["", "NA", "N/A", "null", "NULL", "None", "-", "?"])
# What sheaf's decimal parser accepts (sign, digits, '.', exponent), with
# surrounding ASCII spaces ignored by the callers.
NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$")
NONFINITE = re.compile(r"^[+-]?(inf|infinity|nan)$", re.I)


def run(args, stdin=None):
    """(exit code, stdout bytes, stderr text) of a command."""
    p = subprocess.run(args, input=stdin, stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    return p.returncode, p.stdout, p.stderr.decode(errors="replace").strip()


def fclose(x, y, scale):
    """x and y agree to 1e-12 of scale; None matches None only."""
    if x is None or y is None:
        return x is None and y is None
    return abs(x - y) <= 1e-12 * max(scale, 1e-300)


def moment_differences(nm, x, y, sc, why):
    """Appends to why how column x's moments and per-class moments differ
    from y's (info JSON), means to 1e-12 of sc, the others of their own
    size."""
    for k, s in (("mean", sc), ("variance", abs(y["variance"] or 0)),
                 ("skewness", 1.0), ("kurtosis", 1.0)):
        if not fclose(x.get(k), y.get(k), s):
            why.append("%s.%s %r vs %r" % (nm, k, x.get(k), y.get(k)))
    bx, by = x.get("by_class"), y.get("by_class")
    if (bx is None) != (by is None):
        why.append("%s.by_class in one only" % nm)
        return
    bx = {e["class"]: e for e in bx or []}
    by = {e["class"]: e for e in by or []}
    if set(bx) != set(by):
        why.append("%s.by_class classes %s vs %s" % (nm, sorted(bx), sorted(by)))
        return
    for cls in by:
        ex, ey = bx[cls], by[cls]
        if ex["n"] != ey["n"]:
            why.append("%s/%s n %r vs %r" % (nm, cls, ex["n"], ey["n"]))
        if not fclose(ex["mean"], ey["mean"], sc) or \
                not fclose(ex["variance"], ey["variance"], abs(ey["variance"] or 0)):
            why.append("%s/%s mean, variance %r, %r vs %r, %r" % (
                nm, cls, ex["mean"], ex["variance"], ey["mean"], ey["variance"]))


def corr_differences(ca, cb, why, rows=False):
    """Appends to why how two corr JSON differ: columns and pair counts (and
    rows, when asked) exactly, r to 1e-12."""
    if ca["columns"] != cb["columns"] or ca["pairs_n"] != cb["pairs_n"] or \
            (rows and ca["rows"] != cb["rows"]):
        why.append("corr columns, rows or pairs_n differ")
        return
    for i, row in enumerate(ca["matrix"]):
        for j, v in enumerate(row):
            if not fclose(v, cb["matrix"][i][j], 1.0):
                why.append("r[%s,%s] %r vs %r" % (ca["columns"][i], ca["columns"][j], v,
                                                  cb["matrix"][i][j]))


def tree_differences(a, b, rel, path=""):
    """Where two JSON trees differ: integers, strings and the shape exactly,
    floats to `rel` relative (absolute below 1).  One line per difference."""
    num = (int, float)
    if (isinstance(a, num) and isinstance(b, num)
            and not isinstance(a, bool) and not isinstance(b, bool)):
        if isinstance(a, int) and isinstance(b, int):
            return [] if a == b else ["%s: %r vs %r" % (path, a, b)]
        return ([] if abs(a - b) <= rel * max(abs(a), abs(b), 1.0)
                else ["%s: %r vs %r" % (path, a, b)])
    if type(a) != type(b):
        return ["%s: %r vs %r" % (path, a, b)]
    if isinstance(a, dict):
        if set(a) != set(b):
            return [path + " keys %s" % sorted(set(a) ^ set(b))]
        return [d for k in a for d in tree_differences(a[k], b[k], rel, path + "." + k)]
    if isinstance(a, list):
        if len(a) != len(b):
            return ["%s length %d vs %d" % (path, len(a), len(b))]
        return [d for i in range(len(a))
                for d in tree_differences(a[i], b[i], rel, "%s[%d]" % (path, i))]
    return [] if a == b else ["%s: %r vs %r" % (path, a, b)]
