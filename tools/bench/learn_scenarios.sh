#!/usr/bin/env bash
# Whole-`learn` wall times of the shipped scenarios (release build, default options: 3
# search seeds × 12 generations × 96), for the README's performance rows. Reproducible:
# the scenarios and seeds are fixed; only the machine's speed changes the times.
#   bash tools/bench/learn_scenarios.sh [SCENARIO ...]
set -euo pipefail
cd "$(dirname "$0")/../.."
cargo build --release --quiet --bin arcwise
bin=target/release/arcwise
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT
scenarios=("$@")
[ ${#scenarios[@]} -eq 0 ] && scenarios=(venting storm tumbling switch_on panel srp scale_height)
for s in "${scenarios[@]}"; do
  "$bin" simulate "examples/scenarios/$s.yaml" --out "$out/$s" > /dev/null
  start=$(date +%s.%N)
  "$bin" learn --arc "$out/$s/train.csv" --forces "$out/$s/forces.yaml" \
    --out "$out/$s/learned.yaml" --report "$out/$s/learn.json" > "$out/$s/learn.log" 2>&1 || true
  end=$(date +%s.%N)
  printf '%-13s %6.1f s  %s\n' "$s" "$(echo "$end - $start" | bc)" \
    "$(grep -E '^(seeds|outcome):' "$out/$s/learn.log" | cut -c1-60 | tr '\n' ' ')"
done
