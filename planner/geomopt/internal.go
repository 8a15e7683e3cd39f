package geomopt

import (
	"fmt"
	"math"
	"sort"

	"wellscan/planner"
)

// PrimKind is the kind of a primitive internal coordinate.
type PrimKind string

// The primitive coordinates of the optimiser.
const (
	PrimBond    PrimKind = "bond"    // distance between two atoms, bohr
	PrimAngle   PrimKind = "angle"   // bend a–b–c at b, radians
	PrimTorsion PrimKind = "torsion" // dihedral a–b–c–d about b–c, radians in (−π, π]
	PrimCart    PrimKind = "cart"    // Cartesian component Atoms[1] (0, 1, 2) of atom Atoms[0], bohr
)

// Prim is one primitive internal coordinate. Atoms are 0-based.
type Prim struct {
	Kind  PrimKind `json:"kind"`
	Atoms []int    `json:"atoms"`
}

func (p Prim) String() string {
	switch p.Kind {
	case PrimCart:
		return fmt.Sprintf("cart(%d%c)", p.Atoms[0]+1, "xyz"[p.Atoms[1]])
	}
	s := string(p.Kind) + "("
	for i, a := range p.Atoms {
		if i > 0 {
			s += "-"
		}
		s += fmt.Sprint(a + 1)
	}
	return s + ")"
}

// periodic reports whether differences of the coordinate wrap at 2π.
func (p Prim) periodic() bool { return p.Kind == PrimTorsion }

// linearAngle is the bend above which an angle is left out of the
// redundant set (its Wilson row degenerates at 180°); the Cartesian
// fall-back then covers the bending (common practice: 175°).
const linearAngle = 175 * math.Pi / 180

// Value is the coordinate's value at x (3 per atom, bohr).
func (p Prim) Value(x []float64) float64 {
	v, _ := p.valueGrad(x, false)
	return v
}

func pos(x []float64, a int) [3]float64 { return [3]float64{x[3*a], x[3*a+1], x[3*a+2]} }

func vsub(a, b [3]float64) [3]float64 { return [3]float64{a[0] - b[0], a[1] - b[1], a[2] - b[2]} }
func vdot(a, b [3]float64) float64    { return a[0]*b[0] + a[1]*b[1] + a[2]*b[2] }
func vcross(a, b [3]float64) [3]float64 {
	return [3]float64{a[1]*b[2] - a[2]*b[1], a[2]*b[0] - a[0]*b[2], a[0]*b[1] - a[1]*b[0]}
}
func vnorm(a [3]float64) float64 { return math.Sqrt(vdot(a, a)) }
func vscale(a [3]float64, s float64) [3]float64 {
	return [3]float64{a[0] * s, a[1] * s, a[2] * s}
}

