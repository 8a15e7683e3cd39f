package planner

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/spatial/r3"
)

// CoordKind is the kind of an internal coordinate.
type CoordKind int

// The internal coordinates wellscan scans.
const (
	KindDistance CoordKind = iota + 1 // between two atoms; bohr inside, the spec's length unit outside
	KindAngle                         // bond angle i–j–k at vertex j; radians inside, degrees outside
	KindTorsion                       // dihedral i–j–k–l about j–k; radians inside, degrees outside
)

func (k CoordKind) String() string {
	switch k {
	case KindDistance:
		return "distance"
	case KindAngle:
		return "angle"
	case KindTorsion:
		return "torsion"
	}
	return "unknown"
}

// arity is the number of atoms that define a coordinate of kind k.
func (k CoordKind) arity() int { return int(k) + 1 }

// Coordinate is one scanned internal coordinate, possibly several tied
// members that always share one value (a symmetric stretch). Atom indices
// are 0-based here (1-based in specs).
type Coordinate struct {
	Name    string
	Kind    CoordKind
	Members [][]int // atoms defining each member
	Moving  [][]int // atoms each member moves; disjoint between members
	Digits  int     // decimals of the key, in display units
	// Period is the period of a torsion in radians: 2π, or the shorter
	// period the spec declares for a symmetric rotor (scan.period, e.g.
	// 2π/3 for a methyl group). Zero for lengths and bond angles. Point
	// values of a periodic coordinate are canonical: in [0, Period).
	Period float64
	// FullPeriod is true when the spec's grid covers the whole period,
	// so that the first and last points are neighbours (the scan wraps).
	FullPeriod bool
	// Origin (display units, degrees) is where values of a periodic
	// coordinate are unwrapped to for people: [Origin, Origin+period),
	// the lowest value the spec's grid starts from.
	Origin float64
}

// Display converts an internal value (bohr or radians) to display units
// (u for lengths, degrees for angles).
func (c Coordinate) Display(v float64, u LengthUnit) float64 {
	if c.Kind == KindDistance {
		return u.FromBohr(v)
	}
	return v * 180 / math.Pi
}

// Internal converts a value in display units to bohr or radians.
func (c Coordinate) Internal(x float64, u LengthUnit) float64 {
	if c.Kind == KindDistance {
		return u.ToBohr(x)
	}
	return x * math.Pi / 180
}

// UnitLabel is the display unit's label ("Å", "bohr", "deg").
func (c Coordinate) UnitLabel(u LengthUnit) string {
	if c.Kind != KindDistance {
		return "deg"
	}
	if u == Bohr {
		return "bohr"
	}
	return "Å"
}

// Measure returns member's value in m (bohr or radians; torsions in
// (−π, π]).
func (c Coordinate) Measure(m Molecule, member int) float64 {
	a := c.Members[member]
	p := func(i int) [3]float64 { return m.Atoms[a[i]].Pos }
	switch c.Kind {
	case KindDistance:
		return Distance3(p(0), p(1))
	case KindAngle:
		return angle3(p(0), p(1), p(2))
	default:
		return dihedral(p(0), p(1), p(2), p(3))
	}
}

// ErrCoordinatesInterfere is returned when setting one coordinate moves
// another (or a tied member) away from its value.
var ErrCoordinatesInterfere = errors.New("planner: coordinates interfere")

// set moves the atoms of every member so that each takes value v (bohr or
// radians). Only the member's moving atoms change position.
func (c Coordinate) set(m *Molecule, v float64) {
	for i, a := range c.Members {
		pos := func(k int) [3]float64 { return m.Atoms[a[k]].Pos }
		switch c.Kind {
		case KindDistance:
			d := sub(pos(1), pos(0))
			n := norm(d)
			shift := scale(d, (v-n)/n)
			for _, at := range c.Moving[i] {
				m.Atoms[at].Pos = add(m.Atoms[at].Pos, shift)
			}
		case KindAngle:
			u, w := sub(pos(0), pos(1)), sub(pos(2), pos(1))
			axis := cross(u, w)
			if norm(axis) < 1e-10*norm(u)*norm(w) {
				axis = perpendicular(w)
			}
			rotate(m, c.Moving[i], pos(1), unit(axis), v-angle3(pos(0), pos(1), pos(2)))
		case KindTorsion:
			cur := dihedral(pos(0), pos(1), pos(2), pos(3))
			rotate(m, c.Moving[i], pos(2), unit(sub(pos(2), pos(1))), wrap(v-cur))
		}
	}
}

