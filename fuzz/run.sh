#!/usr/bin/env bash
# Run fuzz targets for SECONDS (default 600) each, seeded from the malformed corpus and the demo feed;
# prints executions and crash artifacts per target. Targets default to all; name some to run only those.
# cargo-fuzz needs nightly features: RUSTC_BOOTSTRAP lets the stable toolchain provide them.
set -euo pipefail
cd "$(dirname "$0")"
secs=${1:-600}
shift || true
targets=${*:-ades_psv ades_xml obs80 sites utc_time journal_replay}
export RUSTC_BOOTSTRAP=1
command -v cargo-fuzz >/dev/null || cargo install cargo-fuzz
for t in $targets; do
    seeds=$(mktemp -d)
    cp ../tests/corpus/malformed/* ../sample_feeds/demo_night/* "$seeds"/ 2>/dev/null || true
    [ "$t" = ades_xml ] && for f in ../tests/corpus/malformed/xml_*; do tail -c +2 "$f" > "$seeds/seed_$(basename "$f")"; done
    mkdir -p corpus/$t artifacts/$t
    log=$(mktemp)
    cargo fuzz run -O "$t" corpus/$t "$seeds" -- -max_total_time="$secs" -rss_limit_mb=2048 \
        -print_final_stats=1 -artifact_prefix=artifacts/$t/ >"$log" 2>&1 || true
    execs=$(grep -o "stat::number_of_executed_units: *[0-9]*" "$log" | grep -o "[0-9]*$" | tail -1)
    crashes=$(find artifacts/$t -type f | wc -l)
    echo "$t: ${execs:-?} executions in ${secs}s, $crashes crash artifacts"
    [ "$crashes" -gt 0 ] && grep -m3 -E "panicked|ERROR" "$log" || true
    rm -rf "$seeds" "$log"
done
