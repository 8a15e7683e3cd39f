package runner_test

import (
	"fmt"
	"math"
	"strings"
	"syscall"
	"testing"
	"time"

	"wellscan/runner"
	"wellscan/runner/local"
	"wellscan/runner/model"
)

// BenchmarkRunner_PerPointScaling runs whole model scans of 1,000 to
// 10,000 points (1-D, and 2-D on a square grid) with a progress observer
// attached, as the command line has, and reports wall time per point. The
// model's own work is microseconds, so ms/point is the orchestration's
// cost; it must not grow with the scan (issue 16: per-point cost at 10,000
// points ≤ 1.2× that at 1,000). Most of it is the filesystem: compare
// BenchmarkPointFiles_Floor.
//
//	go test -run '^$' -bench PerPointScaling -benchtime=1x -count=5 ./runner/
func BenchmarkRunner_PerPointScaling(b *testing.B) {
	for _, dims := range []int{1, 2} {
		for _, n := range []int{1000, 3000, 10000} {
			b.Run(fmt.Sprintf("dims=%d/points=%d", dims, n), func(b *testing.B) {
				benchScaling(b, dims, n, 1)
			})
		}
	}
}

func scalingSpec(dims, n int) (string, int) {
	if dims == 1 {
		text := strings.Replace(morseSpec, "from = 1.00\nto = 1.30\nstep = 0.05", fmt.Sprintf("from = 0.90\nto = 2.89\ncount = %d", n), 1)
		return strings.Replace(text, "[refine]", "[refine]\nadaptive = false\nmax_points = 100000", 1), n
	}
	side := int(math.Round(math.Sqrt(float64(n))))
	text := fmt.Sprintf(`title = "scaling"
[molecule]
geometry = """
O 0 0 0
H 0 0.757 0.586
H 0 -0.757 0.586
"""
[[scan]]
name = "r1"
bond = [1, 2]
from = 0.80
to = 1.40
count = %d
[[scan]]
name = "r2"
bond = [1, 3]
from = 0.80
to = 1.40
count = %d
[refine]
adaptive = false
max_points = 100000
[engine]
kind = "model"
[engine.model]
offset = -76.0
[[engine.model.term]]
shape = "morse"
coordinate = "r1"
depth = 0.2
width = 1.2
center = 1.81
[[engine.model.term]]
shape = "morse"
coordinate = "r2"
depth = 0.2
width = 1.2
center = 1.81
`, side, side)
	return text, side * side
}

func benchScaling(b *testing.B, dims, n, workers int) {
	text, want := scalingSpec(dims, n)
	b.ReportAllocs()
	var total, cpu time.Duration
	for b.Loop() {
		b.StopTimer()
		dir, spec := scanDir(b, text)
		b.StartTimer()
		start, cpu0 := time.Now(), processCPU()
		st, err := runner.OpenScan(dir, spec, runner.OpenOptions{})
		if err != nil {
			b.Fatal(err)
		}
		mb, err := model.New(spec)
		if err != nil {
			b.Fatal(err)
		}
		events := 0
		r := &runner.Runner{Spec: spec, Dir: dir, Store: st, Backend: mb, Queue: local.New(workers),
			OnEvent: func(e runner.Event) {
				if e.Progress != nil {
					events++
				}
			}}
		sum, err := r.Run(b.Context())
		st.Close()
		if err != nil {
			b.Fatal(err)
		}
		total += time.Since(start)
		cpu += processCPU() - cpu0
		if sum.Counts[runner.Done] != want {
			b.Fatalf("%d points done, want %d", sum.Counts[runner.Done], want)
		}
	}
	b.ReportMetric(float64(total.Microseconds())/1000/float64(b.N*want), "ms/point")
	// CPU time (user + system) of the whole process per point: less
	// sensitive than wall time to other work on a shared machine.
	b.ReportMetric(float64(cpu.Microseconds())/1000/float64(b.N*want), "cpu-ms/point")
}

// processCPU is the user plus system CPU time this process has used.
func processCPU() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
