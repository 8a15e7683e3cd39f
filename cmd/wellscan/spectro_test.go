package main

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"testing"
	"time"

	"wellscan/fit"
	"wellscan/planner"
	"wellscan/runner/hf"
)

// TestSpectroscopicGoal_CCSDT computes the curves of CO, N2 and HF at
// CCSD(T), extrapolated to the basis-set limit from cc-pVTZ and cc-pVQZ
// with the core–valence correction in cc-pCVTZ, fits them with fit.Curve
// and compares ω_e, ω_e x_e, B_e and r_e with experiment. It takes about
// an hour of CPU, so it runs only with WELLSCAN_SPECTRO=1; point energies
// are cached as JSON in WELLSCAN_SPECTRO_CACHE (default: a temporary
// directory) so an interrupted run resumes. Goal (issue 18): |Δω_e| ≤ 10
// cm⁻¹ and |Δr_e| ≤ 0.002 Å; whether it is met is logged per molecule
// with the deviations. The test fails beyond three times the goal, which
// no missing physics of this size explains.
func TestSpectroscopicGoal_CCSDT(t *testing.T) {
	if os.Getenv("WELLSCAN_SPECTRO") != "1" {
		t.Skip("set WELLSCAN_SPECTRO=1 to run the hour-long CCSD(T) basis-set-limit curves")
	}
	cache := os.Getenv("WELLSCAN_SPECTRO_CACHE")
	if cache == "" {
		cache = t.TempDir()
	}
	if err := os.MkdirAll(cache, 0o755); err != nil {
		t.Fatal(err)
	}
	recipe := hf.LimitRecipe{Method: hf.CCSDT, Small: "cc-pVTZ", Large: "cc-pVQZ", Core: "cc-pCVTZ"}
	cases := []struct {
		name, a, b string
		// K. P. Huber and G. Herzberg, Molecular Spectra and Molecular
		// Structure IV. Constants of Diatomic Molecules (1979): ω_e,
		// ω_e x_e, B_e (cm⁻¹) and r_e (Å) of the ground states; ω_e and r_e
		// as quoted in the issue, ω_e x_e and B_e from memory of the same
		// tables.
		we, wexe, be, re float64
	}{
		{"HF", "H", "F", 4138.32, 89.88, 20.9557, 0.91681}, // Huber & Herzberg 1979, H¹⁹F X¹Σ⁺
		{"CO", "C", "O", 2169.81, 13.29, 1.93128, 1.12832}, // Huber & Herzberg 1979, ¹²C¹⁶O X¹Σ⁺
		{"N2", "N", "N", 2358.57, 14.32, 1.99824, 1.09768}, // Huber & Herzberg 1979, ¹⁴N₂ X¹Σg⁺
	}
	offsets := []float64{-0.075, -0.05, -0.025, 0, 0.025, 0.05, 0.075} // Å around the experimental r_e
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			ea, err := planner.ElementBySymbol(tc.a)
			if err != nil {
				t.Fatal(err)
			}
			eb, err := planner.ElementBySymbol(tc.b)
			if err != nil {
				t.Fatal(err)
			}
			var rs, es []float64
			for _, off := range offsets {
				r := tc.re + off
				path := filepath.Join(cache, fmt.Sprintf("%s_%.5f.json", tc.name, r))
				var lr hf.LimitResult
				if b, err := os.ReadFile(path); err == nil && json.Unmarshal(b, &lr) == nil && lr.Total != 0 {
					t.Logf("%s r = %.5f Å: cached E = %.10f", tc.name, r, lr.Total)
				} else {
					mol, err := planner.NewMolecule([]planner.Atom{planner.NewAtom(ea, [3]float64{}), planner.NewAtom(eb, [3]float64{0, 0, r / planner.BohrInAngstrom})}, 0, 1)
					if err != nil {
						t.Fatal(err)
					}
					start := time.Now()
					got, err := hf.ComputeLimit(t.Context(), mol, recipe, hf.Options{})
					if err != nil {
						t.Fatal(err)
					}
					lr = *got
					t.Logf("%s r = %.5f Å: E = %.10f (HF %.8f, corr %.8f, core %.8f) in %v", tc.name, r, lr.Total, lr.HF, lr.Correlation, lr.CoreCorrection, time.Since(start).Round(time.Second))
					if b, err := json.Marshal(lr); err == nil {
						_ = os.WriteFile(path, b, 0o644)
					}
				}
				rs = append(rs, r/planner.BohrInAngstrom)
				es = append(es, lr.Total)
			}
			res, err := fit.Curve(t.Context(), rs, es, fit.Options{EnergyNoise: 1e-8,
				Isotopologues: []fit.MassSet{{Name: tc.name, Masses: []float64{ea.Mass, eb.Mass}}}})
			if err != nil {
				t.Fatal(err)
			}
			if len(res.Minima) != 1 {
				t.Fatalf("%d minima", len(res.Minima))
			}
			m := res.Minima[0]
			dw, dx, db, dr := m.OmegaE-tc.we, m.OmegaExe-tc.wexe, m.Be-tc.be, m.REAngstrom-tc.re
			t.Logf("%s: ω_e %.2f (Δ %+.2f) cm⁻¹, ω_e x_e %.2f (Δ %+.2f), B_e %.4f (Δ %+.4f), r_e %.5f Å (Δ %+.5f); degree %d, %d points, warnings %v",
				tc.name, m.OmegaE, dw, m.OmegaExe, dx, m.Be, db, m.REAngstrom, dr, m.Degree, m.WindowPoints, append(res.Warnings, m.Warnings...))
			goal := "GOAL MET"
			if math.Abs(dw) > 10 || math.Abs(dr) > 0.002 { // issue 18's goal
				goal = "GOAL NOT MET"
			}
			t.Logf("%s: %s (|Δω_e| ≤ 10 cm⁻¹ and |Δr_e| ≤ 0.002 Å)", tc.name, goal)
			// Sanity bound, three times the goal: the effects this recipe
			// leaves out (diffuse functions, excitations beyond (T),
			// relativity, the diagonal Born–Oppenheimer correction) are each
			// a few cm⁻¹ and a few 1e-4 Å for these molecules (common
			// practice); beyond that the calculation itself is wrong.
			if math.Abs(dw) > 30 || math.Abs(dr) > 0.006 {
				t.Errorf("%s: Δω_e = %+.2f cm⁻¹, Δr_e = %+.5f Å, beyond three times the goal", tc.name, dw, dr)
			}
		})
	}
}
