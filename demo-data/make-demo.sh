#!/usr/bin/env bash
# Regenerates the demo files of the fictional Meridian League from fixed seeds (byte-identical on
# every run). Run from the repository root:  bash demo-data/make-demo.sh
set -euo pipefail
cd "$(dirname "$0")/.."
runcal() { cargo run --release --quiet -- "$@"; }

# 25 past seasons of 14 clubs, 140 games each; scores are Weibull draws of shape 1.83.
runcal simulate --teams 14 --seasons 25 --games 140 --exponent 1.83 --seed 2026 \
  --first-season 2001 --out demo-data/meridian-league.csv
# The 2026 season, game by game (the weekly report cuts it with --as-of).
runcal simulate --teams 14 --seasons 1 --games 140 --exponent 1.83 --seed 2027 \
  --first-season 2026 --game-log --out demo-data/meridian-2026-games.csv
# The league's saved calibration, with a fixed creation time so the file is reproducible.
SOURCE_DATE_EPOCH=1796083200 runcal fit demo-data/meridian-league.csv \
  --save-profile demo-data/meridian-profile.json --quiet > /dev/null
