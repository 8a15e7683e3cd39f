package hf_test

import (
	"fmt"
	"os"
	"strconv"
	"syscall"
	"testing"
	"time"

	"wellscan/runner/hf"
	"wellscan/runner/hf/basis"
)

// BenchmarkDirectFock runs integral-direct RHF (Memory −1: no integral is
// kept) on one goroutine for alkanes CnH2n+2 and reports the SCF
// iterations and the mean wall time of one iteration (SCF time over
// iterations: the Fock build dominates it; diagonalising N ≤ 150 takes
// milliseconds), in wall time and in CPU time of the process (user +
// system, less sensitive to other programs on a shared machine). Issue 16 goal 5b compares this number with the direct
// build before difference densities (commit c4fbd49's parent):
// testdata/bench/old-direct.sh runs this same file against that tree.
//
//	go test -run '^$' -bench DirectFock -count 3 ./runner/hf/
//	WELLSCAN_BENCH_DIRECT=3-4 for another range of n, WELLSCAN_BENCH_BASES=6-31G*,cc-pVDZ
//
// It uses only API that both trees have (hf.Energy, Options.Memory,
// Result.Iterations, Result.SCFTime, Result.Energy).
func BenchmarkDirectFock(b *testing.B) {
	lo, hi := 4, 4
	if v := os.Getenv("WELLSCAN_BENCH_DIRECT"); v != "" {
		if _, err := fmt.Sscanf(v, "%d-%d", &lo, &hi); err != nil {
			b.Fatalf("WELLSCAN_BENCH_DIRECT=%q: want FROM-TO", v)
		}
	}
	sets := []string{"6-31G*", "cc-pVDZ"}
	if v := os.Getenv("WELLSCAN_BENCH_BASES"); v != "" {
		sets = splitComma(v)
	}
	workers := 1
	if v, err := strconv.Atoi(os.Getenv("WELLSCAN_BENCH_WORKERS")); err == nil && v > 0 {
		workers = v
	}
	for _, bs := range sets {
		set, err := basis.Lookup(bs)
		if err != nil {
			b.Fatal(err)
		}
		for n := lo; n <= hi; n++ {
			mol := alkane(b, n)
			b.Run(fmt.Sprintf("%s/C%d", bs, n), func(b *testing.B) {
				var res *hf.Result
				var scf time.Duration
				var iters int
				cpu0 := cpuTime()
				for b.Loop() {
					res, err = hf.Energy(b.Context(), mol, hf.Options{Method: hf.RHF, Basis: set, Workers: workers, Memory: -1})
					if err != nil {
						b.Fatal(err)
					}
					scf += res.SCFTime
					iters += res.Iterations
				}
				cpu := cpuTime() - cpu0
				b.ReportMetric(float64(res.Iterations), "iterations")
				b.ReportMetric(float64(cpu.Milliseconds())/float64(max(1, iters)), "cpu-ms/iter")
				b.ReportMetric(float64(scf.Milliseconds())/float64(max(1, iters)), "ms/iter")
				b.ReportMetric(res.Energy, "Eh")
			})
		}
	}
}

// cpuTime is the user + system CPU time of this process so far.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

func splitComma(s string) []string {
	var out []string
	start := 0
	for i := 0; i <= len(s); i++ {
		if i == len(s) || s[i] == ',' {
			if i > start {
				out = append(out, s[start:i])
			}
			start = i + 1
		}
	}
	return out
}
