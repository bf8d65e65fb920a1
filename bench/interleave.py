#!/usr/bin/python3
"""Times commands interleaved: one warm-up round, then RUNS rounds in which
each command runs once, in turn.  Prints each command's median wall time in
seconds, one per line, in the order given.

    interleave.py RUNS CMD [CMD ...]

A shared machine speeds up and slows down from one minute to the next; a
command timed in a block of its own catches one phase, so ratios between
commands timed in separate blocks are noise.  Interleaving gives every
command the same mix of phases.  Commands are split like a shell would
split them, but run without one; their output is discarded.
"""
import shlex
import statistics
import subprocess
import sys
import time


def main():
    runs = int(sys.argv[1])
    cmds = [shlex.split(c) for c in sys.argv[2:]]
    times = [[] for _ in cmds]
    for r in range(runs + 1):
        for i, c in enumerate(cmds):
            t0 = time.perf_counter()
            subprocess.run(c, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=True)
            if r:  # round 0 warms the page cache
                times[i].append(time.perf_counter() - t0)
    for t in times:
        print("%.3f" % statistics.median(t))


main()
