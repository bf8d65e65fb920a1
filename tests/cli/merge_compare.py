# merge_compare.py A.sheaf B.sheaf [rtol]: compares what info/screen/corr/pca (all
# --format json) say about two summaries; prints one line per difference
# (nothing when equal).  Ignores sources, bytes, format_version; top values
# compared as count-ordered sets only for exact tables.  Floats to rtol
# relative (default 1e-9), or 1e-13 absolute (a skewness of -1.6e-16 is 0).  SHEAF_BIN = binary.
import json, os, subprocess, sys, math
S = os.environ["SHEAF_BIN"]
def run(cmd, p):
    args = {"info": ["info", "--format", "json", "--top-values", "1000", p],
            "screen": ["screen", "--format", "json", "--color", "never", p],
            "corr": ["corr", "--format", "json", p],
            "pca": ["pca", "--format", "json", p]}[cmd]
    r = subprocess.run([S] + args, stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    if r.returncode:
        return {"__exit": r.returncode, "__err": r.stderr.decode().strip()[:200].replace(p, "SUMMARY")}
    d = json.loads(r.stdout)
    if cmd == "info":
        for k in ("sources", "bytes", "format_version"):
            d.pop(k, None)
        for c in d.get("columns", []):
            if c.get("distinct_exact"):
                c["top"] = sorted(c["top"], key=lambda e: (-e["count"], e["value"]))
            else:
                c.pop("top", None)
    def norm(x):
        if isinstance(x, dict):
            for k, v in x.items():
                norm(v)
                if k in ("by_class", "levels") and isinstance(v, list) and v and isinstance(v[0], dict):
                    key = "class" if "class" in v[0] else "value"
                    v.sort(key=lambda e: str(e.get(key)))
        elif isinstance(x, list):
            for v in x:
                norm(v)
    norm(d)
    if cmd == "screen":
        d.pop("summary", None); d.pop("sources", None); d.pop("input", None)
    return d
def diff(a, b, path, out, rtol):
    if isinstance(a, dict) and isinstance(b, dict):
        for k in sorted(set(a) | set(b)):
            if k not in a or k not in b:
                out.append("%s.%s: only in %s" % (path, k, "A" if k in a else "B")); continue
            diff(a[k], b[k], path + "." + str(k), out, rtol)
    elif isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            out.append("%s: length %d vs %d" % (path, len(a), len(b)))
        for i, (x, y) in enumerate(zip(a, b)):
            diff(x, y, "%s[%d]" % (path, i), out, rtol)
    elif isinstance(a, float) or isinstance(b, float):
        if isinstance(a, (int, float)) and isinstance(b, (int, float)) and not isinstance(a, bool) and not isinstance(b, bool):
            if a == b or (math.isnan(a) and math.isnan(b)):
                return
            if abs(a - b) <= rtol * max(abs(a), abs(b)) or abs(a - b) < 1e-13:
                return
        out.append("%s: %r vs %r" % (path, a, b))
    elif a != b:
        out.append("%s: %r vs %r" % (path, a, b))
def main():
    a, b = sys.argv[1], sys.argv[2]
    rtol = float(sys.argv[3]) if len(sys.argv) > 3 else 1e-9
    cmds = sys.argv[4].split(",") if len(sys.argv) > 4 else ["info", "screen", "corr", "pca"]
    out = []
    for c in cmds:
        diff(run(c, a), run(c, b), c, out, rtol)
    for l in out:
        print(l)
main()
