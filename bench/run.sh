#!/usr/bin/env bash
# sheaf benchmarks.  Writes bench/RESULTS.md (machine, medians, ratios).
#   bench/run.sh            all sections
#   bench/run.sh scan ...   only the named sections
# Times are medians of runs measured side by side in one run: commands that
# are compared run interleaved (bench/interleave.py), since the shared
# machine's speed drifts from minute to minute; peak memory is the maximum
# resident set from /usr/bin/time.
set -euo pipefail
# Sections other than `threads` measure one thread (their targets were set for
# it); `threads` passes -j itself, which overrides this.
export SHEAF_THREADS=${SHEAF_THREADS:-1}
cd "$(dirname "$0")/.."
out=bench/out
mkdir -p "$out"
gen=build/demo/generate
results=bench/RESULTS.md
rows=${BENCH_ROWS:-2000000}
runs=${BENCH_RUNS:-5}
sections=("$@")
[ ${#sections[@]} -eq 0 ] && sections=(scan count target wide merge shard resume pca project threads)

machine() {
    echo "- CPU: $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | sed 's/^ //'), $(nproc) cores"
    echo "- memory: $(free -g | awk '/Mem:/ {print $2}') GiB; OS: $(. /etc/os-release; echo "$PRETTY_NAME"); kernel $(uname -r)"
    echo "- compiler: $(cc --version | head -n1); sheaf built with the Makefile defaults ($(sed -n "s/^OPT *?= *//p" Makefile))"
    echo "- date: $(date -u +%Y-%m-%d); the machine is shared and its speed drifts, so timings are medians of $runs runs, and commands that are compared run interleaved"
}

interleaved() { # command... -> their median seconds, one per line, run in turn
    /usr/bin/python3 bench/interleave.py "$runs" "$@"
}

median_s() { # command... -> median seconds (hyperfine)
    hyperfine -N -w 1 -r "$runs" --export-json "$out/hf.json" "$@" >/dev/null 2>&1
    /usr/bin/python3 -c "import json; print('%.3f' % json.load(open('$out/hf.json'))['results'][0]['median'])"
}

peak_kb() { /usr/bin/time -f '%M' "$@" 2>&1 >/dev/null | tail -n1; }

table_files() {
    if [ ! -s "$out/bench-$rows.csv" ]; then
        $gen --profile bench --rows "$rows" -o "$out/bench-$rows.csv"
        $gen --profile bench --rows "$rows" -o "$out/bench-$rows.csv.gz"
    fi
    half=$((rows / 2))
    [ -s "$out/bench-$half.csv" ] || $gen --profile bench --rows "$half" -o "$out/bench-$half.csv"
}

section_scan() {
    table_files
    local plain=$out/bench-$rows.csv gz=$out/bench-$rows.csv.gz
    local mb gzmb
    mb=$(stat -c %s "$plain"); gzmb=$(stat -c %s "$gz")
    local t_plain t_gz t_igzip t_cat
    { read -r t_cat; read -r t_plain; read -r t_gz; read -r t_igzip; } < <(interleaved \
        "cat $plain" "./sheaf scan $plain -o $out/p.sheaf -q" "./sheaf scan $gz -o $out/g.sheaf -q" \
        "igzip -dc $gz")
    local m_full m_half
    m_full=$(peak_kb ./sheaf scan "$plain" -o "$out/p.sheaf" -q)
    m_half=$(peak_kb ./sheaf scan "$out/bench-$half.csv" -o "$out/h.sheaf" -q)
    /usr/bin/python3 - "$mb" "$gzmb" "$t_plain" "$t_gz" "$t_igzip" "$t_cat" "$m_full" "$m_half" "$rows" "$half" <<'PY' >"$out/scan.md"
import sys
mb, gzmb, tp, tg, ti, tc, mf, mh, rows, half = sys.argv[1:]
mb, gzmb = int(mb) / 1e6, int(gzmb) / 1e6
tp, tg, ti, tc = map(float, (tp, tg, ti, tc))
print("## Scan (issue 2): the 28-column benchmark table, %s rows, single-threaded\n" % rows)
print("Plain CSV %.1f MB; gzip %.1f MB. Target: at least 150 MB/s of plain CSV; peak memory" % (mb, gzmb))
print("under 32 MiB that does not grow with the number of rows.\n")
print("| what | median s | MB/s of CSV | ratio |")
print("| --- | ---: | ---: | ---: |")
print("| `cat plain > /dev/null` | %.3f | %.0f | |" % (tc, mb / tc))
print("| `sheaf scan` plain | %.3f | %.0f | 1.00 |" % (tp, mb / tp))
print("| `sheaf scan` gzip | %.3f | %.0f | %.2f x plain |" % (tg, mb / tg, tg / tp))
print("| `igzip -dc > /dev/null` | %.3f | %.0f | %.2f of sheaf gzip |" % (ti, mb / ti, ti / tg))
print("\nPeak memory (max RSS): %s rows %.1f MiB; %s rows %.1f MiB.\n" % (rows, int(mf) / 1024, half, int(mh) / 1024))
PY
}

section_count() {
    # Instructions and simulated branch misses of a scan of the table's first
    # 10 MB (callgrind): deterministic, unlike wall time on a shared machine.
    table_files
    command -v valgrind >/dev/null || { echo "count: valgrind not installed, skipped" >&2; return 0; }
    head -c 10000000 "$out/bench-$rows.csv" >"$out/slice10.csv"
    OPENBLAS_NUM_THREADS=1 valgrind --tool=callgrind --branch-sim=yes \
        --callgrind-out-file="$out/cg.out" ./sheaf scan "$out/slice10.csv" -o "$out/s10.sheaf" -q \
        2>"$out/cg.log"
    /usr/bin/python3 - "$out/cg.log" <<'PY' >"$out/count.md"
import re, sys
log = open(sys.argv[1]).read()
ir = int(re.search(r"I\s+refs:\s+([\d,]+)", log).group(1).replace(",", ""))
bm = int(re.search(r"Mispredicts:\s+([\d,]+)", log).group(1).replace(",", ""))
print("Instructions (callgrind, deterministic) for a scan of the table's first 10 MB: %.0f million"
      % (ir / 1e6))
print("(%.1f per byte, fixed costs such as start-up and the final sorts included), %.2f million"
      % (ir / 1e7, bm / 1e6))
print("simulated branch misses. For reference: 675 million before the scan went on threads")
print("(2026-12-02); the staged chunks of summary/chunks.h (cell positions written by the")
print("tokenizing task and read back by the column tasks, row and co-moment tasks apart)")
print("measured 716 million (+6.0%) at -j1 that day.  A change to the scan should stay within")
print("2% of the latest figure, or explain.\n")
PY
}

section_target() {
    table_files
    local plain=$out/bench-$rows.csv mb
    mb=$(stat -c %s "$plain")
    local t0 tc tr
    { read -r t0; read -r tc; read -r tr; } < <(interleaved "./sheaf scan $plain -o $out/p.sheaf -q" \
        "./sheaf scan $plain -o $out/tc.sheaf -q --target label" \
        "./sheaf scan $plain -o $out/tr.sheaf -q --target balance")
    local mc1 mc2 mr1 mr2 half=$out/bench-$((rows / 2)).csv
    mc1=$(peak_kb ./sheaf scan "$half" -o "$out/m.sheaf" -q --target label)
    mc2=$(peak_kb ./sheaf scan "$plain" -o "$out/m.sheaf" -q --target label)
    mr1=$(peak_kb ./sheaf scan "$half" -o "$out/m.sheaf" -q --target balance)
    mr2=$(peak_kb ./sheaf scan "$plain" -o "$out/m.sheaf" -q --target balance)
    /usr/bin/python3 - "$mb" "$t0" "$tc" "$tr" "$mc1" "$mc2" "$mr1" "$mr2" "$rows" <<'PY' >"$out/target.md"
import sys
mb, t0, tc, tr = int(sys.argv[1]) / 1e6, *map(float, sys.argv[2:5])
mc1, mc2, mr1, mr2 = (int(x) / 1024 for x in sys.argv[5:9])
rows = int(sys.argv[9])
print("## Scan with a target (issue 3): the same table\n")
print("Target: at most 1.5x the scan without a target.\n")
print("| scan | median s | MB/s | ratio to no target |")
print("| --- | ---: | ---: | ---: |")
print("| no target | %.3f | %.0f | 1.00 |" % (t0, mb / t0))
print("| `--target label` (6 classes) | %.3f | %.0f | %.2f |" % (tc, mb / tc, tc / t0))
print("| `--target balance` (continuous, regression) | %.3f | %.0f | %.2f |" % (tr, mb / tr, tr / t0))
print()
print("Peak memory as rows grow: `--target label` %.1f MiB at %d rows, %.1f MiB at %d;" % (mc1, rows // 2, mc2, rows))
print("`--target balance` %.1f MiB and %.1f MiB (its bucket stores count per target bucket, bounded" % (mr1, mr2))
print("by the bucket budget times the target's buckets).")
print()
PY
}

wide_file() { # -> builds $out/wide500.csv (40,000 rows x 500 numeric columns) once
    local wide=$out/wide500.csv
    if [ ! -s "$wide" ]; then
        /usr/bin/python3 - "$wide" <<'PY'
import sys, numpy as np
rng = np.random.default_rng(5)
rows, cols = 40000, 500
with open(sys.argv[1], "w") as f:
    f.write(",".join("x%03d" % j for j in range(cols)) + "\n")
    for start in range(0, rows, 2000):
        block = rng.normal(size=(2000, cols)) * 10
        block[:, 1::7] = block[:, 0::7][:, :block[:, 1::7].shape[1]] + rng.normal(size=(2000, block[:, 1::7].shape[1]))
        f.write("\n".join(",".join("%.4f" % v for v in row) for row in block) + "\n")
PY
    fi
}

section_wide() {
    wide_file
    local wide=$out/wide500.csv
    local mb t m
    mb=$(stat -c %s "$wide")
    t=$(median_s "./sheaf scan $wide -o $out/w.sheaf -q")
    m=$(peak_kb ./sheaf scan "$wide" -o "$out/w.sheaf" -q)
    /usr/bin/python3 - "$mb" "$t" "$m" <<'PY' >"$out/wide.md"
import sys
mb, t, m = int(sys.argv[1]) / 1e6, float(sys.argv[2]), int(sys.argv[3])
print("## 500 numeric columns with the full co-moment matrix (issue 3)\n")
print("40,000 rows x 500 columns, %.1f MB of plain CSV. Target: at least 40 MB/s on one core.\n" % mb)
print("| what | median s | MB/s | peak memory |")
print("| --- | ---: | ---: | ---: |")
print("| `sheaf scan` | %.3f | %.1f | %.1f MiB |" % (t, mb / t, m / 1024))
print()
PY
}

section_merge() {
    local dir=$out/merge1000
    if [ ! -s "$dir/s1000.sheaf" ]; then
        mkdir -p "$dir"
        $gen --profile bench --rows 20000 --shards 10 --prefix "$dir/part" --shard-suffix .csv >/dev/null
        for i in $(seq -w 1 10); do ./sheaf scan "$dir/part-$i.csv" -o "$dir/base$i.sheaf" -q; done
        # 1,000 summaries of distinct sources: copies of the 10 scans with
        # their fingerprints made distinct would be artificial, so each of the
        # 1,000 is a scan of a distinct 20-row slice.
        $gen --profile bench --rows 20000 --shards 1000 --prefix "$dir/slice" --shard-suffix .csv >/dev/null
        ls "$dir"/slice-*.csv | parallel -j2 './sheaf scan {} -o {.}.sheaf -q'
        touch "$dir/s1000.sheaf"
    fi
    local t m files
    files=$(ls "$dir"/slice-*.sheaf | tr '\n' ' ')
    t=$(median_s "./sheaf merge $files -o $dir/merged.sheaf")
    m=$(peak_kb ./sheaf merge $files -o "$dir/merged.sheaf")
    /usr/bin/python3 - "$t" "$m" <<'PY' >"$out/merge.md"
import sys
t, m = float(sys.argv[1]), int(sys.argv[2])
print("## Merge (issue 4): 1,000 summaries of the 28-column table\n")
print("Target: under 2 seconds.\n")
print("| what | median s | peak memory |")
print("| --- | ---: | ---: |")
print("| `sheaf merge` of 1,000 summaries | %.3f | %.1f MiB |" % (t, m / 1024))
print()
PY
}

section_shard() {
    table_files
    local plain=$out/bench-$rows.csv mb n cmds=()
    mb=$(stat -c %s "$plain")
    # N = 1, 2, 4, 8 byte-range shards of one plain file, each shard one
    # process on one thread, run two at a time under GNU parallel (this
    # machine's cores), interleaved with one whole-file scan.
    cmds+=("./sheaf scan $plain -o $out/p.sheaf -q -j1")
    for n in 1 2 4 8; do
        cmds+=("parallel -j2 ./sheaf scan $plain --shard {}/$n -j1 -o $out/sh$n-{}.sheaf -q ::: $(seq -s ' ' 1 $n)")
    done
    mapfile -t times < <(interleaved "${cmds[@]}")
    # Bytes each shard read (its summary's shard record), and the merge
    # checked against the whole-file scan's row count.
    local reads=()
    for n in 1 2 4 8; do
        ./sheaf merge "$out"/sh$n-*.sheaf -o "$out/shm$n.sheaf"
        reads+=("$(for i in $(seq 1 $n); do ./sheaf info "$out/sh$n-$i.sheaf" --format json; done |
            /usr/bin/python3 -c '
import json, sys
dec, text, i, got = json.JSONDecoder(), sys.stdin.read(), 0, []
while i < len(text):
    while i < len(text) and text[i].isspace(): i += 1
    if i >= len(text): break
    o, i = dec.raw_decode(text, i)
    got += [s["shard"]["read_bytes"] for s in o["sources"] if s.get("shard")]
print(sum(got), max(got))')")
        rows_m=$(./sheaf info "$out/shm$n.sheaf" --format json | /usr/bin/python3 -c 'import json,sys; print(json.load(sys.stdin)["rows"])')
        rows_w=$(./sheaf info "$out/p.sheaf" --format json | /usr/bin/python3 -c 'import json,sys; print(json.load(sys.stdin)["rows"])')
        [ "$rows_m" = "$rows_w" ] || { echo "bench: $n shards merged to $rows_m rows, the whole file has $rows_w" >&2; exit 1; }
    done
    /usr/bin/python3 - "$mb" "${times[@]}" "${reads[@]}" <<'PY' >"$out/shard.md"
import sys
mb = int(sys.argv[1])
t = [float(x) for x in sys.argv[2:7]]
reads = [tuple(int(v) for v in x.split()) for x in sys.argv[7:11]]
print("## Byte-range shards (issues 4 and 17)\n")
print("The plain benchmark table (%.1f MB), N byte-range shards, each one `sheaf scan --shard I/N -j1`"
      " process, run two at a time under GNU parallel -j2 (this machine has two cores), interleaved"
      " with one whole-file `sheaf scan -j1`. Bytes read are each shard's own count (its summary's"
      " shard record: the header pass, the file identity, the look-ahead, its range and the record"
      " crossing its end); the merged rows equal the whole file's.\n" % (mb / 1e6))
print("| what | median s | speed-up | bytes read, all shards | x file | largest shard |")
print("| --- | ---: | ---: | ---: | ---: | ---: |")
print("| one `sheaf scan -j1` | %.3f | 1.00 | %d | 1.00 | |" % (t[0], mb))
for k, n in enumerate([1, 2, 4, 8]):
    tot, big = reads[k]
    print("| %d shard%s | %.3f | %.2f | %d | %.3f | %d |" % (n, "" if n == 1 else "s", t[k + 1], t[0] / t[k + 1], tot, tot / mb, big))
print()
PY
}

section_pca() {
    local wide=$out/wide2000.csv
    if [ ! -s "$wide" ]; then
        /usr/bin/python3 - "$wide" <<'PY'
import sys, numpy as np
rng = np.random.default_rng(3)
rows, cols = 3000, 2000
x = rng.normal(size=(rows, 20)) @ rng.normal(size=(20, cols)) + rng.normal(size=(rows, cols))
with open(sys.argv[1], "w") as f:
    f.write(",".join("v%04d" % j for j in range(cols)) + "\n")
    for r in x:
        f.write(",".join("%.3f" % v for v in r) + "\n")
PY
    fi
    local m_scan m_small t_pca m_pca
    m_scan=$(peak_kb ./sheaf scan "$wide" -o "$out/w2000.sheaf" -q)
    m_small=$(peak_kb ./sheaf scan "$wide" -o "$out/w2000s.sheaf" -q --max-levels 256 --bucket-budget 512)
    t_pca=$(median_s "./sheaf pca $out/w2000.sheaf --components 5")
    m_pca=$(peak_kb ./sheaf pca "$out/w2000.sheaf" --components 5)
    /usr/bin/python3 - "$m_scan" "$m_small" "$t_pca" "$m_pca" "$(stat -c %s "$out/w2000.sheaf")" <<'PY' >"$out/pca.md"
import sys
ms, mm, t, mp, size = int(sys.argv[1]), int(sys.argv[2]), float(sys.argv[3]), int(sys.argv[4]), int(sys.argv[5])
print("## 2,000 columns: scan memory and PCA (issues 3 and 6)\n")
print("3,000 rows x 2,000 numeric columns (20 hidden factors plus noise). Targets: the co-moment")
print("matrix of 2,000 columns fits 512 MiB; `sheaf pca` in under 5 seconds.\n")
print("| what | median s | peak memory |")
print("| --- | ---: | ---: |")
print("| `sheaf scan`, defaults (max-levels 1024, bucket-budget 2048) | | %.0f MiB |" % (ms / 1024))
print("| `sheaf scan --max-levels 256 --bucket-budget 512` | | %.0f MiB |" % (mm / 1024))
print("| `sheaf pca --components 5` on the %.0f MB summary | %.2f | %.0f MiB |" % (size / 1e6, t, mp / 1024))
print()
print("The co-moment state and block scratch of p columns take 3p(p+1)/2 + p^2 + ... doubles:")
print("0.95 MiB for 100 columns, 15.4 MiB for 500, 222 MiB for 2,000 (`comoment_bytes`). The rest")
print("of the scan's memory is per column (value table, bucket store, sketch: about 0.2 MiB each")
print("with the defaults), which is why the defaults exceed 512 MiB at 2,000 columns.\n")
PY
}

section_project() {
    table_files
    local plain=$out/bench-$rows.csv mb t
    mb=$(stat -c %s "$plain")
    [ -s "$out/p.sheaf" ] || ./sheaf scan "$plain" -o "$out/p.sheaf" -q
    t=$(median_s "./sheaf project $plain --summary $out/p.sheaf --components 5 -o $out/scores.csv")
    local ncols
    ncols=$(./sheaf pca "$out/p.sheaf" --format json | /usr/bin/python3 -c "import json,sys; print(len(json.load(sys.stdin)['columns']))")
    /usr/bin/python3 - "$mb" "$t" "$ncols" <<'PY' >"$out/project.md"
import sys
mb, t, n = int(sys.argv[1]) / 1e6, float(sys.argv[2]), sys.argv[3]
print("## Component scores (issue 6)\n")
print("`sheaf project` over the %.0f MB plain benchmark table, %s numeric columns used, k = 5." % (mb, n))
print("Target: at least 100 MB/s on one core.\n")
print("| what | median s | MB/s |")
print("| --- | ---: | ---: |")
print("| `sheaf project --components 5 -o scores.csv` | %.3f | %.0f |" % (t, mb / t))
print()
PY
}

compressed_forms() { # plain -> its gzip -6, igzip -1 and zstd (level 3) forms, made once
    local plain=$1 base=${1%.csv}
    [ -s "$base.gz6.csv.gz" ] || { gzip -6 -c "$plain" >"$base.gz6.tmp.gz"; mv "$base.gz6.tmp.gz" "$base.gz6.csv.gz"; }
    [ -s "$base.igz1.csv.gz" ] || { igzip -1 -c "$plain" >"$base.igz1.tmp.gz"; mv "$base.igz1.tmp.gz" "$base.igz1.csv.gz"; }
    [ -s "$base.csv.zst" ] || { zstd -q -c "$plain" >"$base.tmp.zst"; mv "$base.tmp.zst" "$base.csv.zst"; }
}

section_resume() {
    # A scan with checkpoints killed near 80% of the gzip -6 benchmark table
    # and resumed (issue 16's target: the resume within 40% of a full scan),
    # interleaved with the full scan without checkpoints, the same scan with
    # them, and the resume the way it went before restart points (the file
    # decompressed from its start). The checkpoint is taken once, by the test
    # hook that stops a scan inside checkpoint N+1 and SIGKILL; each timed
    # resume starts from a fresh copy of it (the copy, 4 MB, is in its time).
    table_files
    local plain=$out/bench-$rows.csv gz=$out/bench-$rows.gz6.csv.gz every=32 size n pid
    compressed_forms "$plain"
    size=$(stat -c %s "$plain")
    n=$((size * 8 / 10 / (every << 20))) # the last checkpoint before 80%
    local ck=$out/resume-kill.ckpt scan="./sheaf scan $gz --target label -q --checkpoint-every ${every}M"
    rm -f "$ck" "$out/pause.txt"
    SHEAF_TEST_CHECKPOINT_PAUSE=$((n + 1)) $scan --checkpoint "$ck" -o "$out/rk.sheaf" 2>"$out/pause.txt" &
    pid=$!
    until grep -q 'paused inside checkpoint' "$out/pause.txt" 2>/dev/null; do
        kill -0 "$pid" 2>/dev/null || { echo "resume: the scan ended before checkpoint $((n + 1))" >&2; exit 1; }
        sleep 0.05
    done
    kill -9 "$pid"; wait "$pid" 2>/dev/null || true
    cp "$ck" "$out/resume-$n.ckpt"
    local at
    at=$(cp "$out/resume-$n.ckpt" "$out/rn.ckpt" && SHEAF_TEST_RESTART=note $scan --checkpoint "$out/rn.ckpt" \
        --resume -o "$out/rn.sheaf" 2>&1 | sed -n 's/.*resumed at raw byte \([0-9]*\), decoded byte \([0-9]*\).*/\1 \2/p')
    [ -n "$at" ] || { echo "resume: no restart point used" >&2; exit 1; }
    local t=() j
    for j in 1 "$(nproc)"; do
        mapfile -t -O "${#t[@]}" t < <(interleaved "./sheaf scan $gz --target label -q -j$j -o $out/rp.sheaf" \
            "$scan -j$j --checkpoint $out/rf.ckpt -o $out/rf.sheaf" \
            "sh -c 'cp $out/resume-$n.ckpt $out/rr.ckpt && $scan -j$j --checkpoint $out/rr.ckpt --resume -o $out/rr.sheaf'" \
            "env SHEAF_TEST_RESTART=off sh -c 'cp $out/resume-$n.ckpt $out/rz.ckpt && $scan -j$j --checkpoint $out/rz.ckpt --resume -o $out/rz.sheaf'")
        for f in rr rz rn; do
            cmp -s "$out/rf.sheaf" "$out/$f.sheaf" || { echo "resume: $f.sheaf differs from the uninterrupted scan's" >&2; exit 1; }
        done
    done
    /usr/bin/python3 - "$size" "$(stat -c %s "$gz")" "$n" "$every" $at "$(nproc)" "${t[@]}" <<'PY' >"$out/resume.md"
import sys
size, gz, n, every, raw, dec, cores = (int(x) for x in sys.argv[1:8])
t = [float(x) for x in sys.argv[8:16]]
cut = n * (every << 20)
print("## A resumed scan (issue 16)\n")
print("The gzip -6 benchmark table (%.1f MB of CSV, %.1f MB gzip), `sheaf scan --target label"
      " --checkpoint-every %dM`, killed with SIGKILL inside checkpoint %d (the test hook"
      " `SHEAF_TEST_CHECKPOINT_PAUSE`), so that checkpoint %d, cut at about %.1f%% of the"
      " decompressed bytes, is the one it resumes from. Its restart point (the gzip decoder's"
      " state) is at decoded byte %d (%.1f%%), raw byte %d. Each thread count's four commands ran"
      " interleaved, medians of the runs; each resume starts from a fresh copy of the checkpoint,"
      " the copy timed with it. Every resumed summary equals the uninterrupted scan's, byte for"
      " byte.\n" % (size / 1e6, gz / 1e6, every, n + 1, n, 100.0 * cut / size, dec, 100.0 * dec / size, raw))
print("| what | threads | median s | / full scan, no checkpoints | / the same scan uninterrupted |")
print("| --- | ---: | ---: | ---: | ---: |")
verdict = []
for k, j in enumerate([1, cores]):
    plain, full, resumed, ffwd = t[4 * k: 4 * k + 4]
    print("| full scan, no checkpoints | %d | %.3f | 1.00 | |" % (j, plain))
    print("| full scan, checkpoint every %dM | %d | %.3f | %.2f | 1.00 |" % (every, j, full, full / plain))
    print("| resumed at checkpoint %d, from its restart point | %d | %.3f | **%.0f%%** | %.0f%% |" % (n, j, resumed, 100 * resumed / plain, 100 * resumed / full))
    print("| the same, restart points off (decompressed from byte 0) | %d | %.3f | %.0f%% | %.0f%% |" % (j, ffwd, 100 * ffwd / plain, 100 * ffwd / full))
    verdict.append("-j%d: %.0f%% (%s)" % (j, 100 * resumed / plain, "PASS" if resumed <= 0.4 * plain else "MISS"))
print("\nTarget: a scan killed at 80%% and resumed finishes within 40%% of a full scan; of the scan"
      " without checkpoints: %s.\n" % "; ".join(verdict))
PY
}

sqlengine_ready() { # the yardstick SQL engine's Node client, installed when missing
    if ! command -v node >/dev/null || ! command -v npm >/dev/null; then
        echo "threads: node and npm are needed: apt-get install nodejs npm" >&2
        return 1
    fi
    [ -s bench/sqlengine/node_modules/@duckdb/node-api/package.json ] ||
        npm install --prefix bench/sqlengine --no-audit --no-fund @duckdb/node-api >&2
}

section_threads() {
    # The scan on one and two threads, next to the decompression limit and to
    # what a user would otherwise run: a chunked pandas script, and a
    # general-purpose SQL engine with a multi-threaded CSV reader (a yardstick
    # only). Every scan counts classes of `label`.
    local started=$SECONDS
    table_files
    sqlengine_ready
    local plain=$out/bench-$rows.csv base=$out/bench-$rows
    compressed_forms "$plain"
    wide_file
    local built=$SECONDS
    local gz6=$base.gz6.csv.gz igz1=$base.igz1.csv.gz zst=$base.csv.zst
    local scan="./sheaf scan" tl="--target label -q"
    local -a cmds=(
        "igzip -dc $gz6" "igzip -dc $igz1" "zstd -dc $zst"
        "$scan $plain $tl -o $out/t1p.sheaf -j1" "$scan $plain $tl -o $out/t2p.sheaf -j2"
        "$scan $gz6 $tl -o $out/t1g.sheaf -j1" "$scan $gz6 $tl -o $out/t2g.sheaf -j2"
        "$scan $igz1 $tl -o $out/t1i.sheaf -j1" "$scan $igz1 $tl -o $out/t2i.sheaf -j2"
        "$scan $zst $tl -o $out/t1z.sheaf -j1" "$scan $zst $tl -o $out/t2z.sheaf -j2"
        "/usr/bin/python3 bench/pandas_scan.py $gz6 label"
        "node bench/sqlengine/query.mjs aggregates $gz6 2"
        "node bench/sqlengine/query.mjs correlations $gz6 2"
        "$scan $plain $tl -o $out/t4p.sheaf -j4" "$scan $gz6 $tl -o $out/t4g.sheaf -j4"
    )
    local -a t
    mapfile -t t < <(INTERLEAVE_CPU=$out/threads-cpu.txt interleaved "${cmds[@]}")
    [ ${#t[@]} -eq ${#cmds[@]} ] || { echo "threads: interleave.py gave ${#t[@]} times for ${#cmds[@]} commands" >&2; return 1; }
    local -a c
    mapfile -t c <"$out/threads-cpu.txt"
    local half=$out/bench-$((rows / 2)).csv
    local m_j2 m_j2_half m_j1 m_j2_gz m_pandas m_sql_agg m_sql_corr
    m_j2=$(peak_kb $scan "$plain" $tl -o "$out/m.sheaf" -j2)
    m_j2_half=$(peak_kb $scan "$half" $tl -o "$out/m.sheaf" -j2)
    m_j1=$(peak_kb $scan "$plain" $tl -o "$out/m.sheaf" -j1)
    m_j2_gz=$(peak_kb $scan "$gz6" $tl -o "$out/m.sheaf" -j2)
    m_pandas=$(peak_kb /usr/bin/python3 bench/pandas_scan.py "$gz6" label)
    m_sql_agg=$(peak_kb node bench/sqlengine/query.mjs aggregates "$gz6" 2)
    m_sql_corr=$(peak_kb node bench/sqlengine/query.mjs correlations "$gz6" 2)
    local wide=$out/wide500.csv w1 w2 m_w1 m_w2
    { read -r w1; read -r w2; } < <(interleaved "./sheaf scan $wide -o $out/w1.sheaf -q -j1" \
        "./sheaf scan $wide -o $out/w2.sheaf -q -j2")
    m_w1=$(peak_kb ./sheaf scan "$wide" -o "$out/w1.sheaf" -q -j1)
    m_w2=$(peak_kb ./sheaf scan "$wide" -o "$out/w2.sheaf" -q -j2)
    local duckdb_version
    duckdb_version=$(node -p "require('./bench/sqlengine/node_modules/@duckdb/node-api/package.json').version")
    /usr/bin/python3 bench/threads_report.py \
        rows="$rows" half=$((rows / 2)) runs="$runs" build_s=$((built - started)) measure_s=$((SECONDS - built)) \
        plain_bytes="$(stat -c %s "$plain")" gz6_bytes="$(stat -c %s "$gz6")" \
        igz1_bytes="$(stat -c %s "$igz1")" zst_bytes="$(stat -c %s "$zst")" \
        wide_bytes="$(stat -c %s "$wide")" duckdb="$duckdb_version" \
        "$(node --version | sed 's/^/node=/')" \
        t_igzip_gz6="${t[0]}" t_igzip_igz1="${t[1]}" t_zstd="${t[2]}" \
        t_plain_j1="${t[3]}" t_plain_j2="${t[4]}" t_gz6_j1="${t[5]}" t_gz6_j2="${t[6]}" \
        t_igz1_j1="${t[7]}" t_igz1_j2="${t[8]}" t_zst_j1="${t[9]}" t_zst_j2="${t[10]}" \
        t_pandas="${t[11]}" t_sql_agg="${t[12]}" t_sql_corr="${t[13]}" \
        t_plain_j4="${t[14]}" t_gz6_j4="${t[15]}" c_plain_j4="${c[14]}" c_gz6_j4="${c[15]}" \
        c_plain_j1="${c[3]}" c_plain_j2="${c[4]}" c_gz6_j1="${c[5]}" c_gz6_j2="${c[6]}" \
        c_igz1_j1="${c[7]}" c_igz1_j2="${c[8]}" c_zst_j1="${c[9]}" c_zst_j2="${c[10]}" \
        m_j2="$m_j2" m_j2_half="$m_j2_half" m_j1="$m_j1" m_j2_gz="$m_j2_gz" m_pandas="$m_pandas" \
        m_sql_agg="$m_sql_agg" m_sql_corr="$m_sql_corr" \
        t_wide_j1="$w1" t_wide_j2="$w2" m_wide_j1="$m_w1" m_wide_j2="$m_w2" >"$out/threads.md"
}

for s in "${sections[@]}"; do "section_$s"; done

{
    echo "# Benchmark results"
    echo
    echo "Written by \`bench/run.sh\` (\`make bench\`). Machine:"
    echo
    machine
    echo
    for f in scan count target wide merge shard resume pca project threads; do
        [ -s "$out/$f.md" ] && cat "$out/$f.md"
    done
    [ -s bench/threads-notes.md ] && cat bench/threads-notes.md
} >"$results"
cat "$results"
