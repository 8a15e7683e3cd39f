package hf_test

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/hf"
)

const ccScanSpec = `
title = "H2 stretch, coupled cluster"
[molecule]
geometry = """
H 0 0 0
H 0 0 0.74
"""
[[scan]]
name = "r"
bond = [1, 2]
values = [0.70, 0.74, 0.78]
[refine]
adaptive = false
[engine]
kind = "builtin"
%ENGINE%
`

func ccScan(t *testing.T, engine string) ([]runner.PointRecord, *planner.Spec) {
	t.Helper()
	text := strings.Replace(ccScanSpec, "%ENGINE%", engine, 1)
	spec, err := planner.Decode([]byte(text), "scan.toml")
	if err != nil {
		t.Fatal(err)
	}
	recs := runScanText(t, text, 2, func(b *hf.Backend) runner.Backend { return b })
	if len(recs) != 3 {
		t.Fatalf("%d points, want 3", len(recs))
	}
	return recs, spec
}

// TestBackend_CCSDTScan runs a three-point CCSD(T) scan through the real
// runner: every point is done, its energy equals a direct Energy call at
// the same geometry (1e-9 Eh: the tolerance; the scan starts
// from neighbour orbitals, the direct call cold) and its extras carry the
// reference, CCSD and (T) energies.
func TestBackend_CCSDTScan(t *testing.T) {
	recs, _ := ccScan(t, "method = \"ccsd(t)\"\nbasis = \"cc-pVDZ\"\n")
	for _, r := range recs {
		if r.State != runner.Done || r.Energy == nil {
			t.Fatalf("%s: state %s (%s)", r.Key, r.State, r.LastError)
		}
		mol := mustMol(t, []planner.Atom{atom(t, "H", 0, 0, 0), atom(t, "H", 0, 0, r.Values[0])}, 0, 1)
		want, err := hf.Energy(t.Context(), mol, hf.Options{Method: hf.CCSDT, Basis: testBasis(t, "cc-pVDZ")})
		if err != nil {
			t.Fatal(err)
		}
		if !scalar.EqualWithinAbs(*r.Energy, want.Energy, 1e-9) {
			t.Errorf("%s: scan %.12f, direct %.12f", r.Key, *r.Energy, want.Energy)
		}
		x := r.Extra
		if !scalar.EqualWithinAbs(x["reference_energy_hartree"]+x["ccsd_correlation_hartree"]+x["triples_hartree"], *r.Energy, 1e-12) {
			t.Errorf("%s: extras %v do not add up to %.12f", r.Key, x, *r.Energy)
		}
	}
}

