#!/usr/bin/env bash
# Times ngspice -b on the three-way reference network at 100,000 log-spaced points, for
# comparison with `cargo bench` (needs ngspice: apt-get install -y ngspice).
set -euo pipefail
here=$(cd "$(dirname "$0")/.." && pwd)
tmp=$(mktemp -d)
sed -e 's/^ac dec 20 20 20k/ac dec 33333 20 20k/' -e 's/^wrdata .*/print v(W1) >\/dev\/null/' "$here/tests/reference/three-way.cir" > "$tmp/bench.cir"
start=$(date +%s.%N)
ngspice -b "$tmp/bench.cir" > /dev/null 2>&1
end=$(date +%s.%N)
echo "ngspice -b, three-way reference network, 100000 points: $(echo "$end - $start" | bc) s"
rm -rf "$tmp"
