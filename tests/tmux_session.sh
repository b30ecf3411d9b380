#!/usr/bin/env bash
# A scripted terminal session: the demo in tmux at 100x30, keys sent with send-keys, the screen read with
# capture-pane. Checks that the ranked list appears, the unbound candidate's alert rings the bell (tmux's
# bell flag) and runs the configured command with valid JSON on its stdin, a decision reaches the journal and
# X exports it, Esc drops a filter
# being typed, the help overlay and the origin pane open, quitting ends the program, and a hang-up closes it cleanly. CI runs it when tmux is installed; it skips (exit 0, saying so)
# otherwise.
set -euo pipefail
cd "$(dirname "$0")/.."
if ! command -v tmux >/dev/null; then
    echo "tmux session test: skipped (no tmux)"
    exit 0
fi
bin=target/release/interloper
[ -x "$bin" ] || cargo build --release --quiet
state=$(mktemp -d)
sock="interloper-test-$$"
trap 'tmux -L "$sock" kill-server 2>/dev/null || true; rm -rf "$state"' EXIT
cfgdir=$(mktemp -d)
printf '[alerts]\ncommand = "cat > %s/alert.json"\n' "$cfgdir" > "$cfgdir/config.toml"
trap 'tmux -L "$sock" kill-server 2>/dev/null || true; rm -rf "$state" "$cfgdir"' EXIT
tmux -L "$sock" new-session -d -s demo -x 100 -y 30 "$bin --config $cfgdir/config.toml demo --speed 10 --state $state; echo EXITED; sleep 5"
tmux -L "$sock" set-option -t demo monitor-bell on >/dev/null
fail() { echo "tmux session test: FAILED: $1"; tmux -L "$sock" capture-pane -p -t demo; exit 1; }
target=demo
# shellcheck source=tests/tmux_wait.sh
source tests/tmux_wait.sh
wait_for "qk9h6tx" 240 || fail "the candidates never appeared"
screen | grep -q "qka2e7f" || fail "the unbound candidate is not listed"
# The unbound candidate crosses the alert line once its second night is in.
for _ in $(seq 1 240); do
    [ -s "$cfgdir/alert.json" ] && break
    sleep 0.25
done
[ -s "$cfgdir/alert.json" ] || fail "the alert command did not run"
python3 -c "import json,sys; d=json.load(open(sys.argv[1])); assert d['object']=='qka2e7f' and d['alert']['kind'] in ('strong','new-unbound')" "$cfgdir/alert.json" \
    || fail "the alert command did not get the candidate's JSON"
[ "$(tmux -L "$sock" display-message -p -t demo '#{window_bell_flag}')" = "1" ] || fail "the alert did not ring the bell"
# Let the fits in hand finish (more files may still arrive; the unbound candidate stays on top).
wait_for "waiting 0 · fitting 0" 240 || fail "the fits never finished"
tmux -L "$sock" send-keys -t demo g
sleep 0.3
# X straight after the decision, before the journal has confirmed it: the export waits for the save
# and carries the decision (it once left it out when the disk was slow to sync).
tmux -L "$sock" send-keys -t demo p X
for _ in $(seq 1 120); do
    [ -s "$state/decisions.jsonl" ] && grep -q '"verdict":"pursue"' "$state/decisions.jsonl" && break
    sleep 0.25
done
grep -q '"object":"qka2e7f"' "$state/decisions.jsonl" || fail "the decision did not reach the journal"
for _ in $(seq 1 120); do
    ls "$state"/export-*.json >/dev/null 2>&1 && break
    sleep 0.25
done
grep -q "^1,qka2e7f,.*,pursue," "$state"/export-*.csv || fail "X did not export the list with the decision"
tmux -L "$sock" send-keys -t demo /
sleep 0.2
tmux -L "$sock" send-keys -t demo z z z
wait_for "candidates 0 of" 40 || fail "the filter did not apply"
tmux -L "$sock" send-keys -t demo Escape
wait_for "candidates [1-9][0-9]* of" 40 || fail "Esc did not clear the filter"
tmux -L "$sock" send-keys -t demo '?'
wait_for "next-undecided" 40 || fail "no help overlay"
tmux -L "$sock" send-keys -t demo Escape
wait_gone "next-undecided" 40 || fail "Esc did not close the help"
# The top candidate is unbound: its origin pane opens.
tmux -L "$sock" send-keys -t demo g
sleep 0.2
tmux -L "$sock" send-keys -t demo o
wait_for "before the planets" 40 || fail "no origin pane"
tmux -L "$sock" send-keys -t demo Escape
wait_gone "before the planets" 40 || fail "Esc did not close the origin pane"
tmux -L "$sock" send-keys -t demo q
for _ in $(seq 1 20); do
    tmux -L "$sock" capture-pane -p -t demo | grep -q "EXITED" && break
    sleep 0.25
done
tmux -L "$sock" capture-pane -p -t demo | grep -q "EXITED" || fail "q did not quit"
# A hang-up (the SSH link dropping) closes the console cleanly: it logs and exits.
state2=$(mktemp -d)
tmux -L "$sock" new-session -d -s hup -x 100 -y 30 "echo \$\$ > $state2/pid; exec $bin demo --speed 10 --state $state2"
tmux -L "$sock" set-option -t hup remain-on-exit on >/dev/null
for _ in $(seq 1 40); do
    cat "$state2"/interloper.*.log 2>/dev/null | grep -q "console opened" && break
    sleep 0.25
done
kill -HUP "$(cat "$state2/pid")"
for _ in $(seq 1 40); do
    [ "$(tmux -L "$sock" list-panes -t hup -F '#{pane_dead}')" = "1" ] && break
    sleep 0.25
done
[ "$(tmux -L "$sock" list-panes -t hup -F '#{pane_dead}')" = "1" ] || fail "SIGHUP did not end the console"
cat "$state2"/interloper.*.log | grep -q "console closed" || fail "the console did not log its close after SIGHUP"
rm -rf "$state2"
# The terminal going away under a shell that ignores SIGHUP (nohup, some session managers): no signal
# comes, standard input reads an endless end of file. The console notices and closes, instead of
# spinning a core all night (it once did). A quiet directory: no frame is drawn that could fail first.
state3=$(mktemp -d)
tmux -L "$sock-gone" new-session -d -s gone -x 100 -y 30 "bash --norc --noprofile -c \"trap '' HUP; $bin watch --state $state3 $state3; true\""
for _ in $(seq 1 40); do
    tmux -L "$sock-gone" capture-pane -p -t gone 2>/dev/null | grep -q "candidates" && break
    sleep 0.25
done
pid=$(pgrep -f "^$bin watch --state $state3" | head -1)
[ -n "$pid" ] || fail "the console under a shell ignoring SIGHUP did not start"
tmux -L "$sock-gone" kill-server
for _ in $(seq 1 40); do
    kill -0 "$pid" 2>/dev/null || break
    sleep 0.25
done
if kill -0 "$pid" 2>/dev/null; then
    kill "$pid"
    fail "the console kept running after its terminal went away"
fi
grep -q "terminal hung up" "$state3"/interloper.*.log || { cat "$state3"/interloper.*.log; fail "the console did not log that its terminal went away"; }
rm -rf "$state3"
echo "tmux session test: passed"