// valueGrad returns the value and, with grad, its derivatives with respect
// to the Cartesian coordinates of p.Atoms (3 per atom, in order): a row of
// the Wilson B matrix.
//
// References: E. B. Wilson, J. C. Decius, P. C. Cross, Molecular
// Vibrations (McGraw-Hill 1955), ch. 4 (bond and bend rows); A. Blondel,
// M. Karplus, J. Comput. Chem. 17, 1132 (1996),
// doi:10.1002/(SICI)1096-987X(19960715)17:9<1132::AID-JCC5>3.0.CO;2-T
// (torsion derivatives without singularities; from memory).
func (p Prim) valueGrad(x []float64, grad bool) (float64, [][3]float64) {
	var g [][3]float64
	if grad {
		g = make([][3]float64, len(p.Atoms))
	}
	switch p.Kind {
	case PrimCart:
		if grad {
			g = make([][3]float64, 1)
			g[0][p.Atoms[1]] = 1
		}
		return x[3*p.Atoms[0]+p.Atoms[1]], g
	case PrimBond:
		u := vsub(pos(x, p.Atoms[0]), pos(x, p.Atoms[1]))
		r := vnorm(u)
		if grad {
			g[0] = vscale(u, 1/r)
			g[1] = vscale(u, -1/r)
		}
		return r, g
	case PrimAngle:
		u := vsub(pos(x, p.Atoms[0]), pos(x, p.Atoms[1]))
		v := vsub(pos(x, p.Atoms[2]), pos(x, p.Atoms[1]))
		lu, lv := vnorm(u), vnorm(v)
		c := vdot(u, v) / (lu * lv)
		c = max(-1, min(1, c))
		th := math.Acos(c)
		if grad {
			s := math.Sin(th)
			if s < 1e-12 {
				s = 1e-12
			}
			uh, vh := vscale(u, 1/lu), vscale(v, 1/lv)
			for k := range 3 {
				g[0][k] = (c*uh[k] - vh[k]) / (lu * s)
				g[2][k] = (c*vh[k] - uh[k]) / (lv * s)
				g[1][k] = -g[0][k] - g[2][k]
			}
		}
		return th, g
	default: // torsion
		a, b, c, d := pos(x, p.Atoms[0]), pos(x, p.Atoms[1]), pos(x, p.Atoms[2]), pos(x, p.Atoms[3])
		F, G, H := vsub(a, b), vsub(b, c), vsub(d, c)
		A, B := vcross(F, G), vcross(H, G)
		lg := vnorm(G)
		// φ = atan2((B×A)·Ĝ, A·B), the convention of planner's dihedral.
		phi := math.Atan2(vdot(vcross(B, A), G)/lg, vdot(A, B))
		if grad {
			a2, b2 := vdot(A, A), vdot(B, B)
			fg, hg := vdot(F, G), vdot(H, G)
			for k := range 3 {
				g[0][k] = -lg / a2 * A[k]
				g[3][k] = lg / b2 * B[k]
				g[1][k] = lg/a2*A[k] + fg/(a2*lg)*A[k] - hg/(b2*lg)*B[k]
				g[2][k] = -fg/(a2*lg)*A[k] + hg/(b2*lg)*B[k] - lg/b2*B[k]
			}
		}
		return phi, g
	}
}

// diff is q1 − q0 for this coordinate (wrapped into (−π, π] for torsions).
func (p Prim) diff(q1, q0 float64) float64 {
	d := q1 - q0
	if p.periodic() {
		d = math.Remainder(d, 2*math.Pi)
	}
	return d
}

// bondFactor scales the sum of covalent radii to decide a bond (common
// practice: 1.3).
const bondFactor = 1.3

