package runner_test

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"wellscan/runner"
	"wellscan/runner/local"
	"wellscan/runner/model"
)

// BenchmarkStore_Commit measures point transitions per second: each
// transition is a record write plus its event, batch of them per
// transaction (the runner coalesces what happens in one loop cycle).
func BenchmarkStore_Commit(b *testing.B) {
	for _, batch := range []int{1, 10, 100} {
		b.Run(fmt.Sprintf("batch=%d", batch), func(b *testing.B) {
			dir := b.TempDir()
			st, err := runner.Open(dir, runner.OpenOptions{})
			if err != nil {
				b.Fatal(err)
			}
			defer st.Close()
			e := -112.7
			recs := make([]runner.PointRecord, batch)
			evs := make([]runner.Event, batch)
			n := 0
			b.ReportAllocs()
			start := time.Now()
			for b.Loop() {
				for i := range recs {
					recs[i] = runner.PointRecord{Key: fmt.Sprintf("r=%.5f", float64(n%500)/100), Values: []float64{float64(n)}, State: runner.Done, Energy: &e, Attempts: 1, Round: 1}
					evs[i] = runner.Event{Kind: "done", Key: recs[i].Key}
					n++
				}
				if err := st.Commit(recs, nil, evs); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(n)/time.Since(start).Seconds(), "transitions/s")
		})
	}
}

// BenchmarkRunner_OverheadPerPoint runs whole model scans with no delay
// and reports wall time per point: everything the orchestration does
// (store transactions, result files, geometry, guess lookup, status
// snapshots, the energy-jump check), since the model's own work is a few
// microseconds. Sub-benchmarks: scan size and local workers.
func BenchmarkRunner_OverheadPerPoint(b *testing.B) {
	for _, n := range []int{100, 1000} {
		for _, workers := range []int{1, 4} {
			b.Run(fmt.Sprintf("points=%d/workers=%d", n, workers), func(b *testing.B) {
				benchOverhead(b, n, workers)
			})
		}
	}
}

func benchOverhead(b *testing.B, n, workers int) {
	text := strings.Replace(morseSpec, "from = 1.00\nto = 1.30\nstep = 0.05", fmt.Sprintf("from = 0.90\nto = 2.89\ncount = %d", n), 1)
	text = strings.Replace(text, "[refine]", "[refine]\nadaptive = false\nmax_points = 100000", 1)
	b.ReportAllocs()
	var total time.Duration
	for b.Loop() {
		b.StopTimer()
		dir, spec := scanDir(b, text)
		b.StartTimer()
		start := time.Now()
		// The default status snapshot interval, as a user gets it.
		st, err := runner.OpenScan(dir, spec, runner.OpenOptions{})
		if err != nil {
			b.Fatal(err)
		}
		mb, err := model.New(spec)
		if err != nil {
			b.Fatal(err)
		}
		r := &runner.Runner{Spec: spec, Dir: dir, Store: st, Backend: mb, Queue: local.New(workers)}
		sum, err := r.Run(b.Context())
		st.Close()
		if err != nil {
			b.Fatal(err)
		}
		total += time.Since(start)
		if sum.Counts[runner.Done] != n {
			b.Fatalf("%d points done, want %d", sum.Counts[runner.Done], n)
		}
	}
	b.ReportMetric(float64(total.Microseconds())/1000/float64(b.N*n), "ms/point")
}

// BenchmarkPointFiles_Floor measures what the filesystem charges for the
// files every point needs whatever the orchestration does: its directory
// and one new file in it (a scan point on the model backend creates three:
// the directory, the model's state file and the result file). It puts the
// overhead benchmark's ms/point in proportion.
func BenchmarkPointFiles_Floor(b *testing.B) {
	dir := filepath.Join(b.TempDir(), runner.PointsDir)
	if err := os.Mkdir(dir, 0o700); err != nil {
		b.Fatal(err)
	}
	data := make([]byte, 600) // about a result file
	n := 0
	for b.Loop() {
		d := filepath.Join(dir, fmt.Sprintf("r=%.5f", float64(n)/1000))
		n++
		if err := os.Mkdir(d, 0o700); err != nil {
			b.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(d, "f"), data, 0o600); err != nil {
			b.Fatal(err)
		}
	}
}
