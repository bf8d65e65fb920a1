#!/usr/bin/python3
"""Checks a sheaf page (HTML report) and its SVG files without a browser, and
prints one line per check (PASS NAME / FAIL NAME: why) for
tests/cli/test_report.sh.

    report_check.py SHEAF SUMMARY PAGE.html SVG_DIR TAG [DATA.csv]

- the page and every SVG file are well-formed XML (xml.etree, Python's
  standard library);
- the numbers the page carries equal sheaf's own JSON: the column table
  against `sheaf info --format json` (count, missing share, mean, sd, min,
  median, max, distinct), the relevance rows against `sheaf screen --format
  json` (log10 p of the primary test, log10 q, normalized MI, kept), the heat
  map against `sheaf corr --format json` (r of every shown pair), the scree
  bars against `sheaf pca --format json` (eigenvalues, cumulative share);
- the clustering of the heat map against SciPy (Debian python3-scipy):
  scipy.cluster.hierarchy.linkage(method='average') of 1 - |r| of the shown
  columns (r from `sheaf corr`) has the page's merge heights, fcluster
  (criterion 'distance') cuts it into the same clusters at every height, and
  the page's leaf order is no costlier than scipy's optimal_leaf_ordering
  (which can return a costlier order than it found: scipy issue #11227);
- the redundant pairs of `sheaf screen` that are shown are marked;
- the histograms hold every number, and (with DATA.csv) equal numpy's counts
  in the same bins up to the numbers within 1% of a bin edge (the buckets'
  error); the class lines hold each class's numbers (info's by_class n).
"""
import glob
import json
import math
import os
import subprocess
import sys
import xml.etree.ElementTree as ET

import numpy as np
from scipy.cluster.hierarchy import fcluster, leaves_list, linkage, optimal_leaf_ordering
from scipy.spatial.distance import squareform

NS = "{http://www.w3.org/2000/svg}"
failed = 0


def check(name, ok, why=""):
    global failed
    if ok:
        print(f"PASS {TAG}.{name}")
    else:
        failed += 1
        print(f"FAIL {TAG}.{name}: {why}")


def sheaf_json(*args):
    return json.loads(subprocess.run([SHEAF, *args, "--format", "json"], check=True,
                                     capture_output=True).stdout)


def num(s):
    return float(s)  # "nan", "inf" read as Python reads them


def missing(x):
    return x is None or isinstance(x, float) and math.isnan(x)


def close(a, b, rel=1e-12, absolute=0.0):
    """Equal to rel (relative) or absolute; NaN on the page equals null or NaN in JSON."""
    if missing(a) or missing(b):
        return missing(a) and missing(b)
    return abs(a - b) <= max(rel * max(1.0, abs(a), abs(b)), absolute)


def local(tag):
    return tag.split("}")[-1]


def walk(el):
    yield el
    for c in el:
        yield from walk(c)


