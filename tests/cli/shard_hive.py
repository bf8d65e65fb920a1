#!/usr/bin/python3
"""shard_hive.py DIR: writes DIR/hive.csv, an invented bee-yard log (hive id,
weight, a keeper's note, brood temperature, yard, padding) of 18,000 records
made to trip byte-range shards: every record 128 bytes, with quote-heavy
records (quoted delimiters, doubled quotes, CRLF and lone CR inside quotes,
quotes as data, fake tables inside quoted fields) placed where the range
starts of 2 to 7 shards and the 1 MiB marks fall, and one 1.25 MiB quoted
note holding a fake table.  Several shards of it guess their first record
wrong from the bytes near their start.  Fixed seed; no outside data.
"""
import os, random, sys

d = sys.argv[1]
R = random.Random(20261207)
SLOT = 128
HEADER = "hive,weight,note,temp,yard,pad\n"
YARDS = ["clover", "heath", "orchard", "riverbank", "lime_row"]
WORDS = ["calm", "queenless", "swarmy", "strong", "light", "NA", "none", "", "-", "mite check",
         "fed syrup", "supered", "?", "N/A", "Null"]


def rec(fields, eol="\n", size=None):
    """fields -> record text, padded (pad = last field) to `size` bytes."""
    body = ",".join(fields[:-1])
    text = body + "," + fields[-1] + eol
    if size is None:
        size = -(-len(text) // SLOT) * SLOT
    pad = size - len(text)
    assert pad >= 0, (text, size)
    last = fields[-1]
    if last.startswith('"'):  # keep a quoted pad quoted: grow inside the quotes
        last = '"' + "z" * pad + last[1:]
    else:
        last = "z" * pad + last
    out = body + "," + last + eol
    assert len(out) == size
    return out


def filler(i):
    w = "%.2f" % R.uniform(20, 60) if R.random() > 0.03 else R.choice(["NA", ""])
    t = "%.1f" % R.uniform(30, 37)
    return rec([str(i), w, R.choice(WORDS), t, R.choice(YARDS), "p"], size=SLOT)


# The tricky records (raw note text, as it stands in the file), cycled.
TRICKY = [
    ('"north, by the gate"', "\n"),
    ('"said ""calm"" twice"', "\n"),
    ('"two\nlines"', "\n"),
    ('"crlf\r\ninside"', "\r\n"),
    ('"lone\rcr"', "\n"),
    ("5'10\" frame", "\n"),          # quote inside an unquoted field: data
    ('""""', "\n"),                   # a field that is only quotes: one "
    ('""', "\n"),                     # empty quoted: missing
    ('"ab"cd', "\n"),                 # text after the closing quote kept: abcd
    ('"a,""b""\n,c"', "\r\n"),
    ('"1,2.00,x,3.0,y,z\n2,3.00,w,4.0,v,z\n"', "\n"),  # a fake table
    ('"\n"', "\n"),
    ('","', "\n"),
    ('"x"""', "\n"),                  # ends on a doubled quote then the closer
]


def tricky(i, k):
    note, eol = TRICKY[k % len(TRICKY)]
    w = '"%.2f"' % R.uniform(20, 60)   # a quoted number
    t = "%.1f" % R.uniform(30, 37)
    return rec([str(i), w, note, t, '"' + R.choice(YARDS) + '"', "p"], eol=eol, size=SLOT)


LONG_SLOTS = (1 << 20) * 5 // 4 // SLOT  # 1.25 MiB


def long_record(i):
    size = LONG_SLOTS * SLOT
    fake = "".join("%d,%.2f,fake,%.1f,heath,zz\n" % (j, 30 + j % 7, 33.3) for j in range(20000))
    rest = 'said ""buzz"" at dawn, again\r\nand a lone\rcr, ' * 4000
    head = "%d,41.00," % i
    tail = ",35.0,clover,z\n"
    note_room = size - len(head) - len(tail) - 2
    body = (fake + rest)
    body = (body * (note_room // len(body) + 1))[:note_room]
    if body.endswith('"'):
        body = body[:-1] + "q"
    # an odd run of quotes at the cut would close the field: count them
    n = len(body) - len(body.rstrip('"'))
    if n % 2:
        body = body[:-1] + "q"
    out = head + '"' + body + '"' + tail
    assert len(out) == size
    return out


def build():
    n_slots = 18000
    long_at = 11750  # slot index; spans ~1.43 MiB .. 2.68 MiB
    size = len(HEADER) + (n_slots - 1) * SLOT + LONG_SLOTS * SLOT
    # last record is one slot, quoted last field, written below
    targets = set()
    for n in range(2, 8):
        for i in range(2, n + 1):
            targets.add(size * (i - 1) // n)
    mib = [m << 20 for m in range(1, 4)]
    targets.update(mib)
    # slot index of an offset (slots before long_at are SLOT bytes; the long
    # record takes one index)
    long_lo = len(HEADER) + long_at * SLOT
    long_hi = long_lo + LONG_SLOTS * SLOT

    def slot_of(off):
        if off < long_lo:
            return (off - len(HEADER)) // SLOT
        if off < long_hi:
            return None
        return long_at + 1 + (off - long_hi) // SLOT

    special = {}
    k = 0
    for t in sorted(targets):
        s = slot_of(t)
        if s is None:
            continue
        for ds in (-2, -1, 0, 1, 2):
            if 0 <= s + ds < n_slots - 1 and s + ds != long_at:
                special[s + ds] = k
                k += 1
    out = [HEADER]
    for s in range(n_slots - 1):
        i = s + 1
        if s == long_at:
            out.append(long_record(i))
        elif s in special:
            out.append(tricky(i, special[s]))
        else:
            out.append(filler(i))
    last = rec([str(n_slots), "40.00", '"last ""one"""', "34.0", "heath", '"end"'], size=SLOT)
    out.append(last)
    return "".join(out), sorted(targets)


text, targets = build()
data = text.encode()
open(os.path.join(d, "hive.csv"), "wb").write(data)
assert data.endswith(b'"\n')
