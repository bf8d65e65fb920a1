#!/usr/bin/python3
"""Reads and rewrites sheaf summary files field by field, for tests of the
decoder (tests/cli/test_summary_decode.sh).  The layout and the checksum
scheme are docs/summary-format.md: sections (u32 tag, u64 length, payload,
u64 XXH3-64 of the payload) and a trailer (u32 'END.', u64 8, u64 XXH3-64 of
every byte before it).  Every rewrite recomputes both kinds of checksum, so
the decoder sees the change instead of a checksum mismatch.

  summary_craft.py fields FILE               every field: name offset type value
  summary_craft.py get FILE NAME             one field's value
  summary_craft.py set IN OUT NAME=VALUE...  rewrite fields (ints, floats,
                                             inf, -inf, nan, or 0x.. bits)
  summary_craft.py flip IN OUT BIT           flip bit BIT of the payload bytes
                                             (counted over all payloads)
  summary_craft.py payload-bits FILE         number of payload bits
  summary_craft.py flips IN DIR N SEED       N files DIR/flip-K.sheaf, each IN
                                             with one random payload bit
                                             flipped (random.Random(SEED));
                                             prints K and the bit per line
  summary_craft.py long-section IN OUT [empty]
                                             keeps the first section (with
                                             "empty": a schema of no columns)
                                             and ends the file with the second
                                             one's header claiming 2^30 bytes
  summary_craft.py several IN OUT OP ARGS... a file of several targets (format
                                             version 4), rewritten and resealed:
      names A,B,..        the TGTS list (its count follows the names)
      parts K,K,..        keep these parts (0-based), in this order
      part-set K F=V..    rewrite fields of part K (as `set`)
      part-from K FILE    part K becomes FILE's bytes
A string field NAME has NAME.len and NAME.text; set NAME.text=... keeps its
length.  The header's version is the field "version".
XXH3-64 comes from Debian's libxxhash (the library sheaf links).
"""
import ctypes
import random
import struct
import sys

_xxh = ctypes.CDLL("libxxhash.so.0")
_xxh.XXH3_64bits.restype = ctypes.c_uint64
_xxh.XXH3_64bits.argtypes = [ctypes.c_char_p, ctypes.c_size_t]


def xxh3(b):
    b = bytes(b)
    return _xxh.XXH3_64bits(b, len(b))


MAGIC = b"\x89SHF\r\n\x1a\n"
TAGS = [b"SCHM", b"SRCS", b"TABL", b"TRGT", b"COLS", b"COMO"]
SIZES = {"u8": 1, "u16": 2, "u32": 4, "i32": 4, "u64": 8, "i64": 8, "f64": 8}
FMT = {"u8": "<B", "u16": "<H", "u32": "<I", "i32": "<i", "u64": "<Q", "i64": "<q", "f64": "<d"}


class Walker:
    """Walks one payload, recording (name, offset, type) of every field."""

    def __init__(self, data, start, end, fields):
        self.d, self.pos, self.end, self.fields = data, start, end, fields

    def get(self, name, typ):
        n = SIZES[typ]
        if self.pos + n > self.end:
            raise ValueError("field %s past the end of its section" % name)
        (v,) = struct.unpack_from(FMT[typ], self.d, self.pos)
        self.fields.append((name, self.pos, typ, v))
        self.pos += n
        return v

    def str(self, name):
        n = self.get(name + ".len", "u32")
        if self.pos + n > self.end:
            raise ValueError("string %s past the end" % name)
        s = bytes(self.d[self.pos:self.pos + n])
        self.fields.append((name + ".text", self.pos, "text", s.decode("latin-1")))
        self.pos += n
        return s

    def decimal(self, name):
        for f, t in (("value", "f64"), ("mantissa", "u64"), ("exp10", "i64"),
                     ("negative", "u8"), ("exact", "u8")):
            self.get(name + "." + f, t)


def parse(data):
    """Returns (sections, fields): sections = [(tag, header_offset,
    payload_offset, length)], fields = [(name, offset, type, value)]."""
    if data[:8] != MAGIC:
        raise ValueError("not a summary")
    pos, sections, fields = 12, [], []
    (version,) = struct.unpack_from("<I", data, 8)
    fields.append(("version", 8, "u32", version))
    for tag in TAGS:
        t = data[pos:pos + 4]
        (plen,) = struct.unpack_from("<Q", data, pos + 4)
        if t != tag:
            raise ValueError("section %s expected at %d" % (tag, pos))
        sections.append((tag.decode(), pos, pos + 12, plen))
        pos += 12 + plen + 8
    info = {"version": version}
    for tag, _, start, plen in sections:
        w = Walker(data, start, start + plen, fields)
        globals()["_walk_" + tag](w, info)
    return sections, fields


