#!/usr/bin/python3
"""End-to-end checks of `sheaf merge`: summaries of the parts of a table,
merged in any order and tree shape, equal the summary of the whole table;
incompatible, duplicated and damaged inputs are refused.

References, named beside each check:
  - the whole-file scan by sheaf itself (merge must reproduce it: counts
    exactly, moments and correlations to 1e-12 relative);
  - pandas from Debian's packages (value_counts of the raw text, notna
    counts) for the counts of the generated tables, so that a merge and a
    whole-file scan that are wrong the same way are still caught;
  - os.path.getsize for the source sizes listed by info.

Data: tables generated here (numpy default_rng / random.Random, fixed
seeds): uneven random splits, a part with a single row and a part with the
header only, missing values, a text column, a classification and a
regression target.  Prints one "PASS name" / "FAIL name: why" line per check
and exits 0.
"""
import glob
import json
import math
import os
import random
import shutil
import subprocess
import sys
import tempfile
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), ".."))
from refcheck import check, counts, fail, ok, skip  # noqa: E402  (shared PASS/FAIL lines)
from refcheck import (MISSING, NUMBER, ROOT, SHEAF, corr_differences,  # noqa: E402,F401
                      fclose, moment_differences, run)

import numpy as np
import pandas as pd

os.chdir(ROOT)
TOP = 12


TMP = tempfile.mkdtemp(prefix="sheaf-merge-")


_n = [0]


def new_path(ext=".sheaf", d=None):
    _n[0] += 1
    return os.path.join(d or TMP, "m%d%s" % (_n[0], ext))


def scan_file(paths, extra=()):
    out = new_path()
    rc, _, err = run([SHEAF, "scan", "-q"] + list(paths) + ["-o", out] + list(extra))
    if rc != 0:
        return None, "scan exit %d: %s" % (rc, err)
    return out, ""


def merge_files(inputs, extra=()):
    out = new_path()
    rc, _, err = run([SHEAF, "merge"] + list(inputs) + ["-o", out] + list(extra))
    if rc != 0:
        return None, "merge exit %d: %s" % (rc, err)
    return out, ""


def info_of(summary):
    rc, js, err = run([SHEAF, "info", "--format", "json", "--top-values", str(TOP), summary])
    if rc != 0:
        return None, "info exit %d: %s" % (rc, err)
    return json.loads(js), ""


def corr_of(summary):
    rc, js, err = run([SHEAF, "corr", "--format", "json", summary])
    if rc != 0:
        return None, "corr exit %d: %s" % (rc, err)
    return json.loads(js), ""


# ---------------------------------------------------------------------------
# Data

HEADER = ["amount", "score", "ratio", "epoch_s", "region", "note", "grade", "yield"]


def generate(rows, seed):
    """Made-up table (fixed seed): amount (log-normal, 10% missing), score
    (integers 0..300, correlated with amount), ratio (uniform, some 'NA'
    and a few text cells), epoch_s (seconds near 1.7e9), region (text, six
    levels), note (quoted text with delimiters), grade (classification
    target, 3 levels, some missing), yield (regression target)."""
    rng = np.random.default_rng(seed)
    z = rng.normal(size=(rows, 2))
    amount = np.exp(3 + z[:, 0])
    score = np.clip(np.round(150 + 40 * z[:, 0] + 20 * z[:, 1]), 0, 300).astype(int)
    ratio = rng.uniform(0.5, 2.0, rows)
    epoch = 1700000000 + rng.integers(0, 86400 * 30, rows)
    region = rng.choice(["alder", "birch", "cedar", "dogwood", "elm", "fir"], rows,
                        p=[0.3, 0.25, 0.2, 0.12, 0.08, 0.05])
    grade = np.where(score > 170, "A", np.where(score > 130, "B", "C"))
    yld = 2.5 * amount - 0.1 * score + rng.normal(size=rows)
    lines = []
    for i in range(rows):
        a = "" if rng.uniform() < 0.1 else "%.5f" % amount[i]
        u = rng.uniform()
        r = "NA" if u < 0.05 else ("n/a" if u < 0.055 else "%.6f" % ratio[i])
        g = "" if rng.uniform() < 0.04 else grade[i]
        note = '"%s, lot %d"' % (region[i], i % 7) if i % 3 else "plain"
        lines.append(",".join([a, str(score[i]), r, str(epoch[i]), region[i], note, g,
                               "%.4f" % yld[i]]))
    return lines


