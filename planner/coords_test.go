package planner

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// h2o2 is a non-planar hydrogen-peroxide-like geometry (Å), invented for
// the displacement tests; only its shape (no symmetry, a torsion far from
// 0° and 180°) matters.
const h2o2 = `
[molecule]
units = "angstrom"
geometry = """
O  0.000  0.700  0.000
O  0.050 -0.720  0.030
H  0.900  0.920  0.300
H -0.700 -0.980  0.650
"""
[engine]
kind = "model"
[[engine.model.term]]
shape = "harmonic"
force = 1.0
`

func mustDecode(t testing.TB, text string) *Spec {
	t.Helper()
	s, err := Decode([]byte(text), "test.toml")
	if err != nil {
		t.Fatalf("Decode: %v", err)
	}
	return s
}

// pairDistances lists all interatomic distances of the atoms in idx.
func pairDistances(m Molecule, idx []int) []float64 {
	var d []float64
	for i := range idx {
		for j := range i {
			d = append(d, Distance(m.Atoms[idx[i]].Pos, m.Atoms[idx[j]].Pos))
		}
	}
	return d
}

func TestSpec_Geometry_DisplacesOnlyTheCoordinate(t *testing.T) {
	// 1e-12 (bohr or radians): the displacements are closed-form
	// translations and rotations, so only rounding error remains.
	const tol = 1e-12
	tests := []struct {
		name   string
		scan   string
		target float64 // display units
		fixed  []int   // 0-based atoms that must not move
		rigid  [][]int // atom groups whose internal distances must not change
	}{
		{"distance O-H", "name = \"r\"\nbond = [1, 3]\nfrom = 0.9\nto = 1.1\nstep = 0.1", 1.23456, []int{0, 1, 3}, [][]int{{0, 1, 3}}},
		{"distance O-O", "name = \"r\"\nbond = [1, 2]\nfrom = 1.3\nto = 1.5\nstep = 0.1", 1.61803, []int{0, 2}, [][]int{{0, 2}, {1, 3}}},
		{"angle O-O-H", "name = \"a\"\nangle = [1, 2, 4]\nfrom = 90\nto = 110\nstep = 10", 97.125, []int{0, 1, 2}, [][]int{{0, 1, 2}, {1, 3}}},
		{"torsion H-O-O-H", "name = \"t\"\ntorsion = [3, 1, 2, 4]\nfrom = 60\nto = 180\nstep = 30", 151.234, []int{0, 1, 2}, [][]int{{0, 1, 2}, {1, 3}}},
		{"torsion negative", "name = \"t\"\ntorsion = [3, 1, 2, 4]\nfrom = -170\nto = -60\nstep = 10", -77.777, []int{0, 1, 2}, [][]int{{0, 1, 2}, {1, 3}}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			s := mustDecode(t, h2o2+"[[scan]]\n"+tc.scan+"\n")
			ref, _ := s.Molecule()
			p := s.PointAt([]float64{tc.target})
			m, err := s.Geometry(p)
			if err != nil {
				t.Fatal(err)
			}
			c := s.Coordinates()[0]
			got := c.Measure(m, 0)
			diff := got - p.Values[0]
			if c.Kind == KindTorsion {
				diff = wrap(diff)
			}
			if math.Abs(diff) > tol {
				t.Errorf("%s after set = %.15g, want %.15g", c.Name, got, p.Values[0])
			}
			for _, a := range tc.fixed {
				for k := range 3 {
					if !scalar.EqualWithinAbs(m.Atoms[a].Pos[k], ref.Atoms[a].Pos[k], tol) {
						t.Errorf("atom %d moved: %v → %v", a+1, ref.Atoms[a].Pos, m.Atoms[a].Pos)
					}
				}
			}
			for _, g := range tc.rigid {
				dr, dm := pairDistances(ref, g), pairDistances(m, g)
				for i := range dr {
					if !scalar.EqualWithinAbs(dr[i], dm[i], tol) {
						t.Errorf("distance %d in group %v changed: %.15g → %.15g", i, g, dr[i], dm[i])
					}
				}
			}
		})
	}
}

func TestSpec_Geometry_OtherCoordinatesUnchanged(t *testing.T) {
	// Setting the torsion must leave both bond angles and all bonds alone;
	// setting the angle must leave the torsion's bonds alone. 1e-12 as above.
	s := mustDecode(t, h2o2+"[[scan]]\nname = \"t\"\ntorsion = [3, 1, 2, 4]\nfrom = 60\nto = 180\nstep = 30\n")
	ref, _ := s.Molecule()
	m, err := s.Geometry(s.PointAt([]float64{-123.456}))
	if err != nil {
		t.Fatal(err)
	}
	for _, a := range [][3]int{{2, 0, 1}, {0, 1, 3}} {
		r := angle3(ref.Atoms[a[0]].Pos, ref.Atoms[a[1]].Pos, ref.Atoms[a[2]].Pos)
		g := angle3(m.Atoms[a[0]].Pos, m.Atoms[a[1]].Pos, m.Atoms[a[2]].Pos)
		if !scalar.EqualWithinAbs(r, g, 1e-12) {
			t.Errorf("angle %v changed: %.15g → %.15g", a, r, g)
		}
	}
	for _, b := range [][2]int{{0, 1}, {0, 2}, {1, 3}} {
		r, g := Distance(ref.Atoms[b[0]].Pos, ref.Atoms[b[1]].Pos), Distance(m.Atoms[b[0]].Pos, m.Atoms[b[1]].Pos)
		if !scalar.EqualWithinAbs(r, g, 1e-12) {
			t.Errorf("bond %v changed: %.15g → %.15g", b, r, g)
		}
	}
}

