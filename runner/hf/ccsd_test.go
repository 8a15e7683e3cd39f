package hf_test

import (
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"wellscan/runner/hf"
	"wellscan/runner/hf/integral"
)

// workedCC reads "NAME = value" lines of a worked-example coupled-cluster
// output (testdata/worked-water/<case>/output/project06-ccsd_t/output.txt).
func workedCC(t *testing.T, dir string) map[string]float64 {
	t.Helper()
	path := filepath.Join("testdata", "worked-water", dir, "output", "project06-ccsd_t", "output.txt")
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]float64{}
	for _, line := range strings.Split(string(data), "\n") {
		k, v, ok := strings.Cut(line, "=")
		if !ok {
			continue
		}
		x, err := strconv.ParseFloat(strings.TrimSpace(v), 64)
		if err != nil {
			t.Fatalf("%s: %q: %v", path, line, err)
		}
		out[strings.TrimSpace(k)] = x
	}
	for _, k := range []string{"ESCF", "ECCSD", "E(T)", "ECCSD(T)"} {
		if _, ok := out[k]; !ok {
			t.Fatalf("%s: no %s line", path, k)
		}
	}
	return out
}

// TestEnergy_CCSDWorkedExample reproduces the CCSD and CCSD(T) energies of
// the published worked example (closed-shell RHF reference, all electrons
// correlated) for its four systems.
func TestEnergy_CCSDWorkedExample(t *testing.T) {
	cases := []struct {
		name, dir, geom, basis string
		norm                   integral.CartNorm
	}{
		{"H2O/STO-3G", "STO-3G", "h2o-geom.dat", "STO-3G-v0", integral.NormPerComponent},
		{"H2O/DZ", "DZ", "h2o-geom.dat", "worked-dz.basis", integral.NormPerComponent},
		{"H2O/DZP", "DZP", "h2o-geom.dat", "worked-dzp.basis", integral.NormAxial},
		{"CH4/STO-3G", "ch4-STO-3G", "ch4-geom.dat", "worked-ch4-sto-3g.basis", integral.NormPerComponent},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			want := workedCC(t, tc.dir)
			mol := mustMol(t, readGeom(t, filepath.Join("testdata", "bases", tc.geom)), 0, 1)
			res, err := hf.Energy(t.Context(), mol, hf.Options{Method: hf.CCSDT, Basis: testBasis(t, tc.basis), Norm: tc.norm, FrozenCore: hf.AllElectron})
			if err != nil {
				t.Fatal(err)
			}
			c := res.CC
			t.Logf("CCSD %.12f (T) %.12f, %d iterations, %v", c.Correlation, c.Triples, c.Iterations, c.Time)
			// 1e-9 Eh: the tolerance; the reference prints 12 decimals.
			if !scalar.EqualWithinAbs(c.Correlation, want["ECCSD"], 1e-9) { // worked example, Project #6 output, ECCSD line
				t.Errorf("E(CCSD) = %.12f, want %.12f (diff %.2e)", c.Correlation, want["ECCSD"], c.Correlation-want["ECCSD"])
			}
			if !scalar.EqualWithinAbs(c.Triples, want["E(T)"], 1e-9) { // worked example, Project #6 output, E(T) line
				t.Errorf("E(T) = %.12f, want %.12f (diff %.2e)", c.Triples, want["E(T)"], c.Triples-want["E(T)"])
			}
			if !scalar.EqualWithinAbs(res.Energy, want["ECCSD(T)"], 1e-9) { // worked example, Project #6 output, ECCSD(T) total
				t.Errorf("E(CCSD(T)) = %.12f, want %.12f", res.Energy, want["ECCSD(T)"])
			}
			// Bookkeeping, exact up to rounding (1e-12 Eh).
			if !scalar.EqualWithinAbs(c.Total, c.ReferenceEnergy+c.Correlation+c.Triples, 1e-12) || res.Energy != c.Total ||
				c.ReferenceEnergy != res.SCFResult.Energy || c.FrozenCore != 0 || !c.Converged || !c.WithTriples {
				t.Errorf("inconsistent result: %+v, Energy %v, SCF %v", c, res.Energy, res.SCFResult.Energy)
			}
			// CCSD(T) ≤ CCSD for these closed shells (the worked example's E(T) are all negative).
			if c.Triples >= 0 {
				t.Errorf("E(T) = %g, want < 0", c.Triples)
			}
		})
	}
}
