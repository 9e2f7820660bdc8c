#!/bin/sh
# Re-takes the screen captures of docs/guide.md from the current dashboard
# (tmux, NO_COLOR=1) on the shipped, invented samples. Writes one text file
# per capture into OUT (default /tmp/guide-captures); paste them into the
# guide's ```text blocks.
#   sh docs/guide-captures.sh target/release/oddsboard [OUT]
set -eu
BIN=$(realpath "${1:?usage: guide-captures.sh BINARY [OUT]}")
OUT=${2:-/tmp/guide-captures}
ROOT=$(dirname "$0")/..
WORK=$(mktemp -d)
mkdir -p "$OUT"
cp "$ROOT/sample-incidents/warehouse-fire.yaml" "$WORK/"
cp "$ROOT/sample-incidents/drill-warehouse-fire.log" "$WORK/"
S=guide-$$
export NO_COLOR=1
# A failed wait leaves no session or scratch folder behind.
trap 'tmux kill-session -t "$S" 2>/dev/null || true; rm -rf "$WORK"' EXIT

wait_for() { # session, text, seconds
	i=0
	while ! tmux capture-pane -p -t "$1" | grep -qF -- "$2"; do
		i=$((i + 1))
		[ "$i" -gt $(($3 * 10)) ] && { echo "never saw: $2" >&2; tmux capture-pane -p -t "$1" >&2; return 1; }
		sleep 0.1
	done
}
cap() { tmux capture-pane -p -t "$1" >"$OUT/$2.txt"; }

cd "$WORK"
tmux new -d -s "$S" -x 140 -y 45 "$BIN dash warehouse-fire.yaml --by ic --budget-ms 1000"
wait_for "$S" "re-plan: done" 30
cap "$S" 1-board-140x45
tmux send-keys -t "$S" l
wait_for "$S" "Mark a unit lost" 5
tmux send-keys -t "$S" -l E17
tmux send-keys -t "$S" Enter Enter
wait_for "$S" "give a reason" 5
cap "$S" 2-form-error
tmux send-keys -t "$S" -l "pump failure"
tmux send-keys -t "$S" Enter
wait_for "$S" "E17 lost" 5
sleep 1
wait_for "$S" "re-plan: done" 30
cap "$S" 3-after-loss
tmux send-keys -t "$S" o
wait_for "$S" "Open a new task" 5
tmux send-keys -t "$S" -l "search-annex"
tmux send-keys -t "$S" Enter
tmux send-keys -t "$S" -l "Search the annex offices"
tmux send-keys -t "$S" Enter
tmux send-keys -t "$S" -l "life"
tmux send-keys -t "$S" Enter
tmux send-keys -t "$S" -l "crew 4 ± 1"
cap "$S" 4-add-task
tmux send-keys -t "$S" Escape
tmux send-keys -t "$S" "?"
wait_for "$S" "Keys" 5
cap "$S" 5-help
tmux send-keys -t "$S" Escape q
sleep 1
tmux kill-session -t "$S" 2>/dev/null || true

tmux new -d -s "$S" -x 140 -y 45 "$BIN watch warehouse-fire.log"
wait_for "$S" "WATCH" 10
"$BIN" record warehouse-fire.log --by radio '{"kind":"note","text":"Division B: roof sagging over the cold store"}' >/dev/null
"$BIN" record warehouse-fire.log --by feed '{"kind":"note","text":"feed text \u001b]0;title\u0007 shown escaped"}' >/dev/null
wait_for "$S" "feed text" 10
cap "$S" 6-watch
tmux send-keys -t "$S" q
sleep 1
tmux kill-session -t "$S" 2>/dev/null || true

tmux new -d -s "$S" -x 140 -y 45 "$BIN replay drill-warehouse-fire.log --at 4"
wait_for "$S" "REPLAY" 10
cap "$S" 7-replay
tmux send-keys -t "$S" q
sleep 1
tmux kill-session -t "$S" 2>/dev/null || true

for size in "100 30" "200 60"; do
	set -- $size
	rm -f small.log
	cp warehouse-fire.yaml small.yaml
	tmux new -d -s "$S" -x "$1" -y "$2" "$BIN dash small.yaml --by ic --budget-ms 1000"
	wait_for "$S" "re-plan: done" 30
	cap "$S" "8-board-${1}x${2}"
	tmux send-keys -t "$S" q
	sleep 1
	tmux kill-session -t "$S" 2>/dev/null || true
	rm -f small.log small.yaml
done
echo "captures in $OUT"
