#!/usr/bin/env bash
# The side-by-side benchmark of `make bench`: first the command line end to
# end (telltale's commands as a user runs them, each a process of its own
# on files, against the PyTorch reference where one exists); then
# telltale's training and inference through the Go API against the
# reference (bench/reference.py) of the same recipe, on the same machine,
# thread count and encoded data; then the explanation work of the tool
# alone. Usage: bench/run.sh [bin/telltale]
#
# Environment: THREADS (default: all cores), BENCH_QUICK=1 (a smoke run of a
# few minutes: the 10k synthetic corpus and SpamAssassin once each),
# BENCH_PART=cli or api (only that part; default both), REPS (repetitions,
# default 3), BENCH_OUT (bench/out).
# The results go to $BENCH_OUT/results-<time>.jsonl and the table to
# $BENCH_OUT/table-<time>.md; bench/RESULTS.md quotes a run.
set -euo pipefail
cd "$(dirname "$0")/.."
BIN=${1:-bin/telltale}
THREADS=${THREADS:-$(nproc)}
OUT=${BENCH_OUT:-bench/out}
REPS=${REPS:-3}
PY=/usr/bin/python3
scripts/ensure-debian-packages.sh python3 python3-torch python3-numpy
mkdir -p "$OUT"
stamp=$(date -u +%Y%m%dT%H%M%SZ)
RES="$OUT/results-$stamp.jsonl"
TAB="$OUT/table-$stamp.md"
export GOEXPERIMENT=${GOEXPERIMENT-simd}
go build -o bin/telltale-bench ./bench
B=bin/telltale-bench

log() { echo "[bench $(date +%H:%M:%S) load $(cut -d' ' -f1-3 /proc/loadavg)] $*" >&2; }

prepare() { # name args…
  local dir="$OUT/$1"; shift
  if [ -f "$dir/ids.bin" ] && { [[ " $* " != *" -texts "* ]] || [ -f "$dir/data.jsonl" ]; } &&
    { [[ " $* " != *" -lines "* ]] || [ -f "$dir/lines.txt" ]; }; then return 0; fi
  log "prepare $dir"; $B prepare -out "$dir" "$@"
}

# ours DIR EPOCHS: one run of our training (through the Go API).
ours() { log "ours $1 ($2 epochs)"; $B train -dir "$OUT/$1" -epochs "$2" -threads "$THREADS" -json "$RES" >/dev/null; }
# ref DIR EPOCHS [extra]: one run of the reference.
ref() {
  local d=$1 e=$2; shift 2
  log "reference $d ($e epochs $*)"
  $PY bench/reference.py --dir "$OUT/$d" --epochs "$e" --threads "$THREADS" --json "$RES" "$@" >/dev/null
}
# clirun CASE TEXTS [bench cli options] -- COMMAND…: one timed run of a
# command line as a user runs it (see bench/cli.go).
clirun() {
  local c=$1 n=$2; shift 2
  log "cli: $c ($n texts)"
  $B cli -case "$c" -texts "$n" -json "$RES" "$@" >/dev/null
}
# forward CASE DIR N: the reference's eval-mode forward alone on the first N
# texts of DIR's ids.
forward() {
  log "reference forward: $1"
  $PY bench/reference.py --dir "$OUT/$2" --infer-only --infer-max "$3" --case "$1" --threads "$THREADS" --json "$RES" >/dev/null
}
lines() { wc -l <"$1" | tr -d ' '; }

