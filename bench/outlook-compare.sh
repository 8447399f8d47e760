#!/usr/bin/env bash
# Side by side: `runcal outlook` and bench/outlook_reference.py (numpy, vectorised over simulated
# seasons) on the same league: 30 clubs, one simulated 162-game season cut on 2026-06-21 (1,230
# games played, 1,200 left), 10,000 simulated seasons. Whole processes, medians of REPS runs for
# runcal (default 5) and one run for Python; prints the ratio and how far the two answers agree.
# Uses the venv of bench/compare.sh (target/bench-venv, bench/requirements.txt).
#
# Usage: bash bench/outlook-compare.sh
set -euo pipefail
cd "$(dirname "${BASH_SOURCE[0]}")/.."
REPS=${REPS:-5}
OUT=target/bench-data
VENV=target/bench-venv
mkdir -p "$OUT"
cargo build --release --quiet --bin runcal
RUNCAL=${RUNCAL:-target/release/runcal}
if [ ! -x "$VENV/bin/python" ]; then
    python3 -m venv "$VENV"
    "$VENV/bin/pip" install --quiet --disable-pip-version-check -r bench/requirements.txt
fi
PY="$VENV/bin/python"
GAMES=$OUT/outlook30.csv
"$RUNCAL" simulate --teams 30 --seasons 1 --games 162 --first-season 2026 --game-log --seed 3 \
    --out "$GAMES" -q
ARGS=(outlook "$GAMES" --as-of 2026-06-21 --exponent 1.83 --regress-games 55 --format json -q)
times=()
for ((i = 0; i < REPS; i++)); do
    t0=$EPOCHREALTIME
    "$RUNCAL" "${ARGS[@]}" >"$OUT/outlook_runcal.json"
    t1=$EPOCHREALTIME
    times+=("$(awk -v a="$t0" -v b="$t1" 'BEGIN { printf "%.6f", b - a }')")
done
RC=$(printf '%s\n' "${times[@]}" | sort -g | awk '{ v[NR] = $1 } END { print v[int((NR + 1) / 2)] }')
t0=$EPOCHREALTIME
"$PY" bench/outlook_reference.py "$GAMES" 2026-06-21 1.83 55 10000 1 >"$OUT/outlook_python.json"
t1=$EPOCHREALTIME
PYS=$(awk -v a="$t0" -v b="$t1" 'BEGIN { printf "%.6f", b - a }')
"$PY" - "$OUT" "$RC" "$PYS" <<'EOF2'
import json, sys
out, rc, py = sys.argv[1], float(sys.argv[2]), float(sys.argv[3])
r = json.load(open(f"{out}/outlook_runcal.json"))
p = json.load(open(f"{out}/outlook_python.json"))
assert r["games_left"] == p["games_left"], (r["games_left"], p["games_left"])
clubs = {c["team"]: c for c in r["clubs"]}
dm = max(abs(clubs[t]["mean_final_wins"] - m) for t, m in zip(p["teams"], p["mean_final_wins"]))
dc = max(abs(clubs[t]["chance_first"] - c) for t, c in zip(p["teams"], p["chance_first"]))
print(f"outlook, 30 clubs, {r['games_left']} games left, 10,000 seasons: runcal {rc:.3f} s, "
      f"numpy {py:.2f} s, ratio {py / rc:.1f}x (target >= 20x)")
print(f"agreement (different random streams): mean final wins within {dm:.2f}, "
      f"first-place chances within {dc:.3f}")
EOF2
