package hf_test

import (
	"context"
	"fmt"
	"math"
	"testing"

	"wellscan/runner"
	"wellscan/runner/hf"
)

// TestRelaxedScan_MP2BendAgainstLineSearch runs a relaxed bend of water
// at MP2/STO-3G (all electrons; gradients by central differences of MP2
// energies) and checks each point's energy against an independent
// minimisation written here: with the bend held, the minimum over both
// O–H bonds lies at equal bonds (the energy is symmetric in them), so a
// golden-section search of hf.Energy over the common bond length r gives
// the relaxed energy directly.
func TestRelaxedScan_MP2BendAgainstLineSearch(t *testing.T) {
	spec := `title = "relaxed MP2 bend"
[molecule]
geometry = """
O 0 0 0
H 0 0.80 -0.55
H 0 -0.80 -0.55
"""
[[scan]]
name = "theta"
angle = [2, 1, 3]
values = [100, 112]
relax = true
[relax]
tighter = 30
[refine]
adaptive = false
[engine]
kind = "builtin"
method = "mp2"
basis = "STO-3G"
frozen_core = false
convergence = 1e-11
[queue]
kind = "local"
workers = 2
`
	recs := byKey(t, runScanText(t, spec, 2, func(b *hf.Backend) runner.Backend { return b }))
	opts := hf.Options{Method: hf.MP2, Basis: lookupBasisTB(t, "STO-3G"), FrozenCore: hf.AllElectron, Workers: 2}
	opts.SCF.EnergyTol = 1e-11
	for _, deg := range []float64{100, 112} {
		key := fmt.Sprintf("theta=%.3f", deg)
		r, ok := recs[key]
		if !ok || r.Energy == nil {
			t.Fatalf("no energy for %s", key)
		}
		half := deg / 2 * math.Pi / 180
		energy := func(rAng float64) float64 {
			m := angstromMolTB(t, []string{"O", "H", "H"}, [][3]float64{
				{0, 0, 0}, {0, rAng * math.Sin(half), -rAng * math.Cos(half)}, {0, -rAng * math.Sin(half), -rAng * math.Cos(half)}})
			res, err := hf.Energy(context.Background(), m, opts)
			if err != nil {
				t.Fatal(err)
			}
			return res.Energy
		}
		// Golden-section search on [0.90, 1.10] Å to 1e-6 Å.
		g := (math.Sqrt(5) - 1) / 2
		a, b := 0.90, 1.10
		c, d := b-g*(b-a), a+g*(b-a)
		fc, fd := energy(c), energy(d)
		for b-a > 1e-6 {
			if fc < fd {
				b, d, fd = d, c, fc
				c = b - g*(b-a)
				fc = energy(c)
			} else {
				a, c, fc = c, d, fd
				d = a + g*(b-a)
				fd = energy(d)
			}
		}
		want := math.Min(fc, fd)
		t.Logf("θ = %g°: relaxed scan %.10f Eh (%v gradients), line search %.10f Eh at r = %.5f Å", deg, *r.Energy, r.Extra["relax_gradients"], want, (a+b)/2)
		// Thresholds tightened 30× (max force 1.5e-5 Eh/bohr) on a stretch
		// of k ≈ 0.5 Eh/bohr² leave ≈ F²/2k ≈ 2e-10 Eh; the central
		// differences (step 1e-3 bohr, error O(h²)) move the bond by far
		// less than that corresponds to: 1e-8 Eh.
		if d := math.Abs(*r.Energy - want); d > 1e-8 {
			t.Errorf("θ = %g°: relaxed %.10f Eh, line search %.10f Eh (Δ %.1e)", deg, *r.Energy, want, d)
		}
		if e := r.Extra["relax_constraint_error"] * 180 / math.Pi; e > 1e-4 { // the 1e-4° bound
			t.Errorf("θ = %g°: held bend off by %.2e°", deg, e)
		}
	}
}
