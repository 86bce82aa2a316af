#!/usr/bin/env bash
# Times whole processes side by side on the three-way reference network at about 100,000
# log-spaced points, 20 Hz to 20 kHz: `ngspice -b` (one network) and `voicekeep solve` (three
# scenarios, with every finding: levels, crossovers, load, stress). Best of five runs each.
# Needs ngspice and bc (apt-get install -y ngspice bc) and a release build (cargo build --release).
set -euo pipefail
here=$(cd "$(dirname "$0")/.." && pwd)
bin="$here/target/release/voicekeep"
[ -x "$bin" ] || { echo "build first: cargo build --release" >&2; exit 2; }
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
# ngspice: 33,333 points a decade over three decades; print one node so the run is not idle.
sed -e 's/^ac dec 20 20 20k/ac dec 33333 20 20k/' -e 's/^wrdata .*/print v(W1) >\/dev\/null/' "$here/tests/reference/three-way.cir" > "$tmp/bench.cir"
# voicekeep: 10,000 points an octave over 9.97 octaves (99,658 points).
sed -e 's/per_octave: 6/per_octave: 10000/' "$here/tests/reference/three-way.yaml" > "$tmp/bench.yaml"
best() {
  local best=1000
  for _ in 1 2 3 4 5; do
    local start end t
    start=$(date +%s.%N)
    "$@" > /dev/null 2>&1
    end=$(date +%s.%N)
    t=$(echo "$end - $start" | bc)
    best=$(echo "if ($t < $best) $t else $best" | bc)
  done
  echo "$best"
}
ng=$(best ngspice -b "$tmp/bench.cir")
vk=$(best "$bin" solve "$tmp/bench.yaml")
printf 'ngspice -b, 100000 points:                       %.3f s  (%.2f us a point)\n' "$ng" "$(echo "$ng * 10" | bc -l)"
printf 'voicekeep solve, 99658 points x 3 scenarios:     %.3f s  (%.2f us a point per scenario)\n' "$vk" "$(echo "$vk / 3 / 99658 * 1000000" | bc -l)"
printf 'per scenario, voicekeep is %.1fx faster (whole processes, same network)\n' "$(echo "($ng / 100000) / ($vk / 3 / 99658)" | bc -l)"
