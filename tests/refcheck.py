"""The PASS/FAIL/SKIP line convention of the reference and CLI suites
(tests/run.sh counts the lines), shared by tests/ref/*.py."""

counts = {"pass": 0, "fail": 0}


def ok(name):
    counts["pass"] += 1
    print("PASS " + name, flush=True)


def fail(name, why):
    counts["fail"] += 1
    print("FAIL %s: %s" % (name, why), flush=True)


def skip(name, why):
    print("SKIP %s: %s" % (name, why), flush=True)


def check(name, cond, why=""):
    if cond:
        ok(name)
    else:
        fail(name, why)
    return cond
