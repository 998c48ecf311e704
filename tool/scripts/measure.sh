#!/usr/bin/env bash
# Wall time of the coilwise tool per run, against the cost of starting a process at all.
# Target: a report in well under 100 ms. A measurement, not a test: shared machines are noisy,
# so compare the two numbers of one run rather than across runs.
set -euo pipefail
cd "$(dirname "$0")/../.."
cargo build -q --release -p coilwise-tool
bin="${CARGO_TARGET_DIR:-target}/release/coilwise"
runs="${RUNS:-200}"
per_run() { # label, command...
  local label=$1; shift
  local start end
  start=$(date +%s%N)
  for _ in $(seq "$runs"); do "$@" >/dev/null; done
  end=$(date +%s%N)
  printf '%-40s %8.2f ms per run (%s runs)\n' "$label" "$(echo "($end - $start) / $runs / 1000000" | bc -l)" "$runs"
}
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT
if command -v hyperfine >/dev/null; then
  hyperfine -N --warmup 5 "$bin report examples/greenhouse-valve.toml" \
    "$bin report examples/greenhouse-valve.toml --json" \
    "$bin plot examples/greenhouse-valve.toml -o $out/cycle.svg"
else
  per_run "process start (/bin/true)" /bin/true
  per_run "report greenhouse-valve" "$bin" report examples/greenhouse-valve.toml
  per_run "report greenhouse-pump-relay" "$bin" report examples/greenhouse-pump-relay.toml
  per_run "report --json greenhouse-valve" "$bin" report examples/greenhouse-valve.toml --json
  per_run "plot greenhouse-valve (SVG)" "$bin" plot examples/greenhouse-valve.toml -o "$out/cycle.svg"
  per_run "constants greenhouse-valve" "$bin" constants examples/greenhouse-valve.toml
fi
