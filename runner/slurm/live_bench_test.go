//go:build slurm

package slurm

import (
	"context"
	"fmt"
	"testing"
	"time"
)

// BenchmarkLive_Sbatch measures one `sbatch --parsable FILE` of a prepared
// one-task array script (the latency of a submission).
func BenchmarkLive_Sbatch(b *testing.B) {
	e := newLiveEnv(b)
	_, script := e.prepareN(Resources{Time: time.Minute, MemMB: 50, Extra: []string{"--hold"}}, 1)
	b.ReportAllocs()
	for b.Loop() {
		if _, err := e.client.submit(b.Context(), script); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkLive_Squeue measures the batched status query for a scan whose
// job name lists n held array tasks.
func BenchmarkLive_Squeue(b *testing.B) {
	for _, n := range []int{1, 100, 1000} {
		b.Run(fmt.Sprintf("tasks=%d", n), func(b *testing.B) {
			e := newLiveEnv(b)
			_, script := e.prepareN(Resources{Time: time.Minute, MemMB: 50, Extra: []string{"--hold"}}, n)
			if _, err := e.client.submit(b.Context(), script); err != nil {
				b.Fatal(err)
			}
			b.ReportAllocs()
			for b.Loop() {
				tasks, err := e.client.listStatus(b.Context(), e.jobName)
				if err != nil {
					b.Fatal(err)
				}
				if len(tasks) != n {
					b.Fatalf("listed %d tasks, want %d", len(tasks), n)
				}
			}
		})
	}
}

// BenchmarkLive_Throughput submits one array of 40 trivial tasks per
// iteration and waits until all are COMPLETED; it reports tasks/s.
// Run with -benchtime=1x: one iteration takes 10-40 s.
func BenchmarkLive_Throughput(b *testing.B) {
	const n = 40
	for _, export := range []string{"NONE", "ALL"} {
		b.Run("export="+export, func(b *testing.B) {
			var total time.Duration
			for b.Loop() {
				e := newLiveEnv(b)
				_, script := e.prepareN(Resources{Time: time.Minute, MemMB: 50, Export: export}, n)
				start := time.Now()
				id, err := e.client.submit(b.Context(), script)
				if err != nil {
					b.Fatal(err)
				}
				e.poller.Track(id, 0, n, start)
				ctx, cancel := context.WithTimeout(b.Context(), 5*time.Minute)
				_, err = e.poller.Watch(ctx, livePolicy(), nil, func(s pollSnapshot) bool {
					return s.Counts()[classCompleted] == n
				})
				cancel()
				if err != nil {
					b.Fatal(err)
				}
				total += time.Since(start)
			}
			b.ReportMetric(float64(n*b.N)/total.Seconds(), "tasks/s")
		})
	}
}