def write(path, lines):
    with open(path, "w") as f:
        f.write(",".join(HEADER) + "\n")
        for ln in lines:
            f.write(ln + "\n")
    return path


def split_sizes(rows, parts, rnd):
    """Uneven sizes summing to rows, with one 1-row part and one empty part."""
    cuts = sorted(rnd.sample(range(1, rows - 1), parts - 3))
    sizes = [b - a for a, b in zip([0] + cuts, cuts + [rows - 1])]
    sizes += [1, 0]
    rnd.shuffle(sizes)
    return sizes


# ---------------------------------------------------------------------------
# Comparison

def compare(name, got, want, gc, wc):
    """got/want: info JSON; gc/wc: corr JSON.  Counts identical, moments,
    per-class moments and r to 1e-12 relative, quantiles identical when the
    bucket sketch kept the same resolution (no collapse)."""
    why = []
    for k in ("rows", "short_rows", "long_rows"):
        if got[k] != want[k]:
            why.append("%s %r vs %r" % (k, got[k], want[k]))
    tg, tw = got.get("target"), want.get("target")
    if (tg is None) != (tw is None):
        why.append("target %r vs %r" % (tg, tw))
    elif tg:
        for k in ("name", "task", "declared_task", "classes_dropped", "max_classes"):
            if tg[k] != tw[k]:
                why.append("target.%s %r vs %r" % (k, tg[k], tw[k]))
        lg = {e["value"]: e["rows"] for e in tg["levels"]}
        lw = {e["value"]: e["rows"] for e in tw["levels"]}
        if lg != lw:
            why.append("target levels %s vs %s" % (sorted(lg.items())[:4], sorted(lw.items())[:4]))
    if [c["name"] for c in got["columns"]] != [c["name"] for c in want["columns"]]:
        why.append("columns differ")
    for x, y in zip(got["columns"], want["columns"]):
        nm = x["name"]
        keys = ["kind", "n", "missing", "non_numeric", "non_finite", "zeros", "integers",
                "min", "max", "distinct", "distinct_exact", "value_table_full",
                "quantile_relative_error"]
        for k in keys:
            if x.get(k) != y.get(k):
                why.append("%s.%s %r vs %r" % (nm, k, x.get(k), y.get(k)))
        if y.get("distinct_exact"):
            # exact value table: the same values with the same counts (ties
            # may be listed in either order)
            tx = sorted((e["count"], e["value"]) for e in x["top"])
            ty = sorted((e["count"], e["value"]) for e in y["top"])
            cx = sorted(e["count"] for e in x["top"])
            cy = sorted(e["count"] for e in y["top"])
            if cx != cy or (len(y["top"]) < TOP and tx != ty):
                why.append("%s.top %s vs %s" % (nm, x["top"][:3], y["top"][:3]))
        if x.get("quantile_relative_error") == y.get("quantile_relative_error") and \
                x.get("quantiles") != y.get("quantiles"):
            why.append("%s.quantiles %r vs %r" % (nm, x.get("quantiles"), y.get("quantiles")))
        moment_differences(nm, x, y, max(abs(y["min"] or 0), abs(y["max"] or 0)), why)
    corr_differences(gc, wc, why, rows=True)
    return check(name, not why, "; ".join(why[:4]))


def pandas_counts(name, path, info):
    """The whole-file counts against pandas (Debian) on the raw text."""
    raw = pd.read_csv(path, dtype=str, keep_default_na=False, na_filter=False)
    why = []
    if info["rows"] != len(raw):
        why.append("rows %d vs pandas %d" % (info["rows"], len(raw)))
    for c in info["columns"]:
        cells = raw[c["name"]]
        miss = int(cells.isin(MISSING).sum())
        if c["missing"] != miss:
            why.append("%s.missing %d vs %d" % (c["name"], c["missing"], miss))
        if c["distinct_exact"]:
            vc = cells[~cells.isin(MISSING)].value_counts()
            if c["distinct"] != len(vc):
                why.append("%s.distinct %d vs pandas nunique %d" % (c["name"], c["distinct"],
                                                                   len(vc)))
            bad = [e for e in c["top"] if int(vc.get(e["value"], 0)) != e["count"]]
            if bad:
                why.append("%s.top %s vs value_counts" % (c["name"], bad[:2]))
    t = info.get("target")
    if t and t["levels"]:
        cells = raw[t["name"]]
        vc = cells[~cells.isin(MISSING)].value_counts()
        if {e["value"]: e["rows"] for e in t["levels"]} != {k: int(v) for k, v in vc.items()}:
            why.append("target levels vs value_counts")
    check(name, not why, "; ".join(why[:4]))


