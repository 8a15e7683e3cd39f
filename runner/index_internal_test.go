package runner

import (
	"context"
	"fmt"
	"math/rand/v2"
	"testing"
	"time"

	"wellscan/planner"
)

// TestCoordTree_Nearest_MatchesLinearScan checks the indexed nearest
// neighbour against the linear scan the round loop used before (same
// squared distance, ties by key) on seeded random point sets: grids
// (many shared values, many ties) and scattered points, 1 to 3
// coordinates, with a random half accepted.
func TestCoordTree_Nearest_MatchesLinearScan(t *testing.T) {
	seed := uint64(16)
	t.Logf("seed %d", seed)
	rng := rand.New(rand.NewPCG(seed, 1))
	for dims := 1; dims <= 3; dims++ {
		for _, grid := range []bool{true, false} {
			var tree coordTree
			vals := map[string][]float64{}
			accepted := map[string]bool{}
			for i := range 300 {
				v := make([]float64, dims)
				for j := range v {
					if grid {
						v[j] = 0.1 * float64(rng.IntN(8))
					} else {
						v[j] = rng.Float64()
					}
				}
				k := fmt.Sprintf("p%03d", i)
				vals[k] = v
				accepted[k] = rng.IntN(2) == 0
				tree.insert(v, k)
			}
			for q := range 200 {
				x := make([]float64, dims)
				for j := range x {
					x[j] = rng.Float64() * 0.8
				}
				var got nnBest
				tree.nearest(x, 0, func(k string) bool { return accepted[k] }, &got)
				want := nnBest{}
				for k, v := range vals {
					if !accepted[k] {
						continue
					}
					d := 0.0
					for i := range v {
						d += (v[i] - x[i]) * (v[i] - x[i])
					}
					want.offer(k, d)
				}
				if got != want {
					t.Fatalf("dims %d grid %v query %d at %v: nearest %+v, want %+v (linear scan)", dims, grid, q, x, got, want)
				}
			}
		}
	}
}

// TestCoordTree_LineNext checks the scan-line neighbours on a 2-D grid with
// a hole.
func TestCoordTree_LineNext(t *testing.T) {
	var tree coordTree
	for i := range 5 {
		for j := range 4 {
			if i == 2 && j == 1 {
				continue // the hole
			}
			tree.insert([]float64{float64(i), float64(j)}, fmt.Sprintf("%d,%d", i, j))
		}
	}
	for _, tc := range []struct {
		q         []float64
		axis, dir int
		want      string
	}{
		{[]float64{1, 1}, 0, 1, "3,1"}, // across the hole at 2,1
		{[]float64{1, 1}, 0, -1, "0,1"},
		{[]float64{1, 1}, 1, 1, "1,2"},
		{[]float64{1, 1}, 1, -1, "1,0"},
		{[]float64{4, 3}, 0, 1, ""},
		{[]float64{2, 0}, 1, 1, "2,2"},
	} {
		got := tree.lineNext(tc.q, tc.axis, tc.dir, 64)
		if (tc.want == "" && len(got) != 0) || (tc.want != "" && (len(got) != 1 || got[0] != tc.want)) {
			t.Errorf("lineNext(%v, axis %d, dir %d) = %v, want [%s]", tc.q, tc.axis, tc.dir, got, tc.want)
		}
	}
}

// inProcessQueue is a Pool stand-in with slots; the dispatcher tests
// never run it.
type inProcessQueue struct{ slots int }

func (q inProcessQueue) Name() string { return "test" }
func (q inProcessQueue) Slots() int   { return q.slots }
func (q inProcessQueue) Run(context.Context, Worker, <-chan Task, chan<- Completion) error {
	return nil
}

// guessBackend is a backend stand-in that continues from neighbours; the
// dispatcher tests never compute with it.
type guessBackend struct{}

func (guessBackend) Name() string                                   { return "test" }
func (guessBackend) UsesGuess() bool                                { return true }
func (guessBackend) Compute(context.Context, Task) (Outcome, error) { return Outcome{}, nil }

