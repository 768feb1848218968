#!/usr/bin/env bash
# soak.sh — use the real telltale window for a few minutes under Xvfb as a
# person would (train, retrain, search the filter list, scroll it, run the
# audit, type texts to explain, click rows that open other views; at the
# end, open the file dialog) and check that it keeps answering: after every
# action a key that switches views must change the window's title within
# LIMIT seconds, the window must still run at the end, it must have logged no
# toolkit error, and the dialog's folder must be in the window's own
# preferences file. Used by `make soak`
# (and `make test`).
#
# Usage: scripts/soak.sh [BINARY]. SOAK_SECONDS (default 90) is how long
# the actions go on after start-up; SOAK_LIMIT (default 15) the longest
# answer allowed, in seconds; SOAK_SHOT, a PNG file to save the window to
# when a check fails (needs imagemagick). Needs Debian's xvfb and xdotool.
set -euo pipefail

cd "$(dirname "$0")/.."
script_name=soak
tmp=$(mktemp -d)
# shellcheck source=scripts/window-lib.sh
. scripts/window-lib.sh
trap 'stop_window; stop_screen; rm -rf "$tmp"' EXIT

for tool in Xvfb xdotool; do
	command -v "$tool" >/dev/null || { echo "soak: $tool is missing: apt-get install xvfb xdotool" >&2; exit 1; }
done
bin=${1:-${TELLTALE_BIN:-bin/telltale}}
[ -x "$bin" ] || { echo "soak: no window binary at $bin: run make build" >&2; exit 1; }

seconds=${SOAK_SECONDS:-90}
limit=${SOAK_LIMIT:-15}
size=1366x900
export LANG=en_US.UTF-8
export XDG_CONFIG_HOME=$tmp/config
# The toolkit's thread checks on (off in the window otherwise, cmd_gui.go's
# declareUIRunner), so that a call to it from another goroutine is logged
# and fails the check below.
export TELLTALE_FYNE_THREAD_CHECKS=1
# The user's folders, as a desktop session defines them: without them the
# toolkit's file dialog logs an error about the machine ("does not define a
# VIDEOS folder", fyne v2.7.1 dialog/file_xdg.go), which is not the window's.
mkdir -p "$XDG_CONFIG_HOME"
for d in DESKTOP:Desktop DOCUMENTS:Documents DOWNLOAD:Download MUSIC:Music PICTURES:Pictures VIDEOS:Videos; do
	echo "XDG_${d%%:*}_DIR=\"\$HOME/${d#*:}\""
done >"$XDG_CONFIG_HOME/user-dirs.dirs"

start_screen "$size"
log=$tmp/window.log
start=$(date +%s)
start_window "$log" --demo-train
fit_window "$size"
echo "soak: window ready after $(($(date +%s) - start)) s; acting for ${seconds} s" >&2

worst=0
probes=0
# expect TITLE: the window must show view TITLE within the limit.
expect() {
	local took
	if ! took=$(wait_title "telltale — $1" "$limit"); then
		fail_view "$1"
	fi
	answered "$1" "$took"
}

# answered TITLE SECONDS records that view TITLE came after SECONDS.
answered() {
	probes=$((probes + 1))
	worst=$(awk -v a="$worst" -v b="$2" 'BEGIN {print (b > a) ? b : a}')
	if awk -v t="$2" 'BEGIN {exit !(t > 2)}'; then
		echo "soak: $1 took ${2} s (step: $step)" >&2
	fi
}

# fail_view TITLE reports that the window did not show view TITLE in time,
# saves the window as it is (SOAK_SHOT) and stops the run.
fail_view() {
	echo "soak: the window did not show $1 within ${limit} s (step: $step); it shows $(xdotool getwindowname "$window_id")" >&2
	if [ -n "${SOAK_SHOT:-}" ] && command -v import >/dev/null; then
		import -window "$window_id" "$SOAK_SHOT" && echo "soak: the window as it was: $SOAK_SHOT" >&2
	fi
	tail -20 "$log" >&2
	exit 1
}

# visit N: switch to view N (1-based) and check that the window answers.
visit() {
	press "ctrl+$1"
	expect "${views[$(($1 - 1))]%%|*}"
}