// wrap maps an angle difference into (−π, π].
func wrap(x float64) float64 {
	x = math.Mod(x, 2*math.Pi)
	if x <= -math.Pi {
		x += 2 * math.Pi
	} else if x > math.Pi {
		x -= 2 * math.Pi
	}
	return x
}

// rotate turns the atoms idx by angle th about axis (unit) through origin o
// (Rodrigues' rotation formula).
func rotate(m *Molecule, idx []int, o, axis [3]float64, th float64) {
	c, s := math.Cos(th), math.Sin(th)
	for _, at := range idx {
		r := sub(m.Atoms[at].Pos, o)
		kr := cross(axis, r)
		kd := dot(axis, r) * (1 - c)
		var out [3]float64
		for q := range 3 {
			out[q] = r[q]*c + kr[q]*s + axis[q]*kd
		}
		m.Atoms[at].Pos = add(o, out)
	}
}

// Geometry returns the molecule displaced to point p: the reference
// molecule with each scanned coordinate set, in [[scan]] order, to p's
// value. It fails if the coordinates interfere or atoms come too close.
func (s *Spec) Geometry(p Point) (Molecule, error) {
	if s.ff != nil {
		return s.ffGeometry(p)
	}
	if len(p.Values) != len(s.coords) {
		return Molecule{}, fmt.Errorf("planner: point %q has %d values, the scan has %d coordinates", p.Key, len(p.Values), len(s.coords))
	}
	m := s.mol.Clone()
	for i, c := range s.coords {
		c.set(&m, p.Values[i])
	}
	for i, c := range s.coords {
		for k := range c.Members {
			got := c.Measure(m, k)
			diff := got - p.Values[i]
			if c.Kind == KindTorsion {
				diff = wrap(diff)
			}
			if math.Abs(diff) > 1e-9*math.Max(1, math.Abs(p.Values[i])) {
				return Molecule{}, fmt.Errorf("%w: at point %s, %s (member %d) is %.6g instead of %.6g; give disjoint moving atoms",
					ErrCoordinatesInterfere, p.Key, c.Name, k+1, c.Display(got, s.units), c.Display(p.Values[i], s.units))
			}
		}
	}
	out, err := NewMolecule(m.Atoms, m.Charge, m.Multiplicity)
	if err != nil {
		return Molecule{}, fmt.Errorf("planner: point %s: %w", p.Key, err)
	}
	return out, nil
}

// bondGraph lists, for each atom, the atoms within 1.2 × the sum of
// covalent radii (the 1.2 factor is common practice for connectivity from
// covalent radii).
func bondGraph(m Molecule) [][]int {
	g := make([][]int, len(m.Atoms))
	for i := range m.Atoms {
		for j := 0; j < i; j++ {
			lim := 1.2 * (m.Atoms[i].Element.CovalentRadius + m.Atoms[j].Element.CovalentRadius) * AngstromInBohr
			if Distance3(m.Atoms[i].Pos, m.Atoms[j].Pos) <= lim {
				g[i] = append(g[i], j)
				g[j] = append(g[j], i)
			}
		}
	}
	return g
}

