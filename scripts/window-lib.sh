# window-lib.sh — shared by screenshots.sh and soak.sh: run the real
# telltale window on a virtual screen (Xvfb, Mesa's software GL) and drive
# it with xdotool. Source it; it defines functions and uses $tmp.
#
# The window's title names the view on screen ("telltale — Results"), so a
# script sees whether the window answered a key by reading the title.

# start_screen WxH starts Xvfb with one screen of that size on a free
# display and exports DISPLAY.
start_screen() {
	local size=$1 disp
	for _ in $(seq 1 20); do
		disp=$((100 + RANDOM % 400))
		[ -e "/tmp/.X11-unix/X$disp" ] || break
	done
	Xvfb ":$disp" -screen 0 "${size}x24" -nolisten tcp >"$tmp/xvfb-$size.log" 2>&1 &
	xvfb_pid=$!
	for _ in $(seq 1 100); do
		[ -e "/tmp/.X11-unix/X$disp" ] && break
		sleep 0.1
	done
	export DISPLAY=":$disp"
}

stop_screen() {
	if [ -n "${xvfb_pid:-}" ]; then
		kill "$xvfb_pid" 2>/dev/null || true
		wait "$xvfb_pid" 2>/dev/null || true
		xvfb_pid=""
	fi
}

# start_window LOG ARGS… runs "$bin gui ARGS…" with its output in LOG and
# waits (up to $ready_timeout seconds) until it says "window ready". It sets
# window_pid and window_id.
start_window() {
	local log=$1
	shift
	"$bin" gui "$@" >"$log" 2>&1 &
	window_pid=$!
	local ok=""
	for _ in $(seq 1 $((4 * ${ready_timeout:-240}))); do
		if grep -q "window ready" "$log"; then ok=1; break; fi
		if ! kill -0 "$window_pid" 2>/dev/null; then break; fi
		sleep 0.25
	done
	if [ -z "$ok" ]; then
		echo "$script_name: the window did not get ready; its output:" >&2
		cat "$log" >&2
		return 1
	fi
	window_id=$(xdotool search --name '^telltale' | head -1)
	[ -n "$window_id" ] || { echo "$script_name: no telltale window on $DISPLAY" >&2; return 1; }
}

stop_window() {
	if [ -n "${window_pid:-}" ]; then
		kill -TERM "$window_pid" 2>/dev/null || true
		wait "$window_pid" 2>/dev/null || true
		window_pid=""
	fi
}

# fit_window WxH makes the window that size, as a user maximising it on
# that screen would.
fit_window() {
	local w=${1%x*} h=${1#*x}
	xdotool windowsize "$window_id" "$w" "$h"
	sleep 0.5
}

# window_size prints the window's size as WxH.
window_size() {
	xdotool getwindowgeometry "$window_id" | awk '/Geometry/ {print $2}'
}

# press KEY… sends keys to the window.
press() {
	xdotool windowfocus --sync "$window_id" 2>/dev/null || true
	xdotool key --clearmodifiers "$@"
}

# type_text TEXT types TEXT into the focused box.
type_text() {
	xdotool windowfocus --sync "$window_id" 2>/dev/null || true
	xdotool type --delay "${type_delay:-15}" "$1"
}

# seconds_since T0 prints the seconds (to the millisecond) since T0, a
# time in nanoseconds from date +%s%N.
seconds_since() {
	local now
	now=$(date +%s%N)
	printf '%d.%03d\n' $(((now - $1) / 1000000000)) $((((now - $1) / 1000000) % 1000))
}

# wait_title TITLE SECONDS waits until the window's title is TITLE and
# prints how long that took (seconds, to the millisecond); it fails after
# SECONDS.
wait_title() {
	local want=$1 limit=$2 t0 now
	t0=$(date +%s%N)
	while :; do
		if [ "$(xdotool getwindowname "$window_id" 2>/dev/null)" = "$want" ]; then
			seconds_since "$t0"
			return 0
		fi
		now=$(date +%s%N)
		if [ $(((now - t0) / 1000000000)) -ge "$limit" ]; then
			return 1
		fi
		sleep 0.05
	done
}

# The views in tab order: title|file name. Ctrl+1 … Ctrl+6 select them.
views=("Corpus|corpus" "Training|training" "Results|results" "Filters|filters" "Why this label|why-this-label" "Cue audit|cue-audit")
