#!/usr/bin/env bash
# screenshots.sh — run the real telltale window under Xvfb (Mesa's software
# GL) on the built-in demo corpus, once at 1366×900 and once at 1024×700,
# and save a PNG of every view to docs/screenshots/NAME-WxH.png. It fails
# when a view makes the window grow past the screen (it does not fit).
# Used by `make screenshots`.
#
# Needs: Debian's xvfb, xdotool and imagemagick (import), and the window's
# build packages (gcc, libgl1-mesa-dev, libx11-dev…). TELLTALE_BIN names a
# prebuilt binary; otherwise one is built here with cgo.
set -euo pipefail

cd "$(dirname "$0")/.."
script_name=screenshots
out=${SCREENSHOTS_DIR:-docs/screenshots}
mkdir -p "$out"
tmp=$(mktemp -d)
# shellcheck source=scripts/window-lib.sh
. scripts/window-lib.sh
trap 'stop_window; stop_screen; rm -rf "$tmp"' EXIT

for tool in Xvfb import xdotool; do
	command -v "$tool" >/dev/null || { echo "screenshots: $tool is missing: apt-get install xvfb imagemagick xdotool" >&2; exit 1; }
done

bin=${TELLTALE_BIN:-}
if [ -z "$bin" ]; then
	echo "screenshots: building the window binary (cgo; the first build takes minutes)…" >&2
	CGO_ENABLED=1 go build -o "$tmp/telltale" .
	bin=$tmp/telltale
fi

export LANG=en_US.UTF-8
export XDG_CONFIG_HOME=$tmp/config

for size in 1366x900 1024x700; do
	start_screen "$size"
	start_window "$tmp/window-$size.log" --demo-train
	fit_window "$size"
	for i in "${!views[@]}"; do
		title=${views[$i]%%|*}
		name=${views[$i]##*|}
		press "ctrl+$((i + 1))"
		wait_title "telltale — $title" 20 >/dev/null || { echo "screenshots: the window did not show $title" >&2; exit 1; }
		sleep 1.5 # let the last frame render
		if [ "$(window_size)" != "$size" ]; then
			echo "screenshots: $title does not fit $size: the window grew to $(window_size)" >&2
			exit 1
		fi
		import -window "$window_id" "$out/$name-$size.png"
		echo "screenshots: $out/$name-$size.png" >&2
	done
	stop_window
	stop_screen
done
