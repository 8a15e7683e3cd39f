package report

import (
	"encoding/json"
	"errors"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"wellscan/fit/forcefield"
	"wellscan/planner"
)

const ffModelSpec = `[molecule]
geometry = """
O  0.0  0.0    0.0
H  0.0  0.757 -0.586
H  0.0 -0.757 -0.586
"""
[engine]
kind = "builtin"
method = "rhf"
basis = "sto-3g"
[forcefield]
order = "quartic"
[[forcefield.isotopologue]]
name = "D2O"
isotopes = { 2 = "2H", 3 = "2H" }
quartic = true
[[forcefield.isotopologue]]
name = "HDO"
isotopes = { 2 = "2H" }
`

// Point charges of the model dipole (e), O, H, H: neutral.
var ffCharges = []float64{-0.7, 0.35, 0.35}

// ffModel is a stand-in engine: Morse O–H terms and a harmonic H–H term
// (invented constants), with the dipole of fixed point charges.
func ffModel(m planner.Molecule) (float64, [3]float64) {
	e := 0.0
	var mu [3]float64
	for i, a := range m.Atoms {
		for k := range 3 {
			mu[k] += ffCharges[i] * a.Pos[k]
		}
		for _, b := range m.Atoms[i+1:] {
			r := planner.Distance(a.Pos, b.Pos)
			if a.Element.Z == 1 && b.Element.Z == 1 {
				e += 0.5 * 0.04 * (r - 2.86) * (r - 2.86)
				continue
			}
			x := 1 - math.Exp(-1.1*(r-1.81))
			e += 0.15 * x * x
		}
	}
	return e, mu
}

func TestAnalyzeForceField_PointChargeIntensities(t *testing.T) {
	// With a point-charge dipole, ∂μ/∂x_a = q_a exactly, so a mode with unit
	// Cartesian displacement d and reduced mass μ has
	// A = 974.88 |Σ_a q_a d_a|²/μ km/mol (double harmonic, WDC 1955 §7-8):
	// an independent check of the dipole derivatives the job assembles
	// from symmetry-mapped displacements, for every isotopologue.
	spec, err := planner.Decode([]byte(ffModelSpec), "scan.toml")
	if err != nil {
		t.Fatal(err)
	}
	var samples []FFSample
	var ps []planner.Sample
	compute := func(pts []planner.Point) {
		for _, p := range pts {
			mol, err := spec.Geometry(p)
			if err != nil {
				t.Fatal(err)
			}
			e, mu := ffModel(mol)
			samples = append(samples, FFSample{Key: p.Key, Energy: e, Dipole: &mu})
			ps = append(ps, planner.Sample{Key: p.Key, Energy: e})
		}
	}
	compute(spec.InitialPoints())
	plan := planner.Refine(spec, ps, 1)
	if plan.Status != planner.RefineContinue {
		t.Fatalf("stage 2 not planned: %s", plan.Reason)
	}
	compute(plan.Points)
	if p2 := planner.Refine(spec, ps, 2); p2.Status != planner.RefineConverged {
		t.Fatalf("after stage 2: %s %s", p2.Status, p2.Reason)
	}
	rep, err := AnalyzeForceField(spec, samples)
	if err != nil {
		t.Fatal(err)
	}
	if len(rep.SymmetryOps) != 4 || rep.PointsComputed >= rep.PointsUsed {
		t.Errorf("symmetry %v, %d of %d computed: the mapping was not exercised", rep.SymmetryOps, rep.PointsComputed, rep.PointsUsed)
	}
	for _, iso := range rep.Isotopologues {
		for _, m := range iso.Modes {
			var d [3]float64
			for c, v := range m.Displacement {
				d[c%3] += ffCharges[c/3] * v
			}
			want := forcefield.IntensityKmPerMol * (d[0]*d[0] + d[1]*d[1] + d[2]*d[2]) / m.ReducedMassAmu
			// 1e-6 relative + 1e-6 km/mol: central differences of a linear
			// dipole are exact; what is left is rounding
			if m.IntensityKmPerMol == nil || !scalar.EqualWithinAbsOrRel(*m.IntensityKmPerMol, want, 1e-6, 1e-6) {
				t.Errorf("%s ν%d: A = %v km/mol, point charges give %.8f", iso.Name, m.Index, m.IntensityKmPerMol, want)
			}
		}
		if iso.Name != "HDO" && !iso.Anharmonic {
			t.Errorf("%s: no VPT2", iso.Name)
		}
	}
}

func TestAnalyzeForceField_GradientWarning(t *testing.T) {
	// Away from the model's minimum the job says so, with the size.
	text := strings.Replace(ffModelSpec, "0.757 -0.586", "0.800 -0.620", 1)
	text = strings.Replace(text, "-0.757 -0.586", "-0.800 -0.620", 1)
	spec, err := planner.Decode([]byte(text), "scan.toml")
	if err != nil {
		t.Fatal(err)
	}
	var samples []FFSample
	for _, p := range spec.InitialPoints() {
		mol, _ := spec.Geometry(p)
		e, mu := ffModel(mol)
		samples = append(samples, FFSample{Key: p.Key, Energy: e, Dipole: &mu})
	}
	rep, err := AnalyzeForceField(spec, samples)
	if err != nil {
		t.Fatal(err)
	}
	found := false
	for _, w := range rep.Warnings {
		found = found || strings.Contains(w, "gradient at the reference is not small")
	}
	// O–H stretched by 0.06 Å on a Morse of a = 1.1/bohr, D = 0.15 hartree:
	// the force is about 0.02 hartree/bohr (model), far above 4.5e-4.
	if !found || rep.GradientMax < 1e-2 {
		t.Errorf("gradient %.3g hartree/bohr, warnings %q", rep.GradientMax, rep.Warnings)
	}
	// Stage 2 is not done: the harmonic part is there, VPT2 is not.
	if rep.Isotopologues[0].Anharmonic || len(rep.Isotopologues[0].Modes) != 3 {
		t.Errorf("parent: anharmonic %v, %d modes", rep.Isotopologues[0].Anharmonic, len(rep.Isotopologues[0].Modes))
	}
}

func TestAnalyzeForceField_Incomplete(t *testing.T) {
	spec, err := planner.Decode([]byte(ffModelSpec), "scan.toml")
	if err != nil {
		t.Fatal(err)
	}
	_, err = AnalyzeForceField(spec, nil)
	if !errors.Is(err, ErrFFIncomplete) {
		t.Errorf("err = %v, want ErrFFIncomplete", err)
	}
}

func TestCm1Triple_InfiniteIsNull(t *testing.T) {
	b, err := json.Marshal(Cm1Triple{math.Inf(1), 1.5, 1.25})
	if err != nil || string(b) != "[null,1.5,1.25]" {
		t.Fatalf("Marshal = %s, %v", b, err)
	}
	var c Cm1Triple
	if err := json.Unmarshal(b, &c); err != nil || !math.IsInf(c[0], 1) || c[1] != 1.5 {
		t.Errorf("round trip = %v, %v", c, err)
	}
}