// fragment returns the atoms reachable from start without entering any
// atom in blocked and without crossing the edge (start, cut) if cut ≥ 0.
// It reports false if it reaches an atom in forbidden (a ring).
func fragment(g [][]int, start int, blocked, forbidden []int, cut int) ([]int, bool) {
	seen := map[int]bool{start: true}
	for _, b := range blocked {
		seen[b] = true
	}
	queue := []int{start}
	out := []int{start}
	for len(queue) > 0 {
		a := queue[0]
		queue = queue[1:]
		for _, b := range g[a] {
			if a == start && b == cut {
				continue
			}
			for _, f := range forbidden {
				if b == f && !(a == start && b == cut) {
					return nil, false
				}
			}
			if seen[b] {
				continue
			}
			seen[b] = true
			queue = append(queue, b)
			out = append(out, b)
		}
	}
	sort.Ints(out)
	return out, true
}

// defaultMoving finds the atoms member moves: the fragment on the side of
// the last atom, found from connectivity.
func defaultMoving(g [][]int, kind CoordKind, a []int) ([]int, error) {
	switch kind {
	case KindDistance:
		f, ok := fragment(g, a[1], nil, []int{a[0]}, a[0])
		if !ok {
			return nil, fmt.Errorf("atoms %d and %d are in a ring, so no fragment can move alone; list the moving atoms", a[0]+1, a[1]+1)
		}
		return f, nil
	case KindAngle:
		f, ok := fragment(g, a[2], []int{a[1]}, []int{a[0]}, -1)
		if !ok {
			return nil, fmt.Errorf("atoms %d and %d are joined other than through vertex %d (a ring); list the moving atoms", a[0]+1, a[2]+1, a[1]+1)
		}
		return f, nil
	default:
		f, ok := fragment(g, a[2], []int{a[1]}, []int{a[0]}, -1)
		if !ok {
			return nil, fmt.Errorf("the torsion axis %d–%d is in a ring; list the moving atoms", a[1]+1, a[2]+1)
		}
		// The axis atom itself does not move under the rotation; leave it
		// out so that a tied member may share it.
		out := f[:0]
		for _, x := range f {
			if x != a[2] {
				out = append(out, x)
			}
		}
		return out, nil
	}
}

// EffectiveMass is the mass that goes with coordinate c when it moves
// along the scan path at point p, every other internal coordinate fixed:
// the diagonal element of [Spec.KineticMetric]. amu for a length (the
// reduced mass m_A m_B/(m_A+m_B) for a diatomic, the reduced mass of two
// rigid fragments for a bond between them), amu·bohr² for an angle (for a
// rotating group, Pitzer's reduced moment of inertia).
func (s *Spec) EffectiveMass(p Point, c int) (float64, error) {
	g, err := s.KineticMetric(p)
	if err != nil {
		return 0, err
	}
	return g[c][c], nil
}

