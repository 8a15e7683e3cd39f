package integral

import (
	"context"
	"errors"
	"sync/atomic"
	"testing"
)

func TestParallelFor_EveryIndexOnce(t *testing.T) {
	for _, tc := range []struct{ workers, n int }{{1, 0}, {1, 7}, {3, 1}, {4, 1000}} {
		counts := make([]atomic.Int32, tc.n)
		var scratches atomic.Int32
		err := ParallelFor(context.Background(), tc.workers, tc.n, func() int { return int(scratches.Add(1)) }, func(_ int, i int) error {
			counts[i].Add(1)
			return nil
		})
		if err != nil {
			t.Fatalf("workers %d, n %d: %v", tc.workers, tc.n, err)
		}
		for i := range counts {
			if c := counts[i].Load(); c != 1 {
				t.Errorf("workers %d, n %d: index %d ran %d times", tc.workers, tc.n, i, c)
			}
		}
		if s := int(scratches.Load()); s > min(tc.workers, tc.n) {
			t.Errorf("workers %d, n %d: %d scratches, want at most one per goroutine", tc.workers, tc.n, s)
		}
	}
}

func TestParallelFor_FirstErrorAndCancel(t *testing.T) {
	boom := errors.New("boom")
	err := ParallelFor(context.Background(), 2, 100, func() struct{} { return struct{}{} }, func(_ struct{}, i int) error {
		if i == 10 {
			return boom
		}
		return nil
	})
	if !errors.Is(err, boom) {
		t.Errorf("error %v, want the body's", err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	var ran atomic.Int32
	err = ParallelFor(ctx, 2, 100, func() struct{} { return struct{}{} }, func(_ struct{}, i int) error {
		ran.Add(1)
		return nil
	})
	if !errors.Is(err, context.Canceled) || ran.Load() != 0 {
		t.Errorf("cancelled context: error %v after %d bodies, want context.Canceled after none", err, ran.Load())
	}
}
