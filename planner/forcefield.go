package planner

import (
	"fmt"
	"math"
	"regexp"
	"sort"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/mat"

	"wellscan/fit/forcefield"
)

// ForceFieldSpec is the [forcefield] table: instead of scanning
// coordinates, the job computes the force field of the molecule at its
// given (reference) geometry by displacements.
//
// Stage 1 ("hess" points) displaces along an orthonormal, symmetry-adapted
// basis of the vibrational space in mass-weighted Cartesian coordinates
// (translations and rotations excluded by the Eckart conditions): the
// reference, ±1 step along each basis vector, and the four (±1, ±1) corners
// of each pair, giving the Hessian by central differences (and dipole
// derivatives from the single steps). Stage 2 ("qff" points, when order is
// "quartic") displaces along the normal modes found in stage 1, in
// dimensionless normal coordinates, with the stencil of the cubic and
// semi-diagonal quartic constants: ±1, ±2 steps along each mode, (±1, ±1)
// for each pair, (±1, ±1, ±1) for each triple.
type ForceFieldSpec struct {
	// Order is "harmonic" (stage 1 only) or "quartic" (default).
	Order string `toml:"order"`
	// HessianStep is the stage-1 step in mass-weighted coordinates,
	// amu^{1/2}·bohr (default 0.005: about 0.005 bohr for hydrogen, 0.00125
	// bohr for oxygen; for water at RHF/6-31G* the bend moves by 0.05, 0.2,
	// 0.9 and 3.7 cm⁻¹ at 0.005, 0.01, 0.02 and 0.04, measured against the
	// limit of small steps).
	HessianStep float64 `toml:"hessian_step"`
	// QuarticStep is the stage-2 step in dimensionless normal coordinates
	// (default 0.1); mode i moves Q_i = step/√ω_i, i.e. each mode's
	// mass-weighted step scales with 1/√ω_i. For water at RHF/6-31G* the
	// fundamentals follow O(step²) and sit within 0.25 cm⁻¹ of the
	// small-step limit at 0.1 (2.2 cm⁻¹ at 0.3, 6 cm⁻¹ at 0.5).
	QuarticStep float64 `toml:"quartic_step"`
	// Symmetry (default true) computes each set of symmetry-equivalent
	// displaced geometries once.
	Symmetry *bool `toml:"symmetry"`
	// SymmetryTolerance (bohr, default 0.001) is how far atoms may be from
	// their symmetry images for an operation to count; the reference is
	// then symmetrised exactly.
	SymmetryTolerance float64 `toml:"symmetry_tolerance"`
	// Isotopologues are extra sets of masses analysed from the same force
	// field.
	Isotopologues []IsotopologueSpec `toml:"isotopologue"`
}

// IsotopologueSpec is one [[forcefield.isotopologue]] block.
type IsotopologueSpec struct {
	// Name labels tables and point keys: letters, digits, '-' and '_'.
	Name string `toml:"name"`
	// Isotopes maps 1-based atom numbers to isotope labels ("2H", "18O"),
	// on top of the [molecule] isotopes.
	Isotopes map[string]string `toml:"isotopes"`
	// Quartic (default false) also computes this isotopologue's own quartic
	// force field (stage-2 points along its normal modes); otherwise only
	// its harmonic analysis is given.
	Quartic bool `toml:"quartic"`
}

// FF is the validated force-field setup of a spec: reference geometry,
// symmetry and the stage-1 displacements. Read-only after Decode.
type FF struct {
	Order       string
	HessStep    float64 // amu^{1/2} bohr
	QuarticStep float64 // dimensionless
	Ref         Molecule
	// SymShift is how far (bohr) symmetrisation moved the reference.
	SymShift float64
	Ops      []SymOp
	// Basis holds the stage-1 displacement directions (unit vectors in
	// mass-weighted Cartesian coordinates, 3N each) and Irrep their
	// symmetry species (index into Characters).
	Basis      [][]float64
	Irrep      []int
	Characters [][]int // per irrep, the character of each op (±1)
	Linear     bool
	Isos       []Isotopologue
	hess       []FFPoint
}

// Isotopologue is a named set of masses (amu, per atom). Index 0 of
// [FF.Isos] is the parent.
type Isotopologue struct {
	Name    string
	Masses  []float64
	Quartic bool
}

// SymOp is a symmetry operation of the reference: x → Com + R(x − Com)
// maps atom a onto atom Perm[a].
type SymOp struct {
	R    [3][3]float64
	Perm []int
	Com  [3]float64
	Name string
	// Signs is R's sign on each principal axis (A, B, C order).
	Signs [3]int
}

// FFPoint is one displacement of a force-field job.
type FFPoint struct {
	Key string
	// Steps along the stage's directions (basis vectors or normal modes):
	// Steps[i] multiples of the step.
	Steps []int
	// Disp is the Cartesian displacement from the reference (bohr, 3N).
	Disp []float64
	// Rep is the key of the point computed in its place ("" when it is
	// computed itself), and Op the index of the operation that maps Rep's
	// geometry onto this one.
	Rep string
	Op  int
}

