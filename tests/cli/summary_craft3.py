#!/usr/bin/python3
"""Crafting helpers for tests/cli/test_decode_crosschecks2.sh,
beyond tests/cli/summary_craft.py and summary_craft2.py (imported from
SHEAF_TREE/tests/cli, default the tree this file is in).  Every output is resealed.

  craft3.py pairs-r IN OUT COL R
      column COL's exact pair sums with the target get the Sxy that makes
      Pearson r = R (n, Sx, Sy, Sxx, Syy kept; Cauchy-Schwarz holds for
      |R| <= 1), so only a comparison with the co-moments can tell.
  craft3.py pairs-get FILE COL
      prints n, scales, the pair sums as integers, and r from them.
  craft3.py no-prints IN OUT
      a version 7 summary rewritten as the version before copy prints: 6
      when a source is a shard with its start record, else 5.
  craft3.py legacy IN OUT [CELLMAP]
      a version 5 to 7 summary of a regression target rewritten as version 1
      (the layout of docs/summary-format.md for versions 1 and 2): no case
      rule, no repeated_headers, no shard fields, no copy prints, no cell
      table, no pair sums, and every target
      cell c as 2^20 + the level-50 key of the cell table's key c (the cell
      table must be at a level <= 50).  CELLMAP "c=K,..": cell c becomes
      2^20 + K instead (a crafted legacy key).
"""
import math
import os
import struct
import sys

TREE = os.environ.get("SHEAF_TREE", os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", ".."))
sys.path.insert(0, os.path.join(TREE, "tests", "cli"))
import summary_craft as sc  # noqa: E402

SUMS = ("sx", "sy", "sxx", "syy", "sxy")


def wide_get(byname, p, f):
    v = 0
    for k in range(4):
        v |= byname[p + "%s[%d]" % (f, k)][3] << (64 * k)
    return v - (1 << 256) if v >> 255 else v


def wide_set(p, f, v):
    v &= (1 << 256) - 1
    return ["%s%s[%d]=%d" % (p, f, k, (v >> (64 * k)) & ((1 << 64) - 1)) for k in range(4)]


def pairs(data, col):
    _, fields = sc.parse(data)
    byname = {f[0]: f for f in fields}
    p = "COLS[%d].pairs." % col
    s = {f: wide_get(byname, p, f) for f in SUMS}
    s["n"] = byname[p + "n"][3]
    s["scale_x"] = byname[p + "scale_x"][3]
    s["scale_y"] = byname[p + "scale_y"][3]
    return p, s


def fit(s):
    n = s["n"]
    a = n * s["sxx"] - s["sx"] ** 2
    b = n * s["syy"] - s["sy"] ** 2
    c = n * s["sxy"] - s["sx"] * s["sy"]
    return a, b, c


def rekey(key, steps):
    if key == 0 or steps == 0:
        return key
    if key > 0:
        return ((key - 1) >> steps) + 1
    return -(((-key - 1) >> steps) + 1)


SHARD = ("shard_rule", "shard_modes", "shard_map", "shard_index", "shard_count", "file_id",
         "read_bytes")


def rewrite(data, drop, put, version):
    """data with the byte ranges in drop removed, the bytes of put (offset:
    bytes) written, the given version, every section and the file resealed."""
    sections, _ = sc.parse(data)
    out = bytearray(data[:12])
    struct.pack_into("<I", out, 8, version)
    for tag, hdr, start, plen in sections:
        payload = bytearray()
        pos = start
        for a, b in sorted(x for x in drop if start <= x[0] < start + plen):
            payload += data[pos:a]
            pos = b
        payload += data[pos:start + plen]
        for off, raw in put.items():
            if start <= off < start + plen:
                rel = off - start - sum(b - a for a, b in drop if start <= a < off)
                payload[rel:rel + len(raw)] = raw
        out += tag.encode() + struct.pack("<Q", len(payload)) + payload + b"\0" * 8
    out += b"END." + struct.pack("<Q", 8) + b"\0" * 8
    secs, _ = sc.parse(out)
    sc.reseal(out, secs)
    return out


def no_prints(data):
    """A version 7 summary as the version before copy prints: version 6
    when a source is a shard with its start record, else version 5 (the
    shard fields dropped too)."""
    _, fields = sc.parse(data)
    shard = any(name.endswith(".shard_rule") and v for name, _, _, v in fields)
    drop = [(off, off + sc.SIZES[typ]) for name, off, typ, v in fields
            if name.endswith(".copy_print") or
            (not shard and name.startswith("SRCS.") and name.split(".")[-1] in SHARD)]
    return rewrite(data, drop, {}, 6 if shard else 5)


def legacy(data, cellmap):
    _, fields = sc.parse(data)
    byname = {f[0]: f for f in fields}
    level = byname["TRGT.tcells.level"][3]
    n = byname["TRGT.tcells.n"][3]
    if level > 50:
        raise ValueError("cell table above level 50")
    keys = [byname["TRGT.tcells.key[%d]" % k][3] for k in range(n)]
    cell = {c + 1: (1 << 20) + rekey(keys[c], 50 - level) for c in range(n)}
    cell.update(cellmap)
    drop, put = [], {}
    for name, off, typ, v in fields:
        if name in ("SCHM.missing_any_case", "TABL.repeated_headers") or \
                name.startswith("TRGT.tcells.") or ".has_pairs" in name or ".pairs." in name or \
                name.endswith(".copy_print") or \
                (name.startswith("SRCS.") and name.split(".")[-1] in SHARD):
            drop.append((off, off + sc.SIZES[typ]))
        elif name.startswith("COLS[") and name.endswith(".cell") and v:
            put[off] = struct.pack("<I", cell[v])
    return rewrite(data, drop, put, 1)


def main(argv):
    op = argv[1]
    if op == "pairs-get":
        data = bytearray(open(argv[2], "rb").read())
        _, s = pairs(data, int(argv[3]))
        a, b, c = fit(s)
        print(" ".join("%s=%d" % (k, s[k]) for k in ("n", "scale_x", "scale_y") + SUMS),
              "r=%.6f" % (c / math.sqrt(a * b)))
        return 0
    if op == "pairs-r":
        data = bytearray(open(argv[2], "rb").read())
        p, s = pairs(data, int(argv[4]))
        a, b, _ = fit(s)
        want = float(argv[5])
        # C = r sqrt(A B), rounded toward zero so that C^2 <= A B stays
        c = int(want * math.isqrt(a * b))
        sxy = (c + s["sx"] * s["sy"]) // s["n"]
        out = sc.set_fields(data, wide_set(p, "sxy", sxy))
        if isinstance(out, str):
            print(out, file=sys.stderr)
            return 1
        open(argv[3], "wb").write(out)
        return 0
    if op == "no-prints":
        data = bytearray(open(argv[2], "rb").read())
        open(argv[3], "wb").write(no_prints(data))
        return 0
    if op == "legacy":
        data = bytearray(open(argv[2], "rb").read())
        cellmap = {}
        if len(argv) > 4 and argv[4]:
            for item in argv[4].split(","):
                c, k = item.split("=")
                cellmap[int(c)] = (1 << 20) + int(k)
        open(argv[3], "wb").write(legacy(data, cellmap))
        return 0
    print(__doc__, file=sys.stderr)
    return 2


if __name__ == "__main__":
    sys.exit(main(sys.argv))
