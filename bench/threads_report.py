#!/usr/bin/python3
"""Writes the `threads` section of bench/RESULTS.md (markdown on standard
output) from the figures bench/run.sh measured, given as KEY=VALUE arguments:
times t_* in median seconds, CPU times c_* (user + system) in median
seconds, peak memories m_* in KiB (GNU time %M), sizes
*_bytes in bytes.  Every ratio is between figures of the same run; the
targets are the ones the project tracks, marked PASS or MISS (a report, not a
test).
"""
import sys

v = dict(arg.split("=", 1) for arg in sys.argv[1:])
t = {k[2:]: float(x) for k, x in v.items() if k.startswith("t_")}
c = {k[2:]: float(x) for k, x in v.items() if k.startswith("c_")}
m = {k[2:]: int(x) / 1024 for k, x in v.items() if k.startswith("m_")}  # MiB
mb = {k[:-6]: int(x) / 1e6 for k, x in v.items() if k.endswith("_bytes")}
rows, half, runs = int(v["rows"]), int(v["half"]), int(v["runs"])
csv_mb = mb["plain"]


def speed(seconds, size=csv_mb):
    return "%.0f" % (size / seconds)


def verdict(ok):
    return "PASS" if ok else "MISS"


print("## Threads: `sheaf scan -j1` and `-j2`, the decompression limit, and what a user would run instead\n")
print("The 28-column benchmark table, %d rows: plain CSV %.1f MB; `gzip -6` %.1f MB; `igzip -1`"
      % (rows, csv_mb, mb["gz6"]))
print("%.1f MB; `zstd` (level 3) %.1f MB. Every scan here is `sheaf scan FILE --target label -o OUT -q -jN`"
      % (mb["igz1"], mb["zst"]))
print("(6 classes). All the commands of the first table ran interleaved, one run of each in turn,")
print("medians of %d runs%s; MB/s are of the plain CSV the command reads." % (
    runs, " (a quick check: fewer than 5 runs)" if runs < 5 else ""))
print("Building the inputs took %s s and the measurements %s s.\n" % (v["build_s"], v["measure_s"]))

print("| what | input | median s | CPU s | MB/s of CSV | ratio |")
print("| --- | --- | ---: | ---: | ---: | ---: |")
print("| `igzip -dc > /dev/null` | gzip -6 | %.3f | | %s | 1.00 |" % (t["igzip_gz6"], speed(t["igzip_gz6"])))
print("| `igzip -dc > /dev/null` | igzip -1 | %.3f | | %s | |" % (t["igzip_igz1"], speed(t["igzip_igz1"])))
print("| `zstd -dc > /dev/null` | zstd | %.3f | | %s | |" % (t["zstd"], speed(t["zstd"])))
limits = {"plain": None, "gz6": "igzip_gz6", "igz1": "igzip_igz1", "zst": "zstd"}
names = {"plain": "plain", "gz6": "gzip -6", "igz1": "igzip -1", "zst": "zstd"}
for form in ("plain", "gz6", "igz1", "zst"):
    for j in (1, 2):
        s = t["%s_j%d" % (form, j)]
        lim = limits[form]
        ratio = "%.2f x its `-dc`" % (s / t[lim]) if lim else ""
        cpu = c.get("%s_j%d" % (form, j))
        if j == 2:
            ratio += ("; " if ratio else "") + "%.2f x faster than -j1" % (t["%s_j1" % form] / s)
            if cpu and c.get("%s_j1" % form):
                ratio += ", %.2f x its CPU" % (cpu / c["%s_j1" % form])
        print("| `sheaf scan -j%d` | %s | %.3f | %s | %s | %s |"
              % (j, names[form], s, "%.3f" % cpu if cpu else "", speed(s), ratio))
for form in ("plain", "gz6"):
    if "%s_j4" % form not in t:
        continue
    s, cpu = t["%s_j4" % form], c.get("%s_j4" % form)
    print("| `sheaf scan -j4` (4 threads on 2 cores) | %s | %.3f | %s | %s | %.2f x the -j2 time%s |"
          % (names[form], s, "%.3f" % cpu if cpu else "", speed(s), s / t["%s_j2" % form],
             ", %.2f x its CPU" % (cpu / c["%s_j2" % form]) if cpu and c.get("%s_j2" % form) else ""))
print("| pandas + numpy, chunked (`bench/pandas_scan.py`) | gzip -6 | %.3f | | %s | %.1f x sheaf -j2 |"
      % (t["pandas"], speed(t["pandas"]), t["pandas"] / t["gz6_j2"]))
print("| SQL engine, 2 threads: aggregates | gzip -6 | %.3f | | %s | %.2f x sheaf -j2 |"
      % (t["sql_agg"], speed(t["sql_agg"]), t["sql_agg"] / t["gz6_j2"]))
print("| SQL engine, 2 threads: aggregates + 300 correlations | gzip -6 | %.3f | | %s | %.2f x sheaf -j2 |"
      % (t["sql_corr"], speed(t["sql_corr"]), t["sql_corr"] / t["gz6_j2"]))
