#!/usr/bin/env bash
# Smoke test of the full-screen walk in a real terminal: builds pinwalk,
# starts it in a detached tmux session (100x30), types readings and keys,
# captures the pane and checks what it shows. Exits non-zero on the first
# failure, printing the pane. Finishes in well under a minute.
#
#   scripts/tui-smoke.sh            # from the repository root
#   SHOTS=dir scripts/tui-smoke.sh  # also keep each captured screen in dir
#   COLS=80 ROWS=24 scripts/tui-smoke.sh  # another terminal size
set -euo pipefail

root=$(cd "$(dirname "$0")/.." && pwd)
command -v tmux >/dev/null || { echo "tui-smoke: tmux is not installed" >&2; exit 2; }
work=$(mktemp -d)
sess="pinwalk-smoke-$$"
bin="$work/pinwalk"
start=$SECONDS

cleanup() {
	tmux kill-session -t "$sess" 2>/dev/null || true
	rm -rf "$work"
}
trap cleanup EXIT

(cd "$root" && go build -o "$bin" ./cmd/pinwalk)

shot=0
capture() { tmux capture-pane -p -t "$sess" 2>/dev/null || true; }
save_shot() {
	shot=$((shot + 1))
	if [[ -n "${SHOTS:-}" ]]; then
		mkdir -p "$SHOTS"
		capture >"$SHOTS/$(printf '%02d' "$shot")-$1.txt"
	fi
}
fail() {
	echo "tui-smoke: FAIL: $*" >&2
	echo "---- pane ----" >&2
	capture >&2
	exit 1
}
# wait_for TEXT [SECONDS]: poll the pane until it shows TEXT (fixed string).
wait_for() {
	local text=$1 limit=${2:-10} i
	for ((i = 0; i < limit * 10; i++)); do
		if capture | grep -qF -- "$text"; then
			return 0
		fi
		sleep 0.1
	done
	fail "waited ${limit}s for: $text"
}
keys() { tmux send-keys -t "$sess" "$@"; }
typed() { tmux send-keys -t "$sess" -l "$1"; }

tmux new-session -d -s "$sess" -x "${COLS:-100}" -y "${ROWS:-30}" \
	"cd '$work' && LANG=C.UTF-8 TERM=xterm-256color '$bin' walk demo --session '$work/s.pinwalk.yaml'; echo EXITED \$?; sleep 30"

wait_for "Safety briefing" 15
wait_for "CAUTION"
save_shot step-briefing
keys Enter
wait_for "Prove the meter"
keys Enter
wait_for "Discharge and verify C1"
typed "banana"
keys Enter
wait_for 'cannot read "banana"'
keys C-u
typed "0.4"
keys Enter
wait_for "in band"
wait_for "Recent readings:"
save_shot step-reading
# A reading in band completes the step: the walk moves on by itself.
wait_for "Discharge and verify C2"
typed "400mV"
keys Enter
wait_for "Discharge and verify C3"
# A charged capacitor stops the walk: the step stays, the screen says why.
typed "120"
keys Enter
wait_for "DO NOT TOUCH"
wait_for "Discharge and verify C3"
save_shot stop

keys Tab
wait_for "Seen from below"
wait_for "pin electrode"
save_shot sockets
keys Right
wait_for "octal"
keys Tab
wait_for "[Suspects]"
wait_for "Suspects on" 30
save_shot suspects
keys Tab
wait_for "Stages (nominal)" 10
save_shot amp
keys Tab
wait_for "[Step]"
keys F1
wait_for "Typed commands"
save_shot help
keys Escape
keys F5
wait_for "(you are here)"
save_shot steps
keys Escape

keys C-c
wait_for "already saved"
save_shot quit
keys y
wait_for "EXITED 0"

grep -q 'typed: "0.4"' "$work/s.pinwalk.yaml" || fail "the session file lacks the reading typed as 0.4"
grep -q 'typed: 400mV' "$work/s.pinwalk.yaml" || fail "the session file lacks the reading typed as 400mV"
grep -q 'status: in-band' "$work/s.pinwalk.yaml" || fail "the session file has no in-band reading"

echo "tui-smoke: ok ($((SECONDS - start)) s)"