def _walk_SCHM(w, info):
    w.get("SCHM.max_levels", "u32")
    w.get("SCHM.label_bytes", "u32")
    w.get("SCHM.bucket_budget", "u32")
    for i in range(w.get("SCHM.n_missing", "u32")):
        w.str("SCHM.missing[%d]" % i)
    if info["version"] >= 5:  # 1: the spellings match in any ASCII letter case
        w.get("SCHM.missing_any_case", "u8")
    info["target"] = w.str("SCHM.target")
    w.get("SCHM.task", "u8")
    w.get("SCHM.max_classes", "u32")
    ncols = w.get("SCHM.ncols", "u64")
    info["modes"] = []
    for i in range(ncols):
        w.str("SCHM.column[%d].name" % i)
        info["modes"].append(w.get("SCHM.column[%d].mode" % i, "u8"))


def _walk_SRCS(w, info):
    for i in range(w.get("SRCS.n", "u64")):
        p = "SRCS.source[%d]." % i
        w.str(p + "path")
        w.str(p + "format")
        for f, t in (("size_bytes", "u64"), ("mtime", "i64"), ("fingerprint", "u64"),
                     ("raw_bytes", "u64"), ("start_byte", "u64"), ("end_byte", "u64"),
                     ("rows", "u64")):
            w.get(p + f, t)
        if info["version"] >= 6:  # a byte-range shard's start (docs/shards.md)
            for f, t in (("shard_rule", "u8"), ("shard_modes", "u8"), ("shard_map", "u8"),
                         ("shard_index", "u32"), ("shard_count", "u32"), ("file_id", "u64"),
                         ("read_bytes", "u64")):
                w.get(p + f, t)


def _walk_TABL(w, info):
    for f in ("rows", "bytes", "short_rows", "long_rows"):
        w.get("TABL." + f, "u64")
    for i in range(w.get("TABL.n_bad_lines", "u32")):
        w.get("TABL.bad_line[%d]" % i, "u64")
    if info["version"] >= 2:
        w.get("TABL.repeated_headers", "u64")


def _walk_TRGT(w, info):
    w.get("TRGT.has_classes", "u8")
    w.get("TRGT.classes_dropped", "u8")
    w.get("TRGT.target_text", "u64")
    n = info["nclasses"] = w.get("TRGT.nclasses", "u32")
    for c in range(n):
        p = "TRGT.class[%d]." % (c + 1)
        w.get(p + "hash", "u64")
        w.str(p + "label")
        w.get(p + "rows", "u64")
        w.get(p + "numeric", "u8")
        w.decimal(p + "value")
    if info["version"] >= 3:  # a continuous target's cells (summary/tcells.h)
        w.get("TRGT.tcells.level", "u8")
        for k in range(w.get("TRGT.tcells.n", "u32")):
            w.get("TRGT.tcells.key[%d]" % k, "i64")


