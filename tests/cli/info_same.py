# info_same.py A.sheaf B.sheaf [COLUMN_KEY...]: compares the info JSON of two
# summaries, as the fan-out and shard tests need (common.sh info_same): without
# "sources" and "bytes" (a shard's read-ahead) and "format_version" (a
# summary holding shards is version 6, a whole-file scan 5); prints the
# differences, nothing when equal.  Integers and strings exactly, floats to
# 1e-12 relative (absolute below 1); top values as count-ordered sets, and
# only for exact tables; each COLUMN_KEY is left out of every column too (a
# shard's column "bytes" counts the bytes of its own records only).  Runs
# $SHEAF_BIN (default ./sheaf, from the repository root).
import json, os, subprocess, sys
sys.path.insert(0, "tests")
from refcheck import tree_differences
def info(p):
    r = subprocess.run([os.environ.get("SHEAF_BIN", "./sheaf"), "info", "--format", "json", "--top-values", "1000", p],
                       stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    if r.returncode:
        sys.exit("info %s exit %d: %s" % (p, r.returncode, r.stderr.decode().strip()))
    d = json.loads(r.stdout)
    for k in ("sources", "bytes", "format_version"):
        d.pop(k, None)
    for c in d["columns"]:
        for k in sys.argv[3:]:
            c.pop(k, None)
        if c.get("distinct_exact"):
            c["top"] = sorted(c["top"], key=lambda e: (-e["count"], e["value"]))
        else:
            c.pop("top", None)
    return d
print("; ".join(tree_differences(info(sys.argv[1]), info(sys.argv[2]), 1e-12)[:4]))
