#!/usr/bin/python3
"""Times commands interleaved: one warm-up round, then RUNS rounds in which
each command runs once, in turn.  Prints each command's median wall time in
seconds, one per line, in the order given.

    interleave.py RUNS CMD [CMD ...]

With INTERLEAVE_CPU=FILE in the environment, the median CPU seconds
(user + system, the command and its children, from wait4) of each command
are also written to FILE, one per line in the same order.

A shared machine speeds up and slows down from one minute to the next; a
command timed in a block of its own catches one phase, so ratios between
commands timed in separate blocks are noise.  Interleaving gives every
command the same mix of phases.  Commands are split like a shell would
split them, but run without one; their output is discarded.
"""
import os
import shlex
import statistics
import subprocess
import sys
import time


def main():
    runs = int(sys.argv[1])
    cmds = [shlex.split(c) for c in sys.argv[2:]]
    times = [[] for _ in cmds]
    cpu = [[] for _ in cmds]
    for r in range(runs + 1):
        for i, c in enumerate(cmds):
            t0 = time.perf_counter()
            p = subprocess.Popen(c, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
            _, status, use = os.wait4(p.pid, 0)
            wall = time.perf_counter() - t0
            p.returncode = os.waitstatus_to_exitcode(status)
            if p.returncode != 0:
                raise subprocess.CalledProcessError(p.returncode, c)
            if r:  # round 0 warms the page cache
                times[i].append(wall)
                cpu[i].append(use.ru_utime + use.ru_stime)
    for t in times:
        print("%.3f" % statistics.median(t))
    if os.environ.get("INTERLEAVE_CPU"):
        with open(os.environ["INTERLEAVE_CPU"], "w") as f:
            for c in cpu:
                f.write("%.3f\n" % statistics.median(c))


main()
