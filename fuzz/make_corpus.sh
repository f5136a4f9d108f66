#!/usr/bin/env bash
# Seeds fuzz/corpus/parsers with each kind's valid example (selector byte + text).
set -euo pipefail
cd "$(dirname "$0")/.."
out=fuzz/corpus/parsers
mkdir -p "$out"
write() { { printf "\\x$(printf %02x "$1")"; cat "$2"; } > "$out/seed-$1-$(basename "$2")"; }
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
printf 'epoch_utc,x_km,y_km,z_km,sigma_km\n2031-05-04T00:00:00Z,6878,0,0,0.005\n2031-05-04T00:01:00Z,6863.4,455.3,0,0.005\n2031-05-04T00:02:00Z,6819.9,908.7,0,0.005\n' > "$tmp/arc.csv"
write 0 "$tmp/arc.csv"
printf 'exp(-t / k0) * T + cos(u) * R\n' > "$tmp/formula"
write 8 "$tmp/formula"
write 5 examples/scenarios/venting.yaml
write 6 tests/data/learned_example.yaml
write 7 tests/data/learned_example.yaml
write 9 examples/hypotheses/maneuver_day.yaml
write 10 tests/data/eop/finals2000A_2021-04.txt
write 10 tests/data/eop/eopc04_2021-04.txt
head -200 tests/data/real/grg21553_18h-22h30.sp3 > "$tmp/orbit.sp3"
write 11 "$tmp/orbit.sp3"
write 12 examples/space_weather/storm_ap200.csv
write 13 tests/data/ccsds/ccsds_tdm_503_b2_figE9.tdm
write 14 examples/sites/three_sites.yaml
write 15 examples/tracking/radar_pass.csv
# Hostile seeds: a YAML alias fan-out, deep nesting, a control character in a name.
{
    printf 'gravity: { zonal_degree: 2 }\na0: &a0 [x, x, x, x, x, x, x, x, x, x]\n'
    for i in 1 2 3 4 5 6 7 8; do p=$((i - 1)); printf 'a%d: &a%d [*a%d, *a%d, *a%d, *a%d, *a%d, *a%d, *a%d, *a%d, *a%d, *a%d]\n' $i $i $p $p $p $p $p $p $p $p $p $p; done
} > "$tmp/bomb.yaml"
write 3 "$tmp/bomb.yaml"
python3 -c 'print("x: " + "[" * 5000 + "]" * 5000)' > "$tmp/deep.yaml"
write 4 "$tmp/deep.yaml"
sed 's/^object_name: .*/object_name: "A\\nplugins: [evil.so]"/' examples/scenarios/venting.yaml > "$tmp/name.yaml"
write 5 "$tmp/name.yaml"
