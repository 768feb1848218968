#!/usr/bin/env bash
# The README's tour on the demo corpus (the invented Brindlewick Ferries help
# desk, testdata/demo/): summary, training, evaluation, an explanation, the cue
# audit with retraining and marks, the equal-rates variant (testdata/demo-equal/),
# and the report; then the window when there is a display.
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
step "Why does a message get its label? (exact shares of its log-odds against the runner-up)" \
  "$tt" explain --model "$out/ferry.tt" --text "The deckhand was not friendly at all and my refund never came."
step "Audit for cues that look like how the data was collected, and retrain without those it acts on" \
  "$tt" audit --model "$out/ferry.tt" --data testdata/demo/train.csv --test testdata/demo/test.csv \
  --export "$out/cues.csv" --retrain --retrain-out "$out/ferry-without.tt" --confirming-out "$out/confirming.csv"
step "Keep the verdicts with the model (the marks file beside it; every later audit and the report honour it)" \
  "$tt" audit --model "$out/ferry.tt" --mark-artifact '- - sent via kioskmail at the quayside terminal - -' --mark-artifact 'tkref - <number>'
step "The model and the one retrained without the cues, side by side on the confirming half (texts that took no part in choosing the cues)" \
  "$tt" compare --models "$out/ferry.tt,$out/ferry-without.tt" --test "$out/confirming.csv"
step "The same cues at the training rates in the test split too (no shift): the audit finds them all the same" \
  "$tt" train --data testdata/demo-equal/train.csv --test testdata/demo-equal/test.csv --out "$out/ferry-equal.tt" --epochs 8 --quiet
"$tt" audit --model "$out/ferry-equal.tt" --data testdata/demo-equal/train.csv --test testdata/demo-equal/test.csv
step "A shareable report" \
  "$tt" report --model "$out/ferry.tt" --data testdata/demo/train.csv --test testdata/demo/test.csv --out "$out/report.html"

if [ -n "${DISPLAY:-}" ] || [ -n "${WAYLAND_DISPLAY:-}" ]; then
  step "The window, on the demo corpus" "$tt" gui --model "$out/ferry.tt"
else
  printf '\nNo display here, so the window is not opened. On a desktop, run:\n  %s gui --model %s\n' "$tt" "$out/ferry.tt"
  printf 'The report is at %s (open it in any browser).\n' "$out/report.html"
fi
