// Package local runs scan points on this machine: a pool of worker
// goroutines, each running one point at a time in process.
//
// # Concurrency
//
// Run starts Workers goroutines and returns when all have finished; the
// Worker it is given is called from all of them at once.
package local

import (
	"context"
	"runtime"
	"sync"

	"wellscan/runner"
)

// Queue is the local worker pool, a [runner.Pool]. The zero value uses
// every CPU.
type Queue struct {
	// Workers is the number of points computed at once; 0: runtime.NumCPU().
	Workers int
}

var _ runner.Pool = (*Queue)(nil)

// New returns a pool of n workers (0: one per CPU).
func New(n int) *Queue { return &Queue{Workers: n} }

// Name implements runner.Queue.
func (q *Queue) Name() string { return "local" }

// Slots implements runner.Queue.
func (q *Queue) Slots() int {
	if q.Workers > 0 {
		return q.Workers
	}
	return runtime.NumCPU()
}

// Run implements runner.Pool: each worker takes tasks from in until it is
// closed. After ctx is cancelled, tasks still arriving are returned as
// interrupted without running.
func (q *Queue) Run(ctx context.Context, w runner.Worker, in <-chan runner.Task, out chan<- runner.Completion) error {
	var wg sync.WaitGroup
	for range q.Slots() {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for t := range in {
				if ctx.Err() != nil {
					out <- runner.Completion{Task: t, Interrupted: true}
					continue
				}
				out <- w(ctx, t)
			}
		}()
	}
	wg.Wait()
	return nil
}