// Size limits of force-field jobs (atoms).
const (
	MaxForceFieldAtoms = 50
	MaxQuarticAtoms    = 20
)

const (
	ffHessPrefix = "hess."
	ffRefKey     = "hess.ref"
)

var ffNameRE = regexp.MustCompile(`^[A-Za-z0-9_-]{1,32}$`)

// ForceField returns the force-field setup, nil for a coordinate scan.
func (s *Spec) ForceField() *FF { return s.ff }

func (s *Spec) buildForceField() error {
	f := s.ForceFieldInput
	ff := &FF{Order: f.Order, HessStep: f.HessianStep, QuarticStep: f.QuarticStep}
	switch ff.Order {
	case "":
		ff.Order = "quartic"
	case "harmonic", "quartic":
	default:
		return s.errAt("forcefield.order", "unknown order %q (use \"harmonic\" or \"quartic\")", f.Order)
	}
	if s.meta.IsDefined("forcefield", "hessian_step") {
		if !(f.HessianStep >= 1e-4 && f.HessianStep <= 0.2) {
			return s.errAt("forcefield.hessian_step", "%g amu^½·bohr is outside 1e-4 … 0.2", f.HessianStep)
		}
	} else {
		ff.HessStep = 0.005
	}
	if s.meta.IsDefined("forcefield", "quartic_step") {
		if !(f.QuarticStep >= 0.01 && f.QuarticStep <= 1) {
			return s.errAt("forcefield.quartic_step", "%g (dimensionless normal coordinate) is outside 0.01 … 1", f.QuarticStep)
		}
	} else {
		ff.QuarticStep = 0.1
	}
	tol := f.SymmetryTolerance
	if s.meta.IsDefined("forcefield", "symmetry_tolerance") {
		if !(tol > 0 && tol <= 0.1) {
			return s.errAt("forcefield.symmetry_tolerance", "%g bohr is outside (0, 0.1]", tol)
		}
	} else {
		tol = 1e-3
	}
	if len(s.mol.Atoms) < 2 {
		return s.errAt("molecule", "a force field needs at least two atoms")
	}
	// The stencils grow as n² (Hessian) and n³ (quartic) in the number of
	// vibrational coordinates: 20 atoms already need about 200 000 quartic
	// displacements.
	if len(s.mol.Atoms) > MaxForceFieldAtoms {
		return s.errAt("forcefield", "%d atoms: a force-field job takes at most %d", len(s.mol.Atoms), MaxForceFieldAtoms)
	}
	if ff.Order == "quartic" && len(s.mol.Atoms) > MaxQuarticAtoms {
		return s.errAt("forcefield.order", "%d atoms: a quartic force field takes at most %d (about %d displacements); use order = \"harmonic\"", len(s.mol.Atoms), MaxQuarticAtoms, 8*54*53*52/6)
	}
	parent := Isotopologue{Name: "parent", Quartic: ff.Order == "quartic"}
	for _, a := range s.mol.Atoms {
		parent.Masses = append(parent.Masses, a.Mass)
	}
	ff.Isos = []Isotopologue{parent}
	seen := map[string]bool{"parent": true}
	for i, is := range f.Isotopologues {
		key := fmt.Sprintf("forcefield.isotopologue[%d]", i+1)
		if !ffNameRE.MatchString(is.Name) {
			return s.errAt(key+".name", "name %q: use 1–32 letters, digits, '-' or '_'", is.Name)
		}
		if seen[is.Name] {
			return s.errAt(key+".name", "name %q is used twice", is.Name)
		}
		seen[is.Name] = true
		iso := Isotopologue{Name: is.Name, Masses: append([]float64(nil), parent.Masses...), Quartic: is.Quartic && ff.Order == "quartic"}
		if is.Quartic && ff.Order != "quartic" {
			return s.errAt(key+".quartic", "quartic = true needs forcefield.order = \"quartic\"")
		}
		if len(is.Isotopes) == 0 {
			return s.errAt(key+".isotopes", "missing: give isotopes = { 2 = \"2H\", … } (atom number = isotope)")
		}
		for _, k := range sortedKeys(is.Isotopes) {
			idx, err := strconv.Atoi(k)
			if err != nil || idx < 1 || idx > len(s.mol.Atoms) {
				return s.errAt(key+".isotopes", "%q: expected an atom number from 1 to %d", k, len(s.mol.Atoms))
			}
			e, _, m, err := ParseIsotope(is.Isotopes[k])
			if err != nil {
				return s.errAt(key+".isotopes", "atom %d: %s", idx, strings.TrimPrefix(err.Error(), "planner: "))
			}
			if e.Z != s.mol.Atoms[idx-1].Element.Z {
				return s.errAt(key+".isotopes", "atom %d is %s, not %s", idx, s.mol.Atoms[idx-1].Element.Symbol, e.Symbol)
			}
			iso.Masses[idx-1] = m
		}
		ff.Isos = append(ff.Isos, iso)
	}
	useSym := f.Symmetry == nil || *f.Symmetry
	ref := s.mol.Clone()
	ff.Ops = []SymOp{identityOp(len(ref.Atoms), centreOfMass(ref, parent.Masses))}
	if useSym {
		// Energies do not depend on the masses, so geometric equivalence
		// uses every operation that preserves the parent's masses; each
		// isotopologue's own modes use the subset preserving its masses.
		ops := findSymOps(ref, parent.Masses, tol)
		ref, ff.SymShift = symmetrise(ref, ops)
		// Operations of the exact, symmetrised reference.
		ff.Ops = findSymOps(ref, parent.Masses, 1e-8)
	}
	ff.Ref = ref
	basis, irrep, chars, linear, err := symmetryAdaptedBasis(ref, parent.Masses, ff.Ops)
	if err != nil {
		return s.errAt("molecule", "%s", strings.TrimPrefix(err.Error(), "planner: "))
	}
	ff.Basis, ff.Irrep, ff.Characters, ff.Linear = basis, irrep, chars, linear
	ff.hess = ff.stage1()
	s.ff = ff
	return nil
}