// methane is a regular tetrahedron (C–H 1.09 Å; the vertices of a cube
// give exact Td symmetry).
const methane = `
[molecule]
geometry = """
C  0.0  0.0  0.0
H  0.629311  0.629311  0.629311
H -0.629311 -0.629311  0.629311
H -0.629311  0.629311 -0.629311
H  0.629311 -0.629311 -0.629311
"""
[[scan]]
name = "r"
bonds = [[1, 2], [1, 3], [1, 4], [1, 5]]
from = 0.9
to = 1.3
step = 0.1
[engine]
kind = "model"
[[engine.model.term]]
shape = "harmonic"
force = 1.0
`

func TestSpec_Geometry_TiedKeepsSymmetry(t *testing.T) {
	// 1e-12: exact translations along each bond; symmetry is preserved when
	// all bonds end equal and all H–C–H angles are unchanged.
	tests := []struct {
		name, spec string
		bonds      [][2]int
		angles     [][3]int
		target     float64
	}{
		{"methane symmetric stretch", methane, [][2]int{{0, 1}, {0, 2}, {0, 3}, {0, 4}},
			[][3]int{{1, 0, 2}, {1, 0, 3}, {1, 0, 4}, {2, 0, 3}, {2, 0, 4}, {3, 0, 4}}, 1.23},
		{"water symmetric stretch", readExample(t, "water-stretch"), [][2]int{{0, 1}, {0, 2}}, [][3]int{{1, 0, 2}}, 1.05},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			s := mustDecode(t, tc.spec)
			ref, _ := s.Molecule()
			m, err := s.Geometry(s.PointAt([]float64{tc.target}))
			if err != nil {
				t.Fatal(err)
			}
			want := tc.target * AngstromInBohr
			for _, b := range tc.bonds {
				if d := Distance(m.Atoms[b[0]].Pos, m.Atoms[b[1]].Pos); !scalar.EqualWithinAbs(d, want, 1e-12) {
					t.Errorf("bond %v = %.15g bohr, want %.15g", b, d, want)
				}
			}
			for _, a := range tc.angles {
				r := angle3(ref.Atoms[a[0]].Pos, ref.Atoms[a[1]].Pos, ref.Atoms[a[2]].Pos)
				g := angle3(m.Atoms[a[0]].Pos, m.Atoms[a[1]].Pos, m.Atoms[a[2]].Pos)
				if !scalar.EqualWithinAbs(r, g, 1e-12) {
					t.Errorf("angle %v changed: %.15g → %.15g", a, r, g)
				}
			}
		})
	}
}

func TestSpec_Geometry_StretchBend2D(t *testing.T) {
	s := mustDecode(t, readExample(t, "water-stretch-bend"))
	p := s.PointAt([]float64{1.02, 98.5})
	m, err := s.Geometry(p)
	if err != nil {
		t.Fatal(err)
	}
	cs := s.Coordinates()
	for i, c := range cs {
		for k := range c.Members {
			// 1e-12: both coordinates must hold exactly after both are set.
			if got := c.Measure(m, k); !scalar.EqualWithinAbs(got, p.Values[i], 1e-12) {
				t.Errorf("%s member %d = %.15g, want %.15g", c.Name, k+1, got, p.Values[i])
			}
		}
	}
}

func TestSpec_EffectiveMass_Diatomic(t *testing.T) {
	// For a diatomic the path mass is the reduced mass m_C m_O/(m_C+m_O)
	// (textbook two-body reduction). 1e-9 relative: the central difference
	// of a linear displacement is exact up to rounding.
	s := mustDecode(t, readExample(t, "morse-model"))
	p := s.PointAt([]float64{1.128})
	mu, err := s.EffectiveMass(p, 0)
	if err != nil {
		t.Fatal(err)
	}
	mc, mo := elements[5].Mass, elements[7].Mass
	if want := mc * mo / (mc + mo); !scalar.EqualWithinRel(mu, want, 1e-9) {
		t.Errorf("EffectiveMass = %.12g amu, want %.12g", mu, want)
	}
}

func TestSpec_EffectiveMass_WaterStretch(t *testing.T) {
	// Symmetric stretch with the angle frozen: both H move out along their
	// bonds at unit rate; removing the centre-of-mass motion gives
	// μ = 2 m_H (m_O + m_H (1 − cos θ)) / M (derived by hand from
	// Σ m |v − V|², no rotation by symmetry). 1e-8 relative: rounding in
	// the central difference.
	s := mustDecode(t, readExample(t, "water-stretch"))
	ref, _ := s.Molecule()
	th := angle3(ref.Atoms[1].Pos, ref.Atoms[0].Pos, ref.Atoms[2].Pos)
	mu, err := s.EffectiveMass(s.PointAt([]float64{0.96}), 0)
	if err != nil {
		t.Fatal(err)
	}
	mh, mo := elements[0].Mass, elements[7].Mass
	want := 2 * mh * (mo + mh*(1-math.Cos(th))) / (mo + 2*mh)
	if !scalar.EqualWithinRel(mu, want, 1e-8) {
		t.Errorf("EffectiveMass = %.12g amu, want %.12g", mu, want)
	}
}
