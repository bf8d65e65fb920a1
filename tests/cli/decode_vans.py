#!/usr/bin/python3
"""Invented data for the second decode audit: a night log of parcel vans.
Columns: route (text), load (numeric), stops (integer, the regression
target), gauge (a constant 7), probe (one number, else missing), early
(numbers in the first half of the rows only), late (second half only;
in b.csv the halves overlap by 20 rows),
tag (mostly numbers, some text)."""
import random
import sys


def make(path, seed, n, overlap, probe_value):
    random.seed(seed)
    with open(path, "w") as f:
        f.write("route,load,stops,gauge,probe,early,late,tag\n")
        for i in range(n):
            r = random.choice(["north", "south", "east"])
            load = "%.2f" % random.uniform(1, 10)
            stops = random.randint(1, 50)
            probe = probe_value if i == 4 else ""
            cut = n // 2
            early = "%.1f" % random.uniform(0, 5) if i < cut + overlap else ""
            late = "%.1f" % random.uniform(0, 5) if i >= cut - overlap else ""
            tag = random.choice(["x", "y"]) if i % 10 == 0 else str(random.randint(100, 200))
            f.write("%s,%s,%d,7,%s,%s,%s,%s\n" % (r, load, stops, probe, early, late, tag))


make(sys.argv[1] + "/a.csv", 11, 60, 0, "3.5")  # early and late never together
make(sys.argv[1] + "/b.csv", 12, 50, 10, "4.5")  # 20 rows hold both


def make_crews(path, seed, n):
    """For the version-1 rewrite: a target 'crew' whose values lie an
    octave apart (1 to 32), so that each keeps a level-50 key of its own."""
    random.seed(seed)
    with open(path, "w") as f:
        f.write("route,load,crew\n")
        for i in range(n):
            crew = random.choice([1, 2, 4, 8, 16, 32])
            load = "%.2f" % (crew * 0.2 + random.uniform(1, 10))
            f.write("%s,%s,%d\n" % (random.choice(["north", "south", "east"]), load, crew))


make_crews(sys.argv[1] + "/c.csv", 13, 40)
