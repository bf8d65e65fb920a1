#!/usr/bin/env bash
# The demo: one night of refrigerated-container leg reports (see
# demo/README.md), written as two gzip shards, each scanned once in bounded
# memory (both cores at once), merged, described, screened against the
# arrival condition, reduced, and summarised by principal components.
set -euo pipefail
cd "$(dirname "$0")/.."
out=demo/out
mkdir -p "$out"
rows=${DEMO_ROWS:-3060000}
if [ ! -s "$out/legs-02.csv.gz" ] || [ "$(cat "$out/.rows" 2>/dev/null)" != "$rows" ]; then
    echo "== generating $rows rows of gzip CSV as 2 shards in $out/"
    /usr/bin/time -f "   %e s" build/demo/generate --rows "$rows" --seed 7 --shards 2 \
        --prefix "$out/legs"
    echo "$rows" >"$out/.rows"
fi
ls -l "$out"/legs-0*.csv.gz | awk '{printf "   %s: %.1f MB\n", $9, $5 / 1e6}'

echo
echo "== sheaf scan: each shard once, in parallel, with the outcome as target"
start=$(date +%s.%N)
for i in 01 02; do
    /usr/bin/time -f "   shard $i: %e s, peak memory %M KB" \
        ./sheaf scan "$out/legs-$i.csv.gz" --target arrival_condition -o "$out/legs-$i.sheaf" -q &
done
wait
printf '   both: %.1f s wall\n' "$(echo "$(date +%s.%N) - $start" | bc)"

echo
echo "== sheaf merge: the two shard summaries, exactly"
./sheaf merge "$out/legs-01.sheaf" "$out/legs-02.sheaf" -o "$out/legs.sheaf"
ls -l "$out/legs.sheaf" | awk '{printf "   %s: %.1f MB summary\n", $9, $5 / 1e6}'

echo
echo "== sheaf info"
./sheaf info "$out/legs.sheaf"

echo
echo "== sheaf screen: which columns to keep against arrival_condition"
./sheaf screen "$out/legs.sheaf" --write-kept "$out/keep.txt"

echo
echo "== sheaf drift: the next night (a third of the rows) against this one"
build/demo/generate --rows "$((rows / 3))" --seed 8 --night 2 -o "$out/legs-night2.csv.gz"
./sheaf scan "$out/legs-night2.csv.gz" --target arrival_condition -o "$out/legs-night2.sheaf" -q
drift=0
./sheaf drift "$out/legs.sheaf" "$out/legs-night2.sheaf" || drift=$?
echo "   exit status $drift (7: drift found, which a cron job alerts on; 0: quiet)"
[ "$drift" = 7 ]

echo
echo "== sheaf trim: the reduced table (second streaming pass)"
/usr/bin/time -f "   %e s" ./sheaf trim "$out"/legs-0*.csv.gz --summary "$out/legs.sheaf" \
    --carry reading_id -o "$out/legs-reduced.csv.gz"
ls -l "$out/legs-reduced.csv.gz" | awk '{printf "   %s: %.1f MB\n", $9, $5 / 1e6}'
{ zcat "$out/legs-reduced.csv.gz" || true; } 2>/dev/null | head -n 3 | sed 's/^/   /'

echo
echo "== sheaf pca: principal components of the kept numeric columns"
./sheaf pca "$out/legs.sheaf" --columns-from "$out/keep.txt"

echo
echo "== sheaf project: the first component scores (another streaming pass)"
/usr/bin/time -f "   %e s" ./sheaf project "$out"/legs-0*.csv.gz --summary "$out/legs.sheaf" \
    --columns-from "$out/keep.txt" -k 3 --carry reading_id,arrival_condition -o "$out/legs-scores.csv.gz"
{ zcat "$out/legs-scores.csv.gz" || true; } 2>/dev/null | head -n 4 | sed 's/^/   /'
echo
echo "Everything above came from one read of each shard plus the two output passes;"
echo "see README.md for the cautions that apply to the p-values."

echo
echo "== sheaf page: one HTML page of charts about the night (opens in any browser, offline)"
./sheaf page "$out/legs.sheaf" -o "$out/night.html" --write-svg "$out/charts"
echo "   $(realpath "$out/night.html")"
./sheaf page "$out/legs-night2.sheaf" --base "$out/legs.sheaf" -o "$out/night2.html"
echo "   $(realpath "$out/night2.html") (the next night, with what drifted since this one)"