def tree_merge(paths, rnd, extra=()):
    """Merges pairwise ((a,b),(c,d)),... until one summary is left."""
    level = list(paths)
    while len(level) > 1:
        nxt = []
        for i in range(0, len(level) - 1, 2):
            m, err = merge_files([level[i], level[i + 1]], extra)
            if m is None:
                return None, err
            nxt.append(m)
        if len(level) % 2:
            nxt.append(level[-1])
        level = nxt
    return level[0], ""


# ---------------------------------------------------------------------------

def test_random_splits():
    variants = [("plain", []), ("classify", ["--target", "grade"]),
                ("regress", ["--target", "yield"]),
                ("regress_integer_levels", ["--target", "score"]),
                ("classes_dropped_in_some_parts", ["--target", "score", "--max-classes", "120"]),
                ("classify_small_chunks", ["--target", "grade", "--chunk-size", "1K"])]
    for seed, rows, parts in ((1, 3000, 6), (2, 1500, 4), (3, 5000, 8)):
        lines = generate(rows, seed)
        whole = write(os.path.join(TMP, "whole%d.csv" % seed), lines)
        rnd = random.Random(seed * 1000 + 7)
        sizes = split_sizes(rows, parts, rnd)
        part_files, at = [], 0
        for k, sz in enumerate(sizes):
            part_files.append(write(os.path.join(TMP, "part%d_%d.csv" % (seed, k)),
                                    lines[at:at + sz]))
            at += sz
        tag0 = "split%d_%drows_%dparts" % (seed, rows, parts)
        check(tag0 + ".split_covers_table", at == rows and 0 in sizes and 1 in sizes,
              "sizes %s" % sizes)
        for label, extra in variants:
            tag = "%s.%s" % (tag0, label)
            ws, err = scan_file([whole], extra)
            if ws is None:
                fail(tag + ".whole_scan", err)
                continue
            want, err = info_of(ws)
            wc, err2 = corr_of(ws)
            if want is None or wc is None:
                fail(tag + ".whole_info", err or err2)
                continue
            if label in ("plain", "classify"):
                pandas_counts(tag + ".whole_vs_pandas", whole, want)
            shards = []
            for pf in part_files:
                s, err = scan_file([pf], extra)
                if s is None:
                    break
                shards.append(s)
            if not check(tag + ".parts_scanned", len(shards) == len(part_files), err):
                continue
            orders = []
            o = list(shards)
            rnd.shuffle(o)
            orders.append(("random_order", o, "flat"))
            orders.append(("reverse_order", list(reversed(shards)), "flat"))
            orders.append(("tree", list(shards), "tree"))
            o = list(shards)
            rnd.shuffle(o)
            orders.append(("tree_random_order", o, "tree"))
            for oname, order, shape in orders:
                if shape == "flat":
                    m, err = merge_files(order)
                else:
                    m, err = tree_merge(order, rnd)
                got = gc = None
                if m is not None:
                    got, err = info_of(m)
                    gc, err2 = corr_of(m)
                    err = err or err2
                if got is None or gc is None:
                    fail("%s.%s" % (tag, oname), err)
                    continue
                compare("%s.%s_same_as_whole" % (tag, oname), got, want, gc, wc)
                # every part is listed, with its file size and fingerprint
                if oname == "tree":
                    srcs = got.get("sources") or []
                    paths = sorted(s["path"] for s in srcs)
                    good = paths == sorted(part_files) and all(
                        s["size_bytes"] == os.path.getsize(s["path"])
                        and isinstance(s["fingerprint"], str) and len(s["fingerprint"]) >= 8
                        for s in srcs)
                    rows_ok = sum(s["rows"] for s in srcs) == rows
                    check(tag + ".sources_listed", good and rows_ok,
                          "sources %s" % [(s.get("path"), s.get("size_bytes"), s.get("rows"))
                                          for s in srcs][:4])
                    fps = set()
                    for sh in shards:
                        inf, _ = info_of(sh)
                        fps |= {s["fingerprint"] for s in (inf or {}).get("sources", [])}
                    check(tag + ".sources_fingerprints_kept",
                          fps == {s["fingerprint"] for s in srcs} and len(fps) == len(shards),
                          "%d distinct fingerprints in the parts, merged lists %s"
                          % (len(fps), sorted(s["fingerprint"] for s in srcs)[:4]))


