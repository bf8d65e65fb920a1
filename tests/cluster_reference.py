#!/usr/bin/python3
"""Writes tests/cluster_reference.h: the reference values of
tests/test_cluster.c, from SciPy's scipy.cluster.hierarchy (Debian
python3-scipy).

For each open dataset (../shared/data/open or $SHEAF_DATA/open): its numeric
columns, rows with a missing cell and repeated rows dropped, each column
z-scored (pandas' sample sd).  The C test computes the Euclidean distances of
these rows itself (in column order, as scipy.spatial.distance.pdist does) and
compares its average linkage with scipy.cluster.hierarchy.linkage(method=
'average'): the merge heights, and the flat clusters of fcluster(criterion=
'distance') at several cuts.  Its leaf order, run on scipy's own tree, is
compared by its cost (the sum of the distances of neighbouring leaves) with
scipy.cluster.hierarchy.optimal_leaf_ordering.  The linkages of these four
tables do not change when their rows are permuted (checked here), so ties
in the distances cannot make two correct implementations disagree.

Run it again (a few seconds) only when the datasets or the cases change:
    /usr/bin/python3 tests/cluster_reference.py
"""
import os
import sys

import numpy as np
import pandas as pd
from scipy.cluster.hierarchy import fcluster, leaves_list, linkage, optimal_leaf_ordering
from scipy.spatial.distance import pdist, squareform

HERE = os.path.dirname(os.path.abspath(__file__))
DATA = os.environ.get("SHEAF_DATA", os.path.join(HERE, "..", "..", "shared", "data"))
CUT_CLUSTERS = [2, 3, 4, 6, 10, 20]  # a cut between the heights that leave this many


def table(name):
    d = pd.read_csv(os.path.join(DATA, "open", name + ".csv"), na_values=["NA", "?", ""])
    d = d.select_dtypes("number").dropna().drop_duplicates()
    return ((d - d.mean()) / d.std()).to_numpy()


def num(x):
    return repr(float(x))


def main():
    out = []
    cases = []
    rng = np.random.default_rng(7)
    for name in ["iris", "mpg", "penguins", "tips"]:
        z = table(name)
        n, p = z.shape
        dist = pdist(z)
        Z = linkage(dist, "average")
        for _ in range(3):  # the tree does not depend on the order of the rows
            perm = rng.permutation(n)
            Z2 = linkage(pdist(z[perm]), "average")
            assert np.max(np.abs(Z[:, 2] - Z2[:, 2])) < 1e-12, name
        h = Z[:, 2]
        cuts = [(h[n - k - 1] + h[n - k]) / 2 for k in CUT_CLUSTERS]
        labels = [fcluster(Z, t, "distance") for t in cuts]
        for k, lab in zip(CUT_CLUSTERS, labels):
            assert lab.max() == k, (name, k)
        olo = leaves_list(optimal_leaf_ordering(Z, dist))
        sq = squareform(dist)
        cost = sum(sq[olo[i], olo[i + 1]] for i in range(n - 1))
        out.append(f"static const double {name}_rows[] = {{")
        out.extend("    " + ", ".join(num(v) for v in row) + "," for row in z)
        out.append("};")
        out.append(f"static const double {name}_merges[][4] = {{ /* a, b, height, size */")
        out.extend(f"    {{{int(a)}, {int(b)}, {num(hh)}, {int(c)}}}," for a, b, hh, c in Z)
        out.append("};")
        out.append(f"static const double {name}_cuts[] = {{{', '.join(num(t) for t in cuts)}}};")
        out.append(f"static const int {name}_labels[][{n}] = {{")
        out.extend("    {" + ", ".join(str(int(v)) for v in lab) + "}," for lab in labels)
        out.append("};")
        cases.append(f"    {{\"{name}\", {n}, {p}, {name}_rows, {name}_merges, {name}_cuts, "
                     f"&{name}_labels[0][0], {num(cost)}}},")
    head = [
        "/* Written by tests/cluster_reference.py from scipy.cluster.hierarchy",
        " * (Debian python3-scipy): do not edit. */",
        "typedef struct {",
        "    const char *name;",
        "    size_t n, p;                /* rows, columns */",
        "    const double *rows;         /* n x p z-scores */",
        "    const double (*merges)[4];  /* scipy's linkage matrix */",
        "    const double *cuts;         /* CLUSTER_REF_CUTS heights */",
        "    const int *labels;          /* CLUSTER_REF_CUTS x n fcluster labels */",
        "    double leaf_order_cost;     /* of optimal_leaf_ordering on scipy's tree */",
        "} cluster_ref;",
        f"#define CLUSTER_REF_CUTS {len(CUT_CLUSTERS)}",
        f"static const int cluster_ref_cut_clusters[] = {{{', '.join(map(str, CUT_CLUSTERS))}}};",
    ]
    tail = ["static const cluster_ref cluster_refs[] = {"] + cases + ["};"]
    path = os.path.join(HERE, "cluster_reference.h")
    with open(path, "w") as f:
        f.write("\n".join(head + out + tail) + "\n")
    print("wrote", path, file=sys.stderr)


if __name__ == "__main__":
    main()
