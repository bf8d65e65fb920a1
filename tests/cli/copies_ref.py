#!/usr/bin/python3
"""Inputs and the reference for tests/cli/test_copies_across.sh (sheaf screen's
"a copy of NAME (the same cell in every row)").

  copies_ref.py gen DIR          writes the tables into DIR
  copies_ref.py check JSON CSV.. screen's JSON against the tables read with
                                 Python's csv module (the reference)
  copies_ref.py reasons JSON     "name=reasons" lines, sorted

The reference: two columns are copies when they hold the same cell text in
every row (Python's csv module, RFC 4180; short rows: the absent cells are
missing, long rows: the extra fields are left out, blank lines skipped, a
UTF-8 BOM dropped, lines equal to the header skipped where DIR's notes say
so), missing in the same rows.  Missing, as sheaf reads it
(docs/summary-format.md, SCHM; `sheaf scan --help`): the empty cell and the
spellings NA, N/A, null, NULL, None, -, ? in any ASCII letter case; the doc
("Copy prints": "missing in the same rows") counts two missing cells as the
same whatever their spelling, so the reference does too (pandas'
Series.equals with dtype=str, keep_default_na=False would not: noted in the
report).  Every invented scenario: parcel lockers of a delivery firm.
"""
import csv
import io
import json
import os
import random
import sys

MISSING = {"na", "n/a", "null", "none", "-", "?"}


def norm(c):
    if c is None or c == "" or c.lower() in MISSING:
        return None
    return c


def read_table(path, skip_header_lines=False):
    raw = open(path, "rb").read()
    if path.endswith(".gz"):
        import gzip
        raw = gzip.decompress(raw)
    text = raw.decode("utf-8")
    if text.startswith("\ufeff"):
        text = text[1:]
    rows = [r for r in csv.reader(io.StringIO(text, newline="")) if r]
    head, body = rows[0], rows[1:]
    if skip_header_lines:
        body = [r for r in body if r != head]
    cols = {}
    for j, name in enumerate(head):
        cols[name] = [norm(r[j]) if j < len(r) else None for r in body]
    return head, cols


def reasons(path):
    d = json.load(open(path))
    return {f["name"]: "; ".join(f["reasons"]) for f in d["features"]}


def check(jpath, csvs, skip_header_lines=False):
    got = reasons(jpath)
    cols = {}
    for p in csvs:
        head, c = read_table(p, skip_header_lines)
        for k, v in c.items():
            cols.setdefault(k, []).extend(v)
    bad = []
    # the copies step looks at the features still kept after the flags and
    # the tests (docs/methods.md, "Copies and redundancy pruning")
    eligible = ("relevant", "no flag", "a copy of", "redundant with", "beyond the first")
    for name, why in got.items():
        if "a copy of " in why:
            other = why.split("a copy of ", 1)[1].split(" (", 1)[0]
            if cols[name] != cols[other]:
                diff = [i for i in range(len(cols[name])) if cols[name][i] != cols[other][i]]
                bad.append("false copy: %s called a copy of %s, rows %s differ (%r vs %r)"
                           % (name, other, diff[:3], cols[name][diff[0]], cols[other][diff[0]]))
    names = [n for n in got if got[n].startswith(eligible)]
    for i, a in enumerate(names):
        for b in names[i + 1:]:
            if cols[a] == cols[b] and any(x is not None for x in cols[a]):
                if "a copy of" not in got[a] and "a copy of" not in got[b]:
                    bad.append("missed copy: %s and %s are equal, reasons %r / %r"
                               % (a, b, got[a], got[b]))
    return bad


def q(s):
    return '"' + s.replace('"', '""') + '"'


