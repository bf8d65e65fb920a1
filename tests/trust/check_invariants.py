#!/usr/bin/python3
"""Checks sheaf summary files against the invariants that
docs/summary-format.md ("Invariants", and the rules of each section) states,
field by field, apart from sheaf's own decoder: the fields come from
tests/cli/summary_craft.py's parser.  For the bad-input run
(tests/trust/bad_input_run.sh): a file that sheaf's decoder accepts must
pass every check here, or the decoder missed an impossible summary.

  check_invariants.py FILE...   prints "FILE: what breaks" per broken
                                invariant; exits 1 when any broke

Checked (each line of the format's tables that fields alone can decide):
  SCHM      the target names a column
  SRCS      format plain, gzip or zstd; start_byte <= end_byte when
            end_byte != 0; the sources' rows add up to TABL's rows
  TABL      short + long rows <= rows; n_bad_lines <= 5 and <= short +
            long; every kept line >= 1
  TRGT      (version 3) target cells: at most 64 keys, ascending, in range,
            none with classes; bucket cells within them;
            flags 0 or 1; classes_dropped only with a target and without
            classes; has_classes 0 needs nclasses 0; target_text <= rows;
            each class: hash = XXH3-64 of its label, rows >= 1, no hash
            twice, numeric 0 means an all-zero value; class rows add up to
            at most rows
  COLS      missing + n + non_numeric + non_finite = rows; zeros <=
            integers <= n; n_examples <= 3 and <= non_numeric, no example
            twice; a declared-categorical column has n = non_finite = 0 and
            no examples; moments (n = 0: no frame, zeros, min +inf, max
            -inf; n >= 1: a frame, min <= ref <= max, finite; n = 1: zero
            sums; n >= 2: m2, m4 >= 0); value table: max_levels and
            label_bytes equal SCHM's, hashes strictly ascending, counts
            >= 1, counts and overflow slots add up to the present cells,
            overflowed only when full, a label shorter than label_bytes
            hashes to its key; sparse HLL indices strictly ascending; bucket
            store: budget equals SCHM's, entries strictly ascending by (key,
            cell), counts >= 1 adding up to n; has_cross = 1 exactly with a
            target; per-value table: max_keys = SCHM's max_levels, entries
            strictly ascending by (key, cell), n >= 1; has_cls = TRGT's
            has_classes; per-class moments: n <= the class's rows, m2 >= 0,
            n = 0 gives zeros, n = 1 gives m2 = 0, (version 3) |sum_low|
            <= half an ulp of sum
  PAIRS     (version 3) see check_pairs
  COMO      ncomo and p = the columns not declared categorical; present =
            1; frame_set = 1 exactly when the column has a number; N
            symmetric with N[i][i] = the column's n and N[i][j] <= N[i][i],
            N[j][j]; C symmetric bit for bit
"""
import math
import os
import struct
import sys

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "cli"))
import summary_craft  # noqa: E402


def bits(x):
    return struct.pack("<d", x)


