package hf_test

import (
	"fmt"
	"os"
	"strings"
	"testing"

	"wellscan/runner"
	"wellscan/runner/hf"
)

// coScanSpec is the 30-point CO stretch of BenchmarkScan_ContinuationGuess
// (1.00–1.58 Å, RHF/6-31G*) as a scan spec, refinement off; GUESS is
// replaced by the engine.guess value.
const coScanSpec = `[molecule]
geometry = """
C 0 0 0
O 0 0 1.13
"""
[[scan]]
name = "r"
bond = [1, 2]
from = 1.00
to = 1.58
count = 30
[refine]
adaptive = false
[engine]
kind = "builtin"
method = "rhf"
basis = "6-31G*"
guess = "GUESS"
`

// BenchmarkScanRunner_COGuess runs the CO scan through the real round loop
// (one worker, so every point after the first has done neighbours) with
// the continuation guess on ("neighbour": the nearest done point's
// orbitals, extrapolated along the line when two or three are done) and
// off ("fresh": the engine's cold guess), and reports SCF iterations per
// point — the figure: continuation ≤ 0.7 × cold. The
// "neighbour-relative" mode runs the neighbour mode with the scan
// directory given relative to the working directory (as `wellscan run
// DIR` does), and also reports on how many points the guess came from a
// neighbour.
//
//	go test -run '^$' -bench ScanRunner_COGuess -benchtime=1x ./runner/hf/
func BenchmarkScanRunner_COGuess(b *testing.B) {
	for _, mode := range []string{"fresh", "neighbour", "neighbour-relative"} {
		b.Run(mode, func(b *testing.B) {
			var iters, points, cont int
			for b.Loop() {
				text := replaceGuess(coScanSpec, strings.TrimSuffix(mode, "-relative"))
				wrap := func(be *hf.Backend) runner.Backend { return be }
				var recs []runner.PointRecord
				if strings.HasSuffix(mode, "-relative") {
					b.StopTimer()
					b.Chdir(b.TempDir())
					if err := os.Mkdir("scan", 0o700); err != nil {
						b.Fatal(err)
					}
					b.StartTimer()
					recs = runScanTextAt(b, "scan", text, 1, wrap)
				} else {
					recs = runScanText(b, text, 1, wrap)
				}
				for _, rec := range recs {
					if rec.State != runner.Done {
						b.Fatalf("%s: %s (%s)", rec.Key, rec.State, rec.LastError)
					}
					iters += rec.Iterations
					points++
					if rec.Flags.FromNeighbour {
						cont++
					}
				}
			}
			b.ReportMetric(float64(iters)/float64(points), "iterations/point")
			b.ReportMetric(float64(cont)/float64(points), "continued/point")
		})
	}
}

func replaceGuess(s, mode string) string {
	if mode == "fresh" {
		return strings.Replace(s, `guess = "GUESS"`, `guess = "fresh"`, 1)
	}
	return strings.Replace(s, `guess = "GUESS"`+"\n", "", 1)
}

// BenchmarkScanRunner_COWorkers runs the 30-point CO scan with the
// continuation guess on one and two local workers and reports SCF
// iterations per point and the share of points that started from a
// neighbour. Issue 16: two workers ≤ 1.05 × the iterations of one.
//
//	go test -run '^$' -bench ScanRunner_COWorkers -benchtime=1x ./runner/hf/
func BenchmarkScanRunner_COWorkers(b *testing.B) {
	for _, workers := range []int{1, 2} {
		b.Run(fmt.Sprintf("workers=%d", workers), func(b *testing.B) {
			var iters, points, cont int
			for b.Loop() {
				recs := runScanText(b, replaceGuess(coScanSpec, "neighbour"), workers, func(be *hf.Backend) runner.Backend { return be })
				for _, rec := range recs {
					if rec.State != runner.Done {
						b.Fatalf("%s: %s (%s)", rec.Key, rec.State, rec.LastError)
					}
					iters += rec.Iterations
					points++
					if rec.Flags.FromNeighbour {
						cont++
					}
				}
			}
			b.ReportMetric(float64(iters)/float64(points), "iterations/point")
			b.ReportMetric(float64(cont)/float64(points), "continued/point")
		})
	}
}
