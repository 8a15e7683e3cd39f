#!/usr/bin/env bash
# Runs BenchmarkDirectFock against the integral-direct Fock build as it was
# before issue 16 (the parent of commit c4fbd49: full direct builds every
# iteration, no difference densities), so that goal 5b (direct build per
# iteration ≥ 3× faster) can be measured side by side with the current tree.
#
#   bash runner/hf/testdata/bench/old-direct.sh [go test flags...]
#   e.g. WELLSCAN_BENCH_BASES=6-31G* bash runner/hf/testdata/bench/old-direct.sh -count 3
#
# It unpacks that commit with git archive into a temporary directory (no
# worktree is created), copies this tree's benchmark files into it and
# runs the benchmark there. Environment variables of BenchmarkDirectFock
# (WELLSCAN_BENCH_DIRECT, WELLSCAN_BENCH_BASES, WELLSCAN_BENCH_WORKERS)
# pass through.
set -euo pipefail
here=$(cd "$(dirname "$0")/../.." && pwd) # runner/hf
repo=$(git -C "$here" rev-parse --show-toplevel)
old=$(git -C "$repo" rev-parse c4fbd49^)
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
git -C "$repo" archive "$old" | tar -x -C "$dir"
cp "$here/alkane_helpers_test.go" "$here/directfock_bench_test.go" "$dir/runner/hf/"
cd "$dir"
echo "old tree: $old"
go test -run '^$' -bench DirectFock "$@" ./runner/hf/
