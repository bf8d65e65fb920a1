#!/usr/bin/env bash
# Merging at scale: 10,000 small summaries, merged as one flat `sheaf merge`
# of 10,000 arguments and as the two-level tree of docs/distributed.md (100
# groups of 100 with GNU parallel, then the 100), give the same statistics:
# rows and every per-column count exactly, moments, extremes and quantiles
# to 1e-12 relative.  The parts of an overflowed value table (more than
# --max-levels values) and the examples kept depend on the merge order
# (docs/summary-format.md), so they are not compared; nor is the order of
# the source list, whose content is.
#
# The 10,000 summaries are the 2-row pieces of one generated 20,000-row
# table, each scanned as a stream of its own (header + 2 rows) through the
# public API by a small C program built here against libsheaf.a: on the
# 2-core development machine a `sheaf` process takes about 20 ms to start,
# so 10,000 `sheaf scan` calls alone would take over 100 s.
#
# References: numpy (Debian's python3-numpy) over the same table for rows,
# counts, mean, variance, min and max of the numeric columns (1e-10
# relative: other summation orders), and a single `sheaf scan` of the whole
# table.  Run from the repository root after make (tests/run.sh does both).
set -u
cd "$(dirname "$0")/../.." || exit 0
. tests/cli/common.sh
# Each summary written is synced to disk with its directory (fsync): 10,000
# of them took 74 s on the development machine's disk, against a few seconds
# on tmpfs, so the scratch directory goes to /dev/shm where there is one.
[ -d /dev/shm ] && [ -w /dev/shm ] && export TMPDIR=/dev/shm
cli_setup tree python || exit 0
SHEAF=$(readlink -f "$SHEAF")
NPIECES=10000 PER=2
export OPENBLAS_NUM_THREADS=1 # sheaf otherwise starts itself again to set it

DOC=docs/distributed.md
# doc_block KEY: the fenced block that follows the line KEY in the doc.
doc_block() {
    awk -v key="$1" '
        state == 0 && $0 == key { state = 1; next }
        state == 1 { if ($0 ~ /^```/) state = 2; else if ($0 != "") exit; next }
        state == 2 { if ($0 ~ /^```/) { done = 1; exit } print }
        END { exit !done }' "$DOC"
}
for b in local-flat local-tree; do
    doc_block "<!-- run-block $b -->" >"$T/$b.sh"
    check "doc_has_block_$b" "no block after <!-- run-block $b --> in $DOC" [ -s "$T/$b.sh" ]
done
mkdir "$T/bin"
ln -s "$SHEAF" "$T/bin/sheaf"
export PATH="$T/bin:$PATH"

if ! command -v parallel >/dev/null; then skip tree_merge "GNU parallel not found"; exit 0; fi
if ! "$PY" -c 'import numpy' 2>/dev/null; then skip tree_merge "numpy not found (python3-numpy)"; exit 0; fi
if [ ! -f libsheaf.a ]; then fail tree_merge.libsheaf "libsheaf.a not built (run make first)"; exit 0; fi

# --------------------------------------------------------------- the table
# Random, from a fixed seed: a group name (7 values), a key of 20,000 values
# (its value table overflows), a normal column with a few large values, one
# with empty and NA cells, and small integers.
"$PY" - "$T/table.csv" $((NPIECES * PER)) <<'EOF'
import random, sys
rnd = random.Random(17)
with open(sys.argv[1], "w", newline="") as f:
    f.write("grp,key,x,y,k\n")
    for i in range(int(sys.argv[2])):
        y = "" if i % 13 == 5 else ("NA" if i % 29 == 3 else "%.3f" % rnd.uniform(-8, 36))
        f.write("%s,k%05d,%.4f,%s,%d\n" % (rnd.choice(["a", "b", "c", "d", "e", "f", "g"]), i,
                                          rnd.gauss(50, 12) * (1 + (i % 97 == 0) * 40),
                                          y, rnd.randint(0, 9)))
EOF

