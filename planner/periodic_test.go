package planner

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// ethane is a staggered ethane geometry (Å; C–C 1.53, C–H 1.09, H–C–C
// 111°, invented round numbers close to the usual structure) with the
// torsion H3–C1–C2–H6 at 180°.
const ethaneGeometry = `
[molecule]
units = "angstrom"
geometry = """
C  0.000000  0.000000  0.000000
C  0.000000  0.000000  1.530000
H  1.017603  0.000000 -0.390621
H -0.508801  0.881270 -0.390621
H -0.508801 -0.881270 -0.390621
H  0.508801  0.881270  1.920621
H -1.017603  0.000000  1.920621
H  0.508801 -0.881270  1.920621
"""
[engine]
kind = "model"
[[engine.model.term]]
shape = "cosine"
depth = 0.005
fold = 3
`

func ethaneSpec(t testing.TB, scan string) *Spec {
	t.Helper()
	return mustDecode(t, ethaneGeometry+"\n[[scan]]\nname = \"tau\"\ntorsion = [3, 1, 2, 6]\n"+scan)
}

func TestPeriodic_CanonicalKeys(t *testing.T) {
	s := ethaneSpec(t, "from = -360\nto = 360\nstep = 60")
	pts := s.InitialPoints()
	keys := map[string]bool{}
	for _, p := range pts {
		keys[p.Key] = true
		if v := p.Values[0]; v < 0 || v >= 2*math.Pi {
			t.Errorf("%s: value %g rad outside [0, 2π)", p.Key, v)
		}
	}
	// −360…360 in steps of 60 is 13 values but 6 geometries.
	if len(keys) != 6 {
		t.Errorf("%d distinct keys %v, want 6", len(keys), keys)
	}
	if len(s.Notes()) != 1 || !strings.Contains(s.Notes()[0], "longer than the period") {
		t.Errorf("notes %q: want one note that the range is folded", s.Notes())
	}
	c := s.Coordinates()[0]
	if !c.FullPeriod {
		t.Error("a 720° range covers the period")
	}
	p, err := s.CanonicalPoint("tau=-60.000")
	if err != nil || p.Key != "tau=300.000" {
		t.Errorf("CanonicalPoint(tau=-60.000) = %q, %v; want tau=300.000", p.Key, err)
	}
	if _, err := s.ParseKey("tau=-60.000"); err == nil {
		t.Error("ParseKey accepts a non-canonical key")
	}
	if k := s.PointAt([]float64{359.9996}).Key; k != "tau=0.000" {
		t.Errorf("359.9996° rounds to %s, want tau=0.000 (no key at the period)", k)
	}
}

func TestPeriodic_DeclaredPeriod(t *testing.T) {
	s := ethaneSpec(t, "from = 0\nto = 120\nstep = 20\nperiod = 120")
	c := s.Coordinates()[0]
	if !scalar.EqualWithinRel(c.Period, 2*math.Pi/3, 1e-15) || !c.FullPeriod {
		t.Fatalf("period %g rad, full %v; want 2π/3 and full", c.Period, c.FullPeriod)
	}
	if n := len(s.InitialPoints()); n != 6 {
		t.Errorf("%d points for 0–120° in 20° steps with period 120°, want 6 (120 ≡ 0)", n)
	}
	if k := s.PointAt([]float64{200}).Key; k != "tau=80.000" {
		t.Errorf("200° with period 120° is key %s, want tau=80.000", k)
	}
	partial := ethaneSpec(t, "from = 0\nto = 180\nstep = 15")
	if partial.Coordinates()[0].FullPeriod {
		t.Error("0–180° of a 360° torsion is not the whole period")
	}
}

