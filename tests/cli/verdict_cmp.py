#!/usr/bin/python3
"""Compare two `screen --format json` documents verdict by verdict (tests/cli/test_screen_verdicts.sh).

usage: verdict_cmp.py ONE.json MERGED.json
Prints one line per feature whose flags, decision or rank differ, or whose
q differs by more than 1e-9 relative; nothing when they agree.
"""
import json, sys
a, b = (json.load(open(p)) for p in sys.argv[1:3])
fb = {f['name']: f for f in b['features']}
out = []
for f in a['features']:
    g = fb.get(f['name'])
    if g is None: out.append(f"{f['name']}: missing"); continue
    for k in ('flags', 'decision', 'rank'):
        if f[k] != g[k]: out.append(f"{f['name']}: {k} {f[k]} (one scan) vs {g[k]} (merged)")
    qa, qb = f['q'], g['q']
    if (qa is None) != (qb is None) or (qa is not None and abs(qa - qb) > 1e-9 * max(abs(qa), 1e-300)):
        out.append(f"{f['name']}: q {qa} vs {qb}")
print("\n".join(out))