def test_quantiles_no_collapse():
    """Without bucket collapse the quantiles of a merge equal the whole
    file's exactly: a column of positive values in [1, 100] (few buckets)."""
    rnd = random.Random(11)
    vals = ["%.3f" % rnd.uniform(1, 100) for _ in range(4000)]
    whole = os.path.join(TMP, "q_whole.csv")
    with open(whole, "w") as f:
        f.write("v\n" + "\n".join(vals) + "\n")
    parts = []
    at = 0
    for k, sz in enumerate((1, 1999, 0, 1500, 500)):
        p = os.path.join(TMP, "q_part%d.csv" % k)
        with open(p, "w") as f:
            f.write("v\n" + "".join(v + "\n" for v in vals[at:at + sz]))
        parts.append(p)
        at += sz
    ws, err = scan_file([whole])
    shards = [scan_file([p])[0] for p in parts]
    if ws is None or None in shards:
        return fail("quantiles_no_collapse", err or "a part did not scan")
    m, err = merge_files(shards[::-1])
    if m is None:
        return fail("quantiles_no_collapse", err)
    a, _ = info_of(m)
    b, _ = info_of(ws)
    ca, cb = a["columns"][0], b["columns"][0]
    check("quantiles_no_collapse.identical",
          ca["quantiles"] == cb["quantiles"]
          and ca["quantile_relative_error"] == cb["quantile_relative_error"],
          "merged %r (error %r), whole %r (error %r)" % (
              ca["quantiles"], ca["quantile_relative_error"], cb["quantiles"],
              cb["quantile_relative_error"]))
    # numpy.quantile(method='linear') (Debian) within the stated bound of
    # the two order statistics it interpolates between (4000 distinct
    # values: past the value table, so these are bucket estimates)
    x = np.array([float(v) for v in vals])
    xs = np.sort(x)
    rel = ca["quantile_relative_error"]
    bad = []
    for key, got in ca["quantiles"].items():
        q = float(np.quantile(x, float(key), method="linear"))
        h = (len(xs) - 1) * float(key)
        j = int(math.floor(h))
        a, b, g = xs[j], xs[min(j + 1, len(xs) - 1)], h - j
        if got is None or abs(got - q) > rel * ((1 - g) * abs(a) + g * abs(b)) * (1 + 1e-12):
            bad.append("%s: %r vs numpy %r" % (key, got, q))
    check("quantiles_no_collapse.within_bound_vs_numpy", rel and not bad, "; ".join(bad[:3]))


def test_incompatible():
    lines = generate(400, 21)
    a = write(os.path.join(TMP, "inc_a.csv"), lines[:200])
    b = write(os.path.join(TMP, "inc_b.csv"), lines[200:])
    renamed = os.path.join(TMP, "inc_c.csv")
    with open(renamed, "w") as f:
        f.write(",".join(HEADER[:4] + ["district"] + HEADER[5:]) + "\n")
        f.write("\n".join(lines[200:]) + "\n")
    cases = [
        ("different_targets", a, ["--target", "grade"], b, ["--target", "yield"],
         ["grade", "yield"]),
        ("target_and_none", a, ["--target", "grade"], b, [], ["grade"]),
        ("different_max_levels", a, ["--max-levels", "100"], b, [], ["100", "1024"]),
        ("different_max_classes", a, ["--target", "grade", "--max-classes", "5"], b,
         ["--target", "grade"], ["5", "256"]),
        ("different_task", a, ["--target", "grade", "--task", "classify"], b,
         ["--target", "grade"], ["classify"]),
        ("different_column_set", a, ["--columns", "amount,score,region"], b, [],
         ["3", "8"]),
        ("different_column_name", a, [], renamed, [], ["region", "district"]),
        ("different_declared_kind", a, ["--categorical", "score"], b, [], ["score"]),
        ("different_missing_list", a, ["--missing", "n/a"], b, [], ["missing"]),
    ]
    outdir = os.path.join(TMP, "inc_out")
    os.makedirs(outdir)
    for name, pa, ea, pb, eb, words in cases:
        sa, err = scan_file([pa], ea)
        sb, err2 = scan_file([pb], eb)
        if sa is None or sb is None:
            fail("incompatible.%s.scan" % name, err or err2)
            continue
        for order, ins in (("ab", [sa, sb]), ("ba", [sb, sa])):
            out = os.path.join(outdir, "x.sheaf")
            rc, _, err = run([SHEAF, "merge"] + ins + ["-o", out])
            t = "incompatible.%s.%s" % (name, order)
            check(t + ".exit_5", rc == 5, "exit %d: %s" % (rc, err))
            check(t + ".message_names_difference",
                  all(w in err for w in words) and err.count("\n") == 0,
                  "stderr %r should name %s" % (err, words))
            check(t + ".no_output", os.listdir(outdir) == [], "left %s" % os.listdir(outdir))
    # the same column set chosen two ways merges
    sa, _ = scan_file([a], ["--exclude", "note"])
    sb, _ = scan_file([b], ["--columns", ",".join(h for h in HEADER if h != "note")])
    m, err = merge_files([sa, sb]) if sa and sb else (None, "scan failed")
    check("compatible.ignore_vs_columns", m is not None, err)


