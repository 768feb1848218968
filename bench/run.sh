#!/usr/bin/env bash
# The side-by-side benchmark of `make bench`: telltale's training and
# inference against the PyTorch reference (bench/reference.py) of the same
# recipe, on the same machine, thread count and encoded data; then the
# explanation work of the tool alone. Usage: bench/run.sh [bin/telltale]
#
# Environment: THREADS (default: all cores), BENCH_QUICK=1 (a smoke run of a
# few minutes: the 10k synthetic corpus and SpamAssassin once each),
# REPS (repetitions of the small corpora, default 3), BENCH_OUT (bench/out).
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
  if [ -f "$dir/ids.bin" ] && { [[ " $* " != *" -texts "* ]] || [ -f "$dir/data.jsonl" ]; }; then return 0; fi
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
# cli DIR EPOCHS: `telltale train` end to end from the labeled text (its
# tokenizing included; it holds out 10% as dev and evaluates it each epoch).
cli() {
  local d="$OUT/$1" e=$2
  [ -x "$BIN" ] && [ -f "$d/data.jsonl" ] || return 0
  log "cli $1 ($e epochs)"
  local t
  t=$( { /usr/bin/time -f '%e %M' "$BIN" train --data "$d/data.jsonl" --out "$d/cli.tt" --epochs "$e" \
        --patience 0 --seed 1 --threads "$THREADS" --quiet --json >/dev/null; } 2>&1 | tail -1)
  local corpus
  corpus=$(sed -n 's/.*"corpus": "\(.*\)".*/\1/p' "$d/meta.json")
  echo "{\"impl\":\"ours-cli\",\"corpus\":\"$corpus\",\"threads\":$THREADS,\"epochs\":$e,\"e2e_seconds\":${t% *},\"peak_rss_mb\":$(( ${t#* } / 1024 )),\"loadavg\":\"$(cut -d' ' -f1-3 /proc/loadavg)\"}" >>"$RES"
}

log "threads $THREADS, results $RES"
prepare synth-10000 -corpus synth -n 10000 -texts
prepare spam -corpus spam -root testdata/spamassassin -texts
if [ "${BENCH_QUICK:-}" = 1 ]; then
  ours synth-10000 2; ref synth-10000 2
  ours spam 2; ref spam 2
  $B tools -synth "$OUT/synth-10000" -spam "$OUT/spam" -threads "$THREADS" -json "$RES" >/dev/null
else
  prepare synth-100000 -corpus synth -n 100000
  prepare synth-1000000 -corpus synth -n 1000000
  for _ in $(seq "$REPS"); do
    ours synth-10000 3; ref synth-10000 3
    ours spam 3; ref spam 3
  done
  cli synth-10000 3; cli spam 3
  # On the large corpora the reference runs for throughput and memory only:
  # two epochs over a seeded subset of 20k texts (the whole corpus loaded,
  # the same vocabulary and embedding table), so no end-to-end ratio there.
  ours synth-100000 2; ref synth-100000 2 --epoch-texts 20000
  ours synth-1000000 2; ref synth-1000000 2 --epoch-texts 20000
  log "tools"
  $B tools -synth "$OUT/synth-1000000" -spam "$OUT/spam" -threads "$THREADS" -json "$RES" >/dev/null
fi
{
  echo "Run $stamp on $(lscpu | sed -n 's/^Model name: *//p'), $(nproc) cores, threads $THREADS, kernels $GOEXPERIMENT"
  echo
  $B table "$RES"
} | tee "$TAB"