// BuildPrims lists the redundant internal coordinates of mol: bonds
// between atoms closer than 1.3× the sum of their covalent radii (with the
// closest links added between disconnected fragments), every bend between
// two bonds at a shared atom (except nearly linear ones), and every
// torsion about a bond whose neighbouring bends are not linear. When these
// do not span the 3N−6 (3N−5 linear) internal degrees of freedom, the
// Cartesian coordinates of every atom are added so that the set always
// spans them (a robust fall-back for linear and weakly bound molecules).
// The list is deterministic for a given geometry and connectivity.
func BuildPrims(mol planner.Molecule) []Prim {
	x := flatten(mol)
	n := len(mol.Atoms)
	adj := make([][]bool, n)
	for i := range adj {
		adj[i] = make([]bool, n)
	}
	var prims []Prim
	addBond := func(i, j int) {
		if !adj[i][j] {
			adj[i][j], adj[j][i] = true, true
			prims = append(prims, Prim{Kind: PrimBond, Atoms: []int{i, j}})
		}
	}
	for i := range n {
		for j := i + 1; j < n; j++ {
			ri, rj := mol.Atoms[i].Element.CovalentRadius, mol.Atoms[j].Element.CovalentRadius
			if ri <= 0 {
				ri = 1.5
			}
			if rj <= 0 {
				rj = 1.5
			}
			lim := bondFactor * (ri + rj) / planner.BohrInAngstrom
			if planner.Distance(mol.Atoms[i].Pos, mol.Atoms[j].Pos) < lim {
				addBond(i, j)
			}
		}
	}
	// Join fragments by their closest pair of atoms until connected.
	for {
		comp := components(adj)
		if len(comp) <= 1 {
			break
		}
		best, bi, bj := math.Inf(1), -1, -1
		for _, a := range comp[0] {
			for _, c := range comp[1:] {
				for _, b := range c {
					if d := planner.Distance(mol.Atoms[a].Pos, mol.Atoms[b].Pos); d < best {
						best, bi, bj = d, min(a, b), max(a, b)
					}
				}
			}
		}
		addBond(bi, bj)
	}
	neigh := make([][]int, n)
	for i := range n {
		for j := range n {
			if adj[i][j] {
				neigh[i] = append(neigh[i], j)
			}
		}
	}
	linear := func(a, b, c int) bool {
		return Prim{Kind: PrimAngle, Atoms: []int{a, b, c}}.Value(x) > linearAngle
	}
	for b := range n {
		nb := neigh[b]
		for i := range nb {
			for j := i + 1; j < len(nb); j++ {
				if !linear(nb[i], b, nb[j]) {
					prims = append(prims, Prim{Kind: PrimAngle, Atoms: []int{nb[i], b, nb[j]}})
				}
			}
		}
	}
	for b := range n {
		for _, c := range neigh[b] {
			if c <= b {
				continue
			}
			for _, a := range neigh[b] {
				if a == c || linear(a, b, c) {
					continue
				}
				for _, d := range neigh[c] {
					if d == b || d == a || linear(b, c, d) {
						continue
					}
					prims = append(prims, Prim{Kind: PrimTorsion, Atoms: []int{a, b, c, d}})
				}
			}
		}
	}
	if n > 1 && rankB(prims, x) < internalDOF(x) {
		for a := range n {
			for k := range 3 {
				prims = append(prims, Prim{Kind: PrimCart, Atoms: []int{a, k}})
			}
		}
	}
	return prims
}

func components(adj [][]bool) [][]int {
	n := len(adj)
	seen := make([]bool, n)
	var out [][]int
	for s := range n {
		if seen[s] {
			continue
		}
		var c []int
		stack := []int{s}
		seen[s] = true
		for len(stack) > 0 {
			v := stack[len(stack)-1]
			stack = stack[:len(stack)-1]
			c = append(c, v)
			for w := range n {
				if adj[v][w] && !seen[w] {
					seen[w] = true
					stack = append(stack, w)
				}
			}
		}
		sort.Ints(c)
		out = append(out, c)
	}
	return out
}

// internalDOF is 3N−6, or 3N−5 for a linear arrangement (1 atom: 0).
func internalDOF(x []float64) int {
	n := len(x) / 3
	switch {
	case n == 1:
		return 0
	case n == 2:
		return 1
	}
	// Linear when every atom lies on the line through the first two.
	a, b := pos(x, 0), pos(x, 1)
	axis := vsub(b, a)
	la := vnorm(axis)
	for i := 2; i < n; i++ {
		if vnorm(vcross(vsub(pos(x, i), a), axis))/la > 1e-3 {
			return 3*n - 6
		}
	}
	return 3*n - 5
}

func flatten(mol planner.Molecule) []float64 {
	x := make([]float64, 0, 3*len(mol.Atoms))
	for _, a := range mol.Atoms {
		x = append(x, a.Pos[:]...)
	}
	return x
}

// Flatten returns the Cartesian coordinates of mol, 3 per atom, bohr.
func Flatten(mol planner.Molecule) []float64 { return flatten(mol) }

// withPositions returns a copy of mol at x.
func withPositions(mol planner.Molecule, x []float64) planner.Molecule {
	m := mol.Clone()
	for a := range m.Atoms {
		copy(m.Atoms[a].Pos[:], x[3*a:3*a+3])
	}
	return m
}
