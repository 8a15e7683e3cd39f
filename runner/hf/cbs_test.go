package hf_test

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"wellscan/planner"
	"wellscan/runner/hf"
)

func TestCardinal(t *testing.T) {
	for _, tc := range []struct {
		name string
		want int
	}{
		{"cc-pVDZ", 2}, {"cc-pVTZ", 3}, {"CC-PVQZ", 4}, {"aug-cc-pVTZ", 3}, {"cc-pCVTZ", 3}, {"cc-pwCVQZ", 4}, {"cc-pV5Z", 5},
	} {
		got, err := hf.Cardinal(tc.name)
		if err != nil || got != tc.want { // cardinal numbers: common practice (D 2, T 3, Q 4, 5)
			t.Errorf("Cardinal(%q) = %d, %v; want %d", tc.name, got, err, tc.want)
		}
	}
	for _, bad := range []string{"6-31G*", "STO-3G", "cc-pVXZ", ""} {
		if _, err := hf.Cardinal(bad); err == nil {
			t.Errorf("Cardinal(%q): no error", bad)
		}
	}
}

// TestCombineLimit_RecoversModel: component energies built in the test
// from the published model forms, E_HF(n) = E_HF(∞) + A (n+1) e^{−9√n}
// (Karton and Martin 2006) and E_corr(n) = E_corr(∞) + B n⁻³ (Helgaker
// et al. 1997), must give back E_HF(∞) and E_corr(∞) exactly (1e-12 Eh:
// rounding), and the core correction must be E(all) − E(frozen).
func TestCombineLimit_RecoversModel(t *testing.T) {
	const hfInf, corrInf, A, B = -112.79, -0.412, 2.5, 0.35 // invented model constants
	kf := func(n float64) float64 { return (n + 1) * math.Exp(-9*math.Sqrt(n)) }
	r := hf.LimitRecipe{Method: hf.CCSDT, Small: "cc-pVTZ", Large: "cc-pVQZ", Core: "cc-pCVTZ"}
	comp := func(name string, n float64, frozen int, ref, corr float64) hf.ComponentEnergy {
		return hf.ComponentEnergy{LimitComponent: hf.LimitComponent{Name: name}, Reference: ref, Correlation: corr, Frozen: frozen}
	}
	got, err := hf.CombineLimit(r, []hf.ComponentEnergy{
		comp(hf.ComponentLarge, 4, 2, hfInf+A*kf(4), corrInf+B/64),
		comp(hf.ComponentSmall, 3, 2, hfInf+A*kf(3), corrInf+B/27),
		comp(hf.ComponentCoreAll, 3, 0, -112.70, -0.50),
		comp(hf.ComponentCoreFrozen, 3, 2, -112.70, -0.44),
	})
	if err != nil {
		t.Fatal(err)
	}
	if !scalar.EqualWithinAbs(got.HF, hfInf, 1e-12) || !scalar.EqualWithinAbs(got.Correlation, corrInf, 1e-12) ||
		!scalar.EqualWithinAbs(got.CoreCorrection, -0.06, 1e-12) || !scalar.EqualWithinAbs(got.Total, hfInf+corrInf-0.06, 1e-12) {
		t.Errorf("limit HF %.14f corr %.14f core %.14f total %.14f; want %v %v −0.06", got.HF, got.Correlation, got.CoreCorrection, got.Total, hfInf, corrInf)
	}
	if got.X != 3 || got.Y != 4 || len(got.Components) != 4 || got.Components[0].Name != hf.ComponentSmall {
		t.Errorf("X, Y = %d, %d; components %+v", got.X, got.Y, got.Components)
	}
	if _, err := hf.CombineLimit(r, got.Components[:3]); err == nil || !strings.Contains(err.Error(), "core_frozen") {
		t.Errorf("missing component: %v", err)
	}
	for _, bad := range []hf.LimitRecipe{
		{Method: hf.RHF, Small: "cc-pVTZ", Large: "cc-pVQZ"},
		{Method: hf.CCSD, Small: "cc-pVQZ", Large: "cc-pVTZ"},
		{Method: hf.CCSD, Small: "6-31G*", Large: "cc-pVTZ"},
		{Method: hf.CCSD, Small: "cc-pVTZ", Large: "cc-pVQZ", Core: "cc-pCVTZ", FrozenCore: hf.AllElectron},
	} {
		if err := bad.Validate(); err == nil {
			t.Errorf("%+v: no error", bad)
		}
	}
}

// TestComputeLimit_Helium: the TZ/QZ limit of He, where CCSD is full CI,
// against the exact values: HF limit −2.8616800 Eh (C. Froese Fischer,
// The Hartree–Fock Method for Atoms, 1977, from memory) within 0.3 mEh,
// and the exact non-relativistic correlation energy −0.0420444 Eh
// (E. R. Davidson et al., Phys. Rev. A 44, 7071 (1991), from memory)
// within 0.5 mEh (common practice: a TZ/QZ two-point limit of a
// two-electron atom is good to a few tenths of a millihartree, an order
// better than QZ alone). Every component is also checked against its own
// Energy call, and the core correction of He (no core) is 0.
func TestComputeLimit_Helium(t *testing.T) {
	he := mustMol(t, []planner.Atom{atom(t, "He", 0, 0, 0)}, 0, 1)
	r := hf.LimitRecipe{Method: hf.CCSDT, Small: "cc-pVTZ", Large: "cc-pVQZ", Core: "cc-pCVTZ"}
	got, err := hf.ComputeLimit(t.Context(), he, r, hf.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("%s: HF %.7f corr %.7f core %.2g total %.7f", r, got.HF, got.Correlation, got.CoreCorrection, got.Total)
	if !scalar.EqualWithinAbs(got.HF, -2.8616800, 3e-4) { // HF limit, Froese Fischer 1977 (from memory)
		t.Errorf("HF limit %.7f, want −2.86168 ± 3e-4", got.HF)
	}
	if !scalar.EqualWithinAbs(got.Correlation, -0.0420444, 5e-4) { // exact He correlation, Davidson et al. 1991 (from memory)
		t.Errorf("correlation limit %.7f, want −0.0420444 ± 5e-4", got.Correlation)
	}
	qz := got.Components[1]
	if math.Abs(got.Correlation-(-0.0420444)) >= math.Abs(qz.Correlation-(-0.0420444)) {
		t.Errorf("the limit %.7f is no closer to exact than QZ %.7f", got.Correlation, qz.Correlation)
	}
	if got.CoreCorrection != 0 {
		t.Errorf("core correction of He = %g, want 0", got.CoreCorrection)
	}
	for _, c := range got.Components {
		res, err := hf.Energy(t.Context(), he, hf.Options{Method: hf.CCSDT, Basis: testBasis(t, c.Basis), FrozenCore: c.FrozenCore})
		if err != nil {
			t.Fatal(err)
		}
		// Same calculation repeated: 1e-10 Eh.
		if !scalar.EqualWithinAbs(res.CC.ReferenceEnergy, c.Reference, 1e-10) || !scalar.EqualWithinAbs(res.CC.Correlation+res.CC.Triples, c.Correlation, 1e-10) {
			t.Errorf("%s/%s: component %.10f %.10f, Energy %.10f %.10f", c.Name, c.Basis, c.Reference, c.Correlation, res.CC.ReferenceEnergy, res.CC.Correlation)
		}
	}
}
