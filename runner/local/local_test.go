package local_test

import (
	"context"
	"sync/atomic"
	"testing"
	"time"

	"wellscan/runner"
	"wellscan/runner/local"
)

func TestQueue_Run_EveryTaskOnce(t *testing.T) {
	q := local.New(3)
	in := make(chan runner.Task)
	out := make(chan runner.Completion)
	var running, peak atomic.Int32
	w := func(ctx context.Context, task runner.Task) runner.Completion {
		n := running.Add(1)
		for {
			p := peak.Load()
			if n <= p || peak.CompareAndSwap(p, n) {
				break
			}
		}
		time.Sleep(2 * time.Millisecond)
		running.Add(-1)
		return runner.Completion{Task: task}
	}
	errc := make(chan error, 1)
	go func() { errc <- q.Run(t.Context(), w, in, out) }()
	go func() {
		for i := range 30 {
			in <- runner.Task{Key: string(rune('a' + i))}
		}
		close(in)
	}()
	seen := map[string]int{}
	for len(seen) < 30 {
		c := <-out
		seen[c.Task.Key]++
	}
	if err := <-errc; err != nil {
		t.Fatal(err)
	}
	for k, n := range seen {
		if n != 1 {
			t.Errorf("task %s completed %d times", k, n)
		}
	}
	if p := peak.Load(); p > 3 {
		t.Errorf("%d tasks ran at once on 3 workers", p)
	}
}

func TestQueue_Run_CancelledTasksInterrupted(t *testing.T) {
	q := local.New(1)
	ctx, cancel := context.WithCancel(t.Context())
	cancel()
	in := make(chan runner.Task, 1)
	out := make(chan runner.Completion, 1)
	in <- runner.Task{Key: "x"}
	close(in)
	called := false
	if err := q.Run(ctx, func(context.Context, runner.Task) runner.Completion { called = true; return runner.Completion{} }, in, out); err != nil {
		t.Fatal(err)
	}
	if c := <-out; !c.Interrupted || called {
		t.Errorf("completion %+v (worker called %v), want interrupted without running", c, called)
	}
}
