#!/usr/bin/env bash
# sheaf benchmarks.  Writes bench/RESULTS.md (machine, medians, ratios).
#   bench/run.sh            all sections
#   bench/run.sh scan ...   only the named sections
# Times are medians of hyperfine runs measured side by side in one run; peak
# memory is the maximum resident set from /usr/bin/time -v.
set -euo pipefail
cd "$(dirname "$0")/.."
out=bench/out
mkdir -p "$out"
gen=build/demo/generate
results=bench/RESULTS.md
rows=${BENCH_ROWS:-2000000}
runs=${BENCH_RUNS:-5}
sections=("$@")
[ ${#sections[@]} -eq 0 ] && sections=(scan)

machine() {
    echo "- CPU: $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | sed 's/^ //'), $(nproc) cores"
    echo "- memory: $(free -g | awk '/Mem:/ {print $2}') GiB; OS: $(. /etc/os-release; echo "$PRETTY_NAME"); kernel $(uname -r)"
    echo "- compiler: $(cc --version | head -n1); sheaf built with the Makefile defaults (-O2)"
    echo "- date: $(date -u +%Y-%m-%d); the machine is shared, so single timings are noisy: medians of $runs runs"
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
    t_cat=$(median_s "cat $plain")
    t_plain=$(median_s "./sheaf scan $plain -o $out/p.sheaf -q")
    t_gz=$(median_s "./sheaf scan $gz -o $out/g.sheaf -q")
    t_igzip=$(median_s "igzip -dc $gz")
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

for s in "${sections[@]}"; do "section_$s"; done

{
    echo "# Benchmark results"
    echo
    echo "Written by \`bench/run.sh\` (\`make bench\`). Machine:"
    echo
    machine
    echo
    for f in scan target wide merge shard pca project; do
        [ -s "$out/$f.md" ] && cat "$out/$f.md"
    done
} >"$results"
cat "$results"