def gen(d):
    os.makedirs(d, exist_ok=True)
    rng = random.Random(20261205)
    n = 600
    bays = ["north", "south", "east", "west", "", "NA", "yard"]
    bay = [rng.choice(bays) for _ in range(n)]
    for i in (10, 20, 77, 78, 321):  # present where the variants differ
        bay[i] = "north"
    num = [str(rng.choice([1, 2, 3, 4, 5, 6])) if i % 5 else "%.2f" % rng.uniform(0, 9)
           for i in range(n)]
    notes = ["left, by door", "signed\nat desk", 'said "ok"', "plain", "back, side\nbin"]
    note = [rng.choice(notes) for _ in range(n)]
    kind = [rng.choice(["box", "bag", "tube", "crate"]) for _ in range(n)]
    cols = {}
    cols["bay"] = bay
    cols["bay_copy"] = list(bay)
    cols["bay_one_off"] = [("odd" if i == 321 else v) for i, v in enumerate(bay)]
    cols["bay_holes_a"] = [("" if i == 10 else v) for i, v in enumerate(bay)]
    cols["bay_holes_b"] = [("" if i == 20 else v) for i, v in enumerate(bay)]
    cols["bay_case"] = [(v.upper() if i == 77 else v) for i, v in enumerate(bay)]
    cols["bay_space"] = [(v + " " if i == 78 and v else v) for i, v in enumerate(bay)]
    cols["bay_na"] = [("n/a" if v == "" else v) for v in bay]
    cols["bay_lag"] = [bay[-1]] + bay[:-1]
    # bay_sw1/bay_sw2: the same but for rows 100 and 101, whose other cells
    # are made identical and whose two values swap between the columns.
    sw1, sw2 = list(bay), list(bay)
    sw1[100], sw2[100], sw1[101], sw2[101] = "north", "south", "south", "north"
    cols["bay_sw1"], cols["bay_sw2"] = sw1, sw2
    cols["num"] = num
    cols["num_copy"] = list(num)
    cols["num_dotted"] = [v + ".0" if "." not in v else v for v in num]
    cols["num_text"] = list(num)  # declared --categorical in the kinds case
    cols["note"] = note
    cols["note_copy"] = list(note)
    cols["kind"] = kind
    cols["empty1"] = [""] * n
    cols["empty2"] = ["NA"] * n
    cols["ident"] = ["p%05d" % i for i in range(n)]
    cols["ident_copy"] = ["p%05d" % i for i in range(n)]
    names = list(cols)
    rows = [[cols[c][i] for c in names] for i in range(n)]
    for c in names:  # rows 100 and 101 alike but for the swapped pair
        if c not in ("bay_sw1", "bay_sw2", "ident", "ident_copy"):
            rows[101][names.index(c)] = rows[100][names.index(c)]
    # duplicate records: row 5 again at 6, row 599 again at the end
    rows.insert(6, list(rows[5]))
    rows.append(list(rows[-1]))
    quoted_cols = {"bay_copy", "num_copy"}  # written always quoted

    def line(r, eol="\n"):
        out = []
        for c, v in zip(names, r):
            if c in quoted_cols or any(ch in v for ch in ',"\n\r') or v != v.strip():
                out.append(q(v))
            else:
                out.append(v)
        return ",".join(out) + eol

    with open(os.path.join(d, "lockers.csv"), "w", newline="") as f:
        f.write(",".join(names) + "\n")
        for r in rows:
            f.write(line(r))
    # two nights: the first CRLF with a BOM, the second LF
    half = len(rows) // 2
    with open(os.path.join(d, "night1.csv"), "w", newline="", encoding="utf-8") as f:
        f.write("\ufeff" + ",".join(names) + "\r\n")
        for r in rows[:half]:
            f.write(line(r, "\r\n"))
    with open(os.path.join(d, "night2.csv"), "w", newline="") as f:
        f.write(",".join(names) + "\n")
        for r in rows[half:]:
            f.write(line(r))
    # ragged: short rows (the last fields absent), long rows (extra fields)
    with open(os.path.join(d, "ragged.csv"), "w", newline="") as f:
        f.write("bay,kind,tail_a,tail_b\n")
        for i in range(400):
            b, k, t = rng.choice(bays), rng.choice(["box", "bag", "tube"]), rng.choice("xyz")
            if i % 37 == 0:
                f.write("%s,%s\n" % (b, k))          # tail_a, tail_b absent
            elif i % 41 == 0:
                f.write("%s,%s,%s,%s,extra,%s\n" % (b, k, t, t, rng.choice("uv")))
            else:
                f.write("%s,%s,%s,%s\n" % (b, k, t, t))
    # target: 'outcome' (classes), 'outcome_copy' its copy, 'lane' a feature
    # tied to it, 'lane_copy' its copy
    with open(os.path.join(d, "target.csv"), "w", newline="") as f:
        f.write("outcome,lane,outcome_copy,lane_copy,weight,weight_copy,noise\n")
        for i in range(800):
            o = rng.choice(["kept", "returned"])
            lane = rng.choice(["a", "b"]) if o == "kept" else rng.choice(["b", "c"])
            w = "%.1f" % (rng.gauss(5 if o == "kept" else 6, 1))
            f.write("%s,%s,%s,%s,%s,%s,%s\n" % (o, lane, o, lane, w, w, rng.choice("pqrs")))
    # the mirrored quoted cells (RFC 4180, Python's csv module): no ragged row
    with open(os.path.join(d, "mirror.csv"), "w", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["note_in", "status", "note_out"])
        for i in range(300):
            v = rng.choice(["late", "early", "on time", "damp, cold"])
            w.writerow([v, rng.choice(["ok", "held"]), v])
        w.writerow(["", "ok", ",ok,"])
        w.writerow([",ok,", "ok", ""])
    # the ragged variant: a short row whose quoted first field holds a comma
    with open(os.path.join(d, "shortquote.csv"), "w", newline="") as f:
        f.write("a,b,c,d,e\n")
        for i in range(200):
            v = rng.choice("123")
            f.write("k%d,%s,%s,%s,%s\n" % (i, rng.choice("xyz"), v, v, rng.choice("pq")))
        f.write('"x,y",1,2,1\n')
        f.write('x,y",1,2,1\n')
    # two nights with other layouts (the second has two more fields, left
    # out with --exclude): merged, no row of either is ragged
    with open(os.path.join(d, "layout1.csv"), "w", newline="") as f:
        f.write("a,b,c,d\n")
        for i in range(100):
            v = rng.choice("123")
            f.write("k%d,%s,%s,%s\n" % (i, v, v, rng.choice("pq")))
        f.write('"x,2,z",1,2,p\n')
    with open(os.path.join(d, "layout2.csv"), "w", newline="") as f:
        f.write("a,b,extra1,c,extra2,d\n")
        for i in range(100):
            v = rng.choice("123")
            f.write("m%d,%s,u,%s,w,%s\n" % (i, v, v, rng.choice("pq")))
        f.write('x,2,z",1,2,p\n')
    # a bigger table for checkpoints (several chunks)
    with open(os.path.join(d, "big.csv"), "w", newline="") as f:
        f.write("bay,bay_copy,bay_one_off,num,num_copy,note,note_copy,kind\n")
        for i in range(12000):
            b = rng.choice(bays)
            v = str(rng.randint(0, 40))
            nt = rng.choice(notes)
            f.write("%s,%s,%s,%s,%s,%s,%s,%s\n" % (b, q(b), "odd" if i == 9000 else b, v, v,
                                                   q(nt), q(nt), rng.choice(["box", "bag"])))


def main():
    if sys.argv[1] == "gen":
        gen(sys.argv[2])
    elif sys.argv[1] == "check":
        skip = False
        args = sys.argv[2:]
        if args and args[0] == "--skip-header-lines":
            skip, args = True, args[1:]
        bad = check(args[0], args[1:], skip)
        print("\n".join(bad))
    elif sys.argv[1] == "reasons":
        for k, v in sorted(reasons(sys.argv[2]).items()):
            print("%s=%s" % (k, v))


if __name__ == "__main__":
    main()