def main():
    global SHEAF, TAG
    global CSV
    SHEAF, summary, page, svg_dir, TAG = sys.argv[1:6]
    CSV = sys.argv[6] if len(sys.argv) > 6 else None
    try:
        root = ET.parse(page).getroot()
        check("page_is_well_formed_xml", True)
    except ET.ParseError as e:
        check("page_is_well_formed_xml", False, str(e))
        return
    svgs = sorted(glob.glob(os.path.join(svg_dir, "*.svg")))
    bad = []
    for f in svgs:
        try:
            r = ET.parse(f).getroot()
            if r.tag != NS + "svg":
                bad.append(f"{f}: root {r.tag}")
        except ET.ParseError as e:
            bad.append(f"{f}: {e}")
    check("svg_files_are_well_formed_svg", svgs and not bad, "; ".join(bad)[:300] or "no SVG file")
    inline = sum(1 for e in walk(root) if local(e.tag) == "figure")
    check("one_svg_file_per_chart", len(svgs) == inline, f"{len(svgs)} files, {inline} charts on the page")
    els = list(walk(root))
    scripts = [e for e in els if local(e.tag) == "script"]
    check("one_script_no_src", len(scripts) == 1 and "src" not in scripts[0].attrib, f"{len(scripts)} scripts")
    ext = [e.attrib.get(a) for e in els for a in ("src", "href") if a in e.attrib
           and not e.attrib[a].startswith("#")]
    check("no_external_reference", not ext, str(ext[:5]))

    info = sheaf_json("info", summary)
    cols = {c["name"]: c for c in info["columns"]}
    table = next(e for e in els if e.attrib.get("id") == "columns")
    body = next(e for e in table if local(e.tag) == "tbody")
    bad = []
    for tr in body:
        tds = list(tr)
        name = tds[0].attrib["data-v"]
        c = cols[name]
        v = [td.attrib.get("data-v") for td in tds]
        cells = c["n"] + c["non_numeric"] + c["non_finite"] + c["missing"]
        count = c["n"] if c["kind"] == "numeric" else c["n"] + c["non_numeric"] + c["non_finite"]
        want = {2: count, 3: c["missing"] / cells if cells else float("nan")}
        if c["kind"] == "numeric":
            want.update({4: c["mean"], 5: c["sd"], 6: c["min"], 7: c["quantiles"]["0.5"], 8: c["max"]})
        want[9] = c["distinct"]
        for k, w in want.items():
            # info rounds an estimated distinct count (HyperLogLog) to a whole number
            slack = 0.5 if k == 9 and not c["distinct_exact"] else 0.0
            if not close(num(v[k]), None if w is None else float(w), absolute=slack):
                bad.append(f"{name} cell {k}: {v[k]} vs {w}")
    check("column_table_equals_info_json", not bad and len(body) == len(cols), "; ".join(bad)[:400])
    # the text shown is the carried number rounded (4 significant digits, 3 past 1e6 or below 1e-3)
    bad = []
    for tr in body:
        for td in list(tr)[4:9]:
            v, text = num(td.attrib["data-v"]), "".join(td.itertext())
            if math.isnan(v):
                ok = text == "\u2013"
            else:
                try:
                    ok = abs(float(text) - v) <= 5e-3 * abs(v)
                except ValueError:
                    ok = False
            if not ok:
                bad.append(f"{text!r} for {v}")
    check("column_table_text_is_the_number_rounded", not bad, "; ".join(bad)[:300])
    # every number of a column is in its histogram (the end bins hold the tails)
    bad = []
    for tr in body:
        td = list(tr)[12]
        if "data-counts" in td.attrib:
            c = cols[list(tr)[0].attrib["data-v"]]
            total = sum(int(x) for x in td.attrib["data-counts"].split())
            if total != c["n"]:
                bad.append(f"{c['name']}: {total} in the histogram, n {c['n']}")
    check("histograms_hold_every_number", not bad, "; ".join(bad)[:300])
    if CSV:
        # against numpy on the raw numbers: the same 24 bins between info's 1% and 99%
        # quantiles (min and max when they meet), the tails in the end bins; a bucket
        # (0.4% of its value at most off) may put a number within 1% of an edge in the
        # neighbouring bin, so a bin may differ by the numbers that near its edges
        import pandas as pd
        raw = pd.read_csv(CSV, na_values=["NA", "?", ""], keep_default_na=False)
        bad, compared = [], 0
        for tr in body:
            td = list(tr)[12]
            name = list(tr)[0].attrib["data-v"]
            if "data-counts" not in td.attrib or name not in raw:
                continue
            x = pd.to_numeric(raw[name], errors="coerce").dropna().to_numpy(float)
            c = cols[name]
            lo, hi = c["quantiles"]["0.01"], c["quantiles"]["0.99"]
            if not hi > lo:
                lo, hi = c["min"], c["max"]
            edges = lo + (hi - lo) * np.arange(25) / 24
            k = np.clip(np.floor((x - lo) / ((hi - lo) / 24)) if hi > lo else np.zeros(len(x)), 0, 23)
            k[x <= lo] = 0
            want = np.bincount(k.astype(int), minlength=24)
            got = np.array([int(v) for v in td.attrib["data-counts"].split()])
            near = [np.sum(np.abs(x - e) <= 0.01 * np.abs(x)) for e in edges]
            slack = np.array([near[i] + near[i + 1] for i in range(24)])
            compared += 1
            if np.any(np.abs(got - want) > slack):
                bad.append(f"{name}: page {list(got)}, numpy {list(want)}")
        check("histograms_equal_numpy_within_bucket_error", compared and not bad, "; ".join(bad)[:400])
    # each class line of a class-conditional chart holds the class's numbers (info's by_class n)
    bad, lines = [], 0
    for e in els:
        if local(e.tag) != "svg":
            continue
        head = [t for t in walk(e) if "class-column" in t.attrib.get("class", "")]
        if not head:
            continue
        c = cols[head[0].attrib["data-name"]]
        by = {k["class"]: k["n"] for k in c.get("by_class") or []}
        for g in walk(e):
            if g.attrib.get("class") == "class-line":
                lines += 1
                counts = [int(x) for x in g.attrib["data-counts"].split()]
                n = int(g.attrib["data-n"])
                if sum(counts) != n or by.get(g.attrib["data-class"]) != n:
                    bad.append(f"{c['name']} {g.attrib['data-class']}: {sum(counts)}, {n}, info {by.get(g.attrib['data-class'])}")
    if info.get("target") and info["target"]["task"] == "classify":
        check("class_lines_hold_each_class_s_numbers", lines > 0 and not bad, f"{lines} lines; " + "; ".join(bad)[:300])

    rel = [e for e in els if e.attrib.get("class") == "rel"]
    if info.get("target"):
        scr = sheaf_json("screen", summary)
        feats = {f["name"]: f for f in scr["features"]}
        bad = []
        for g in rel:
            f = feats[g.attrib["data-name"]]
            logps = [t["log10_p"] for k, t in f["tests"].items() if "log10_p" in t]
            lp = num(g.attrib["data-log10-p"])
            if not any(close(lp, x) for x in logps):
                bad.append(f"{f['name']} log10 p {lp} not in {logps}")
            if not close(num(g.attrib["data-log10-q"]), f.get("log10_q")):
                bad.append(f"{f['name']} log10 q {g.attrib['data-log10-q']} vs {f.get('log10_q')}")
            mi = f["tests"].get("mutual_information")
            if not close(num(g.attrib["data-mi"]), mi["normalized"] if mi else None):
                bad.append(f"{f['name']} MI")
            if (g.attrib["data-kept"] == "1") != (f["decision"] == "keep"):
                bad.append(f"{f['name']} decision")
        tested = [f for f in scr["features"] if any("log10_p" in t for t in f["tests"].values())]
        check("relevance_equals_screen_json", rel and not bad and len(rel) == min(len(tested), 120),
              f"{len(rel)} rows, {len(tested)} tested; " + "; ".join(bad)[:400])
    else:
        scr = {"redundant_pairs": []}
        check("no_relevance_without_target", not rel, f"{len(rel)} rows")

    cells = [e for e in els if e.attrib.get("class") == "cell"]
    names = [e.attrib["data-name"] for e in els if e.attrib.get("class") == "label row"]
    n = len(names)
    check("heatmap_is_square", n >= 2 and len(cells) == n * n, f"{len(cells)} cells, {n} names")
    if n >= 2 and len(cells) == n * n:
        corr = sheaf_json("corr", summary)
        idx = {c: i for i, c in enumerate(corr["columns"])}
        R = np.array(corr["matrix"], dtype=float)
        got = np.array([num(c.attrib["data-r"]) for c in cells]).reshape(n, n)
        want = R[np.ix_([idx[a] for a in names], [idx[a] for a in names])]
        check("heatmap_equals_corr_json", np.allclose(got, want, rtol=1e-12, atol=1e-15, equal_nan=True),
              f"largest difference {np.nanmax(np.abs(got - want))}")
        # clustering against scipy, on the columns in the page's order
        D = 1 - np.minimum(1, np.abs(np.nan_to_num(want, nan=0.0)))
        np.fill_diagonal(D, 0)
        cond = squareform(D, checks=False)
        Z = linkage(cond, "average")
        merges = [e for e in els if e.attrib.get("class") == "merge"]
        mine = np.array([[num(m.attrib["data-a"]), num(m.attrib["data-b"]), num(m.attrib["data-height"]),
                          num(m.attrib["data-size"])] for m in merges])
        check("merge_heights_equal_scipy_linkage", len(mine) == n - 1 and
              np.allclose(mine[:, 2], Z[:, 2], rtol=1e-12, atol=1e-14),
              f"page {mine[:, 2] if len(mine) else []} scipy {Z[:, 2]}")
        ok, why = True, ""
        for t in list((Z[:-1, 2] + Z[1:, 2]) / 2) + [Z[-1, 2] + 1, Z[0, 2] / 2]:
            a, b = fcluster(Z, t, "distance"), fcluster(mine, t, "distance")
            if len(set(zip(a, b))) != len(set(a)) or len(set(a)) != len(set(b)):
                ok, why = False, f"cut at {t}: scipy {list(a)}, page {list(b)}"
                break
        check("clusters_equal_scipy_fcluster_at_every_cut", ok, why)
        cost = sum(D[i, i + 1] for i in range(n - 1))
        olo = leaves_list(optimal_leaf_ordering(Z, cond))
        scost = sum(D[olo[i], olo[i + 1]] for i in range(n - 1))
        # the page's order is one the tree allows: every cluster is a run of positions
        span = {i: (i, i) for i in range(n)}
        runs = True
        for k, (a, b, _, size) in enumerate(mine):
            lo, hi = min(span[int(a)][0], span[int(b)][0]), max(span[int(a)][1], span[int(b)][1])
            span[n + k] = (lo, hi)
            runs &= hi - lo + 1 == int(size)
        check("leaf_order_is_the_tree_s_and_no_costlier_than_scipy",
              runs and cost <= scost * (1 + 1e-12) + 1e-15, f"runs {runs}, cost {cost} vs scipy {scost}")
        marked = set()
        for i, c in enumerate(cells):
            if "(pruned as redundant)" in "".join(c.itertext()):
                marked.add(frozenset((names[i // n], names[i % n])))
        want_pairs = {frozenset((p["a"], p["b"])) for p in scr["redundant_pairs"]
                      if p["a"] in names and p["b"] in names}
        check("redundant_pairs_marked", marked == want_pairs, f"marked {marked}, screen {want_pairs}")

    scree = [e for e in els if e.attrib.get("class") == "scree"]
    try:
        pca = sheaf_json("pca", summary)
    except subprocess.CalledProcessError:
        pca = None
    if pca:
        ev = [num(e.attrib["data-eigenvalue"]) for e in scree]
        cu = [num(e.attrib["data-cumulative"]) for e in scree]
        k = min(len(pca["eigenvalues"]), 30)
        check("scree_equals_pca_json", len(ev) == k and
              all(close(a, b) for a, b in zip(ev, pca["eigenvalues"])) and
              all(close(a, b) for a, b in zip(cu, pca["cumulative"])), f"{ev} vs {pca['eigenvalues'][:k]}")
        chosen = sum(1 for e in scree for r in e if local(r.tag) == "rect" and r.attrib["fill"] == "#1f5f99")
        check("scree_marks_the_kaiser_k", chosen == pca["kaiser_k"] or (pca["kaiser_k"] == 0 and chosen == 1),
              f"{chosen} kept bars, Kaiser k {pca['kaiser_k']}")
    else:
        check("no_scree_without_pca", not scree, f"{len(scree)} bars")


if __name__ == "__main__":
    main()