// HessPoints returns every stage-1 displacement, the reference first, with
// the symmetry mapping; the computed ones have Rep == "".
func (f *FF) HessPoints() []FFPoint { return append([]FFPoint(nil), f.hess...) }

// stage1 lists the reference, ±1 along each basis vector and the (±1, ±1)
// corners of each pair.
func (f *FF) stage1() []FFPoint {
	n := len(f.Basis)
	masses := f.Isos[0].Masses
	var pts []FFPoint
	add := func(pairs ...int) {
		steps := make([]int, n)
		var parts []string
		for k := 0; k < len(pairs); k += 2 {
			steps[pairs[k]] = pairs[k+1]
			parts = append(parts, fmt.Sprintf("d%d=%+d", pairs[k]+1, pairs[k+1]))
		}
		key := ffRefKey
		if len(parts) > 0 {
			key = ffHessPrefix + strings.Join(parts, ",")
		}
		disp := make([]float64, 3*len(masses))
		for i, s := range steps {
			if s == 0 {
				continue
			}
			for c := range disp {
				disp[c] += float64(s) * f.HessStep * f.Basis[i][c] / math.Sqrt(masses[c/3])
			}
		}
		pts = append(pts, FFPoint{Key: key, Steps: steps, Disp: disp})
	}
	add()
	for i := range n {
		add(i, 1)
		add(i, -1)
	}
	for i := range n {
		for j := i + 1; j < n; j++ {
			for _, si := range []int{1, -1} {
				for _, sj := range []int{1, -1} {
					add(i, si, j, sj)
				}
			}
		}
	}
	f.markEquivalent(pts)
	return pts
}

// markEquivalent sets Rep/Op of every point whose displaced geometry is the
// image of an earlier computed point's under a symmetry operation. Images
// are looked up by their coordinates rounded to 1e-6 bohr and confirmed
// with [FF.imageOf]; an image that happens to straddle a rounding boundary
// is merely computed again (never wrongly merged).
func (f *FF) markEquivalent(pts []FFPoint) {
	n := len(f.Ref.Atoms)
	seen := map[string]int{}
	geomKey := func(x []float64) string {
		b := make([]byte, 0, 8*len(x))
		for _, v := range x {
			b = strconv.AppendInt(b, int64(math.Round(v*1e6)), 36)
			b = append(b, ',')
		}
		return string(b)
	}
	img := make([]float64, 3*n)
	for i := range pts {
		found := false
		for _, op := range f.Ops {
			// image of point i's geometry under op: atom a goes to Perm[a]
			for a := range n {
				var x [3]float64
				for k := range 3 {
					x[k] = f.Ref.Atoms[a].Pos[k] + pts[i].Disp[3*a+k] - op.Com[k]
				}
				t := op.Perm[a]
				for k := range 3 {
					img[3*t+k] = op.Com[k] + op.R[k][0]*x[0] + op.R[k][1]*x[1] + op.R[k][2]*x[2]
				}
			}
			r, ok := seen[geomKey(img)]
			if !ok {
				continue
			}
			// geometry(i) = op(geometry(r))^{-1}…: confirm r maps onto i
			// under some operation, as imageOf defines the mapping.
			for oj, oq := range f.Ops {
				if f.imageOf(oq, pts[r].Disp, pts[i].Disp, n) {
					pts[i].Rep, pts[i].Op = pts[r].Key, oj
					found = true
					break
				}
			}
			if found {
				break
			}
		}
		if !found {
			geo := make([]float64, 3*n)
			for a := range n {
				for k := range 3 {
					geo[3*a+k] = f.Ref.Atoms[a].Pos[k] + pts[i].Disp[3*a+k]
				}
			}
			seen[geomKey(geo)] = i
		}
	}
}