# The command line end to end. Inputs: SpamAssassin (subject and body,
# ham/spam) whole as labeled JSON lines, and its 80% split one mail per line;
# the synthetic corpus as labeled JSON lines and one text per line. Models:
# trained by `telltale train` (the SpamAssassin one by the measured train
# runs; the synthetic one once, unmeasured: words are shared across the
# synthetic corpora, so it reads the larger ones too).
cli_part() {
  local reps=$REPS epochs=5 synth=synth-1000000 predict_n=20000
  if [ "${BENCH_QUICK:-}" = 1 ]; then reps=1 epochs=1 synth=synth-10000 predict_n=10000; fi
  prepare spam -corpus spam -root testdata/spamassassin -texts -lines
  prepare spam-all -corpus spam -whole -root testdata/spamassassin -texts
  prepare "$synth" -corpus synth -n "${synth#synth-}" -texts -lines
  [ "$synth" = synth-10000 ] || prepare synth-10000 -corpus synth -n 10000 -texts
  local sa="$OUT/spam-all" s1="$OUT/synth-10000" sx="$OUT/$synth"
  local n_all n_spam n_synth
  n_all=$(lines "$sa/data.jsonl"); n_spam=$(lines "$OUT/spam/lines.txt"); n_synth=$(lines "$sx/lines.txt")
  if [ ! -f "$s1/cli.tt" ]; then
    log "train the synthetic model (unmeasured)"
    "$BIN" train --data "$s1/data.jsonl" --out "$s1/cli.tt" --epochs 2 --patience 0 --seed 1 --threads "$THREADS" --quiet
  fi
  head -n "$predict_n" "$sx/lines.txt" >"$sx/lines-$predict_n.txt"
  # With and without the linear baseline (the reference has none), so the
  # table shows what the baseline costs.
  for _ in $(seq "$reps"); do
    clirun "train SpamAssassin, epochs: $epochs" "$n_all" -stdout-json -- "$BIN" train --data "$sa/data.jsonl" \
      --out "$sa/cli.tt" --epochs "$epochs" --patience 0 --seed 1 --threads "$THREADS" --quiet --json
    clirun "train SpamAssassin, epochs: $epochs, --baseline=false" "$n_all" -stdout-json -- "$BIN" train --data "$sa/data.jsonl" \
      --out "$sa/cli-no-baseline.tt" --epochs "$epochs" --patience 0 --seed 1 --threads "$THREADS" --quiet --json --baseline=false
    clirun "train SpamAssassin, epochs: $epochs" "$n_all" -impl torch-text -stdout-json -- $PY bench/reference.py \
      --text "$sa/data.jsonl" --out "$sa/reference.pt" --epochs "$epochs" --threads "$THREADS"
  done
  # 1,000 texts: against one text, model load and start-up (0.2–0.6 s, and
  # varying by tens of ms) must drop out of a cost of about a millisecond.
  [ -f "$sa/explain-200x1000.txt" ] || $B explain-input -model "$sa/cli.tt" -data "$sa/data.jsonl" -tokens 200 -n 1000 -out "$sa/explain-200x1000.txt"
  head -n 1 "$sa/explain-200x1000.txt" >"$sa/explain-200-1.txt"
  for _ in $(seq "$reps"); do
    clirun "predict --json SpamAssassin" "$n_spam" -stdin "$OUT/spam/lines.txt" -out-lines "$n_spam" -- \
      "$BIN" predict --model "$sa/cli.tt" --json
    forward "predict --json SpamAssassin" spam "$n_spam"
    clirun "predict --json synthetic" "$predict_n" -stdin "$sx/lines-$predict_n.txt" -out-lines "$predict_n" -- \
      "$BIN" predict --model "$s1/cli.tt" --json
    forward "predict --json synthetic" "$synth" "$predict_n"
    if [ "$n_synth" != "$predict_n" ]; then
      clirun "predict --json synthetic, $n_synth lines" "$n_synth" -stdin "$sx/lines.txt" -out-lines "$n_synth" -- \
        "$BIN" predict --model "$s1/cli.tt" --json
    fi
    clirun "filters synthetic" "$n_synth" -- "$BIN" filters --model "$s1/cli.tt" --data "$sx/data.jsonl" --json --quiet --threads "$THREADS"
    clirun "explain SpamAssassin, 200-token texts" 1 -stdin "$sa/explain-200-1.txt" -- "$BIN" explain --model "$sa/cli.tt" --color never
    clirun "explain SpamAssassin, 200-token texts" 1000 -stdin "$sa/explain-200x1000.txt" -- "$BIN" explain --model "$sa/cli.tt" --color never
    clirun "audit SpamAssassin" "$n_all" -- "$BIN" audit --model "$sa/cli.tt" --data "$sa/data.jsonl" --json --quiet --threads "$THREADS"
    if [ "${BENCH_QUICK:-}" != 1 ]; then
      # 100k texts: the synthetic model on another corpus, 20% held out.
      clirun "audit synthetic" 100000 -- "$BIN" audit --model "$s1/cli.tt" --data "$OUT/synth-100000/data.jsonl" --json --quiet --threads "$THREADS"
    fi
  done
}

# Training and inference through the Go API on the shared ids, then the
# tools alone.
api_part() {
  prepare synth-10000 -corpus synth -n 10000 -texts
  prepare spam -corpus spam -root testdata/spamassassin -texts
  if [ "${BENCH_QUICK:-}" = 1 ]; then
    ours synth-10000 2; ref synth-10000 2
    ours spam 2; ref spam 2
    $B tools -synth "$OUT/synth-10000" -spam "$OUT/spam" -threads "$THREADS" -json "$RES" >/dev/null
    return
  fi
  prepare synth-100000 -corpus synth -n 100000
  prepare synth-1000000 -corpus synth -n 1000000
  for _ in $(seq "$REPS"); do
    ours synth-10000 3; ref synth-10000 3
    ours spam 3; ref spam 3
  done
  # On the large corpora the reference runs for throughput and memory only:
  # two epochs over a seeded subset of 20k texts (the whole corpus loaded,
  # the same vocabulary and embedding table), so no end-to-end ratio there.
  ours synth-100000 2; ref synth-100000 2 --epoch-texts 20000
  ours synth-1000000 2; ref synth-1000000 2 --epoch-texts 20000
  log "tools"
  $B tools -synth "$OUT/synth-1000000" -spam "$OUT/spam" -threads "$THREADS" -json "$RES" >/dev/null
}

log "threads $THREADS, results $RES"
[ -x "$BIN" ] || { echo "bench/run.sh: $BIN missing: run make build first" >&2; exit 1; }
if [ "${BENCH_QUICK:-}" != 1 ] && [ "${BENCH_PART:-}" != api ]; then
  prepare synth-100000 -corpus synth -n 100000 -texts
fi
case "${BENCH_PART:-}" in
  cli) cli_part ;;
  api) api_part ;;
  "") cli_part; api_part ;;
  *) echo "bench/run.sh: BENCH_PART=$BENCH_PART: use cli or api (or leave it unset for both)" >&2; exit 2 ;;
esac
{
  echo "Run $stamp on $(lscpu | sed -n 's/^Model name: *//p'), $(nproc) cores, threads $THREADS, kernels $GOEXPERIMENT"
  echo
  $B table "$RES"
} | tee "$TAB"
