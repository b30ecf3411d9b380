#!/usr/bin/env bash
# Ctrl-Z and fg in a real terminal: the demo console started from an interactive bash in tmux is
# suspended with Ctrl-Z (the shell's prompt comes back, in cooked mode), resumed with fg (the console
# redraws and answers keys again), and quits. CI runs it when tmux is installed; it skips otherwise.
set -euo pipefail
cd "$(dirname "$0")/.."
if ! command -v tmux >/dev/null; then
    echo "tmux suspend test: skipped (no tmux)"
    exit 0
fi
bin=$PWD/target/release/interloper
[ -x "$bin" ] || cargo build --release --quiet
state=$(mktemp -d)
sock="interloper-suspend-$$"
trap 'tmux -L "$sock" kill-server 2>/dev/null || true; rm -rf "$state"' EXIT
tmux -L "$sock" new-session -d -s s -x 100 -y 30 "bash --norc --noprofile -i"
fail() { echo "tmux suspend test: FAILED: $1"; tmux -L "$sock" capture-pane -p -t s; exit 1; }
target=s
# shellcheck source=tests/tmux_wait.sh
source tests/tmux_wait.sh
tmux -L "$sock" send-keys -t s "PS1='READY> '" Enter
tmux -L "$sock" send-keys -t s "$bin demo --speed 20 --state $state" Enter
wait_for "qka2e7f" 120 || fail "the console never showed the candidates"
tmux -L "$sock" send-keys -t s C-z
wait_for "Stopped" 20 || fail "Ctrl-Z did not stop the console"
# Back at the prompt in cooked mode: what is typed is echoed.
tmux -L "$sock" send-keys -t s "echo typed-at-the-prompt" Enter
wait_for "^typed-at-the-prompt" 20 || fail "the shell is not in cooked mode after the suspend"
tmux -L "$sock" send-keys -t s "fg" Enter
wait_for "qka2e7f" 20 || fail "fg did not bring the console back"
screen | grep -q "typed-at-the-prompt" && fail "the screen was not redrawn after fg"
tmux -L "$sock" send-keys -t s '?'
wait_for "next-undecided" 20 || fail "no keys after fg (help did not open)"
tmux -L "$sock" send-keys -t s Escape
# q only once the Escape is read (sent together they arrive as Alt+q).
wait_gone "next-undecided" 40 || fail "Esc did not close the help"
tmux -L "$sock" send-keys -t s q
# The process itself must be gone (what the screen shows after the alternate screen is not reliable).
gone=no
for _ in $(seq 1 80); do
    if ! pgrep -f "interloper demo --speed 20 --state $state" >/dev/null; then gone=yes; break; fi
    sleep 0.25
done
[ "$gone" = yes ] || fail "q did not quit after fg"
echo "tmux suspend test: passed (Ctrl-Z gives the shell back in cooked mode, fg redraws and keys work)"
