package hf

import (
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
)

// With error vectors e1 = (1, 0) and e2 = (−1, 0) the combination with
// zero error and Σc = 1 is c = (½, ½), so F = ½(F1 + F2) (Pulay 1980, eq. for
// the constrained minimum of |Σ c_i e_i|).
func TestDIIS_Extrapolate_CancelsLinearError(t *testing.T) {
	d := newDIIS(4, 1, 2, 2)
	f1 := mat.NewDense(2, 2, []float64{1, 0, 0, 1})
	f2 := mat.NewDense(2, 2, []float64{3, 0, 0, 3})
	d.push([]*mat.Dense{f1}, func(e []float64) { e[0], e[1] = 1, 0 })
	d.push([]*mat.Dense{f2}, func(e []float64) { e[0], e[1] = -1, 0 })
	out := []*mat.Dense{mat.NewDense(2, 2, nil)}
	if used := d.extrapolate(out); used != 2 {
		t.Fatalf("used %d vectors, want 2", used)
	}
	if !scalar.EqualWithinAbs(out[0].At(0, 0), 2, 1e-14) || !scalar.EqualWithinAbs(out[0].At(0, 1), 0, 1e-14) { // exact up to rounding
		t.Errorf("F = %v, want 2·I", mat.Formatted(out[0]))
	}
	// Parallel errors (e3 = e2) make B singular; the oldest vectors are
	// dropped until the system is solvable, and the subspace never
	// exceeds its size.
	for range 5 {
		d.push([]*mat.Dense{f2}, func(e []float64) { e[0], e[1] = -1, 0 })
	}
	if len(d.slots) != 4 {
		t.Errorf("%d vectors stored, want the subspace size 4", len(d.slots))
	}
	used := d.extrapolate(out)
	if used != 1 || !scalar.EqualWithinAbs(out[0].At(0, 0), 3, 1e-14) {
		t.Errorf("singular subspace: used %d, F00 = %g; want the newest Fock matrix (3)", used, out[0].At(0, 0))
	}
	d.reset()
	if d.extrapolate(out) != 0 || len(d.free) != 4 {
		t.Errorf("after reset: %d stored, %d free", len(d.slots), len(d.free))
	}
}
