#!/usr/bin/env bash
# Run every fuzz target for SECONDS (default 600) each, seeded from the malformed corpus and the demo
# feed; prints executions and crashes per target. cargo-fuzz needs nightly features: RUSTC_BOOTSTRAP
# lets the stable toolchain provide them.
set -euo pipefail
cd "$(dirname "$0")"
secs=${1:-600}
export RUSTC_BOOTSTRAP=1
command -v cargo-fuzz >/dev/null || cargo install cargo-fuzz
for t in ades_psv obs80 sites utc_time journal_replay; do
    seeds=$(mktemp -d)
    cp ../tests/corpus/malformed/* ../sample_feeds/demo_night/* "$seeds"/ 2>/dev/null || true
    mkdir -p corpus/$t artifacts/$t
    log=$(mktemp)
    cargo fuzz run -O "$t" corpus/$t "$seeds" -- -max_total_time="$secs" -rss_limit_mb=2048 \
        -artifact_prefix=artifacts/$t/ >"$log" 2>&1 || true
    execs=$(grep -o "stat::number_of_executed_units: *[0-9]*" "$log" | grep -o "[0-9]*$" || echo "?")
    crashes=$(find artifacts/$t -type f | wc -l)
    echo "$t: $execs executions in ${secs}s, $crashes crash artifacts"
    rm -rf "$seeds" "$log"
done