// TestDispatcher_LineOrder follows the dispatcher over a 9-point line with
// two workers: the middle point first, no second point until it is done
// (a point beside a running one would start cold), then the points next
// to done ones, nearest first.
func TestDispatcher_LineOrder(t *testing.T) {
	r := &scanRun{Runner: Runner{Spec: &planner.Spec{}, Queue: inProcessQueue{2}, Backend: guessBackend{}}, recs: map[string]*PointRecord{}}
	for i := range 9 {
		k := fmt.Sprintf("x%d", i)
		r.recs[k] = &PointRecord{Key: k, Values: []float64{float64(i)}, State: Planned, Round: 1}
	}
	d := newDispatcher(r)
	take := func() *PointRecord {
		rec := d.next()
		if rec != nil {
			rec.State = Running
			d.dispatched(rec)
		}
		return rec
	}
	finish := func(rec *PointRecord) {
		rec.State, rec.Orbitals = Done, "points/"+rec.Key+"/orbitals.bin"
		r.indexPoint(rec)
		d.finished(rec)
	}
	first := take()
	if first == nil || first.Key != "x4" {
		t.Fatalf("first point %v, want x4 (the middle)", first)
	}
	if rec := d.next(); rec != nil {
		t.Fatalf("second worker got %s while nothing is done, want to wait", rec.Key)
	}
	finish(first)
	a, b := take(), take()
	if a == nil || b == nil || a.Key != "x3" || b.Key != "x5" {
		t.Fatalf("after x4: %v, %v, want x3 and x5 (one step from x4)", a, b)
	}
	finish(b)
	if c := take(); c == nil || c.Key != "x6" {
		t.Fatalf("after x5: %v, want x6 (one step from done x5; x2 is two from x4 beside running x3)", c)
	}
	if d.len() != 5 {
		t.Errorf("%d points left, want 5", d.len())
	}
}

// TestDispatcher_ManySlots_SeedsFarApart: with four slots and nothing
// done, the workers after the first seed the points farthest from the
// running ones instead of waiting.
func TestDispatcher_ManySlots_SeedsFarApart(t *testing.T) {
	r := &scanRun{Runner: Runner{Spec: &planner.Spec{}, Queue: inProcessQueue{4}, Backend: guessBackend{}}, recs: map[string]*PointRecord{}}
	for i := range 9 {
		k := fmt.Sprintf("x%d", i)
		r.recs[k] = &PointRecord{Key: k, Values: []float64{float64(i)}, State: Planned, Round: 1}
	}
	d := newDispatcher(r)
	var got []string
	for range 3 {
		rec := d.next()
		if rec == nil {
			t.Fatalf("after %v: no point, want a seed", got)
		}
		rec.State = Running
		d.dispatched(rec)
		got = append(got, rec.Key)
	}
	// x4 (the middle), then x0 (farthest from x4, ties to the lower), then x8.
	if want := []string{"x4", "x0", "x8"}; fmt.Sprint(got) != fmt.Sprint(want) {
		t.Errorf("seeds %v, want %v", got, want)
	}
}

// TestDispatcher_PlainOrder_WithoutContinuation: a backend that does not
// continue from neighbours gets the points in coordinate order.
func TestDispatcher_PlainOrder_WithoutContinuation(t *testing.T) {
	r := &scanRun{Runner: Runner{Spec: &planner.Spec{}, Queue: inProcessQueue{2}}, recs: map[string]*PointRecord{}}
	for i := range 5 {
		k := fmt.Sprintf("x%d", i)
		r.recs[k] = &PointRecord{Key: k, Values: []float64{float64(i)}, State: Planned, Round: 1}
	}
	d := newDispatcher(r)
	for i := range 5 {
		rec := d.next()
		if want := fmt.Sprintf("x%d", i); rec == nil || rec.Key != want {
			t.Fatalf("point %d: %v, want %s", i, rec, want)
		}
		rec.State = Running
		d.dispatched(rec)
	}
}

// TestRunner_ETA_FromPointTimes: the estimate is the mean compute time of
// the points this run computed (from their result files) times the
// waves of slots still to run, not the elapsed time (which on a batch
// queue is mostly waiting) over the points recorded.
func TestRunner_ETA_FromPointTimes(t *testing.T) {
	r := &scanRun{Runner: Runner{Queue: inProcessQueue{2}}}
	if got := r.eta(5); got != 0 {
		t.Errorf("eta before any point = %s, want 0 (unknown)", got)
	}
	t0 := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	for _, s := range []time.Duration{time.Second, 3 * time.Second} {
		r.computed++
		r.measure(Result{Started: t0, Finished: t0.Add(s)})
	}
	// Mean 2 s; 5 points on 2 slots are 3 waves: 6 s.
	if got, want := r.eta(5), 6*time.Second; got != want { // exact: integer durations
		t.Errorf("eta(5) = %s, want %s", got, want)
	}
	if got := r.eta(0); got != 0 {
		t.Errorf("eta(0) = %s, want 0", got)
	}
}
