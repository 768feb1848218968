#!/usr/bin/env bash
# fuzz.sh — run every fuzz target of the module (scripts/fuzz-targets.sh)
# for a fixed number of executions each. Used by `make fuzz`.
#
# Usage: scripts/fuzz.sh FUZZTIME (e.g. 4000x). Each package's test binary
# is built once, instrumented for fuzzing as `go test -fuzz` builds it
# (go test -c -fuzz), and run once per target of the package, in the
# package's folder (its testdata/fuzz seeds) with the fuzz cache `go test`
# uses ($GOCACHE/fuzz/IMPORT-PATH), so a run is `go test -run '^$' -fuzz
# '^FuzzX$' -fuzztime FUZZTIME PKG` without a build per target. GO names
# the go command (default go); GOFLAGS and GOEXPERIMENT pass through.
set -euo pipefail
cd "$(dirname "$0")/.."

fuzztime=${1:?usage: scripts/fuzz.sh FUZZTIME (e.g. 4000x)}
go=${GO:-go}
module=$("$go" list -m)
cache=$("$go" env GOCACHE)
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT

targets=$(scripts/fuzz-targets.sh)
[ -n "$targets" ] || { echo "fuzz: scripts/fuzz-targets.sh found no fuzz target" >&2; exit 1; }

for t in $targets; do
	pkg=${t%%:*} fn=${t##*:}
	bin="$tmp/$(printf '%s' "$pkg" | tr -c 'A-Za-z0-9' '_').test"
	if [ ! -x "$bin" ]; then
		echo "fuzz: build $pkg"
		"$go" test -tags ci -c -fuzz . -o "$bin" "$pkg" >"$tmp/log" 2>&1 || { cat "$tmp/log"; exit 1; }
		[ -x "$bin" ] || { echo "fuzz: go test -c built no test binary for $pkg" >&2; exit 1; }
	fi
	rel=${pkg#./}
	path=$module
	[ "$rel" = . ] || path=$module/$rel
	echo "fuzz $pkg $fn ($fuzztime)"
	(cd "$pkg" && "$bin" -test.run '^$' -test.fuzz "^$fn\$" -test.fuzztime "$fuzztime" \
		-test.fuzzcachedir "$cache/fuzz/$path" -test.paniconexit0 -test.timeout 10m) >"$tmp/log" 2>&1 ||
		{ cat "$tmp/log"; echo "fuzz: $pkg $fn failed (rerun: go test -run '^\$' -fuzz '^$fn\$' -fuzztime $fuzztime $pkg)" >&2; exit 1; }
done
