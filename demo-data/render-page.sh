#!/usr/bin/env bash
# Renders the demo league's weekly document and photographs the top of the page at a phone's width
# with headless Chromium: demo-data/meridian-week-top.png, the picture in the README's tour.
# Run from anywhere: bash demo-data/render-page.sh  (needs Debian's chromium: apt-get install -y chromium)
set -euo pipefail
cd "$(dirname "$0")/.."

chromium_bin=${RUNCAL_CHROMIUM:-$(command -v chromium || command -v chromium-browser || true)}
if [ -z "$chromium_bin" ]; then
  echo "render-page.sh: no chromium found (apt-get install -y chromium, or set RUNCAL_CHROMIUM)" >&2
  exit 2
fi

cargo build --release --quiet
mkdir -p target/render-page
page="$PWD/target/render-page/meridian-week.html"
./target/release/runcal digest demo-data/meridian-2026-games.csv \
  --profile demo-data/meridian-profile.json --as-of 2026-07-15 \
  --groups demo-data/meridian-divisions.csv --output "$page"

# No network for the browser when this shell may make a namespace; a dead proxy otherwise.
run=()
if unshare -n true 2>/dev/null; then run=(unshare -n); fi
"${run[@]}" "$chromium_bin" --headless --no-sandbox --disable-gpu --hide-scrollbars \
  --disable-background-networking --disable-component-update --no-first-run \
  --proxy-server=127.0.0.1:9 --user-data-dir="$PWD/target/render-page/profile" \
  --window-size=390,1000 --force-device-scale-factor=2 \
  --screenshot="$PWD/demo-data/meridian-week-top.png" "file://$page" 2>/dev/null
echo "wrote demo-data/meridian-week-top.png from $page"