// imageOf reports whether op maps the geometry ref+a onto ref+b: for every
// atom, Com + R(x_a − Com) = x_{Perm[a]} within 1e-8 bohr (rounding of
// exactly symmetric displacements).
func (f *FF) imageOf(op SymOp, a, b []float64, n int) bool {
	for at := range n {
		var x [3]float64
		for k := range 3 {
			x[k] = f.Ref.Atoms[at].Pos[k] + a[3*at+k] - op.Com[k]
		}
		t := op.Perm[at]
		for k := range 3 {
			y := op.Com[k] + op.R[k][0]*x[0] + op.R[k][1]*x[1] + op.R[k][2]*x[2]
			if math.Abs(y-(f.Ref.Atoms[t].Pos[k]+b[3*t+k])) > 1e-8 {
				return false
			}
		}
	}
	return true
}

// ffGeometry is Spec.Geometry for a force-field point: the reference plus
// the displacement carried in the point's values (bohr, 3N).
func (s *Spec) ffGeometry(p Point) (Molecule, error) {
	n := len(s.ff.Ref.Atoms)
	if len(p.Values) != 3*n {
		return Molecule{}, fmt.Errorf("planner: force-field point %q has %d values, want 3N = %d", p.Key, len(p.Values), 3*n)
	}
	m := s.ff.Ref.Clone()
	for a := range m.Atoms {
		for k := range 3 {
			m.Atoms[a].Pos[k] += p.Values[3*a+k]
		}
	}
	out, err := NewMolecule(m.Atoms, m.Charge, m.Multiplicity)
	if err != nil {
		return Molecule{}, fmt.Errorf("planner: point %s: %w", p.Key, err)
	}
	return out, nil
}

func (s *Spec) ffInitialPoints() []Point {
	var out []Point
	for _, p := range s.ff.hess {
		if p.Rep == "" {
			out = append(out, Point{Key: p.Key, Values: append([]float64(nil), p.Disp...)})
		}
	}
	return out
}

// FFModes is the harmonic result of stage 1 that stage 2 is planned on,
// for one isotopologue.
type FFModes struct {
	Iso Isotopologue
	// OmegaCm1 are the harmonic wavenumbers (negative: imaginary), and L
	// the mass-weighted normal modes (unit 3N-vectors, this isotopologue's
	// masses), ascending in ω.
	OmegaCm1 []float64
	L        [][]float64
	Points   []FFPoint // stage-2 displacements (without the reference)
}

// FFPlan is the full plan of a force-field job given what stage 1 has
// computed so far.
type FFPlan struct {
	Hess []FFPoint
	// HessianMW is the Hessian in the stage-1 basis (hartree/(amu·bohr²)),
	// nil until every stage-1 point is done.
	HessianMW [][]float64
	// GradientMax is the largest Cartesian gradient component at the
	// reference estimated from the ±1 steps (hartree/bohr).
	GradientMax float64
	Modes       []FFModes // one per isotopologue with Quartic set
	Missing     []string  // stage-1 keys without an energy
}

// PlanForceField builds the plan from the done samples: the stage-1
// Hessian, the normal modes of each isotopologue that gets a quartic force
// field and their stage-2 displacements.
func (s *Spec) PlanForceField(done []Sample) (*FFPlan, error) {
	f := s.ff
	if f == nil {
		return nil, fmt.Errorf("planner: %s has no [forcefield]", s.file)
	}
	e := map[string]float64{}
	for _, d := range done {
		if !d.Failed && !math.IsNaN(d.Energy) {
			e[d.Key] = d.Energy
		}
	}
	plan := &FFPlan{Hess: f.HessPoints()}
	val := map[string]float64{}
	for _, p := range plan.Hess {
		k := p.Key
		if p.Rep != "" {
			k = p.Rep
		}
		v, ok := e[k]
		if !ok {
			plan.Missing = append(plan.Missing, k)
			continue
		}
		val[p.Key] = v
	}
	if len(plan.Missing) > 0 {
		sort.Strings(plan.Missing)
		plan.Missing = uniq(plan.Missing)
		return plan, nil
	}
	n := len(f.Basis)
	h := f.HessStep
	key := func(pairs ...int) string {
		var parts []string
		for k := 0; k < len(pairs); k += 2 {
			parts = append(parts, fmt.Sprintf("d%d=%+d", pairs[k]+1, pairs[k+1]))
		}
		if len(parts) == 0 {
			return ffRefKey
		}
		return ffHessPrefix + strings.Join(parts, ",")
	}
	e0 := val[key()]
	hm := make([][]float64, n)
	grad := make([]float64, n)
	for i := range n {
		hm[i] = make([]float64, n)
	}
	for i := range n {
		p, m := val[key(i, 1)], val[key(i, -1)]
		hm[i][i] = (p - 2*e0 + m) / (h * h)
		grad[i] = (p - m) / (2 * h)
		for j := i + 1; j < n; j++ {
			v := (val[key(i, 1, j, 1)] - val[key(i, 1, j, -1)] - val[key(i, -1, j, 1)] + val[key(i, -1, j, -1)]) / (4 * h * h)
			hm[i][j], hm[j][i] = v, v
		}
	}
	plan.HessianMW = hm
	// Cartesian gradient g = M^{1/2} D g_D (hartree/bohr).
	masses := f.Isos[0].Masses
	for c := range 3 * len(masses) {
		g := 0.0
		for i := range n {
			g += math.Sqrt(masses[c/3]) * f.Basis[i][c] * grad[i]
		}
		plan.GradientMax = math.Max(plan.GradientMax, math.Abs(g))
	}
	for _, iso := range f.Isos {
		if !iso.Quartic {
			continue
		}
		md, err := f.modes(hm, iso)
		if err != nil {
			return plan, err
		}
		plan.Modes = append(plan.Modes, md)
	}
	return plan, nil
}