print()
if c:
    print("CPU s is the median user + system time of the same runs (wait4). When `-j2` needs much")
    print("more CPU than `-j1` for the same work, the two vCPUs were paying for sharing data (their")
    print("placement on the host and its other tenants move this from run to run; see the notes")
    print("below). The `-j4` rows are a machine that shows more CPUs than the scan may use (a")
    print("container's CPU quota): from 3 threads a scan also reads ahead on a thread of its own.")
    print()
print("The pandas script (Debian's python3-pandas and python3-numpy) is what a user would write")
print("instead: `read_csv(chunksize=100000)` over the gzip file; per numeric column count, mean,")
print("variance (chunk moments merged with Chan et al.'s update), min, max; the correlation matrix")
print("of the 25 numeric columns over the rows complete in all of them (listwise, not pairwise);")
print("per-class counts and per-class means of every numeric column.")
print()
print("The SQL engine is DuckDB %s through its Node client `@duckdb/node-api` (node %s)," % (v["duckdb"], v["node"]))
print("`bench/sqlengine/query.mjs`, `SET threads=2`, one query over the gzip file: per numeric")
print("column `count`, `avg`, `var_samp`, `min`, `max`, and in the second variant `corr(a, b)` of")
print("every pair (pairwise complete). It is a general-purpose SQL engine used only as a yardstick,")
print("and it computes far less than `sheaf scan` does: no sketches, no class tables, no distinct")
print("counts, no quantiles.")
print()

print("Peak memory (max RSS):\n")
print("| what | peak memory |")
print("| --- | ---: |")
print("| `sheaf scan -j1`, plain, %d rows | %.1f MiB |" % (rows, m["j1"]))
print("| `sheaf scan -j2`, plain, %d rows | %.1f MiB |" % (half, m["j2_half"]))
print("| `sheaf scan -j2`, plain, %d rows | %.1f MiB |" % (rows, m["j2"]))
print("| `sheaf scan -j2`, gzip -6, %d rows | %.1f MiB |" % (rows, m["j2_gz"]))
print("| pandas + numpy, chunked, gzip -6 | %.1f MiB |" % m["pandas"])
print("| SQL engine: aggregates, gzip -6 | %.1f MiB |" % m["sql_agg"])
print("| SQL engine: aggregates + correlations, gzip -6 | %.1f MiB |" % m["sql_corr"])
print()

print("500 numeric columns (the `wide` section's table, 40,000 rows, %.1f MB of plain CSV, no" % mb["wide"])
print("target), interleaved:\n")
print("| what | median s | MB/s | peak memory |")
print("| --- | ---: | ---: | ---: |")
print("| `sheaf scan -j1` | %.3f | %s | %.1f MiB |" % (t["wide_j1"], speed(t["wide_j1"], mb["wide"]), m["wide_j1"]))
print("| `sheaf scan -j2` | %.3f | %s | %.1f MiB |" % (t["wide_j2"], speed(t["wide_j2"], mb["wide"]), m["wide_j2"]))
print()

print("Targets (each ratio from the figures above):\n")
print("| ratio | value | target | |")
print("| --- | ---: | ---: | --- |")
r = t["gz6_j2"] / t["igzip_gz6"]
print("| gzip -6 scan with the class target at -j2 / `igzip -dc` | %.2f | <= 2 | %s |" % (r, verdict(r <= 2)))
r = t["plain_j1"] / t["plain_j2"]
print("| plain: -j2 speed-up over -j1 | %.2f | >= 1.8 | %s |" % (r, verdict(r >= 1.8)))
r = t["pandas"] / t["gz6_j2"]
print("| pandas time / sheaf -j2 time (gzip -6) | %.1f | >= 10 | %s |" % (r, verdict(r >= 10)))
r = m["j2_gz"] / m["pandas"]
print("| sheaf -j2 peak memory / pandas peak memory (gzip -6) | %.3f | <= 0.1 | %s |" % (r, verdict(r <= 0.1)))
r = t["sql_corr"] / t["gz6_j2"]
print("| SQL engine, aggregates + correlations / sheaf -j2 (gzip -6) | %.2f | > 1 | %s |" % (r, verdict(r > 1)))
r = t["sql_agg"] / t["gz6_j2"]
print("| SQL engine, aggregates only / sheaf -j2 (gzip -6) | %.2f | > 1 | %s |" % (r, verdict(r > 1)))
worst = max(m["j2"], m["j2_gz"])
print("| sheaf -j2 peak memory (largest above, MiB; %.1f at %d rows) | %.1f | < 64 | %s |"
      % (m["j2_half"], half, worst, verdict(worst < 64)))
r = t["wide_j1"] / t["wide_j2"]
print("| 500 columns: -j2 speed-up over -j1 | %.2f | >= 1.8 | %s |" % (r, verdict(r >= 1.8)))
print()
