#!/usr/bin/env bash
# sheaf page in a real browser: headless Chromium (Debian's chromium, installed
# by make deps) opens the page of a small demo night (build/demo/generate,
# 20,000 rows, target arrival_condition), of iris (target species) and of
# penguins with two columns renamed to hostile names (on a fresh clone
# without ../shared/data: Debian scikit-learn's iris and wine), once with JavaScript on
# and once off, through the DevTools protocol (tests/cli/report_browser.py,
# Python's standard library only).  Checks: no console error, no dialog, no
# network request but the file itself, a full-page screenshot of the layout's
# size that is not blank, the heat map's cell count (the non-constant numeric
# columns of `sheaf corr --format json` squared), its labels (the same
# columns) without overlapping boxes, the hostile names as text nodes, one
# script element, and (JavaScript on) the table sorting on a click.
cd "$(dirname "$0")/../.."
. tests/cli/common.sh
cli_setup report-browser python || exit 0
CHROMIUM=$(command -v chromium || true)
if [ -z "$CHROMIUM" ]; then skip all "chromium not installed (make deps installs Debian's chromium)"; exit 0; fi
DATA=${SHEAF_DATA:-../shared/data}/open
# The open datasets: iris and penguins from the project's data folder, or,
# where it is absent (a fresh clone), iris and wine as Debian's scikit-learn
# ships them (python3-sklearn, in make deps), given a header row here.
SK=/usr/lib/python3/dist-packages/sklearn/datasets/data
sk_table() { # FILE.csv NAMES... : sklearn's layout (a count line, then rows ending in a class code)
    local src=$1
    shift
    "$PY" - "$src" "$@" <<'PYEOF'
import csv, sys
src, names = sys.argv[1], sys.argv[2:]
rows = list(csv.reader(open(src)))
classes = rows[0][2:]
w = csv.writer(sys.stdout, lineterminator="\n")
w.writerow(names)
for r in rows[1:]:
    w.writerow(r[:-1] + [classes[int(r[-1])]])
PYEOF
}

# open PAGE_TAG SUMMARY [--hostile TEXT]...: the page and its browser checks
open_page() {
    local tag=$1 sum=$2
    shift 2
    run "$SHEAF" page "$sum" -o "$T/$tag.html"
    if [ "$RC" != 0 ]; then fail "$tag.page" "exit $RC: $(err_text)"; return; fi
    "$SHEAF" info "$sum" --format json >"$T/$tag.info.json"
    "$SHEAF" corr "$sum" --format json >"$T/$tag.corr.json"
    # the heat map's columns: corr's, less the constant ones (sd 0), cut as the page cuts them
    "$PY" - "$T/$tag.info.json" "$T/$tag.corr.json" >"$T/$tag.labels" <<'PY'
import json, sys
info, corr = (json.load(open(f)) for f in sys.argv[1:3])
sd = {c["name"]: c.get("sd") for c in info["columns"]}
for name in corr["columns"]:
    if sd[name] and sd[name] > 0:
        print(name if len(name) <= 28 else name[:28] + "\u2026")
PY
    local n
    n=$(grep -c . "$T/$tag.labels")
    timeout 120 "$PY" tests/cli/report_browser.py "$CHROMIUM" "$T/$tag.html" "$tag" \
        --cells $((n * n)) --labels "$T/$tag.labels" "$@" ||
        fail "$tag.browser" "the helper exited $?"
}

if [ -x build/demo/generate ]; then
    build/demo/generate --rows 20000 --seed 7 --shards 1 --prefix "$T/legs" >/dev/null 2>&1
    "$SHEAF" scan "$T/legs-01.csv.gz" --target arrival_condition -o "$T/night.sheaf" -q
    open_page demo "$T/night.sheaf"
else
    skip demo "build/demo/generate not built (make build/demo/generate)"
fi
if [ -f "$DATA/iris.csv" ] && [ -f "$DATA/penguins.csv" ]; then
    "$SHEAF" scan "$DATA/iris.csv" --target species -o "$T/iris.sheaf" -q
    open_page iris "$T/iris.sheaf"
    {
        printf '%s\n' 'species,island,<script>alert(1)</script>,"""&<>",flipper_length_mm,body_mass_g,sex'
        tail -n +2 "$DATA/penguins.csv"
    } >"$T/penguins.csv"
    "$SHEAF" scan "$T/penguins.csv" --target species -o "$T/penguins.sheaf" -q
    open_page penguins_hostile "$T/penguins.sheaf" --hostile '<script>alert(1)</script>' --hostile '"&<>'
elif [ -f "$SK/iris.csv" ] && [ -f "$SK/wine_data.csv" ]; then
    sk_table "$SK/iris.csv" sepal_length sepal_width petal_length petal_width species >"$T/iris.csv"
    "$SHEAF" scan "$T/iris.csv" --target species -o "$T/iris.sheaf" -q
    open_page iris "$T/iris.sheaf"
    sk_table "$SK/wine_data.csv" alcohol malic_acid '<script>alert(1)</script>' '"&<>' magnesium \
        phenols flavanoids nonflavanoid_phenols proanthocyanins colour hue od280_od315 proline \
        cultivar >"$T/wine.csv"
    "$SHEAF" scan "$T/wine.csv" --target cultivar -o "$T/wine.sheaf" -q
    open_page wine_hostile "$T/wine.sheaf" --hostile '<script>alert(1)</script>' --hostile '"&<>'
else
    skip open "neither $DATA nor $SK holds the open datasets (make deps installs python3-sklearn)"
fi
