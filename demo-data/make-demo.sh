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
# The 2026 season as an analyst has it on 15 July: the games played so far, the league's full
# schedule (date, home, away) and its two divisions, for `runcal outlook`.
awk -F, 'NR == 1 || $3 <= "2026-07-15"' demo-data/meridian-2026-games.csv \
  > demo-data/meridian-2026-to-date.csv
awk -F, 'BEGIN { OFS = "," } { print $3, $4, $5 }' demo-data/meridian-2026-games.csv \
  > demo-data/meridian-2026-schedule.csv
{
  echo "team,division"
  for club in "Ashford Kestrels" "Bramblebay Otters" "Cobalt Creek Miners" "Dunmore Lanterns" \
    "Eastwick Ferrymen" "Fallowfield Foxes" "Greystone Gulls"; do echo "$club,Upland"; done
  for club in "Harrowgate Hornets" "Ironvale Rams" "Juniper Falls Pilots" "Kestrel Point Tides" \
    "Larkspur Lumberjacks" "Millbrook Comets" "Northmoor Stags"; do echo "$club,Tidewater"; done
} > demo-data/meridian-divisions.csv
