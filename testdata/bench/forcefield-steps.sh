#!/usr/bin/env bash
# Step-size sensitivity of the water RHF/6-31G* force field: harmonic
# wavenumbers against [forcefield] hessian_step and VPT2 fundamentals against
# quartic_step (the other step at its default). Prints one line per run.
# Usage: bash testdata/bench/forcefield-steps.sh   (from the repository root)
set -euo pipefail
cd "$(dirname "$0")/../.."
export PATH="/usr/local/go/bin:$PATH"
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
go build -o "$tmp/wellscan" ./cmd/wellscan
base=testdata/examples/water-forcefield/scan.toml
run() { # name, extra [forcefield] lines
  d="$tmp/$1"; mkdir -p "$d"
  sed "s/^order = \"quartic\"/order = \"quartic\"\n$2/; s/^quartic = true//" "$base" > "$d/scan.toml"
  start=$(date +%s.%N)
  "$tmp/wellscan" run -q "$d" > "$d/out.txt"
  end=$(date +%s.%N)
  h=$(sed -n '/^## parent/,/^VPT2/p' "$d/out.txt" | awk -F'|' '/^\| ν/ {printf "%s ", $3}')
  v=$(sed -n '/^VPT2 (/,/^## D2O/p' "$d/out.txt" | awk -F'|' '/^\| ν[0-9] / {printf "%s ", $4}')
  printf '%-22s harmonic %s| fundamentals %s| %.2f s\n' "$1" "$h" "$v" "$(echo "$end - $start" | bc)"
}
for s in 0.005 0.01 0.02 0.04; do run "hessian_step=$s" "hessian_step = $s"; done
for s in 0.05 0.1 0.2 0.3 0.5; do run "quartic_step=$s" "quartic_step = $s"; done
echo "load: $(cut -d' ' -f1-3 /proc/loadavg)"
