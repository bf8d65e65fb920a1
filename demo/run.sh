#!/usr/bin/env bash
# The demo: a night of refrigerated-container leg reports (see demo/README.md),
# generated deterministically, scanned once into a summary, then described.
set -euo pipefail
cd "$(dirname "$0")/.."
out=demo/out
mkdir -p "$out"
rows=${DEMO_ROWS:-3060000}
data=$out/legs.csv.gz
if [ ! -s "$data" ] || [ "$(cat "$out/.rows" 2>/dev/null)" != "$rows" ]; then
    echo "== generating $rows rows of gzip CSV into $data"
    /usr/bin/time -f "   %e s" build/demo/generate --rows "$rows" --seed 7 -o "$data"
    echo "$rows" >"$out/.rows"
fi
ls -l "$data" | awk '{printf "   %s: %.1f MB\n", $9, $5 / 1e6}'

echo "== sheaf scan (one pass, bounded memory)"
/usr/bin/time -f "   %e s, peak memory %M KB" ./sheaf scan "$data" -o "$out/legs.sheaf" --quiet
echo
echo "== sheaf info"
./sheaf info "$out/legs.sheaf"
