package fit

import (
	"math"
	"testing"
)

// A bent triatomic (invented geometry, bohr): vertex at the origin, bonds of
// 1.81 and 1.85 bohr, angle 104.5°.
func bentTriatomic() ([][3]float64, float64, float64, float64) {
	r1, r2, phi := 1.81, 1.85, 104.5*math.Pi/180
	return [][3]float64{
		{r1, 0, 0},
		{0, 0, 0},
		{r2 * math.Cos(phi), r2 * math.Sin(phi), 0},
	}, r1, r2, phi
}

func TestGElement_StretchAndBend_MatchWilsonFormulas(t *testing.T) {
	pos, r1, r2, phi := bentTriatomic()
	m := []float64{massH, mass16O, massD}
	row, err := BRowDistance(pos, [2]int{0, 1})
	if err != nil {
		t.Fatal(err)
	}
	g, err := GElement(pos, m, row)
	if err != nil {
		t.Fatal(err)
	}
	// G_rr = 1/m_a + 1/m_b (Wilson, Decius & Cross 1955, Table of G
	// elements, stretch).
	near(t, "G_rr", g, 1/m[0]+1/m[1], 0, 1e-14)
	rowB, err := BRowAngle(pos, [3]int{0, 1, 2})
	if err != nil {
		t.Fatal(err)
	}
	g, err = GElement(pos, m, rowB)
	if err != nil {
		t.Fatal(err)
	}
	// G_φφ = 1/(m1 r1²) + 1/(m3 r2²) + (1/m2)(1/r1² + 1/r2² − 2cosφ/(r1 r2))
	// (Wilson, Decius & Cross 1955, bend); 1e-8 relative: the central
	// difference error of the numerical B row.
	want := 1/(m[0]*r1*r1) + 1/(m[2]*r2*r2) + (1/r1/r1+1/r2/r2-2*math.Cos(phi)/(r1*r2))/m[1]
	near(t, "G_φφ", g, want, 0, 1e-8)
	row2, err := BRowDistance(pos, [2]int{1, 2})
	if err != nil {
		t.Fatal(err)
	}
	g12, err := GMatrixElement(pos, m, row, row2)
	if err != nil {
		t.Fatal(err)
	}
	// Two stretches sharing the vertex atom: G_r1r2 = cosφ/m_vertex (same
	// source).
	near(t, "G_r1r2", g12, math.Cos(phi)/m[1], 1e-14, 1e-12)
}

func TestBRowTorsion_Invariances(t *testing.T) {
	// A skewed four-atom chain (invented geometry, bohr).
	pos := [][3]float64{{1.2, 1.6, 0.1}, {0, 1.3, 0}, {0, 0, 0}, {1.1, -0.4, 1.5}}
	row, err := BRowTorsion(pos, [4]int{0, 1, 2, 3})
	if err != nil {
		t.Fatal(err)
	}
	// An internal coordinate is unchanged by rigid translation and
	// rotation, so Σ s_a = 0 and Σ x_a × s_a = 0 (Wilson, Decius & Cross
	// 1955, §4-1); 1e-8 is the central-difference error.
	var sum, torque [3]float64
	for a, s := range row {
		c := cross(pos[a], s)
		for k := range 3 {
			sum[k] += s[k]
			torque[k] += c[k]
		}
	}
	for k := range 3 {
		near(t, "Σ s", sum[k], 0, 1e-8, 0)
		near(t, "Σ x × s", torque[k], 0, 1e-8, 0)
	}
	// The end-atom s vector of a torsion is perpendicular to the plane of
	// the first three atoms with length 1/(r12 sin φ123) (same source).
	r12 := norm(sub(pos[0], pos[1]))
	phi := angle(pos[0], pos[1], pos[2])
	near(t, "|s_1|", norm(row[0]), 1/(r12*math.Sin(phi)), 0, 1e-8)
}

func TestBRow_BadInput_Errors(t *testing.T) {
	pos := [][3]float64{{0, 0, 0}, {1, 0, 0}, {2, 0, 0}, {2, 1, 0}}
	if _, err := BRowDistance(pos, [2]int{0, 7}); err == nil {
		t.Error("out-of-range atom gave no error")
	}
	if _, err := BRowAngle(pos, [3]int{0, 1, 2}); err == nil {
		t.Error("linear angle gave no error")
	}
	if _, err := BRowTorsion(pos, [4]int{0, 1, 2, 3}); err == nil {
		t.Error("torsion with collinear atoms gave no error")
	}
	if _, err := GElement(pos, []float64{1, 1}, make([][3]float64, 4)); err == nil {
		t.Error("mass count mismatch gave no error")
	}
}
