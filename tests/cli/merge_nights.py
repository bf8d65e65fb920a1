# merge_nights.py OUTDIR: writes the nights of tests/cli/test_merge_exact.sh (small CSV files), one directory
# per case: OUTDIR/CASE/n1.csv, n2.csv, ... (every night has a header; the
# concatenation is the header once plus every night's rows, in order).
# Seeded: the same files every run.
import os, random, sys
out = sys.argv[1]
R = random.Random(20261207)
def write(case, nights, header):
    d = os.path.join(out, case)
    os.makedirs(d, exist_ok=True)
    for i, rows in enumerate(nights, 1):
        with open(os.path.join(d, "n%d.csv" % i), "w") as f:
            f.write(",".join(header) + "\n")
            for r in rows:
                f.write(",".join(str(v) for v in r) + "\n")

# mixed: k numeric in n1, text in n2; e empty in n1; class target with a
# class seen in one night only.
h = ["id", "x", "k", "e", "z", "cls"]
n1 = [[i, round(R.gauss(10, 3), 3), R.randint(0, 9), "", round(R.uniform(-1, 1), 4),
       R.choice(["ant", "bee"])] for i in range(60)]
n2 = [[60 + i, round(R.gauss(12, 2), 3), R.choice(["lo", "hi", str(R.randint(0, 9))]),
       round(R.gauss(0, 1), 2), round(R.uniform(-1, 1), 4), R.choice(["bee", "cat", "dog"])]
      for i in range(50)]
write("mixed", [n1, n2], h)

# dropcls: a numeric target with 3 values in n1, 40 in n2 (--max-classes 8)
h = ["id", "x", "t", "w"]
n1 = [[i, round(R.gauss(0, 1), 3), R.choice([1, 2, 3]), R.choice(["p", "q"])] for i in range(40)]
n2 = [[40 + i, round(R.gauss(1, 1), 3), R.randint(1, 40), R.choice(["p", "q", "r"])] for i in range(60)]
write("dropcls", [n1, n2], h)

# regress: a continuous target
h = ["x", "y", "g", "t"]
def rrow():
    x = R.gauss(0, 1); y = R.gauss(0, 1)
    return [round(x, 4), round(y, 4), R.choice("abc"), round(2 * x - y + R.gauss(0, 0.5), 5)]
write("regress", [[rrow() for _ in range(70)], [rrow() for _ in range(80)],
                  [rrow() for _ in range(30)]], h)

# tiny: 50 nights of 0..3 rows (night 7 has none), a class target
h = ["id", "x", "y", "c", "t"]
nights = []
k = 0
for i in range(50):
    m = 0 if i == 6 else R.randint(1, 3)
    rows = []
    for _ in range(m):
        rows.append([k, round(R.gauss(5, 2), 2), R.randint(-3, 3), R.choice(["u", "v", "NA"]),
                     R.choice(["yes", "no"])])
        k += 1
    nights.append(rows)
write("tiny", nights, h)

# overflow: u has 40 distinct values in n1 and 5 in n2 (--max-levels 16);
# c is constant in each night with different constants; q is unique in
# each night but repeats across nights; t is a class target
h = ["u", "c", "q", "v", "t"]
n1 = [[1000 + i, 7, i, R.choice([1, 2, 3, 4]), R.choice("AB")] for i in range(40)]
n2 = [[R.choice([1, 2, 3, 4, 5]), 9, i, R.choice([1, 2, 3, 4]), R.choice("AB")] for i in range(40)]
write("overflow", [n1, n2], h)

# big: 1e15 offsets with small spreads
h = ["a", "b", "c"]
def brow(base):
    x = R.randint(0, 999)
    return ["%d.%02d" % (10**15 + x, R.randint(0, 99)), "%d" % (base + 3 * x + R.randint(0, 5)),
            "%.6f" % (1e-3 * R.random())]
write("big", [[brow(10**15) for _ in range(50)], [brow(10**15) for _ in range(50)]], h)

# cells: a continuous target whose range differs by night (target cells at
# different levels); a text column g and numeric x, y
h = ["x", "g", "y", "t"]
def crow(lo, hi):
    t = R.uniform(lo, hi) * R.choice([1, -1, 1])
    return [round(R.gauss(0, 1), 3), R.choice(["a", "b", "c", "d"]), R.randint(0, 30), "%.6g" % t]
write("cells", [[crow(0, 1) for _ in range(60)], [crow(1e3, 1e9) for _ in range(60)],
                [crow(1e-6, 1e-3) for _ in range(40)]], h)

# unite: class target with 5 classes in each night, 10 together (max 8)
h = ["x", "g", "t"]
write("unite", [[[round(R.gauss(0, 1), 3), R.choice("abc"), R.choice([1, 2, 3, 4, 5])] for _ in range(50)],
                [[round(R.gauss(0, 1), 3), R.choice("abc"), R.choice([6.5, 7, 8, 9, 10])] for _ in range(50)]], h)
# unitetext: the same with text classes
write("unitetext", [[[round(R.gauss(0, 1), 3), R.choice("abc"), R.choice("ABCDE")] for _ in range(50)],
                    [[round(R.gauss(0, 1), 3), R.choice("abc"), R.choice("FGHIJ")] for _ in range(50)]], h)
