#!/usr/bin/env bash
# together.sh — run several commands at the same time; succeed only when
# every one of them succeeds. Used by `make soak-checks` (part of `make
# test`) to run the fuzz targets and other short checks while the soak
# drives the window: the soak keeps about one of two cores busy for its
# fixed time (the window's training and software rendering, the waits
# between actions), the checks take what it leaves, and the window must
# keep answering under their load.
#
# Usage: scripts/together.sh NAME 'COMMAND' [NAME 'COMMAND']…
# Each COMMAND is a bash command line run from the repository root in its
# own process group, with its output (stdout and stderr) kept in a file and
# printed as one block under "== NAME" when it ends, so outputs do not
# interleave. When one command fails, the others' process groups (with
# every process they started) are stopped with SIGTERM, then SIGKILL after
# 10 s; the exit status is that of the first command to fail (0 if none).
# On SIGINT or SIGTERM every group is stopped the same way.
set -uo pipefail
cd "$(dirname "$0")/.."

[ $# -ge 2 ] && [ $(($# % 2)) = 0 ] || {
	echo "usage: scripts/together.sh NAME 'COMMAND' [NAME 'COMMAND']…" >&2
	exit 2
}
tmp=$(mktemp -d)
names=()
pids=()
ended=() # a job's exit status once it has ended

# live lists the pids of the jobs not yet ended.
live() {
	local i
	for i in "${!pids[@]}"; do
		[ -n "${ended[$i]}" ] || printf '%s\n' "${pids[$i]}"
	done
}

# stop_all PID… sends SIGTERM to the process groups of the jobs PID…
# (a job's group id is its pid), waits up to 10 s for every process in them
# to end and then sends SIGKILL to what is left.
stop_all() {
	local pid left
	for pid in "$@"; do
		kill -TERM -- "-$pid" 2>/dev/null
	done
	for _ in $(seq 1 100); do
		left=""
		for pid in "$@"; do
			kill -0 -- "-$pid" 2>/dev/null && left=1
		done
		[ -z "$left" ] && return
		sleep 0.1
	done
	for pid in "$@"; do
		kill -KILL -- "-$pid" 2>/dev/null
	done
}

# report I STATUS prints job I's output under a line with its name.
report() {
	echo "== ${names[$1]} ($2)"
	cat "$tmp/$1.log"
}

# On any exit, jobs still running are stopped and their output so far is
# printed (after an interrupt or a timeout too, for the diagnosis).
on_exit() {
	local i
	stop_all $(live)
	for i in "${!pids[@]}"; do
		[ -z "${ended[$i]}" ] && report "$i" "stopped: interrupted"
	done
	rm -rf "$tmp"
}
trap on_exit EXIT
trap 'exit 130' INT
trap 'exit 143' TERM

set -m # each background job in its own process group (its id the job's pid)
while [ $# -gt 0 ]; do
	names+=("$1")
	n=${#pids[@]}
	(
		bash -c "$2" </dev/null # a background job must not read the terminal
		echo $? >"$tmp/$n.rc-new" && mv "$tmp/$n.rc-new" "$tmp/$n.rc"
	) >"$tmp/$n.log" 2>&1 &
	pids+=($!)
	ended+=("")
	shift 2
done
set +m

# running PID reports whether process PID runs (neither gone nor a zombie),
# from its state in /proc/PID/stat (the field after the command's name).
running() {
	local stat
	stat=$(cat "/proc/$1/stat" 2>/dev/null) || return 1
	stat=${stat##*) }
	[ "${stat%% *}" != Z ]
}

# ended_status I sets code to job I's exit status and reaps the job, when
# it has ended: the status it left in its file, or, when something outside
# killed the job before it could write one, its wait status (128 + the
# signal). It fails while the job runs.
ended_status() {
	local pid=${pids[$1]} rc=$tmp/$1.rc
	if [ ! -e "$rc" ] && running "$pid"; then
		return 1
	fi
	wait "$pid" 2>/dev/null
	code=$?
	if [ -e "$rc" ]; then # written just before the job ended
		code=$(<"$rc")
	fi
}

# Every 0.2 s, look for jobs that have ended; when one has failed, stop
# the others and report them.
status=0
while [ -n "$(live)" ] && [ "$status" = 0 ]; do
	sleep 0.2
	for i in "${!pids[@]}"; do
		[ -z "${ended[$i]}" ] || continue
		ended_status "$i" || continue
		ended[i]=$code
		report "$i" "exit status ${ended[$i]}"
		if [ "${ended[$i]}" != 0 ] && [ "$status" = 0 ]; then
			status=${ended[$i]}
			failed=${names[$i]}
			echo "== ${names[$i]} failed: stopping the others"
			stop_all "${pids[$i]}" $(live) # with what the failed one left
			break
		fi
	done
done
for i in "${!pids[@]}"; do
	[ -z "${ended[$i]}" ] || continue
	wait "${pids[$i]}" 2>/dev/null
	ended[i]=stopped
	report "$i" "stopped: $failed failed"
done
exit "$status"