def check(data):
    """Yields what breaks in one summary's bytes."""
    _, fields = summary_craft.parse(data)
    f = {name: value for name, _, _, value in fields}
    g = f.get
    ncols = g("SCHM.ncols")
    names = [g("SCHM.column[%d].name.text" % i) for i in range(ncols)]
    modes = [g("SCHM.column[%d].mode" % i) for i in range(ncols)]
    target = g("SCHM.target.text")
    if target and target not in names:
        yield "SCHM: the target names no column"
    rows = g("TABL.rows")
    nsrc = g("SRCS.n")
    if sum(g("SRCS.source[%d].rows" % k) for k in range(nsrc)) != rows:
        yield "SRCS: the sources' rows do not add up to TABL's rows"
    for k in range(nsrc):
        p = "SRCS.source[%d]." % k
        if g(p + "format.text") not in ("plain", "gzip", "zstd"):
            yield "SRCS: source %d: format %r" % (k, g(p + "format.text"))
        if g(p + "end_byte") and g(p + "start_byte") > g(p + "end_byte"):
            yield "SRCS: source %d: start_byte > end_byte" % k
    ragged = g("TABL.short_rows") + g("TABL.long_rows")
    if ragged > rows:
        yield "TABL: short + long rows > rows"
    nbad = g("TABL.n_bad_lines")
    if nbad > 5 or nbad > ragged or any(g("TABL.bad_line[%d]" % i) < 1 for i in range(nbad)):
        yield "TABL: kept ragged lines"
    has_classes, dropped = g("TRGT.has_classes"), g("TRGT.classes_dropped")
    nclasses = g("TRGT.nclasses")
    if has_classes not in (0, 1) or dropped not in (0, 1):
        yield "TRGT: a flag that is not 0 or 1"
    if dropped and (not target or has_classes):
        yield "TRGT: classes dropped without a target or with classes"
    if has_classes and not target:
        yield "TRGT: classes without a target"
    if not has_classes and nclasses:
        yield "TRGT: class records without has_classes"
    if g("TRGT.target_text") > rows:
        yield "TRGT: target_text > rows"
    # version 3: a continuous target's cells, at most 64 keys strictly
    # ascending within the level's range (level <= 63), none with classes
    tcells = g("TRGT.tcells.n") if "TRGT.tcells.n" in f else None
    if tcells is not None:
        level = g("TRGT.tcells.level")
        keys = [g("TRGT.tcells.key[%d]" % k) for k in range(tcells)]
        limit = (0x7FEFFFFFFFFFFFFF >> min(level, 63)) + 1
        if level > 63 or tcells > 64 or any(a >= b for a, b in zip(keys, keys[1:])) or \
                any(abs(k) > limit for k in keys):
            yield "TRGT: target cells out of order or range"
        if (g("TRGT.has_classes") or not target) and (tcells or level):
            yield "TRGT: continuous target cells while classes are kept, or without a target"
    class_rows, hashes = [0], set()
    for c in range(1, nclasses + 1):
        p = "TRGT.class[%d]." % c
        label = g(p + "label.text").encode("latin-1")
        if g(p + "hash") != summary_craft.xxh3(label):
            yield "TRGT: class %d: hash is not XXH3-64 of its label" % c
        if g(p + "hash") in hashes:
            yield "TRGT: class %d: hash twice" % c
        hashes.add(g(p + "hash"))
        if g(p + "rows") < 1:
            yield "TRGT: class %d without rows" % c
        if g(p + "numeric") not in (0, 1):
            yield "TRGT: class %d: numeric flag" % c
        if g(p + "numeric") == 0 and any(g(p + "value." + x) for x in
                                          ("mantissa", "exp10", "negative", "exact")):
            yield "TRGT: class %d: a value without the numeric flag" % c
        class_rows.append(g(p + "rows"))
    if sum(class_rows) > rows:
        yield "TRGT: class rows add up to more than rows"
    for i in range(ncols):
        p = "COLS[%d]." % i
        col = "COLS: column %d %r: " % (i + 1, names[i])
        n = g(p + "moments.n")
        present = n + g(p + "non_numeric") + g(p + "non_finite")
        if g(p + "missing") + present != rows:
            yield col + "cells do not add up to rows"
        if not g(p + "zeros") <= g(p + "integers") <= n:
            yield col + "zeros <= integers <= n broken"
        nex = g(p + "n_examples")
        examples = [g(p + "example[%d].text" % e) for e in range(nex)]
        if nex > 3 or nex > g(p + "non_numeric") or len(set(examples)) != nex:
            yield col + "examples"
        if modes[i] == 2 and (n or g(p + "non_finite") or nex):
            yield col + "a declared-categorical column with numbers or examples"
        m = p + "moments."
        mean, m2, m3, m4, lo, hi = (g(m + x) for x in ("mean", "m2", "m3", "m4", "min", "max"))
        ref = g(m + "ref.value")
        if n == 0:
            if g(m + "has_ref") or any(g(m + "ref." + x) for x in
                                       ("value", "mantissa", "exp10", "negative", "exact")):
                yield col + "a frame without numbers"
            if (mean, m2, m3, m4) != (0, 0, 0, 0) or lo != math.inf or hi != -math.inf:
                yield col + "moments of no numbers"
        else:
            if g(m + "has_ref") != 1:
                yield col + "numbers without a frame"
            if not (math.isfinite(lo) and math.isfinite(hi) and lo <= ref <= hi):
                yield col + "min <= frame <= max broken"
            if n == 1 and (mean, m2, m3, m4) != (0, 0, 0, 0):
                yield col + "sums of one number"
            if n >= 2 and not (m2 >= 0 and m4 >= 0):
                yield col + "m2 or m4 below zero"
        v = p + "values."
        if g(v + "max_levels") != g("SCHM.max_levels") or g(v + "label_bytes") != g("SCHM.label_bytes"):
            yield col + "value table sizes differ from the schema's"
        levels = g(v + "levels")
        keys = [g(v + "entry[%d].hash" % k) for k in range(levels)]
        counts = [g(v + "entry[%d].count" % k) for k in range(levels)]
        if any(a >= b for a, b in zip(keys, keys[1:])) or any(c < 1 for c in counts):
            yield col + "value table order or counts"
        if sum(counts) + sum(g(v + "overflow[%d]" % s) for s in range(64)) != present:
            yield col + "value table does not count the present cells"
        if g(v + "overflowed") and levels != g(v + "max_levels"):
            yield col + "value table overflowed with room left"
        for k in range(levels):
            label = g(v + "entry[%d].label.text" % k).encode("latin-1")
            if len(label) < g("SCHM.label_bytes") and summary_craft.xxh3(label) != keys[k]:
                yield col + "value %d: label does not hash to its key" % (k + 1)
        h = p + "hll."
        if g(h + "tag") == 0:
            idx = [g(h + "pair[%d].index" % k) for k in range(g(h + "k"))]
            if any(a >= b for a, b in zip(idx, idx[1:])):
                yield col + "sparse HLL indices out of order"
        b = p + "bins."
        if g(b + "budget") != g("SCHM.bucket_budget"):
            yield col + "bucket budget differs from the schema's"
        ents = [(g(b + "entry[%d].key" % k), g(b + "entry[%d].cell" % k)) for k in range(g(b + "n"))]
        bcounts = [g(b + "entry[%d].count" % k) for k in range(g(b + "n"))]
        if any(a >= c for a, c in zip(ents, ents[1:])) or any(c < 1 for c in bcounts):
            yield col + "bucket entries order or counts"
        if tcells is not None and target and not g("TRGT.has_classes") and \
                any(c > tcells for _, c in ents):
            yield col + "bucket entry names a target cell past the cell table"
        if sum(bcounts) != n:
            yield col + "bucket counts do not add up to n"
        if g(p + "has_cross") != (1 if target else 0):
            yield col + "has_cross without a target, or the reverse"
        if g(p + "has_cross"):
            x = p + "cross."
            if g(x + "max_keys") != g("SCHM.max_levels"):
                yield col + "per-value table size differs from the schema's"
            ents = [(g(x + "entry[%d].key" % k), g(x + "entry[%d].cell" % k)) for k in range(g(x + "n"))]
            if any(a >= c for a, c in zip(ents, ents[1:])) or \
                    any(g(x + "entry[%d].n" % k) < 1 for k in range(g(x + "n"))):
                yield col + "per-value entries order or counts"
        if g(p + "has_cls") != has_classes:
            yield col + "has_cls differs from TRGT's has_classes"
        if g(p + "has_cls"):
            for c in range(1, nclasses + 1):
                q = p + "cls[%d]." % c
                cn, cm2 = g(q + "n"), g(q + "m2")
                # version 3: the sum in two doubles, the low part within
                # half an ulp of the high one; before, a mean
                parts = (g(q + "sum"), g(q + "sum_low")) if q + "sum" in f else (g(q + "mean"),)
                if cn > class_rows[c] or not cm2 >= 0 or \
                        (cn == 0 and any(x != 0 for x in parts + (cm2,))) or \
                        (cn == 1 and cm2 != 0):
                    yield col + "class %d moments" % c
                elif len(parts) == 2 and all(math.isfinite(x) for x in parts) and \
                        abs(parts[1]) > 0.5 * (math.ulp(parts[0]) if parts[0] else 0):
                    yield col + "class %d sum's low part is more than half an ulp" % c
    como = [i for i in range(ncols) if modes[i] != 2]
    if g("COMO.ncomo") != len(como) or g("COMO.p") != len(como) or g("COMO.present") != 1:
        yield "COMO: sizes differ from the columns not declared categorical"
        return
    for k, i in enumerate(como):
        has_number = g("COLS[%d].moments.n" % i) > 0
        if g("COMO.frame[%d].set" % k) != (1 if has_number else 0):
            yield "COMO: frame %d set without numbers, or the reverse" % k
        if g("COMO.N[%d][%d]" % (k, k)) != g("COLS[%d].moments.n" % i):
            yield "COMO: N[%d][%d] differs from the column's n" % (k, k)
    yield from check_pairs(g, f, ncols, modes, names, target, como)
    p = len(como)
    for a in range(p):
        for c in range(a + 1, p):
            nac, nca = g("COMO.N[%d][%d]" % (a, c)), g("COMO.N[%d][%d]" % (c, a))
            if nac != nca or nac > g("COMO.N[%d][%d]" % (a, a)) or nac > g("COMO.N[%d][%d]" % (c, c)):
                yield "COMO: N[%d][%d]" % (a, c)
            if bits(g("COMO.C[%d][%d]" % (a, c))) != bits(g("COMO.C[%d][%d]" % (c, a))):
                yield "COMO: C[%d][%d] not symmetric" % (a, c)