// KineticMetric is the kinetic-energy metric of the scanned coordinates
// at point p: the kinetic energy of a motion along the scan surface is
// T = ½ Σ_ij g_ij q̇_i q̇_j with
//
//	g_ij = Σ_a m_a (∂x_a/∂q_i)·(∂x_a/∂q_j),
//
// where ∂x_a/∂q_i is the displacement of atom a when coordinate i moves
// with every other internal coordinate held (the rigid scan's own path,
// from central differences of [Spec.Geometry]), after the overall
// translation and rotation it causes are removed: the centre of mass stays
// put and the total angular momentum is zero (Eckart–Sayvetz conditions to
// first order), so g is the metric of the internal motion alone. Masses in
// amu; q in bohr or radian, so g_ij is in amu·(bohr/unit_i)(bohr/unit_j).
//
// This one metric serves every coordinate: for a diatomic stretch g is the
// reduced mass; for a group rotating about a bond it is the reduced moment
// of inertia of the internal rotation (for two coaxial symmetric tops
// I_A I_B/(I_A + I_B)); for a bend of a linear triatomic 1/G of Wilson's
// G matrix; for a tied coordinate (a symmetric stretch) the mass of the
// concerted motion. It is (G⁻¹)_qq of the complete internal coordinate set
// restricted to the path, not 1/G_qq: along a rigid scan the other
// coordinates are held, not free.
//
// References: E. B. Wilson, J. C. Decius, P. C. Cross, Molecular
// Vibrations (McGraw-Hill 1955), ch. 4 and app. VI (kinetic energy in
// internal coordinates, the translation and rotation conditions); W. H.
// Miller, N. C. Handy, J. E. Adams, J. Chem. Phys. 72, 99 (1980) (the
// mass-weighted path metric); K. S. Pitzer, J. Chem. Phys. 14, 239 (1946)
// (the reduced moment of internal rotation).
func (s *Spec) KineticMetric(p Point) ([][]float64, error) {
	nc := len(s.coords)
	vel := make([][][3]float64, nc) // per coordinate, per atom: ∂x/∂q
	var ref Molecule
	for c := range nc {
		v, mol, err := s.pathVelocity(p, c)
		if err != nil {
			return nil, err
		}
		vel[c], ref = v, mol
	}
	n := len(ref.Atoms)
	var mt float64
	var rcm [3]float64
	for a := range n {
		mt += ref.Atoms[a].Mass
		rcm = add(rcm, scale(ref.Atoms[a].Pos, ref.Atoms[a].Mass))
	}
	rcm = scale(rcm, 1/mt)
	r := make([][3]float64, n)
	I := mat.NewSymDense(3, nil)
	for a := range n {
		m := ref.Atoms[a].Mass
		r[a] = sub(ref.Atoms[a].Pos, rcm)
		r2 := dot(r[a], r[a])
		for i := range 3 {
			for j := i; j < 3; j++ {
				d := 0.0
				if i == j {
					d = r2
				}
				I.SetSym(i, j, I.At(i, j)+m*(d-r[a][i]*r[a][j]))
			}
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(I, true) {
		return nil, fmt.Errorf("planner: kinetic metric at %s: inertia tensor eigendecomposition failed", p.Key)
	}
	vals := eig.Values(nil)
	var vecs mat.Dense
	eig.VectorsTo(&vecs)
	// Remove translation and rotation from each coordinate's velocity: the
	// rigid rotation ω solves I ω = L (pseudo-inverse for linear
	// molecules, whose inertia has a zero eigenvalue).
	for c := range nc {
		v := vel[c]
		var vcm [3]float64
		for a := range n {
			vcm = add(vcm, scale(v[a], ref.Atoms[a].Mass))
		}
		vcm = scale(vcm, 1/mt)
		var L [3]float64
		for a := range n {
			v[a] = sub(v[a], vcm)
			L = add(L, scale(cross(r[a], v[a]), ref.Atoms[a].Mass))
		}
		var w [3]float64
		for k, lam := range vals {
			if lam <= 1e-10*math.Max(1, vals[2]) {
				continue
			}
			proj := 0.0
			for i := range 3 {
				proj += vecs.At(i, k) * L[i]
			}
			for i := range 3 {
				w[i] += vecs.At(i, k) * proj / lam
			}
		}
		for a := range n {
			v[a] = sub(v[a], cross(w, r[a]))
		}
	}
	g := make([][]float64, nc)
	for i := range nc {
		g[i] = make([]float64, nc)
		for j := range nc {
			for a := range n {
				g[i][j] += ref.Atoms[a].Mass * dot(vel[i][a], vel[j][a])
			}
		}
	}
	return g, nil
}

// pathVelocity is ∂x_a/∂q_c at p (bohr per unit of q) by a central
// difference of Geometry with step 1e-4 (bohr or radian), and the geometry
// it refers to. A bend at (or within a step of) 180° cannot be stepped
// past the linear geometry; there the derivative is taken one-sidedly
// from below with the second-order three-point formula.
func (s *Spec) pathVelocity(p Point, c int) ([][3]float64, Molecule, error) {
	const h = 1e-4
	at := func(dq float64) (Molecule, error) {
		v := append([]float64(nil), p.Values...)
		v[c] += dq
		return s.Geometry(Point{Key: p.Key, Values: v})
	}
	mid, err := at(0)
	if err != nil {
		return nil, Molecule{}, err
	}
	n := len(mid.Atoms)
	out := make([][3]float64, n)
	if s.coords[c].Kind == KindAngle && p.Values[c]+h > math.Pi-1e-12 {
		m1, err := at(-h)
		if err != nil {
			return nil, Molecule{}, err
		}
		m2, err := at(-2 * h)
		if err != nil {
			return nil, Molecule{}, err
		}
		for a := range n {
			// f′(x) ≈ (3f(x) − 4f(x−h) + f(x−2h)) / 2h
			d := add(sub(scale(mid.Atoms[a].Pos, 3), scale(m1.Atoms[a].Pos, 4)), m2.Atoms[a].Pos)
			out[a] = scale(d, 1/(2*h))
		}
		return out, mid, nil
	}
	lo, err := at(-h)
	if err != nil {
		return nil, Molecule{}, err
	}
	hi, err := at(h)
	if err != nil {
		return nil, Molecule{}, err
	}
	for a := range n {
		out[a] = scale(sub(hi.Atoms[a].Pos, lo.Atoms[a].Pos), 1/(2*h))
	}
	return out, mid, nil
}

// Harmonic frequency in cm⁻¹ from a curvature k (hartree per unit²) and an
// effective mass mu (amu, per unit² as from EffectiveMass): ω = √(k/μ) in
// hartree (atomic units), then × HartreeInCm1. A negative k gives the
// negative of the imaginary frequency's magnitude.
func Harmonic(k, mu float64) float64 {
	w := math.Sqrt(math.Abs(k)/(mu*AmuInElectronMass)) * HartreeInCm1
	if k < 0 {
		return -w
	}
	return w
}

// Distance3 is the distance between two points (same as Distance).
func Distance3(a, b [3]float64) float64 { return norm(sub(a, b)) }

func angle3(a, b, c [3]float64) float64 {
	u, w := sub(a, b), sub(c, b)
	return math.Atan2(norm(cross(u, w)), dot(u, w))
}

// dihedral is the i–j–k–l torsion in (−π, π] (IUPAC sign convention:
// positive for clockwise rotation of the front bond looking along j→k).
func dihedral(a, b, c, d [3]float64) float64 {
	b1, b2, b3 := sub(b, a), sub(c, b), sub(d, c)
	n1, n2 := cross(b1, b2), cross(b2, b3)
	x := dot(n1, n2)
	y := dot(cross(n1, n2), unit(b2))
	return math.Atan2(y, x)
}

func perpendicular(w [3]float64) [3]float64 {
	e := [3]float64{1, 0, 0}
	if math.Abs(w[0]) > math.Abs(w[1]) || math.Abs(w[0]) > math.Abs(w[2]) {
		e = [3]float64{0, 1, 0}
		if math.Abs(w[1]) > math.Abs(w[2]) {
			e = [3]float64{0, 0, 1}
		}
	}
	return cross(e, w)
}

// Vector algebra on positions ([3]float64, bohr) through gonum's
// spatial/r3.
func v3(a [3]float64) r3.Vec         { return r3.Vec{X: a[0], Y: a[1], Z: a[2]} }
func a3(v r3.Vec) [3]float64         { return [3]float64{v.X, v.Y, v.Z} }
func sub(a, b [3]float64) [3]float64 { return a3(r3.Sub(v3(a), v3(b))) }
func add(a, b [3]float64) [3]float64 { return a3(r3.Add(v3(a), v3(b))) }
func scale(a [3]float64, s float64) [3]float64 {
	return a3(r3.Scale(s, v3(a)))
}
func dot(a, b [3]float64) float64 { return r3.Dot(v3(a), v3(b)) }
func cross(a, b [3]float64) [3]float64 {
	return a3(r3.Cross(v3(a), v3(b)))
}
func norm(a [3]float64) float64    { return r3.Norm(v3(a)) }
func unit(a [3]float64) [3]float64 { return scale(a, 1/norm(a)) }
func atomList(idx []int) string {
	var b strings.Builder
	for i, x := range idx {
		if i > 0 {
			b.WriteString(", ")
		}
		fmt.Fprint(&b, x+1)
	}
	return b.String()
}
