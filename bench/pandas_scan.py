#!/usr/bin/python3
"""What a user would write instead of `sheaf scan --target label`, for the
`threads` bench section: a chunked pandas + numpy pass over a (gzip) CSV.

    pandas_scan.py FILE TARGET [CHUNK_ROWS]

Reads FILE with pandas.read_csv(chunksize=CHUNK_ROWS, default 100,000) and
keeps, for every numeric column (the columns pandas reads as numbers; '' and
'NA' are missing, as pandas reads them by default):
- count, mean, variance, min, max: per chunk n, mean and M2 = sum of squared
  deviations, merged across chunks with the pairwise update of Chan, Golub &
  LeVeque (1979): M2 = M2a + M2b + d^2 na nb / n, d = mean_b - mean_a;
- the correlation matrix: per chunk the centred cross-product matrix of the
  rows complete in every numeric column (listwise deletion, not
  pairwise-complete), merged with the matrix form of the same update
  (C = Ca + Cb + d d^T na nb / n);
- for the class column TARGET: per-class row counts, and per class the count
  and sum of every numeric column, giving per-class means.
Prints a small summary at the end.
"""
import sys

import numpy as np
import pandas as pd


class Moments:
    """Per-column count, mean, M2, min, max, merged chunk by chunk (Chan et al. 1979)."""

    def __init__(self, p):
        self.n = np.zeros(p)
        self.mean = np.zeros(p)
        self.m2 = np.zeros(p)
        self.low = np.full(p, np.inf)
        self.high = np.full(p, -np.inf)

    def add(self, x):
        n_b = np.sum(~np.isnan(x), axis=0).astype(float)
        has = n_b > 0
        with np.errstate(invalid="ignore", divide="ignore"):
            mean_b = np.where(has, np.nansum(x, axis=0) / np.where(has, n_b, 1), 0.0)
        m2_b = np.nansum((x - mean_b) ** 2, axis=0)
        n = self.n + n_b
        d = mean_b - self.mean
        safe = np.where(n > 0, n, 1)
        self.mean = self.mean + d * n_b / safe
        self.m2 = self.m2 + m2_b + d * d * self.n * n_b / safe
        self.n = n
        if has.any():
            self.low = np.fmin(self.low, np.nanmin(np.where(has, x, np.inf), axis=0))
            self.high = np.fmax(self.high, np.nanmax(np.where(has, x, -np.inf), axis=0))


class Comoments:
    """Centred cross products of complete rows, merged chunk by chunk."""

    def __init__(self, p):
        self.n = 0
        self.mean = np.zeros(p)
        self.c = np.zeros((p, p))

    def add(self, x):
        x = x[~np.isnan(x).any(axis=1)]
        n_b = x.shape[0]
        if n_b == 0:
            return
        mean_b = x.mean(axis=0)
        xc = x - mean_b
        n = self.n + n_b
        d = mean_b - self.mean
        self.c += xc.T @ xc + np.outer(d, d) * (self.n * n_b / n)
        self.mean += d * (n_b / n)
        self.n = n

    def correlation(self):
        sd = np.sqrt(np.diag(self.c))
        with np.errstate(invalid="ignore", divide="ignore"):
            return self.c / np.outer(sd, sd)


def main():
    if len(sys.argv) not in (3, 4):
        sys.exit("usage: pandas_scan.py FILE TARGET [CHUNK_ROWS]")
    path, target = sys.argv[1], sys.argv[2]
    chunk_rows = int(sys.argv[3]) if len(sys.argv) == 4 else 100_000
    names = None
    moments = comoments = None
    class_rows = {}
    class_n = {}
    class_sum = {}
    rows = 0
    for chunk in pd.read_csv(path, chunksize=chunk_rows):
        if names is None:
            names = [c for c in chunk.columns
                     if c != target and pd.api.types.is_numeric_dtype(chunk[c])]
            moments, comoments = Moments(len(names)), Comoments(len(names))
        # A column numeric in the first chunk that meets text later fails here,
        # as it would in a user's script.
        x = chunk[names].to_numpy(dtype=float)
        rows += len(chunk)
        moments.add(x)
        comoments.add(x)
        numeric = chunk[names]
        labels = chunk[target]
        counts = labels.value_counts(dropna=False)
        sums = numeric.groupby(labels, dropna=False).sum()
        present = numeric.notna().groupby(labels, dropna=False).sum()
        for label, k in counts.items():
            class_rows[label] = class_rows.get(label, 0) + int(k)
            class_n[label] = class_n.get(label, 0) + present.loc[label].to_numpy(dtype=float)
            class_sum[label] = class_sum.get(label, 0) + sums.loc[label].to_numpy(dtype=float)
    if names is None:
        sys.exit("pandas_scan.py: %s has no rows" % path)

    variance = np.where(moments.n > 1, moments.m2 / np.maximum(moments.n - 1, 1), np.nan)
    r = comoments.correlation()
    print("%d rows, %d numeric columns, %d complete rows for the correlations"
          % (rows, len(names), comoments.n))
    print("%-12s %10s %14s %14s %14s %14s" % ("column", "n", "mean", "variance", "min", "max"))
    for j, name in enumerate(names):
        print("%-12s %10d %14.6g %14.6g %14.6g %14.6g"
              % (name, moments.n[j], moments.mean[j], variance[j], moments.low[j], moments.high[j]))
    upper = np.abs(r[np.triu_indices(len(names), 1)])
    strongest = np.unravel_index(np.nanargmax(np.where(np.tri(len(names), k=0, dtype=bool), 0, np.abs(r))),
                                 r.shape)
    print("correlations: %d pairs, largest |r| = %.6f (%s, %s)"
          % (upper.size, np.nanmax(upper), names[strongest[0]], names[strongest[1]]))
    print("%s classes:" % target)
    for label in sorted(class_rows, key=str):
        with np.errstate(invalid="ignore", divide="ignore"):
            means = class_sum[label] / class_n[label]
        print("  %-16s %10d rows; mean %s %.6g" % (label, class_rows[label], names[0], means[0]))


main()