func uniq(s []string) []string {
	var out []string
	for i, v := range s {
		if i == 0 || v != s[i-1] {
			out = append(out, v)
		}
	}
	return out
}

// modes diagonalises the Hessian of stage 1 for isotopologue iso and
// lays out its stage-2 displacements.
func (f *FF) modes(hm [][]float64, iso Isotopologue) (FFModes, error) {
	n := len(f.Basis)
	pm := f.Isos[0].Masses
	n3 := 3 * len(pm)
	// Cartesian Hessian H = M^{1/2} D H_D Dᵀ M^{1/2} (parent masses), then
	// mass-weight with iso's masses and project on iso's vibrational space.
	hc := make([]float64, n3*n3)
	for a := range n {
		for b := range n {
			if hm[a][b] == 0 {
				continue
			}
			for c := range n3 {
				u := math.Sqrt(pm[c/3]) * f.Basis[a][c] * hm[a][b]
				for d := range n3 {
					hc[c*n3+d] += u * f.Basis[b][d] * math.Sqrt(pm[d/3])
				}
			}
		}
	}
	basis := f.Basis
	if !sameMasses(pm, iso.Masses) {
		var err error
		ops := keepMassPreserving(f.Ops, iso.Masses)
		if len(ops) == 0 {
			ops = []SymOp{identityOp(len(pm), f.Ops[0].Com)}
		}
		basis, _, _, _, err = symmetryAdaptedBasis(f.Ref, iso.Masses, ops)
		if err != nil {
			return FFModes{}, err
		}
	}
	hi := mat.NewSymDense(n, nil)
	for a := range n {
		for b := a; b < n; b++ {
			v := 0.0
			for c := range n3 {
				if basis[a][c] == 0 {
					continue
				}
				for d := range n3 {
					v += basis[a][c] * hc[c*n3+d] * basis[b][d] / math.Sqrt(iso.Masses[c/3]*iso.Masses[d/3])
				}
			}
			hi.SetSym(a, b, v)
		}
	}
	var es mat.EigenSym
	if !es.Factorize(hi, true) {
		return FFModes{}, fmt.Errorf("planner: force field: eigen-decomposition of the %s Hessian failed", iso.Name)
	}
	vals := es.Values(nil)
	var vec mat.Dense
	es.VectorsTo(&vec)
	md := FFModes{Iso: iso}
	for k := range n {
		lam := vals[k]
		w := math.Sqrt(math.Abs(lam)/AmuInElectronMass) * HartreeInCm1
		if lam < 0 {
			w = -w
		}
		md.OmegaCm1 = append(md.OmegaCm1, w)
		l := make([]float64, n3)
		for a := range n {
			for c := range n3 {
				l[c] += basis[a][c] * vec.At(a, k)
			}
		}
		cleanSign(l)
		md.L = append(md.L, l)
	}
	for k, w := range md.OmegaCm1 {
		if w < 1 {
			return md, fmt.Errorf("planner: force field (%s): mode %d has ω = %.2f cm⁻¹ (negative: imaginary); the reference is not a minimum, so no quartic force field is planned", iso.Name, k+1, w)
		}
	}
	prefix := "qff."
	if iso.Name != "parent" {
		prefix = "qff-" + iso.Name + "."
	}
	var pts []FFPoint
	for _, steps := range quarticStencil(n) {
		var parts []string
		disp := make([]float64, n3)
		for i, s := range steps {
			if s == 0 {
				continue
			}
			parts = append(parts, fmt.Sprintf("q%d=%+d", i+1, s))
			// Q_i = q/√ω_i in atomic units, x = M^{-1/2} L Q.
			qau := float64(s) * f.QuarticStep / math.Sqrt(md.OmegaCm1[i]/HartreeInCm1)
			for c := range disp {
				disp[c] += md.L[i][c] * qau / math.Sqrt(iso.Masses[c/3]*AmuInElectronMass)
			}
		}
		pts = append(pts, FFPoint{Key: prefix + strings.Join(parts, ","), Steps: steps, Disp: disp})
	}
	f.markEquivalent(pts)
	md.Points = pts
	return md, nil
}

