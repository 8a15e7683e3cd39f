#!/usr/bin/env bash
# Issue 16 goal 5b: the integral-direct Fock build per SCF iteration now
# against the build before difference densities (the parent of commit
# c4fbd49), side by side on the same machine.
#
#   bash testdata/bench/old-direct.sh            # C4H10, 6-31G* and cc-pVDZ
#   WELLSCAN_BENCH_DIRECT=3-5 WELLSCAN_BENCH_BASES=6-31G* bash testdata/bench/old-direct.sh
#
# The old tree is checked out into a temporary git worktree, given this
# tree's BenchmarkDirectFock (it uses only API both trees have) and the
# alkane builder, and run first; then this tree. Compare the ms/iter
# (wall) and cpu-ms/iter columns. Needs a git checkout with history.
set -euo pipefail
cd "$(dirname "$0")/../.."
export PATH="/usr/local/go/bin:$PATH"
old=$(mktemp -d)
trap 'git worktree remove --force "$old" >/dev/null 2>&1 || rm -rf "$old"' EXIT
git worktree add -q --detach "$old" c4fbd49^
cp runner/hf/directfock_bench_test.go runner/hf/alkane_helpers_test.go "$old/runner/hf/"
export WELLSCAN_BENCH_BASES="${WELLSCAN_BENCH_BASES:-6-31G*,cc-pVDZ}"
echo "== before difference densities (c4fbd49^), load: $(cut -d' ' -f1-3 /proc/loadavg)"
(cd "$old" && go test -run '^$' -bench '^BenchmarkDirectFock$' -benchtime 1x ./runner/hf/ | grep Benchmark)
echo "== this tree, load: $(cut -d' ' -f1-3 /proc/loadavg)"
go test -run '^$' -bench '^BenchmarkDirectFock$' -benchtime 1x ./runner/hf/ | grep Benchmark