// TestBackend_LimitScan runs a basis-set-limit scan (cc-pVDZ/cc-pVTZ,
// core correction in cc-pCVTZ): each point's energy is the ComputeLimit
// energy of its geometry (1e-9 Eh) and its extras list every component.
func TestBackend_LimitScan(t *testing.T) {
	recs, spec := ccScan(t, "method = \"ccsd(t)\"\nbasis_limit = [\"cc-pVDZ\", \"cc-pVTZ\"]\ncore_correction = \"cc-pCVTZ\"\n")
	if b := spec.Engine.BasisLabel(); b != "cc-pVDZ→cc-pVTZ limit + cc-pCVTZ core" {
		t.Errorf("basis label %q", b)
	}
	r := recs[1]
	if r.State != runner.Done || r.Energy == nil {
		t.Fatalf("%s: state %s (%s)", r.Key, r.State, r.LastError)
	}
	mol := mustMol(t, []planner.Atom{atom(t, "H", 0, 0, 0), atom(t, "H", 0, 0, r.Values[0])}, 0, 1)
	want, err := hf.ComputeLimit(t.Context(), mol, hf.LimitRecipe{Method: hf.CCSDT, Small: "cc-pVDZ", Large: "cc-pVTZ", Core: "cc-pCVTZ"}, hf.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if !scalar.EqualWithinAbs(*r.Energy, want.Total, 1e-9) {
		t.Errorf("scan %.12f, ComputeLimit %.12f", *r.Energy, want.Total)
	}
	for _, k := range []string{"limit_hf_hartree", "limit_correlation_hartree", "core_correction_hartree",
		"small_reference_hartree", "small_correlation_hartree", "small_triples_hartree", "large_reference_hartree",
		"large_correlation_hartree", "core_all_correlation_hartree", "core_frozen_correlation_hartree"} {
		if _, ok := r.Extra[k]; !ok {
			t.Errorf("extra %q missing: %v", k, r.Extra)
		}
	}
	if r.Extra["cardinal_small"] != 2 || r.Extra["cardinal_large"] != 3 {
		t.Errorf("cardinals %v, %v", r.Extra["cardinal_small"], r.Extra["cardinal_large"])
	}
}

// TestNewBackend_LimitErrors: recipes the engine cannot run are refused
// before any point, naming the file and key.
func TestNewBackend_LimitErrors(t *testing.T) {
	for _, tc := range []struct{ engine, want string }{
		{"method = \"ccsd\"\nbasis_limit = [\"6-31G*\", \"cc-pVTZ\"]\n", "scan.toml: engine.basis_limit: hf: basis \"6-31G*\" is not a correlation-consistent set"},
		{"method = \"ccsd\"\nbasis_limit = [\"cc-pVQZ\", \"cc-pVTZ\"]\n", "scan.toml: engine.basis_limit: hf: basis-set limit: cc-pVQZ (X = 4) must be smaller than cc-pVTZ (X = 3)"},
		{"method = \"ccsd\"\nbasis_limit = [\"cc-pVTZ\", \"cc-pV9Z\"]\n", "scan.toml: engine.basis_limit: basis: unknown basis set \"cc-pV9Z\""},
		{"method = \"ccsd\"\nbasis_limit = [\"cc-pVTZ\", \"cc-pVQZ\"]\ncore_correction = \"cc-pCVQZ\"\n", "scan.toml: engine.core_correction: basis: unknown basis set \"cc-pCVQZ\""},
	} {
		spec, err := planner.Decode([]byte(strings.Replace(ccScanSpec, "%ENGINE%", tc.engine, 1)), "scan.toml")
		if err != nil {
			t.Fatal(err)
		}
		if _, err := hf.NewBackend(spec); err == nil || !strings.HasPrefix(err.Error(), tc.want) {
			t.Errorf("NewBackend error = %v, want prefix %q", err, tc.want)
		}
	}
}

// TestGradient_CCSDTIsOfTheCCEnergy: the gradient used by relaxed scans
// for ccsd(t) is that of the CCSD(T) energy — it agrees with a central
// difference of CCSD(T) energies written here (step 2e-3 bohr; 1e-6
// Eh/bohr: the O(h²) error of both differences) and not with the RHF
// gradient (which differs by more than 1e-3 Eh/bohr for stretched H2).
func TestGradient_CCSDTIsOfTheCCEnergy(t *testing.T) {
	bs := testBasis(t, "cc-pVDZ")
	h2 := func(z float64) planner.Molecule {
		return mustMol(t, []planner.Atom{atom(t, "H", 0, 0, 0), atom(t, "H", 0, 0, z)}, 0, 1)
	}
	const r, h = 1.6, 2e-3
	g, err := hf.Gradient(t.Context(), h2(r), hf.Options{Method: hf.CCSDT, Basis: bs})
	if err != nil {
		t.Fatal(err)
	}
	e := func(z float64, m hf.Method) float64 {
		res, err := hf.Energy(t.Context(), h2(z), hf.Options{Method: m, Basis: bs})
		if err != nil {
			t.Fatal(err)
		}
		return res.Energy
	}
	want := (e(r+h, hf.CCSDT) - e(r-h, hf.CCSDT)) / (2 * h) // ∂E/∂z of atom 2
	rhf := (e(r+h, hf.RHF) - e(r-h, hf.RHF)) / (2 * h)
	if g.Analytic || !scalar.EqualWithinAbs(g.Gradient[1][2], want, 1e-6) {
		t.Errorf("gradient z of atom 2 = %.8f (analytic %v), CCSD(T) difference %.8f", g.Gradient[1][2], g.Analytic, want)
	}
	if math.Abs(want-rhf) < 1e-3 {
		t.Errorf("the test cannot tell CCSD(T) from RHF: %.8f vs %.8f", want, rhf)
	}
}