# ------------------------------------------------- 10,000 small summaries
cat >"$T/pieces.c" <<'EOF'
/* pieces TABLE PER OUTDIR: the data lines of TABLE (one line a record, a
 * header line first), PER at a time with the header, each scanned as a
 * stream "TABLE:FIRST-LAST" into OUTDIR/pNNNNN.sheaf. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "sheaf.h"

static char *buf;
static size_t used, cap, hlen;
static long pieces;

static void append(const char *s, size_t n)
{
    if (used + n > cap) {
        cap = 2 * (used + n);
        if (!(buf = realloc(buf, cap))) { perror("realloc"); exit(1); }
    }
    memcpy(buf + used, s, n);
    used += n;
}

/* Scans header + the rows held (FIRST..LAST of the table) into a file. */
static void emit(const sheaf_options *o, const char *table, const char *outdir, long first, long last)
{
    char name[4096], out[4096];
    sheaf_error err;
    sheaf_summary *s = NULL;
    snprintf(name, sizeof name, "%s:%ld-%ld", table, first, last);
    snprintf(out, sizeof out, "%s/p%05ld.sheaf", outdir, ++pieces);
    sheaf_scan *sc = sheaf_scan_create(o, &err);
    if (!sc || sheaf_scan_memory(sc, buf, used, name, &err) || !(s = sheaf_scan_finish(sc, &err)) ||
        sheaf_summary_write(s, out, &err)) {
        fprintf(stderr, "%s: %s\n", out, err.message);
        exit(1);
    }
    sheaf_summary_free(s);
    sheaf_scan_free(sc);
    used = hlen;
}

int main(int argc, char **argv)
{
    if (argc != 4) { fprintf(stderr, "usage: pieces TABLE PER OUTDIR\n"); return 2; }
    FILE *f = fopen(argv[1], "rb");
    if (!f) { perror(argv[1]); return 1; }
    long per = atol(argv[2]), rows = 0;
    char *line = NULL;
    size_t lcap = 0;
    ssize_t n;
    sheaf_error err;
    sheaf_options *o = sheaf_options_create(&err);
    if (!o || sheaf_options_set_threads(o, 1, &err)) { fprintf(stderr, "%s\n", err.message); return 1; }
    if ((n = getline(&line, &lcap, f)) <= 0) { fprintf(stderr, "%s: no header\n", argv[1]); return 1; }
    append(line, (size_t)n);
    hlen = used;
    while ((n = getline(&line, &lcap, f)) > 0) {
        append(line, (size_t)n);
        if (++rows % per == 0) emit(o, argv[1], argv[3], rows - per + 1, rows);
    }
    if (used > hlen) emit(o, argv[1], argv[3], rows - rows % per + 1, rows);
    printf("%ld %ld\n", pieces, rows);
    sheaf_options_free(o);
    free(line);
    free(buf);
    fclose(f);
    return 0;
}
EOF
LIBS="-lgsl $(pkg-config --libs libisal libzstd libxxhash openblas lapacke 2>/dev/null ||
    echo -lisal -lzstd -lxxhash -lopenblas -llapacke) -lz -lm -lpthread"
# shellcheck disable=SC2086
if ! ${CC:-cc} -std=c11 -D_GNU_SOURCE -O1 -Iinclude -o "$T/pieces" "$T/pieces.c" libsheaf.a $LIBS \
    >"$T/cc.out" 2>&1; then
    fail tree_merge.helper_builds "$(head -n 3 "$T/cc.out" | tr '\n' '|')"
    exit 0
fi
W=$T/day
mkdir -p "$W/parts"
t0=$(date +%s.%N)
(cd "$T" && ./pieces table.csv "$PER" day/parts) >"$T/out" 2>"$T/err"
RC=$?
t1=$(date +%s.%N)
check pieces.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
check pieces.count "wrote '$(cat "$T/out")' (pieces rows), want $NPIECES $((NPIECES * PER))" \
    [ "$(cat "$T/out")" = "$NPIECES $((NPIECES * PER))" ]
nfiles=$(find "$W/parts" -name '*.sheaf' | wc -l)
check pieces.files "$nfiles summary files" [ "$nfiles" -eq "$NPIECES" ]
echo "# $NPIECES summaries written in $(echo "$t1 - $t0" | bc) s"

# ------------------------------------- the merges: the doc's blocks, as they are
t0=$(date +%s.%N)
(cd "$W" && bash -e "$T/local-flat.sh") >"$T/out" 2>"$T/err"
RC=$?
t1=$(date +%s.%N)
check flat.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
echo "# flat merge of $NPIECES (argv $(cd "$W" && printf '%s ' parts/*.sheaf | wc -c) bytes): $(echo "$t1 - $t0" | bc) s"
t0=$(date +%s.%N)
(cd "$W" && bash -e "$T/local-tree.sh") >"$T/out" 2>"$T/err"
RC=$?
t1=$(date +%s.%N)
check tree.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]
ng=$(find "$W/groups-local" -name 'g*.sheaf' | wc -l)
check tree.groups "$ng group summaries, want 100" [ "$ng" -eq 100 ]
echo "# tree merge (100 groups of 100 on 2 job slots, then the 100): $(echo "$t1 - $t0" | bc) s"
run "$SHEAF" scan -q "$T/table.csv" -o "$T/single.sheaf"
check single.exit_0 "exit $RC: $(err_text)" [ "$RC" -eq 0 ]