def signed256(g, name):
    """A 256-bit two's-complement sum stored as 4 u64 words."""
    v = sum(g("%s[%d]" % (name, k)) << (64 * k) for k in range(4))
    return v - (1 << 256) if v >> 255 else v


def check_pairs(g, f, ncols, modes, names, target, como):
    """Version 3 exact pair sums with the target (acc/pairsum.h): present
    exactly for the columns not declared categorical when there is a
    target; exact in {0, 1}; an inexact or empty state all zero; n at most
    the column's and the target's numbers, and equal to the co-moment pair
    count with the target when exact; scales within +-1100; 0 <= Sxx, Syy <
    2^200; A = n Sxx - Sx^2 >= 0, B >= 0, C^2 <= A B (Cauchy-Schwarz, in
    Python's exact integers); n = 1 gives A = B = C = 0."""
    t = names.index(target) if target in names else -1
    for i in range(ncols):
        p = "COLS[%d]." % i
        if p + "has_pairs" not in f:
            continue
        col = "COLS: column %d: " % (i + 1)
        want = 1 if t >= 0 and modes[i] != 2 else 0
        if g(p + "has_pairs") != want:
            yield col + "has_pairs is %d" % g(p + "has_pairs")
            continue
        if not want:
            continue
        q = p + "pairs."
        exact, n = g(q + "exact"), g(q + "n")
        sums = {k: signed256(g, q + k) for k in ("sx", "sy", "sxx", "syy", "sxy")}
        scales = (g(q + "scale_x"), g(q + "scale_y"))
        if exact not in (0, 1):
            yield col + "pair sums exact flag %d" % exact
            continue
        if not exact or n == 0:
            if n or any(sums.values()) or any(scales):
                yield col + "pair sums not all zero while %s" % ("inexact" if not exact else "empty")
            continue
        if n > g(p + "moments.n") or n > g("COLS[%d].moments.n" % t):
            yield col + "more exact pairs than numbers"
        if i in como and t in como:
            if g("COMO.N[%d][%d]" % (como.index(i), como.index(t))) != n:
                yield col + "exact pairs differ from the co-moment pair count"
        if any(abs(x) > 1100 for x in scales):
            yield col + "pair sum scales %r" % (scales,)
        if not (0 <= sums["sxx"] < 1 << 200 and 0 <= sums["syy"] < 1 << 200):
            yield col + "pair sums of squares out of range"
        a = n * sums["sxx"] - sums["sx"] ** 2
        b = n * sums["syy"] - sums["sy"] ** 2
        c = n * sums["sxy"] - sums["sx"] * sums["sy"]
        if a < 0 or b < 0 or c * c > a * b or (n == 1 and (a, b, c) != (0, 0, 0)):
            yield col + "pair sums break Cauchy-Schwarz"


def main(paths):
    bad = 0
    for path in paths:
        try:
            problems = list(check(open(path, "rb").read()))
        except (ValueError, KeyError, struct.error, TypeError) as e:
            problems = ["does not parse as a summary (%s)" % e]
        for what in problems:
            print("%s: %s" % (path, what))
        bad += bool(problems)
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
