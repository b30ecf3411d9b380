# Shared by the scripted terminal sessions (sourced, after they set $sock and $target): read the
# screen, and wait for what a step should show (0.25 s looks, up to $2 of them) instead of sleeping a
# fixed time; a loaded machine draws late, and a key sent before an Escape is read can arrive with it
# as Alt+key.
screen() { tmux -L "$sock" capture-pane -p -t "$target"; }
wait_for() {
    for _ in $(seq 1 "$2"); do
        screen | grep -q "$1" && return 0
        sleep 0.25
    done
    return 1
}
wait_gone() {
    for _ in $(seq 1 "$2"); do
        screen | grep -q "$1" || return 0
        sleep 0.25
    done
    return 1
}
