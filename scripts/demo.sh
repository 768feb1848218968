#!/usr/bin/env bash
# The README's tour on the demo corpus (the invented Brindlewick Ferries help
# desk, testdata/demo/): summary, training, evaluation, an explanation, the
# filters, the cue audit and the report; then the window when there is a display.
set -euo pipefail
tt=${1:-bin/telltale}
cd "$(dirname "$0")/.."
out=bin/demo
mkdir -p "$out"
step() { printf '\n\033[1m== %s\033[0m\n$ %s\n' "$1" "${*:2}"; "${@:2}"; }

step "The data: five help-desk teams, two planted cues in the training file" \
  "$tt" data --data testdata/demo/train.csv --test testdata/demo/test.csv
step "Train the sentence CNN (the best epoch by dev macro-F1 is kept, then scored on the test file)" \
  "$tt" train --data testdata/demo/train.csv --test testdata/demo/test.csv --out "$out/ferry.tt" --epochs 8
step "Evaluate on the test file, where the cues are spread evenly" \
  "$tt" eval --model "$out/ferry.tt" --test testdata/demo/test.csv
step "Why does a message get its label? (exact shares of the predicted logit)" \
  "$tt" explain --model "$out/ferry.tt" --text "The deckhand was not friendly at all and my refund never came."
step "Audit the filters for spurious cues (and save a copy with the suggested filters masked)" \
  "$tt" audit --model "$out/ferry.tt" --data testdata/demo/train.csv --test testdata/demo/test.csv --top 5 \
  --export "$out/suspects.csv" --masked-out "$out/ferry-masked.tt"
step "Retrain with the two cues taken out of the training text, and compare the three models" \
  "$tt" train --data testdata/demo/train.csv --test testdata/demo/test.csv --out "$out/ferry-clean.tt" --epochs 8 --mask-tokens testdata/demo/cues.txt --quiet
"$tt" compare --models "$out/ferry.tt,$out/ferry-masked.tt,$out/ferry-clean.tt" --test testdata/demo/test.csv
step "A shareable report" \
  "$tt" report --model "$out/ferry.tt" --data testdata/demo/train.csv --test testdata/demo/test.csv --out "$out/report.html"

if [ -n "${DISPLAY:-}" ] || [ -n "${WAYLAND_DISPLAY:-}" ]; then
  step "The window, on the demo corpus" "$tt" gui --model "$out/ferry.tt"
else
  printf '\nNo display here, so the window is not opened. On a desktop, run:\n  %s gui --model %s\n' "$tt" "$out/ferry.tt"
  printf 'The report is at %s (open it in any browser).\n' "$out/report.html"
fi