def _walk_COLS(w, info):
    for i in range(len(info["modes"])):
        p = "COLS[%d]." % i
        for f in ("missing", "non_numeric", "non_finite", "zeros", "integers"):
            w.get(p + f, "u64")
        m = p + "moments."
        w.get(m + "n", "u64")
        for f in ("mean", "m2", "m3", "m4", "min", "max"):
            w.get(m + f, "f64")
        w.get(m + "has_ref", "u8")
        w.decimal(m + "ref")
        for e in range(w.get(p + "n_examples", "u32")):
            w.str(p + "example[%d]" % e)
        v = p + "values."
        w.get(v + "max_levels", "u32")
        w.get(v + "label_bytes", "u32")
        w.get(v + "overflowed", "u8")
        for k in range(w.get(v + "levels", "u32")):
            w.get(v + "entry[%d].hash" % k, "u64")
            w.get(v + "entry[%d].count" % k, "u64")
            w.str(v + "entry[%d].label" % k)
        for s in range(64):
            w.get(v + "overflow[%d]" % s, "u64")
        h = p + "hll."
        tag = w.get(h + "tag", "u8")
        if tag == 0:
            for k in range(w.get(h + "k", "u32")):
                w.get(h + "pair[%d].index" % k, "u16")
                w.get(h + "pair[%d].rank" % k, "u8")
        else:
            for j in range(16384):
                w.get(h + "reg[%d]" % j, "u8")
        b = p + "bins."
        w.get(b + "budget", "u32")
        w.get(b + "level", "u8")
        for k in range(w.get(b + "n", "u64")):
            w.get(b + "entry[%d].key" % k, "i64")
            w.get(b + "entry[%d].cell" % k, "u32")
            w.get(b + "entry[%d].count" % k, "u64")
        if w.get(p + "has_cross", "u8"):
            x = p + "cross."
            w.get(x + "max_keys", "u32")
            mode = w.get(x + "mode", "u8")
            w.get(x + "overflowed", "u8")
            for k in range(w.get(x + "n", "u64")):
                w.get(x + "entry[%d].key" % k, "u64")
                w.get(x + "entry[%d].cell" % k, "u32")
                w.get(x + "entry[%d].n" % k, "u64")
                if mode == 2:
                    w.get(x + "entry[%d].mean" % k, "f64")
                    w.get(x + "entry[%d].m2" % k, "f64")
        if w.get(p + "has_cls", "u8"):
            for c in range(info["nclasses"]):
                q = p + "cls[%d]." % (c + 1)
                w.get(q + "n", "u64")
                if info["version"] >= 3:  # the sum of deviations in two doubles
                    w.get(q + "sum", "f64")
                    w.get(q + "sum_low", "f64")
                else:
                    w.get(q + "mean", "f64")
                w.get(q + "m2", "f64")
        if info["version"] >= 3 and w.get(p + "has_pairs", "u8"):
            # exact pair sums with the target: 256-bit sums as 4 u64 words,
            # least significant first
            q = p + "pairs."
            w.get(q + "exact", "u8")
            w.get(q + "n", "u64")
            w.get(q + "scale_x", "i32")
            w.get(q + "scale_y", "i32")
            for f in ("sx", "sy", "sxx", "syy", "sxy"):
                for k in range(4):
                    w.get(q + "%s[%d]" % (f, k), "u64")
        if info["version"] >= 7:  # the column's copy print (summary/summary.h)
            w.get(p + "copy_print", "u64")


def _walk_COMO(w, info):
    n = w.get("COMO.ncomo", "u64")
    for k in range(n):
        w.get("COMO.frame[%d].set" % k, "u8")
        w.decimal("COMO.frame[%d]" % k)
    w.get("COMO.present", "u8")
    p = w.get("COMO.p", "u64")
    for mat, typ in (("N", "u64"), ("MEAN", "f64"), ("M2", "f64"), ("C", "f64")):
        for i in range(p):
            for j in range(p):
                w.get("COMO.%s[%d][%d]" % (mat, i, j), typ)


def reseal(data, sections):
    """Recomputes every section checksum and the trailer, in place."""
    for _, _, start, plen in sections:
        struct.pack_into("<Q", data, start + plen, xxh3(data[start:start + plen]))
    struct.pack_into("<Q", data, len(data) - 8, xxh3(data[:len(data) - 8]))


