#!/usr/bin/env bash
# Side by side: the tool's differential correction and a straightforward scipy least_squares fit of the
# same tracklet from the same starting state (the tool's converged state plus a fixed offset). The plain
# script does not inflate same-night uncertainties, so its χ² is 5/4 of the tool's; the minimum is the same.
set -euo pipefail
cd "$(dirname "$0")/.."
venv=target/reference-venv
[ -x "$venv/bin/python" ] || python3 -m venv "$venv"
"$venv/bin/pip" install --quiet --disable-pip-version-check -r tests/reference/requirements.txt
file=tests/reference/data/synthetic/bench_3n15.psv
cargo build --release --quiet
json=$(./target/release/interloper fit --json "$file")
start=$(echo "$json" | python3 -c "import json,sys; d=json.loads(sys.stdin.readline()); o=[2e-4,-1e-4,1e-4,2e-6,1e-6,-1e-6]; print(json.dumps([a+b for a,b in zip(d['state'],o)]))")
epoch=$(echo "$json" | python3 -c "import json,sys; print(repr(json.loads(sys.stdin.readline())['epoch_jd_tdb']))")
py=$(cd tests/reference && "../../$venv/bin/python" -W ignore bench_scipy_fit.py "$start" "$epoch" "../../$file")
bench=$(cargo bench --bench fitting -- differential_correction 2>/dev/null)
rust=$(printf '%s\n' "$bench" | grep "time:" | head -n 1 | sed -E 's/.*\[[^ ]+ [^ ]+ ([0-9.]+) ([µnm]s).*/\1 \2/')
echo "python (scipy least_squares): $py"
echo "rust (differential correction, median): $rust"
python3 - "$py" "$rust" <<'PY'
import json, sys
py = json.loads(sys.argv[1])["seconds_per_fit"]
v, unit = sys.argv[2].split()
rust = float(v) * {"ns": 1e-9, "µs": 1e-6, "ms": 1e-3}[unit]
print(f"speed ratio python/rust: {py / rust:.0f}x")
PY
