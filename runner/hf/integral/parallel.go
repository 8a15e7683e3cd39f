package integral

import (
	"context"
	"runtime"
	"sync"
	"sync/atomic"
)

// ResolveWorkers is the number of goroutines a workers setting asks for:
// the setting itself, or every CPU when it is zero or negative.
func ResolveWorkers(workers int) int {
	if workers <= 0 {
		return runtime.NumCPU()
	}
	return workers
}

// ParallelFor runs body(s, i) for every i in [0, n) on at most workers
// goroutines, each with its own scratch from newScratch, handing the
// indices out in increasing order as goroutines become free (callers that
// want the costliest first number their work so). It returns the first
// error of a body, or ctx.Err() when the context ends first, after every
// goroutine has stopped. The engine's one parallel loop: integrals, J/K
// builds, the MP2 and coupled-cluster transformations and the triples.
func ParallelFor[S any](ctx context.Context, workers, n int, newScratch func() S, body func(s S, i int) error) error {
	var next atomic.Int64
	var mu sync.Mutex
	var first error
	var failed atomic.Bool
	fail := func(err error) {
		mu.Lock()
		if first == nil {
			first = err
		}
		mu.Unlock()
		failed.Store(true)
	}
	var wg sync.WaitGroup
	for range min(workers, n) {
		wg.Go(func() {
			s := newScratch()
			for !failed.Load() {
				if err := ctx.Err(); err != nil {
					fail(err)
					return
				}
				i := int(next.Add(1)) - 1
				if i >= n {
					return
				}
				if err := body(s, i); err != nil {
					fail(err)
					return
				}
			}
		})
	}
	wg.Wait()
	if first == nil {
		first = ctx.Err()
	}
	return first
}