func sameMasses(a, b []float64) bool {
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// cleanSign makes the largest component positive (ties: the first), and
// zeroes rounding noise below 1e-13, so symmetric modes stay exactly
// symmetric.
func cleanSign(v []float64) {
	big, at := 0.0, 0
	for i, x := range v {
		if math.Abs(x) < 1e-13 {
			v[i] = 0
			continue
		}
		if math.Abs(x) > big+1e-9 {
			big, at = math.Abs(x), i
		}
	}
	if v[at] < 0 {
		for i := range v {
			v[i] = -v[i]
		}
	}
}

// quarticStencil lists the stage-2 step patterns without the reference:
// ±1, ±2 along each mode, (±1, ±1) per pair, (±1, ±1, ±1) per triple — the
// same list, in the same order, as fit/forcefield.QFFDisplacements after
// its first (reference) entry.
func quarticStencil(n int) [][]int {
	ds := forcefield.QFFDisplacements(n)[1:] // without the reference
	out := make([][]int, len(ds))
	for k, d := range ds {
		out[k] = d.Steps
	}
	return out
}

// refineFF is Refine for a force-field job: after stage 1, plan stage 2;
// after stage 2, stop.
func (s *Spec) refineFF(done []Sample, round int) RefinePlan {
	failed := 0
	have := map[string]bool{}
	for _, d := range done {
		have[d.Key] = true
		if d.Failed {
			failed++
		}
	}
	if failed > 0 {
		return RefinePlan{Status: RefineStalled, Reason: fmt.Sprintf("%d force-field displacements failed; the force field is incomplete", failed)}
	}
	plan, err := s.PlanForceField(done)
	if err != nil {
		return RefinePlan{Status: RefineStalled, Reason: strings.TrimPrefix(err.Error(), "planner: ")}
	}
	if len(plan.Missing) > 0 {
		return RefinePlan{Status: RefineStalled, Reason: fmt.Sprintf("%d stage-1 displacements have no energy", len(plan.Missing))}
	}
	var next []Point
	for _, md := range plan.Modes {
		for _, p := range md.Points {
			if p.Rep == "" && !have[p.Key] {
				next = append(next, Point{Key: p.Key, Values: append([]float64(nil), p.Disp...)})
			}
		}
	}
	if len(next) > 0 {
		return RefinePlan{Status: RefineContinue, Reason: fmt.Sprintf("harmonic force field done; %d quartic displacements along the normal modes", len(next)), Points: next}
	}
	what := "harmonic"
	if s.ff.Order == "quartic" {
		what = "quartic"
	}
	return RefinePlan{Status: RefineConverged, Reason: what + " force field complete"}
}

// FFCounts is what `plan` prints before anything runs.
type FFCounts struct {
	HessAll, HessComputed       int
	QuarticAll, QuarticComputed []int // per isotopologue with Quartic
	QuarticNames                []string
}

// CountForceField counts the displacements of both stages, all and
// computed (after symmetry), without computing anything: stage 2's count
// depends only on the symmetry species of the normal modes, which equal
// those of the stage-1 basis, so a stand-in Hessian that is diagonal in
// the basis (and non-degenerate) gives the same counts.
func (s *Spec) CountForceField() (FFCounts, error) {
	f := s.ff
	if f == nil {
		return FFCounts{}, fmt.Errorf("planner: %s has no [forcefield]", s.file)
	}
	var c FFCounts
	for _, p := range f.hess {
		c.HessAll++
		if p.Rep == "" {
			c.HessComputed++
		}
	}
	n := len(f.Basis)
	hm := make([][]float64, n)
	for i := range n {
		hm[i] = make([]float64, n)
		hm[i][i] = 0.1 * (1 + float64(i)) // stand-in: distinct positive values
	}
	for _, iso := range f.Isos {
		if !iso.Quartic {
			continue
		}
		md, err := f.modes(hm, iso)
		if err != nil {
			return c, err
		}
		all, comp := 0, 0
		for _, p := range md.Points {
			all++
			if p.Rep == "" {
				comp++
			}
		}
		c.QuarticAll = append(c.QuarticAll, all)
		c.QuarticComputed = append(c.QuarticComputed, comp)
		c.QuarticNames = append(c.QuarticNames, iso.Name)
	}
	return c, nil
}

// ---- symmetry ----

func centreOfMass(m Molecule, masses []float64) [3]float64 {
	var c [3]float64
	tot := 0.0
	for a, at := range m.Atoms {
		for k := range 3 {
			c[k] += masses[a] * at.Pos[k]
		}
		tot += masses[a]
	}
	for k := range 3 {
		c[k] /= tot
	}
	return c
}

func identityOp(n int, com [3]float64) SymOp {
	op := SymOp{Com: com, Name: "E", Signs: [3]int{1, 1, 1}}
	for k := range 3 {
		op.R[k][k] = 1
	}
	for a := range n {
		op.Perm = append(op.Perm, a)
	}
	return op
}

// findSymOps returns the operations x → Com + R(x − Com) that map the
// molecule onto itself (same element and mass) within tol bohr, with R
// one of the eight sign changes of the principal axes: the operations of
// D2h and its subgroups aligned with the principal axes. That covers
// every operation of asymmetric tops; for symmetric and spherical tops it
// finds a subgroup (fewer savings, never a wrong equivalence).
func findSymOps(m Molecule, masses []float64, tol float64) []SymOp {
	com := centreOfMass(m, masses)
	var t [3][3]float64
	for a, at := range m.Atoms {
		r := sub(at.Pos, com)
		r2 := dot(r, r)
		for i := range 3 {
			for j := range 3 {
				v := -masses[a] * r[i] * r[j]
				if i == j {
					v += masses[a] * r2
				}
				t[i][j] += v
			}
		}
	}
	s := mat.NewSymDense(3, nil)
	for i := range 3 {
		for j := i; j < 3; j++ {
			s.SetSym(i, j, t[i][j])
		}
	}
	var es mat.EigenSym
	if !es.Factorize(s, true) {
		return []SymOp{identityOp(len(m.Atoms), com)}
	}
	var ax mat.Dense
	es.VectorsTo(&ax)
	// Snap axes that lie within 1e-10 of a Cartesian axis onto it, so that
	// a molecule given in a symmetric orientation keeps exact operations.
	var axes [3][3]float64
	for k := range 3 {
		for q := range 3 {
			v := ax.At(q, k)
			if math.Abs(v) < 1e-10 {
				v = 0
			}
			axes[k][q] = v
		}
		axes[k] = unit(axes[k])
	}
	var ops []SymOp
	// code bits 4, 2, 1 flip the a, b, c axes
	names := []string{"E", "σ(ab)", "σ(ac)", "C2(a)", "σ(bc)", "C2(b)", "C2(c)", "i"}
	for code := range 8 {
		sg := [3]float64{1, 1, 1}
		for k := range 3 {
			if code&(1<<(2-k)) != 0 {
				sg[k] = -1
			}
		}
		// R = Σ_k s_k a_k a_kᵀ
		var r [3][3]float64
		for i := range 3 {
			for j := range 3 {
				for k := range 3 {
					r[i][j] += sg[k] * axes[k][i] * axes[k][j]
				}
			}
		}
		perm := make([]int, len(m.Atoms))
		ok := true
		for a, at := range m.Atoms {
			x := sub(at.Pos, com)
			var y [3]float64
			for i := range 3 {
				y[i] = com[i] + r[i][0]*x[0] + r[i][1]*x[1] + r[i][2]*x[2]
			}
			best := -1
			for b, bt := range m.Atoms {
				if bt.Element.Z != at.Element.Z || masses[b] != masses[a] {
					continue
				}
				if Distance(y, bt.Pos) <= tol {
					best = b
					break
				}
			}
			if best < 0 {
				ok = false
				break
			}
			perm[a] = best
		}
		if ok && isPermutation(perm) {
			ops = append(ops, SymOp{R: r, Perm: perm, Com: com, Name: names[code], Signs: [3]int{int(sg[0]), int(sg[1]), int(sg[2])}})
		}
	}
	if len(ops) == 0 {
		ops = []SymOp{identityOp(len(m.Atoms), com)}
	}
	return ops
}

func isPermutation(p []int) bool {
	seen := make([]bool, len(p))
	for _, v := range p {
		if seen[v] {
			return false
		}
		seen[v] = true
	}
	return true
}

func keepMassPreserving(ops []SymOp, masses []float64) []SymOp {
	var out []SymOp
	for _, op := range ops {
		ok := true
		for a, b := range op.Perm {
			if masses[a] != masses[b] {
				ok = false
				break
			}
		}
		if ok {
			out = append(out, op)
		}
	}
	return out
}

// symmetrise averages each atom over its images, so the reference has the
// operations exactly; it returns the largest shift (bohr).
func symmetrise(m Molecule, ops []SymOp) (Molecule, float64) {
	out := m.Clone()
	shift := 0.0
	for a := range m.Atoms {
		var acc [3]float64
		for _, op := range ops {
			// atom a is the image of atom b with Perm[b] = a: x_a ≈ Com + R(x_b − Com)
			b := -1
			for i, p := range op.Perm {
				if p == a {
					b = i
				}
			}
			x := sub(m.Atoms[b].Pos, op.Com)
			for i := range 3 {
				acc[i] += op.Com[i] + op.R[i][0]*x[0] + op.R[i][1]*x[1] + op.R[i][2]*x[2]
			}
		}
		for i := range 3 {
			acc[i] /= float64(len(ops))
		}
		shift = math.Max(shift, Distance(acc, m.Atoms[a].Pos))
		out.Atoms[a].Pos = acc
	}
	return out, shift
}

// symmetryAdaptedBasis returns an orthonormal basis of the vibrational
// space (mass-weighted Cartesian, Eckart conditions: orthogonal to the
// infinitesimal translations and rotations about the centre of mass),
// adapted to the one-dimensional irreducible representations of ops.
func symmetryAdaptedBasis(m Molecule, masses []float64, ops []SymOp) (basis [][]float64, irrep []int, chars [][]int, linear bool, err error) {
	n := len(m.Atoms)
	n3 := 3 * n
	pos := make([][3]float64, n)
	for a := range n {
		pos[a] = m.Atoms[a].Pos
	}
	ortho := forcefield.ExternalMotions(pos, masses)
	linear = len(ortho) == 5
	pvib := mat.NewDense(n3, n3, nil)
	for i := range n3 {
		pvib.Set(i, i, 1)
	}
	for _, u := range ortho {
		for i := range n3 {
			for j := range n3 {
				pvib.Set(i, j, pvib.At(i, j)-u[i]*u[j])
			}
		}
	}
	// Representation matrices in mass-weighted coordinates: block R at
	// (Perm[a], a) (masses of a and Perm[a] are equal).
	rep := make([]*mat.Dense, len(ops))
	for g, op := range ops {
		r := mat.NewDense(n3, n3, nil)
		for a := range n {
			b := op.Perm[a]
			for i := range 3 {
				for j := range 3 {
					r.Set(3*b+i, 3*a+j, op.R[i][j])
				}
			}
		}
		rep[g] = r
	}
	// Characters: the distinct homomorphisms to ±1 of a group of axis sign
	// changes, χ(g) = Π_k s_k(g)^{e_k}; computed from R's diagonal in the
	// principal frame, i.e. the sign of R on each principal axis.
	seen := map[string]bool{}
	for e := range 8 {
		ch := make([]int, len(ops))
		for g, op := range ops {
			c := 1
			for k := range 3 {
				if e&(1<<k) == 0 {
					continue
				}
				c *= axisSign(op, k)
			}
			ch[g] = c
		}
		key := fmt.Sprint(ch)
		if !seen[key] {
			seen[key] = true
			chars = append(chars, ch)
		}
	}
	nvib := n3 - len(ortho)
	for ci, ch := range chars {
		pg := mat.NewDense(n3, n3, nil)
		for g := range ops {
			var t mat.Dense
			t.Scale(float64(ch[g])/float64(len(ops)), rep[g])
			pg.Add(pg, &t)
		}
		var a, b mat.Dense
		a.Mul(pvib, pg)
		b.Mul(&a, pvib)
		sym := mat.NewSymDense(n3, nil)
		for i := range n3 {
			for j := i; j < n3; j++ {
				sym.SetSym(i, j, 0.5*(b.At(i, j)+b.At(j, i)))
			}
		}
		var es mat.EigenSym
		if !es.Factorize(sym, true) {
			return nil, nil, nil, false, fmt.Errorf("planner: symmetry projection failed")
		}
		vals := es.Values(nil)
		var vec mat.Dense
		es.VectorsTo(&vec)
		for k := len(vals) - 1; k >= 0; k-- {
			if vals[k] < 0.5 {
				continue
			}
			v := make([]float64, n3)
			for i := range n3 {
				v[i] = vec.At(i, k)
			}
			cleanSign(v)
			basis = append(basis, v)
			irrep = append(irrep, ci)
		}
	}
	if len(basis) != nvib {
		return nil, nil, nil, false, fmt.Errorf("planner: symmetry-adapted basis has %d vectors, want %d", len(basis), nvib)
	}
	if nvib == 0 {
		return nil, nil, nil, false, fmt.Errorf("planner: no vibrations")
	}
	return basis, irrep, chars, linear, nil
}

// axisSign is the sign op.R gives principal axis k.
func axisSign(op SymOp, k int) int { return op.Signs[k] }

// ffParseKey rebuilds a stage-1 point from its key; stage-2 keys depend on
// stage-1 results and are not rebuilt from the key alone.
func (s *Spec) ffParseKey(key string) (Point, error) {
	for _, p := range s.ff.hess {
		if p.Key == key {
			return Point{Key: p.Key, Values: append([]float64(nil), p.Disp...)}, nil
		}
	}
	return Point{}, fmt.Errorf("planner: key %q is not a stage-1 force-field displacement of this spec (stage-2 keys are planned from stage-1 results)", key)
}