def flipped(data, sections, bit):
    """A copy of data with payload bit `bit` flipped and the checksums
    recomputed; None past the payloads."""
    out = bytearray(data)
    for _, _, start, plen in sections:
        if bit < plen * 8:
            out[start + bit // 8] ^= 1 << (bit % 8)
            reseal(out, sections)
            return out
        bit -= plen * 8
    return None


def parse_value(text, typ):
    if text.startswith("0x"):
        bits = int(text, 16)
        if typ == "f64":
            return struct.unpack("<d", struct.pack("<Q", bits))[0]
        return bits
    if typ == "f64":
        return float(text)
    v = int(text)
    if typ in ("i64", "i32"):
        return v
    return v & ((1 << (8 * SIZES[typ])) - 1)


def set_fields(data, assignments):
    """`set` on the bytes of one summary; returns the new bytes or an error text."""
    sections, fields = parse(data)
    by_name = {f[0]: f for f in fields}
    for assignment in assignments:
        name, text = assignment.split("=", 1)
        if name not in by_name:
            return "no field " + name
        _, off, typ, old = by_name[name]
        if typ == "text":  # same length only: the layout stays
            if len(text) != len(old):
                return "%s: %d bytes expected" % (name, len(old))
            data[off:off + len(text)] = text.encode("latin-1")
        else:
            struct.pack_into(FMT[typ], data, off, parse_value(text, typ))
    reseal(data, sections)
    return data


def several(argv):
    """A file of several targets: magic, version 4, TGTS (u32 n, n names),
    n PART sections (each a whole summary file), trailer."""
    data = bytearray(open(argv[2], "rb").read())
    if data[:8] != MAGIC or struct.unpack_from("<I", data, 8)[0] != 4:
        print("not a file of several targets", file=sys.stderr)
        return 1
    pos, names, parts = 12, [], []
    while data[pos:pos + 4] != b"END.":
        (n,) = struct.unpack_from("<Q", data, pos + 4)
        payload = data[pos + 12:pos + 12 + n]
        if data[pos:pos + 4] == b"TGTS":
            (k,) = struct.unpack_from("<I", payload, 0)
            q = 4
            for _ in range(k):
                (ln,) = struct.unpack_from("<I", payload, q)
                names.append(bytes(payload[q + 4:q + 4 + ln]).decode("latin-1"))
                q += 4 + ln
        else:
            parts.append(bytearray(payload))
        pos += 12 + n + 8
    op = argv[4]
    if op == "names":
        names = argv[5].split(",")
    elif op == "parts":
        parts = [parts[int(k)] for k in argv[5].split(",")]
    elif op == "part-set":
        out = set_fields(parts[int(argv[5])], argv[6:])
        if isinstance(out, str):
            print(out, file=sys.stderr)
            return 1
        parts[int(argv[5])] = out
    elif op == "part-from":
        parts[int(argv[5])] = bytearray(open(argv[6], "rb").read())
    else:
        print(__doc__, file=sys.stderr)
        return 2
    tg = struct.pack("<I", len(names)) + b"".join(
        struct.pack("<I", len(x.encode("latin-1"))) + x.encode("latin-1") for x in names)
    out = bytearray(data[:12])
    for tag, payload in [(b"TGTS", tg)] + [(b"PART", bytes(p)) for p in parts]:
        out += tag + struct.pack("<Q", len(payload)) + payload + struct.pack("<Q", xxh3(payload))
    out += b"END." + struct.pack("<Q", 8)
    out += struct.pack("<Q", xxh3(out))
    open(argv[3], "wb").write(out)
    return 0


def main(argv):
    cmd = argv[1]
    if cmd == "several":
        return several(argv)
    data = bytearray(open(argv[2], "rb").read())
    if cmd == "long-section":
        # Section 1 kept whole, then section 2's header with a length of 2^30
        # and nothing after it but the trailer: fewer than 28 bytes remain
        # after the header (docs/summary-format.md, "Reading and validation").
        (plen,) = struct.unpack_from("<Q", data, 16)
        head = data[:12 + 12 + plen + 8]
        if len(argv) > 4 and argv[4] == "empty":
            # max_levels, label_bytes, bucket_budget, no missing spellings,
            # no target, task 0, max_classes, no columns
            (version,) = struct.unpack_from("<I", data, 8)
            rule = b"\1" if version >= 5 else b""  # version 5: the spellings' case rule
            schema = struct.pack("<IIII", 1024, 32, 2048, 0) + rule + struct.pack("<I", 0) + \
                b"\0" + struct.pack("<IQ", 256, 0)
            head = data[:12] + b"SCHM" + struct.pack("<Q", len(schema)) + schema + \
                struct.pack("<Q", xxh3(schema))
        out = bytearray(head + b"SRCS" + struct.pack("<Q", 1 << 30) + b"END." +
                        struct.pack("<Q", 8) + b"\0" * 8)
        struct.pack_into("<Q", out, len(out) - 8, xxh3(out[:len(out) - 8]))
        open(argv[3], "wb").write(out)
        return 0
    sections, fields = parse(data)
    if cmd == "fields":
        for name, off, typ, v in fields:
            print(name, off, typ, v)
    elif cmd == "get":
        for name, off, typ, v in fields:
            if name == argv[3]:
                print(v)
                return 0
        print("no field " + argv[3], file=sys.stderr)
        return 1
    elif cmd == "payload-bits":
        print(sum(plen for _, _, _, plen in sections) * 8)
    elif cmd == "set":
        out = set_fields(data, argv[4:])
        if isinstance(out, str):
            print(out, file=sys.stderr)
            return 1
        open(argv[3], "wb").write(out)
    elif cmd == "flip":
        out = flipped(data, sections, int(argv[4]))
        if out is None:
            print("bit past the payloads", file=sys.stderr)
            return 1
        open(argv[3], "wb").write(out)
    elif cmd == "flips":
        rng = random.Random(int(argv[5]))
        bits = sum(plen for _, _, _, plen in sections) * 8
        for k in range(int(argv[4])):
            bit = rng.randrange(bits)
            open("%s/flip-%d.sheaf" % (argv[3], k), "wb").write(flipped(data, sections, bit))
            print(k, bit)
    else:
        print(__doc__, file=sys.stderr)
        return 2
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