func TestPeriodic_BadInput(t *testing.T) {
	tests := []struct {
		name, text, key, msg string
	}{
		{"not a divisor", ethaneGeometry + "[[scan]]\ntorsion = [3, 1, 2, 6]\nfrom = 0\nto = 100\nstep = 10\nperiod = 100", "scan[1].period", "does not divide 360"},
		{"not the rotor's symmetry", ethaneGeometry + "[[scan]]\ntorsion = [3, 1, 2, 6]\nfrom = 0\nto = 90\nstep = 10\nperiod = 90", "scan[1].period", "not a symmetry"},
		{"negative", ethaneGeometry + "[[scan]]\ntorsion = [3, 1, 2, 6]\nfrom = 0\nto = 90\nstep = 10\nperiod = -120", "scan[1].period", "between 0 and 360"},
		{"nan", ethaneGeometry + "[[scan]]\ntorsion = [3, 1, 2, 6]\nfrom = 0\nto = 90\nstep = 10\nperiod = nan", "scan[1].period", "between 0 and 360"},
		{"on a bond", ethaneGeometry + "[[scan]]\nbond = [1, 2]\nfrom = 1.4\nto = 1.6\nstep = 0.05\nperiod = 120", "scan[1].period", "only a torsion is periodic"},
		// A methyl rotor tied to a torsion of a group without threefold
		// symmetry (one H of the second methyl made deuterium does not
		// change the element check, so tie with a C–C–H–H-like rotor of
		// another molecule instead: here the O–H of methanol).
		{"tied rotors of different symmetry", methanolTied, "scan[1].period", "not a symmetry"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Decode([]byte(tc.text), "scan.toml")
			var se *SpecError
			if !errors.As(err, &se) || se.Key != tc.key || !strings.Contains(se.Msg, tc.msg) || se.Line == 0 {
				t.Errorf("error %v: want key %s with %q and a line number", err, tc.key, tc.msg)
			}
		})
	}
}

// methanolTied ties the methyl torsion of methanol (threefold) with its
// O–H torsion (no symmetry) under one period of 120°. Geometry invented,
// round numbers.
const methanolTied = `
[molecule]
units = "angstrom"
geometry = """
C  0.000000  0.000000  0.000000
O  0.000000  0.000000  1.430000
H  1.017603  0.000000 -0.390621
H -0.508801  0.881270 -0.390621
H -0.508801 -0.881270 -0.390621
H  0.900000  0.000000  1.750000
"""
[engine]
kind = "model"
[[engine.model.term]]
shape = "harmonic"
force = 1.0
[[scan]]
name = "tau"
torsions = [[6, 2, 1, 3], [3, 1, 2, 6]]
moving = [[3, 4, 5], [6]]
from = 0
to = 120
step = 20
period = 120
`

func TestPeriodic_RefineWrapsAndStaysInsidePeriod(t *testing.T) {
	// V = V3/2 (1 − cos 3τ): minima at 0°, 120°, 240°, maxima at 60°,
	// 180°, 300° (exact for the model).
	const v3 = 0.005
	f := func(x float64) float64 { return v3 / 2 * (1 - math.Cos(3*x)) }
	s := ethaneSpec(t, "from = 0\nto = 120\nstep = 20\nperiod = 120")
	plan, _, done := simulate(t, s, f)
	if plan.Status != RefineConverged {
		t.Fatalf("status %s: %s", plan.Status, plan.Reason)
	}
	for _, d := range done {
		if d.Values[0] < 0 || d.Values[0] >= 2*math.Pi/3 {
			t.Errorf("point %s outside the period [0, 120°)", d.Key)
		}
	}
	if len(done) > 15 {
		t.Errorf("%d points for one methyl period; want ≤ 15 (issue goal)", len(done))
	}
	var kinds []string
	for _, e := range plan.Extrema {
		kinds = append(kinds, fmt.Sprintf("%s@%.3f", e.Kind, e.Values[0]*180/math.Pi))
		want := 0.0
		if e.Kind == "maximum" {
			want = 60
		}
		if d := math.Abs(math.Remainder(e.Values[0]*180/math.Pi-want, 120)); d > 0.01 {
			t.Errorf("%s at %.4f°, want %g° (mod 120°)", e.Kind, e.Values[0]*180/math.Pi, want)
		}
		if e.AtEdge {
			t.Errorf("%s reported at an edge: a full period has none", e.Kind)
		}
	}
	if len(plan.Extrema) != 2 {
		t.Errorf("extrema %v: want one minimum and one maximum (maxima are refined by default for torsions)", kinds)
	}
}

