package runner_test

import (
	"fmt"
	"math"
	"testing"

	"wellscan/runner"
)

// A full-period torsion wraps: a spike on the first point of the grid
// (0°) has the last point (330°) as its neighbour and must be caught; on
// an open line the end points are never judged.
func TestFindJumpsPeriodic_SeamPoint(t *testing.T) {
	var recs []runner.PointRecord
	for i := range 12 {
		x := float64(i) * 30 * math.Pi / 180
		e := -79.2 + 0.0025*(1-math.Cos(3*x)) // V3 = 0.005 E_h (invented)
		if i == 0 {
			e += 0.3 // another SCF state (invented size)
		}
		recs = append(recs, runner.PointRecord{Key: fmt.Sprintf("tau=%03d", i*30), Values: []float64{x}, State: runner.Done, Energy: &e})
	}
	if js := runner.FindJumps(recs, 0.05); len(js) != 0 {
		t.Fatalf("open line judged its end point: %+v", js)
	}
	js := runner.FindJumpsPeriodic(recs, 0.05, []float64{2 * math.Pi})
	if len(js) != 1 || js[0].Key != "tau=000" {
		t.Errorf("jumps %+v: want the spike at tau=000 across the seam", js)
	}
}
