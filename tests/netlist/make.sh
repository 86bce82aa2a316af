#!/bin/sh
# Regenerates the netlist test's reference data: voicekeep writes each case's SPICE netlist
# (CASE.cir) and ngspice solves it (CASE.txt, its AC analysis, written by `wrdata`).
# `cargo test` reads both and needs no ngspice.
#
#     sh tests/netlist/make.sh       (needs ngspice: apt-get install -y ngspice; run from the
#                                     project root after `cargo build --release`)
set -eu
here=$(cd "$(dirname "$0")" && pwd)
root=$(cd "$here/../.." && pwd)
vk="$root/target/release/voicekeep"
cd "$root"
while read -r job scenario; do
    stem=$(basename "$job" .yaml)
    "$vk" netlist "$job" --scenario "$scenario" -o "$here/$stem-$scenario.cir" >/dev/null
    (cd "$here" && ngspice -b "$stem-$scenario.cir" >/dev/null 2>&1)
    echo "$stem-$scenario: $(wc -l < "$here/$stem-$scenario.txt") lines"
done <<'CASES'
samples/two-way-recap.yaml as-designed
samples/two-way-recap.yaml as-found
samples/two-way-recap.yaml as-left
samples/substitute-tweeter.yaml as-found
samples/substitute-tweeter.yaml as-left
tests/netlist/film-loss.yaml as-left
CASES