func TestPeriodic_PartialRangeNeverExtends(t *testing.T) {
	// The minimum of this model lies at 0° (= 360°), at the lower end of
	// the scanned range 0–90°: refinement must not step below 0°.
	f := func(x float64) float64 { return 0.002 * (1 - math.Cos(x)) }
	s := ethaneSpec(t, "from = 0\nto = 90\nstep = 15")
	plan, _, done := simulate(t, s, f)
	for _, d := range done {
		if x := s.Coordinates()[0].Unwrap(d.Values[0], Angstrom); x < -1e-9 || x > 90+1e-9 {
			t.Errorf("point %s outside the scanned range 0–90°", d.Key)
		}
	}
	if plan.Status != RefineStalled || !strings.Contains(plan.Reason, "not extended") {
		t.Errorf("status %s (%s): want stalled, the minimum at the range end named", plan.Status, plan.Reason)
	}
}

func TestKineticMetric_EthaneMethylRotation(t *testing.T) {
	// Rotating one methyl group of ethane about the C–C axis: the internal
	// rotation's reduced moment of inertia is I_A I_B/(I_A + I_B) for two
	// coaxial symmetric tops (K. S. Pitzer, J. Chem. Phys. 14, 239 (1946)),
	// with I_X = Σ m_H d⊥² of each methyl about the axis, computed here
	// from the geometry. 1e-7 relative: the central difference of a
	// rotation.
	s := ethaneSpec(t, "from = 0\nto = 120\nstep = 20\nperiod = 120")
	mol, _ := s.Molecule()
	top := func(idx []int) float64 {
		a, b := mol.Atoms[0].Pos, mol.Atoms[1].Pos
		ax := unit(sub(b, a))
		sum := 0.0
		for _, i := range idx {
			r := sub(mol.Atoms[i].Pos, a)
			perp := sub(r, scale(ax, dot(r, ax)))
			sum += mol.Atoms[i].Mass * dot(perp, perp)
		}
		return sum
	}
	ia, ib := top([]int{2, 3, 4}), top([]int{5, 6, 7})
	want := ia * ib / (ia + ib)
	for _, deg := range []float64{0, 37, 60} {
		mu, err := s.EffectiveMass(s.PointAt([]float64{deg}), 0)
		if err != nil {
			t.Fatal(err)
		}
		if !scalar.EqualWithinRel(mu, want, 1e-7) {
			t.Errorf("τ = %g°: reduced moment %.10g amu·bohr², Pitzer %.10g", deg, mu, want)
		}
	}
}

func TestKineticMetric_LinearTriatomicBend(t *testing.T) {
	// CO2 bend at and near the linear geometry: the path moves one O about
	// the C; with translation and rotation removed the metric is 1/G with
	// Wilson's G for a linear triatomic bend, G = 1/(m₁r₁²) + 1/(m₃r₂²) +
	// (1/r₁ + 1/r₂)²/m₂ (E. B. Wilson, J. C. Decius, P. C. Cross,
	// Molecular Vibrations, McGraw-Hill 1955, Table of G-matrix elements).
	// 1e-6 relative: at 180° the derivative is one-sided (second order).
	s := mustDecode(t, `
[molecule]
geometry = """
O 0.0 0.0 -1.16
C 0.0 0.0 0.0
O 0.0 0.0 1.17
"""
[[scan]]
name = "bend"
angle = [1, 2, 3]
from = 150
to = 180
step = 5
[engine]
kind = "model"
[[engine.model.term]]
shape = "harmonic"
force = 1.0
center = 3.14159
`)
	mol, _ := s.Molecule()
	r1 := Distance(mol.Atoms[0].Pos, mol.Atoms[1].Pos)
	r2 := Distance(mol.Atoms[2].Pos, mol.Atoms[1].Pos)
	m1, m2, m3 := mol.Atoms[0].Mass, mol.Atoms[1].Mass, mol.Atoms[2].Mass
	g := 1/(m1*r1*r1) + 1/(m3*r2*r2) + (1/r1+1/r2)*(1/r1+1/r2)/m2
	mu, err := s.EffectiveMass(s.PointAt([]float64{180}), 0)
	if err != nil {
		t.Fatalf("metric at 180°: %v", err)
	}
	if !scalar.EqualWithinRel(mu, 1/g, 1e-6) {
		t.Errorf("bend metric at 180° = %.10g amu·bohr², Wilson 1/G = %.10g", mu, 1/g)
	}
}
