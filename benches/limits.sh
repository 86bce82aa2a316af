#!/usr/bin/env bash
# Time and peak memory of voicekeep on inputs at (or past) each documented limit, one line a
# case: what ran, its exit code, wall seconds and peak resident memory. Not a test: the
# figures go in DEVELOPERS.md. Every case should finish in seconds and under 1 GB.
# Needs GNU time and python3 (apt-get install -y time python3) and a release build
# (cargo build --release).
set -uo pipefail
here=$(cd "$(dirname "$0")/.." && pwd)
bin="${VOICEKEEP_BIN:-$here/target/release/voicekeep}"
[ -x "$bin" ] || { echo "build first: cargo build --release" >&2; exit 2; }
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
python3 "$here/benches/limits.py" "$tmp"
run() {
  local name=$1; shift
  local code=0
  /usr/bin/time -f '%e %M' -o "$tmp/time" "$@" > /dev/null 2>&1 || code=$?
  read -r secs kb < <(tail -n 1 "$tmp/time")
  printf '%-48s exit %-3s %7.2f s %7d MB\n' "$name" "$code" "$secs" "$((kb / 1024))"
}
cd "$tmp"
run "check: 80,000 unknown keys"                 "$bin" check keys.yaml
run "check: 1 MB of blank lines in notes"        "$bin" check blank.yaml
run "check: a 2 GB table (sparse)"               "$bin" check bigtable.yaml
run "check: a 2 GB job file (sparse)"            "$bin" check big.yaml
run "solve: Monte Carlo at the largest runs"     "$bin" solve montecarlo.yaml
run "check: 12 parts fitted together"            "$bin" check fit12.yaml
run "check: 12 parts fitted, a pair"             "$bin" check fit12-pair.yaml
run "check: 12 parts fitted, 4 cabinets"         "$bin" check fit12-4.yaml
run "check: 12 parts fitted, 16 cabinets"        "$bin" check fit12-16.yaml
run "report: shop template, endless loop"        "$bin" report demo.yaml --template loop.typ -o loop.pdf
run "report: shop template, 20,000 page breaks"  "$bin" report demo.yaml --template pages.typ -o pages.pdf
run "report: archive, names in eight scripts"    "$bin" report world.yaml --template archive -o world.pdf
run "report: archive, the text budget full"      "$bin" report fulltext.yaml --template archive -o fulltext.pdf
run "batch: four jobs with the text budget full" "$bin" batch batch --out batch-out
