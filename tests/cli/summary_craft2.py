#!/usr/bin/python3
"""Crafting helpers beyond summary_craft.py (imported from there):
rewrites that change a section's length.  Every output is resealed (section
lengths, section checksums, trailer), so the damage reaches the decoder.

  craft2.py relabel IN OUT COL OLD NEW
      value table of column COL (0-based): the entry labelled OLD gets the
      label NEW (any length), its key the XXH3-64 of NEW; the table is
      re-sorted by key, and the column's per-value table keys follow.
  craft2.py hll-empty IN OUT COL
      the column's distinct-count sketch becomes the empty sparse sketch.
  craft2.py hll-full IN OUT COL RANK
      the column's sketch becomes dense with every register at RANK.
  craft2.py cells IN OUT COL CELL
      every bucket entry of column COL whose key has one entry only is moved
      to target cell CELL (the order by (key, cell) stays).
"""
import collections
import os
import struct
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import summary_craft as sc  # noqa: E402


def field(fields, name):
    for f in fields:
        if f[0] == name:
            return f
    raise KeyError(name)


def splice(data, start, end, new):
    """data[start:end] = new inside one section; fixes that section's length
    and reseals the file.  Returns the new bytearray."""
    sections, _ = sc.parse(data)
    for tag, hdr, pstart, plen in sections:
        if pstart <= start and end <= pstart + plen:
            out = bytearray(data[:start]) + new + bytearray(data[end:])
            struct.pack_into("<Q", out, hdr + 4, plen + len(new) - (end - start))
            secs, _ = sc.parse(out)
            sc.reseal(out, secs)
            return out
    raise ValueError("range crosses sections")


def relabel(data, col, old, new):
    _, fields = sc.parse(data)
    p = "COLS[%d].values." % col
    levels = field(fields, p + "levels")[3]
    start = field(fields, p + "levels")[1] + 4
    entries = []
    for k in range(levels):
        h = field(fields, p + "entry[%d].hash" % k)[3]
        c = field(fields, p + "entry[%d].count" % k)[3]
        lab = field(fields, p + "entry[%d].label.text" % k)[3].encode("latin-1")
        entries.append([h, c, lab])
    end = field(fields, p + "overflow[0]")[1]
    oldh = None
    for e in entries:
        if e[2] == old.encode():
            oldh = e[0]
            e[2] = new.encode()
            e[0] = sc.xxh3(e[2])
            newh = e[0]
    if oldh is None:
        raise ValueError("no label " + old)
    entries.sort()
    blob = b"".join(struct.pack("<QQI", h, c, len(l)) + l for h, c, l in entries)
    data = splice(data, start, end, blob)
    # the per-value table's keys follow the value's key
    _, fields = sc.parse(data)
    x = "COLS[%d].cross." % col
    names = {f[0] for f in fields}
    if x + "n" in names:
        n = field(fields, x + "n")[3]
        mode = field(fields, x + "mode")[3]
        rec = 36 if mode == 2 else 20
        s0 = field(fields, x + "n")[1] + 8
        recs = []
        for k in range(n):
            raw = bytes(data[s0 + k * rec:s0 + (k + 1) * rec])
            key, cell = struct.unpack_from("<QI", raw, 0)
            if key == oldh:
                raw = struct.pack("<Q", newh) + raw[8:]
                key = newh
            recs.append((key, cell, raw))
        recs.sort(key=lambda r: (r[0], r[1]))
        data[s0:s0 + n * rec] = b"".join(r[2] for r in recs)
        secs, _ = sc.parse(data)
        sc.reseal(data, secs)
    return data


def hll(data, col, rank):
    _, fields = sc.parse(data)
    p = "COLS[%d].hll." % col
    start = field(fields, p + "tag")[1]
    end = field(fields, "COLS[%d].bins.budget" % col)[1]
    blob = b"\0" + struct.pack("<I", 0) if rank == 0 else b"\1" + bytes([rank]) * 16384
    return splice(data, start, end, blob)


def cells(data, col, cell):
    _, fields = sc.parse(data)
    p = "COLS[%d].bins.entry[" % col
    keys = collections.Counter(v for n, o, t, v in fields if n.startswith(p) and n.endswith(".key"))
    byname = {f[0]: f for f in fields}
    assign, k = [], 0
    while p + "%d].key" % k in byname:
        if keys[byname[p + "%d].key" % k][3]] == 1:
            assign.append(p + "%d].cell=%d" % (k, cell))
        k += 1
    return sc.set_fields(data, assign)


def main(argv):
    data = bytearray(open(argv[2], "rb").read())
    if argv[1] == "relabel":
        data = relabel(data, int(argv[4]), argv[5], argv[6])
    elif argv[1] == "hll-empty":
        data = hll(data, int(argv[4]), 0)
    elif argv[1] == "hll-full":
        data = hll(data, int(argv[4]), int(argv[5]))
    elif argv[1] == "cells":
        data = cells(data, int(argv[4]), int(argv[5]))
    else:
        print(__doc__, file=sys.stderr)
        return 2
    open(argv[3], "wb").write(data)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