# ---------------------------------------------------------- comparisons
# cmp.py A B ORDER_FREE: the info JSON of two summaries.  ORDER_FREE=1 (two
# merges of the same pieces): everything but the order-dependent parts.
# ORDER_FREE=0 (a merge against the single scan): also without "bytes"
# (every piece counts its header line) and the source list.
cat >"$T/cmp.py" <<'EOF'
import json, os, subprocess, sys
sys.path.insert(0, "tests")
from refcheck import tree_differences
def info(p):
    r = subprocess.run([os.environ.get("SHEAF_BIN", "./sheaf"), "info", "--format", "json",
                        "--top-values", "1000", p], stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    if r.returncode:
        sys.exit("info %s exit %d: %s" % (p, r.returncode, r.stderr.decode().strip()))
    d = json.loads(r.stdout)
    if sys.argv[3] == "1":
        d["sources"] = sorted(d["sources"], key=lambda s: s["path"])
    else:
        d.pop("sources"); d.pop("bytes")
    for c in d["columns"]:
        c.pop("non_numeric_examples")
        if c.get("distinct_exact"):
            c["top"] = sorted(c["top"], key=lambda e: (-e["count"], e["value"]))
        else:
            c.pop("top")
    return d
a, b = info(sys.argv[1]), info(sys.argv[2])
diff = tree_differences(a, b, 1e-12)
print("%d columns, %d sources compared; %s" % (len(a["columns"]), len(a.get("sources", [])),
                                              "; ".join(diff[:4]) if diff else "same"))
EOF
cmp_summaries() {
    local why
    why=$("$PY" "$T/cmp.py" "$2" "$3" "$4" 2>&1)
    case $why in *"; same") pass "$1" ;; *) fail "$1" "${why:0:400}" ;; esac
}
cmp_summaries tree_vs_flat.same "$W/tree.sheaf" "$W/flat.sheaf" 1
cmp_summaries flat_vs_single_scan.same "$W/flat.sheaf" "$T/single.sheaf" 0
cmp_summaries tree_vs_single_scan.same "$W/tree.sheaf" "$T/single.sheaf" 0

# numpy over the table
why=$("$SHEAF" info --format json --top-values 100 "$W/tree.sheaf" | "$PY" -c '
import csv, json, sys
import numpy as np
d = json.load(sys.stdin)
rows = list(csv.DictReader(open(sys.argv[1], newline="")))
bad = []
if d["rows"] != len(rows): bad.append("rows %d vs %d" % (d["rows"], len(rows)))
if len(d["sources"]) != int(sys.argv[2]): bad.append("sources %d" % len(d["sources"]))
cols = {c["name"]: c for c in d["columns"]}
for name in ("x", "y", "k"):
    c = cols[name]
    cells = [r[name] for r in rows]
    x = np.array([float(v) for v in cells if v not in ("", "NA")])
    miss = sum(v in ("", "NA") for v in cells)
    if c["n"] != len(x): bad.append("%s n %d vs %d" % (name, c["n"], len(x)))
    if c["missing"] != miss: bad.append("%s missing %d vs %d" % (name, c["missing"], miss))
    for k, ref in (("mean", x.mean()), ("variance", x.var(ddof=1)), ("min", x.min()), ("max", x.max())):
        if abs(c[k] - ref) > 1e-10 * max(abs(ref), 1.0):
            bad.append("%s %s %r vs numpy %r" % (name, k, c[k], ref))
top = {e["value"]: e["count"] for e in cols["grp"]["top"]}
ref = {}
for r in rows: ref[r["grp"]] = ref.get(r["grp"], 0) + 1
if top != ref: bad.append("grp counts %s vs %s" % (top, ref))
print("; ".join(bad[:4]))' "$T/table.csv" "$NPIECES" 2>&1)
check tree_vs_numpy.counts_and_moments "$why" [ -z "$why" ]
exit 0
