package fit

import (
	"fmt"
	"math"
)

// GElement returns the Wilson G-matrix element G_tt = Σ_a s_a·s_a / m_a of
// one internal coordinate t, where s_a = ∂t/∂x_a is the row of the Wilson
// B matrix for atom a (bmatRow, one [3]float64 per atom, in coordinate
// units per bohr) and masses are in amu. The effective mass of the
// coordinate for a one-dimensional analysis is 1/G_tt: amu for a length,
// amu·bohr² for an angle in radian. positions only fixes the atom count
// (and is checked against it); the B row carries the geometry.
//
// References:
//   - E. B. Wilson, J. C. Decius, P. C. Cross, Molecular Vibrations,
//     McGraw-Hill 1955, ch. 4 (the s vectors and G = B M⁻¹ Bᵀ).
func GElement(positions [][3]float64, masses []float64, bmatRow [][3]float64) (float64, error) {
	return GMatrixElement(positions, masses, bmatRow, bmatRow)
}

// GMatrixElement returns the off-diagonal element G_tu = Σ_a s_ta·s_ua/m_a
// of two internal coordinates (Wilson, Decius & Cross 1955, ch. 4).
func GMatrixElement(positions [][3]float64, masses []float64, rowT, rowU [][3]float64) (float64, error) {
	n := len(positions)
	if len(masses) != n || len(rowT) != n || len(rowU) != n {
		return 0, fmt.Errorf("fit: G element: %d positions, %d masses and B rows of %d and %d atoms; all must match", n, len(masses), len(rowT), len(rowU))
	}
	g := 0.0
	for a := range n {
		m := masses[a]
		if !(m > 0) || math.IsInf(m, 0) {
			return 0, fmt.Errorf("fit: G element: mass of atom %d is %g amu, not a positive finite number", a+1, m)
		}
		g += (rowT[a][0]*rowU[a][0] + rowT[a][1]*rowU[a][1] + rowT[a][2]*rowU[a][2]) / m
	}
	return g, nil
}

// BRowDistance returns the B-matrix row of the distance between atoms
// atoms[0] and atoms[1] (0-based): s = ∓ the unit vector along the bond
// (Wilson, Decius & Cross 1955, §4-1), zero for the other atoms.
func BRowDistance(positions [][3]float64, atoms [2]int) ([][3]float64, error) {
	if err := checkAtoms(positions, atoms[:]); err != nil {
		return nil, err
	}
	a, b := positions[atoms[0]], positions[atoms[1]]
	d := sub(b, a)
	r := norm(d)
	if r == 0 {
		return nil, fmt.Errorf("fit: B row: atoms %d and %d coincide", atoms[0]+1, atoms[1]+1)
	}
	row := make([][3]float64, len(positions))
	for k := range 3 {
		row[atoms[0]][k] = -d[k] / r
		row[atoms[1]][k] = d[k] / r
	}
	return row, nil
}

// BRowAngle returns the B-matrix row of the angle atoms[0]–atoms[1]–atoms[2]
// (vertex atoms[1]) in radian per bohr, by central differences of the angle
// (step 1e-5 bohr, error ~1e-10 relative).
func BRowAngle(positions [][3]float64, atoms [3]int) ([][3]float64, error) {
	if err := checkAtoms(positions, atoms[:]); err != nil {
		return nil, err
	}
	f := func(p [][3]float64) float64 { return angle(p[atoms[0]], p[atoms[1]], p[atoms[2]]) }
	if th := f(positions); th < 1e-3 || th > math.Pi-1e-3 {
		return nil, fmt.Errorf("fit: B row: angle %d–%d–%d is %.4g°, too close to 0° or 180° for a bending coordinate", atoms[0]+1, atoms[1]+1, atoms[2]+1, th*180/math.Pi)
	}
	return numericRow(positions, atoms[:], f, false), nil
}

// BRowTorsion returns the B-matrix row of the dihedral angle
// atoms[0]–atoms[1]–atoms[2]–atoms[3] in radian per bohr, by central
// differences (the general s-vector form of Wilson, Decius & Cross 1955,
// §4-1, evaluated numerically).
func BRowTorsion(positions [][3]float64, atoms [4]int) ([][3]float64, error) {
	if err := checkAtoms(positions, atoms[:]); err != nil {
		return nil, err
	}
	p := positions
	for _, tri := range [][3]int{{0, 1, 2}, {1, 2, 3}} {
		th := angle(p[atoms[tri[0]]], p[atoms[tri[1]]], p[atoms[tri[2]]])
		if th < 1e-2 || th > math.Pi-1e-2 {
			return nil, fmt.Errorf("fit: B row: torsion %d–%d–%d–%d is undefined: three of its atoms are collinear", atoms[0]+1, atoms[1]+1, atoms[2]+1, atoms[3]+1)
		}
	}
	f := func(p [][3]float64) float64 { return Dihedral(p[atoms[0]], p[atoms[1]], p[atoms[2]], p[atoms[3]]) }
	return numericRow(positions, atoms[:], f, true), nil
}

// Dihedral returns the dihedral angle a–b–c–d in radian, in (−π, π].
func Dihedral(a, b, c, d [3]float64) float64 {
	b1, b2, b3 := sub(b, a), sub(c, b), sub(d, c)
	n1, n2 := cross(b1, b2), cross(b2, b3)
	m := cross(n1, scale3(b2, 1/norm(b2)))
	return math.Atan2(dot(m, n2), dot(n1, n2))
}

func numericRow(positions [][3]float64, atoms []int, f func([][3]float64) float64, periodic bool) [][3]float64 {
	const h = 1e-5
	row := make([][3]float64, len(positions))
	p := make([][3]float64, len(positions))
	copy(p, positions)
	for _, a := range atoms {
		for k := range 3 {
			x := p[a][k]
			p[a][k] = x + h
			fp := f(p)
			p[a][k] = x - h
			fm := f(p)
			p[a][k] = x
			d := fp - fm
			if periodic {
				d = math.Remainder(d, 2*math.Pi)
			}
			row[a][k] = d / (2 * h)
		}
	}
	return row
}

func checkAtoms(positions [][3]float64, atoms []int) error {
	seen := map[int]bool{}
	for _, a := range atoms {
		if a < 0 || a >= len(positions) {
			return fmt.Errorf("fit: B row: atom index %d out of range (0–%d)", a, len(positions)-1)
		}
		if seen[a] {
			return fmt.Errorf("fit: B row: atom %d appears twice in one coordinate", a+1)
		}
		seen[a] = true
	}
	return nil
}

func angle(a, b, c [3]float64) float64 {
	u, v := sub(a, b), sub(c, b)
	return math.Atan2(norm(cross(u, v)), dot(u, v))
}

func sub(a, b [3]float64) [3]float64 { return [3]float64{a[0] - b[0], a[1] - b[1], a[2] - b[2]} }
func dot(a, b [3]float64) float64    { return a[0]*b[0] + a[1]*b[1] + a[2]*b[2] }
func norm(a [3]float64) float64      { return math.Sqrt(dot(a, a)) }
func scale3(a [3]float64, s float64) [3]float64 {
	return [3]float64{a[0] * s, a[1] * s, a[2] * s}
}
func cross(a, b [3]float64) [3]float64 {
	return [3]float64{a[1]*b[2] - a[2]*b[1], a[2]*b[0] - a[0]*b[2], a[0]*b[1] - a[1]*b[0]}
}
