"""Exact references for the CLI tests, in fractions.Fraction arithmetic over
the cells' decimal text: Pearson r over the rows where both cells hold a
number, and a class's mean and sample variance.  Imported by the Python
parts of tests/cli/test_stats_edges.sh (sys.path gets tests/cli)."""
import csv
import math
from fractions import Fraction


def rows(path):
    """The data rows of a CSV file (the header left out)."""
    return list(csv.reader(open(path)))[1:]


def pearson(path, a=0, b=1):
    """Pearson r of columns a and b over the rows where both are numbers."""
    p = [(Fraction(r[a]), Fraction(r[b])) for r in rows(path) if r[a] and r[b]]
    mx = sum(x for x, y in p) / len(p)
    my = sum(y for x, y in p) / len(p)
    sxy = sum((x - mx) * (y - my) for x, y in p)
    sxx = sum((x - mx) ** 2 for x, y in p)
    syy = sum((y - my) ** 2 for x, y in p)
    return float(sxy) / math.sqrt(float(sxx) * float(syy))


def class_moments(values):
    """Mean and sample variance (n - 1) of a list of Fractions."""
    m = sum(values) / len(values)
    return m, sum((v - m) ** 2 for v in values) / (len(values) - 1)