def test_duplicates():
    lines = generate(500, 31)
    a = write(os.path.join(TMP, "dup_a.csv"), lines[:300])
    b = write(os.path.join(TMP, "dup_b.csv"), lines[300:])
    for label, extra in (("plain", []), ("classify", ["--target", "grade"])):
        sa, err = scan_file([a], extra)
        sa2, err2 = scan_file([a], extra)
        sb, err3 = scan_file([b], extra)
        if not (sa and sa2 and sb):
            fail("duplicates.%s.scan" % label, err or err2 or err3)
            continue
        ab, err = merge_files([sa, sb])
        cases = [("self", [sa, sa]), ("two_scans_same_file", [sa, sa2]),
                 ("merged_with_its_part", [ab, sb] if ab else [sb, sb])]
        for name, ins in cases:
            t = "duplicates.%s.%s" % (label, name)
            out = new_path()
            rc, _, err = run([SHEAF, "merge"] + ins + ["-o", out])
            check(t + ".exit_5", rc == 5, "exit %d: %s" % (rc, err))
            check(t + ".message", "--allow-duplicates" in err, "stderr %r" % err)
            check(t + ".no_output", not os.path.exists(out), "output exists")
        # --allow-duplicates: every count doubles, means stay
        base, _ = info_of(sa)
        m, err = merge_files([sa, sa2], ["--allow-duplicates"])
        if not check("duplicates.%s.allowed.exit_0" % label, m is not None, err):
            continue
        dbl, _ = info_of(m)
        why = []
        if dbl["rows"] != 2 * base["rows"]:
            why.append("rows %d vs 2 x %d" % (dbl["rows"], base["rows"]))
        for x, y in zip(dbl["columns"], base["columns"]):
            for k in ("n", "missing", "non_numeric", "zeros", "integers"):
                if x[k] != 2 * y[k]:
                    why.append("%s.%s %r vs 2 x %r" % (x["name"], k, x[k], y[k]))
            if y["distinct_exact"] and sorted(e["count"] for e in x["top"]) != \
                    sorted(2 * e["count"] for e in y["top"]):
                why.append("%s.top counts not doubled" % x["name"])
            if x["distinct"] != y["distinct"]:
                why.append("%s.distinct %r vs %r" % (x["name"], x["distinct"], y["distinct"]))
            if not fclose(x["mean"], y["mean"], max(abs(y["min"] or 0), abs(y["max"] or 0))):
                why.append("%s.mean %r vs %r" % (x["name"], x["mean"], y["mean"]))
            for e, f in zip(sorted(x.get("by_class") or [], key=lambda e: e["class"]),
                            sorted(y.get("by_class") or [], key=lambda e: e["class"])):
                if e["n"] != 2 * f["n"]:
                    why.append("%s/%s n %r vs 2 x %r" % (x["name"], e["class"], e["n"], f["n"]))
        if base.get("target"):
            lv = {e["value"]: e["rows"] for e in dbl["target"]["levels"]}
            lw = {e["value"]: 2 * e["rows"] for e in base["target"]["levels"]}
            if lv != lw:
                why.append("levels %s vs doubled %s" % (lv, lw))
        check("duplicates.%s.allowed.counts_doubled" % label, not why, "; ".join(why[:4]))
        check("duplicates.%s.allowed.sources_twice" % label,
              len(dbl["sources"]) == 2, "%d sources" % len(dbl["sources"]))