# point X Y: move the pointer to the given share of the window's width and
# height, and give the window time to see it (the toolkit takes a click
# where it last saw the pointer).
point() {
	local w=${size%x*} h=${size#*x}
	xdotool mousemove --window "$window_id" "$(awk -v s="$1" -v w="$w" 'BEGIN {printf "%d", s * w}')" \
		"$(awk -v s="$2" -v h="$h" 'BEGIN {printf "%d", s * h}')"
	sleep 0.3
}

# click X Y: a left click there.
click() {
	point "$1" "$2"
	xdotool click 1
}

# open_row X Y TITLE: click the table row at X, Y, which opens view TITLE,
# until the view shows or the limit has passed. Clicks go every 2 s: the
# table fills only once the view's background work (an explanation) is
# done, which on a loaded machine can take seconds after the view shows;
# every second click goes 20 pixels lower, off the gap between two rows.
# Once the title has left the view clicked in, no more clicks go.
open_row() {
	local t0 now y tries=0 from
	t0=$(date +%s%N)
	from=$(xdotool getwindowname "$window_id")
	while :; do
		y=$2
		if [ $((tries % 2)) = 1 ]; then
			y=$(awk -v y="$2" -v h="${size#*x}" 'BEGIN {print y + 20 / h}')
		fi
		click "$1" "$y"
		if wait_title "telltale — $3" 2 >/dev/null; then
			break
		fi
		if [ "$(xdotool getwindowname "$window_id")" != "$from" ]; then
			break # the click was taken, and another view is on its way
		fi
		tries=$((tries + 1))
		now=$(date +%s%N)
		if [ $(((now - t0) / 1000000000)) -ge "$limit" ]; then
			fail_view "$3"
		fi
	done
	if [ "$(xdotool getwindowname "$window_id")" != "telltale — $3" ]; then
		expect "$3"
		return
	fi
	answered "$3" "$(seconds_since "$t0")"
}

texts=("The deckhand was not friendly at all and my refund never came."
	"Is the 15:55 from Carrowmere still running on Sundays in winter?"
	"I left a blue rucksack on the upper deck, sent via KioskMail at the quayside terminal")
round=0
end=$(($(date +%s) + seconds))
while [ "$(date +%s)" -lt "$end" ]; do
	round=$((round + 1))
	step="train"
	visit 2
	press ctrl+t # retrains from the second round on; ignored while a run goes on
	step="search the filter list"
	visit 4
	press ctrl+f
	type_text "book"
	visit 1
	visit 4
	press ctrl+f ctrl+a BackSpace
	step="scroll the filter list and select filters"
	point 0.25 0.5
	xdotool click --repeat 30 --delay 10 5
	xdotool click --repeat 30 --delay 10 4
	for y in 0.30 0.40 0.50 0.60; do click 0.25 "$y"; done
	step="run the audit"
	visit 3
	press ctrl+u
	step="type a text to explain"
	visit 5
	press ctrl+f ctrl+a BackSpace
	type_text "${texts[$((round % ${#texts[@]}))]}"
	visit 3
	step="click a text of a confusion cell"
	open_row 0.70 0.82 "Why this label" # a row of the cell's texts
	visit 6
	visit 5
	step="click a filter that fired"
	open_row 0.68 0.80 "Filters" # a row of the filters that fired
	visit 2
done

# The file dialog stays open while the window is told to close: it keeps its
# folder in the window's own preferences file (checked below).
step="open the file dialog"
press ctrl+o
sleep 1

if ! kill -0 "$window_pid" 2>/dev/null; then
	echo "soak: the window quit during the run; its output:" >&2
	cat "$log" >&2
	exit 1
fi
# SIGTERM, as a session ending sends it, closes the window cleanly: the
# signal's exit status (128 + 15), no panic.
kill -TERM "$window_pid"
status=0
wait "$window_pid" || status=$?
window_pid=""
if [ "$status" -ne 143 ] || grep -q "^panic:" "$log"; then
	echo "soak: the window did not close cleanly on SIGTERM (exit status $status); its output:" >&2
	cat "$log" >&2
	exit 1
fi
# Neither errors of the toolkit nor calls to it from a goroutine other
# than its own, during the run or on the way out.
if grep -q -e "Fyne error" -e "Error in Fyne call thread" "$log"; then
	echo "soak: the toolkit reported errors:" >&2
	grep -A2 -e "Fyne error" -e "Error in Fyne call thread" "$log" >&2
	exit 1
fi
# The dialog's folder is in the window's preferences file, written whole
# (gui/prefs.go), and the toolkit kept no preferences file of its own.
if ! grep -q '"fyne:fileDialogLastFolder"' "$XDG_CONFIG_HOME/telltale/preferences.json"; then
	echo "soak: the file dialog's folder is not in $XDG_CONFIG_HOME/telltale/preferences.json" >&2
	exit 1
fi
if [ -e "$XDG_CONFIG_HOME/fyne/org.telltale.app/preferences.json" ]; then
	echo "soak: the toolkit kept a preferences file of its own" >&2
	exit 1
fi
echo "soak: $round rounds, $probes view switches in $(($(date +%s) - start)) s; slowest answer ${worst} s (limit ${limit} s)" >&2
