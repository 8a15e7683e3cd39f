package hf_test

import (
	"fmt"
	"strings"
	"testing"

	"wellscan/fit"
	"wellscan/runner"
	"wellscan/runner/hf"
)

const coCoarseSpec = `title = "CO RHF/6-31G*, coarse first grid"
[molecule]
geometry = """
C 0 0 0
O 0 0 1.13
"""
[[scan]]
name = "r"
bond = [1, 2]
%GRID%
[refine]
%REFINE%
[engine]
kind = "builtin"
method = "rhf"
basis = "6-31G*"
[queue]
kind = "local"
workers = 2
`

// fitRe fits the done points of a CO scan and returns r_e in Å.
func fitRe(t *testing.T, recs []runner.PointRecord) float64 {
	t.Helper()
	var r, e []float64
	for _, p := range recs {
		if p.State != runner.Done || p.Energy == nil {
			t.Errorf("%s is %s: %s", p.Key, p.State, p.LastError)
			continue
		}
		r = append(r, p.Values[0]) // bohr (runner.PointRecord)
		e = append(e, *p.Energy)
	}
	res, err := fit.Curve(t.Context(), r, e, fit.Options{NoLevels: true, NoGlobal: true})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Minima) != 1 {
		t.Fatalf("%d minima; warnings %q", len(res.Minima), res.Warnings)
	}
	return res.Minima[0].REAngstrom
}

// Issue 14: a coarse first grid over 0.8–2.5 Å (0.4 and 0.5 Å steps) must
// not have the points around the minimum failed as energy jumps, and
// refinement must find the minimum of a dense grid of the same method.
func TestScan_CoarseFirstGrid_FindsDenseMinimum(t *testing.T) {
	if testing.Short() {
		t.Skip("three RHF/6-31G* scans of CO")
	}
	run := func(grid, refine string) []runner.PointRecord {
		text := strings.NewReplacer("%GRID%", grid, "%REFINE%", refine).Replace(coCoarseSpec)
		return runScanText(t, text, 2, func(b *hf.Backend) runner.Backend { return b })
	}
	// Reference: the same engine on a dense fixed grid around the minimum
	// (2.5 mÅ steps; the local polynomial's r_e is good to ~1e-6 Å there),
	// an independent computation of the same quantity.
	want := fitRe(t, run("from = 1.095\nto = 1.135\nstep = 0.0025", "adaptive = false"))
	for _, step := range []float64{0.4, 0.5} {
		t.Run(fmt.Sprintf("step %.1f Å", step), func(t *testing.T) {
			recs := run(fmt.Sprintf("from = 0.8\nto = 2.5\nstep = %g", step), "target_step = 0.002\ntolerance = 1e-5")
			for _, p := range recs {
				if p.Class == runner.ClassEnergyJump {
					t.Errorf("%s failed as an energy jump: %s", p.Key, p.LastError)
				}
			}
			got := fitRe(t, recs)
			// 1e-4 Å: the requirement.
			if d := got - want; d > 1e-4 || d < -1e-4 {
				t.Errorf("r_e = %.6f Å from the coarse start, %.6f Å from the dense grid (difference %.2g Å)", got, want, d)
			}
			t.Logf("r_e = %.6f Å (dense grid %.6f Å), %d points", got, want, len(recs))
		})
	}
}
