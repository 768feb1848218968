#!/usr/bin/env bash
# Saves docs/screenshots/report.png (the top of the page) and
# docs/screenshots/report-audit.png (its cue audit): the HTML report of the demo model,
# rendered by headless Chromium through the report package's browser test
# (which also checks that the page loads with no console error and no
# network request). Trains the demo model first unless DEMO_MODEL names one.
set -euo pipefail
cd "$(dirname "$0")/.."
GO=${GO:-go}
out="$PWD/docs/screenshots/report.png"
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
model=${DEMO_MODEL:-}
if [ -z "$model" ]; then
  echo "report-screenshot: training the demo model (about half a minute)"
  "$GO" build -tags ci -o "$tmp/telltale" .
  "$tmp/telltale" train --data testdata/demo/train.csv --out "$tmp/demo.model" >"$tmp/train.log" 2>&1 ||
    { cat "$tmp/train.log"; exit 1; }
  model="$tmp/demo.model"
fi
mkdir -p "$(dirname "$out")"
TELLTALE_REPORT_MODEL="$(realpath "$model")" TELLTALE_REPORT_PNG="$out" \
  "$GO" test -tags ci -count=1 -run '^TestChromiumLoadsReport$' ./report
echo "report-screenshot: wrote $out"