def test_damaged_inputs():
    lines = generate(600, 41)
    a = write(os.path.join(TMP, "dmg_a.csv"), lines[:300])
    b = write(os.path.join(TMP, "dmg_b.csv"), lines[300:])
    sa, err = scan_file([a], ["--target", "grade"])
    sb, err2 = scan_file([b], ["--target", "grade"])
    if not (sa and sb):
        return fail("damaged.scan", err or err2)
    data = open(sb, "rb").read()
    size = len(data)
    variants = []
    for o in (0, 9, 20, size // 3, size // 2, size - 40, size - 1):
        d = bytearray(data)
        d[o] ^= 0x04
        variants.append(("flipped_byte_%s" % ("at_%d" % o if o < 100 else
                                              "%d_from_end" % (size - o)), bytes(d)))
    for label, cut in (("half", size // 2), ("minus_1", size - 1), ("header_only", 12),
                       ("empty", 0)):
        variants.append(("truncated_" + label, data[:cut]))
    variants.append(("trailing_byte", data + b"\0"))
    for name, blob in variants:
        d = os.path.join(TMP, "dmg_" + name)
        os.makedirs(d)
        bad = os.path.join(d, "bad.sheaf")
        open(bad, "wb").write(blob)
        for order, ins in (("second", [sa, bad]), ("first", [bad, sa])):
            out = os.path.join(d, "out.sheaf")
            rc, _, err = run([SHEAF, "merge"] + ins + ["-o", out])
            t = "damaged_input.%s.%s" % (name, order)
            check(t + ".exit_4", rc == 4, "exit %d: %s" % (rc, err))
            check(t + ".names_file", "bad.sheaf" in err, "stderr %r" % err)
            left = sorted(os.listdir(d))
            check(t + ".no_output_no_temporaries", left == ["bad.sheaf"] and
                  not glob.glob(os.path.join(d, "*.tmp.*")), "directory holds %s" % left)
    # a failed merge leaves an existing output untouched
    d = os.path.join(TMP, "dmg_keep")
    os.makedirs(d)
    out = os.path.join(d, "out.sheaf")
    shutil.copy(sa, out)
    bad = os.path.join(d, "bad.sheaf")
    open(bad, "wb").write(data[:size // 2])
    rc, _, _ = run([SHEAF, "merge", sa, bad, "-o", out])
    check("damaged_input.keeps_old_output", rc == 4 and open(out, "rb").read() ==
          open(sa, "rb").read() and sorted(os.listdir(d)) == ["bad.sheaf", "out.sheaf"],
          "exit %d, directory %s" % (rc, sorted(os.listdir(d))))
    # usage
    rc, _, err = run([SHEAF, "merge", sa, "-o", new_path()])
    check("merge_one_input.exit_2_or_0", rc in (0, 2), "exit %d: %s" % (rc, err))
    rc, _, err = run([SHEAF, "merge", sa, sb])
    check("merge_no_output.exit_2", rc == 2, "exit %d: %s" % (rc, err))
    rc, _, err = run([SHEAF, "merge", sa, os.path.join(TMP, "no-such.sheaf"), "-o", new_path()])
    check("merge_missing_input.fails", rc not in (0, 2) and rc < 128, "exit %d" % rc)


def main():
    if not os.access(SHEAF, os.X_OK):
        fail("binary", "%s not found (run make first)" % os.path.abspath(SHEAF))
        return
    try:
        test_random_splits()
        test_quantiles_no_collapse()
        test_incompatible()
        test_duplicates()
        test_damaged_inputs()
    finally:
        shutil.rmtree(TMP, ignore_errors=True)


if __name__ == "__main__":
    try:
        main()
    except Exception as e:  # a crash of the script is one failed check, not a silent stop
        import traceback
        traceback.print_exc()
        fail("test_merge.py", "%s: %s" % (type(e).__name__, e))
    sys.exit(0)
