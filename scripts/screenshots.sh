#!/usr/bin/env bash
# screenshots.sh — launch the real telltale window under Xvfb (Mesa's
# software GL) on the built-in demo corpus and save a PNG of each main view
# to docs/screenshots/. Used by `make screenshots`.
#
# Needs: Debian's xvfb, imagemagick (import, convert) and x11-utils
# (xwininfo), and the window build packages (gcc, libgl1-mesa-dev, libx11-dev…).
# TELLTALE_BIN names a prebuilt binary; otherwise one is built here with cgo.
# The binary must support: telltale gui --demo-train --view NAME
# --quit-after DURATION, and print "window ready" on stderr once the
# start-up work (training, profiling, the cue audit) is done.
set -euo pipefail

cd "$(dirname "$0")/.."
out=${OUT:-docs/screenshots}
mkdir -p "$out"
tmp=$(mktemp -d)
xpid=""
cleanup() {
	if [ -n "$xpid" ]; then kill "$xpid" 2>/dev/null || true; fi
	rm -rf "$tmp"
}
trap cleanup EXIT

for tool in Xvfb import xwininfo convert; do
	command -v "$tool" >/dev/null || { echo "screenshots: $tool is missing: apt-get install xvfb imagemagick x11-utils" >&2; exit 1; }
done

bin=${TELLTALE_BIN:-}
if [ -z "$bin" ]; then
	echo "screenshots: building the window binary (cgo; the first build takes minutes)…" >&2
	CGO_ENABLED=1 go build -o "$tmp/telltale" .
	bin=$tmp/telltale
fi

export LANG=en_US.UTF-8
export XDG_CONFIG_HOME=$tmp/config
# A display number unlikely to be taken; several runs at once pick their own.
disp=${SCREENSHOT_DISPLAY:-$((90 + RANDOM % 400))}
Xvfb ":$disp" -screen 0 1280x800x24 -nolisten tcp >"$tmp/xvfb.log" 2>&1 &
xpid=$!
for _ in $(seq 1 50); do
	[ -e "/tmp/.X11-unix/X$disp" ] && break
	sleep 0.1
done
export DISPLAY=":$disp"

# title|file name, in the window's tab order.
views=("Corpus|corpus" "Training|training" "Scorecard|scorecard" "Filters|filters" "Why this label|why-this-label" "Cue audit|cue-audit")
for entry in "${views[@]}"; do
	title=${entry%%|*}
	name=${entry##*|}
	log=$tmp/$name.log
	"$bin" gui --demo-train --view "$title" --quit-after 300s >"$log" 2>&1 &
	pid=$!
	ok=""
	for _ in $(seq 1 480); do
		if grep -q "window ready" "$log"; then ok=1; break; fi
		if ! kill -0 "$pid" 2>/dev/null; then break; fi
		sleep 0.25
	done
	if [ -z "$ok" ]; then
		echo "screenshots: the window did not get ready for view $title; its output:" >&2
		cat "$log" >&2
		kill -TERM "$pid" 2>/dev/null || true
		exit 1
	fi
	sleep 1.5 # let the last frame render
	id=$(xwininfo -root -tree | awk '/"telltale/ {print $1; exit}')
	if [ -n "$id" ]; then
		import -window "$id" "$out/$name.png"
	else
		import -window root "$out/$name.png"
	fi
	kill -TERM "$pid" 2>/dev/null || true
	wait "$pid" 2>/dev/null || true
	echo "screenshots: $out/$name.png" >&2
done
