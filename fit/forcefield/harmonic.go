package forcefield

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
)

// Errors of bad input, grouped here so callers can test with errors.Is.
var (
	// ErrInput marks arguments of the wrong size or out of range.
	ErrInput = errors.New("forcefield: bad input")
	// ErrDegenerate reports degenerate modes, for which VPT2 is not
	// implemented (symmetric tops, linear molecules); the harmonic
	// analysis of the same force field stands.
	ErrDegenerate = errors.New("forcefield: degenerate modes")
	// ErrNumerics marks a decomposition that failed.
	ErrNumerics = errors.New("forcefield: numerical failure")
)

// Harmonic is the harmonic analysis of one isotopologue at one reference
// geometry. Modes are ordered by increasing wavenumber, imaginary ones
// (negative entries of WavenumbersCm1) first. All slices are owned by the
// value; nothing is shared with the arguments of [Analyze].
type Harmonic struct {
	Masses []float64    // amu, per atom
	Pos    [][3]float64 // bohr, centre of mass at the origin, input orientation
	Linear bool
	// EigenvaluesProjected are the eigenvalues of the Eckart-projected
	// mass-weighted Hessian in the vibrational space, hartree/(amu·bohr²).
	EigenvaluesProjected []float64
	// WavenumbersCm1 are the harmonic wavenumbers ω_i in cm⁻¹; an
	// imaginary frequency is reported as a negative number (its modulus is
	// |ω|), and Imaginary[i] is set.
	WavenumbersCm1 []float64
	Imaginary      []bool
	// L holds the mass-weighted normal modes: L[i] is a unit 3N-vector,
	// Q_i = Σ L[i][3a+k] √m_a Δx_ak (amu^{1/2}·bohr).
	L [][]float64
	// Displacement holds each mode's Cartesian displacement vector
	// l_i = M^{-1/2} L_i normalised to unit length (dimensionless).
	Displacement [][]float64
	// ReducedMassAmu is 1/|M^{-1/2} L_i|² (amu): the mass that goes with
	// the normalised Cartesian displacement (for a homonuclear diatomic
	// this is m, not the diatomic's m/2; common practice in normal-mode
	// tables), so that ForceConstMdynPerA = ω² μ is the force constant
	// along that displacement.
	ReducedMassAmu []float64
	// ForceConstMdynPerA is ω_i² μ_i in mdyn/Å (negative for imaginary
	// modes).
	ForceConstMdynPerA []float64
	// ZPEHartree is Σ ½ ω_i over the real modes (hartree); ZPECm1 the same
	// in cm⁻¹.
	ZPEHartree, ZPECm1 float64
	// Inertia are the principal moments (amu·bohr²), ascending, and Axes
	// the principal axes (Axes[k] is the unit vector of moment k, in the
	// input orientation).
	Inertia [3]float64
	Axes    [3][3]float64
	// RotCm1 are the rotational constants A ≥ B ≥ C in cm⁻¹ (A is +Inf for
	// a linear molecule, and every entry for a single atom).
	RotCm1 [3]float64
}

// NVib is the number of vibrational modes.
func (h *Harmonic) NVib() int { return len(h.WavenumbersCm1) }

// RotMHz returns the rotational constants in MHz.
func (h *Harmonic) RotMHz() [3]float64 {
	var out [3]float64
	for i, b := range h.RotCm1 {
		out[i] = b * SpeedOfLightCmPerS * 1e-6
	}
	return out
}

// linearTol is the smallest principal moment (amu·bohr²) below which the
// molecule counts as linear: far below any real bent molecule's moment
// (H2O has 0.6), and above the rounding of a linear geometry given to 1e-6
// bohr (common practice).
const linearTol = 1e-6

// MassWeightedEigenvalues returns the eigenvalues of the mass-weighted
// Cartesian Hessian without any projection (hartree/(amu·bohr²)),
// descending; translations and rotations show up as near-zero values. It
// is the textbook first step of a vibrational analysis and what the
// published worked example lists.
func MassWeightedEigenvalues(masses []float64, hess []float64) ([]float64, error) {
	n := len(masses)
	if err := checkHessian(n, hess); err != nil {
		return nil, err
	}
	h := massWeight(masses, hess)
	var es mat.EigenSym
	if !es.Factorize(h, false) {
		return nil, fmt.Errorf("%w: eigen-decomposition of the mass-weighted Hessian", ErrNumerics)
	}
	v := es.Values(nil)
	sort.Sort(sort.Reverse(sort.Float64Slice(v)))
	return v, nil
}

func checkHessian(n int, hess []float64) error {
	if n == 0 {
		return fmt.Errorf("%w: no atoms", ErrInput)
	}
	if len(hess) != 9*n*n {
		return fmt.Errorf("%w: Hessian has %d entries, want (3N)² = %d for %d atoms", ErrInput, len(hess), 9*n*n, n)
	}
	for i, v := range hess {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("%w: Hessian entry %d is %v", ErrInput, i, v)
		}
	}
	return nil
}

// massWeight returns the symmetrised M^{-1/2} H M^{-1/2}.
func massWeight(masses []float64, hess []float64) *mat.SymDense {
	n3 := 3 * len(masses)
	h := mat.NewSymDense(n3, nil)
	for i := range n3 {
		for j := i; j < n3; j++ {
			v := 0.5 * (hess[i*n3+j] + hess[j*n3+i])
			h.SetSym(i, j, v/math.Sqrt(masses[i/3]*masses[j/3]))
		}
	}
	return h
}

// VibrationalBasis returns an orthonormal basis of the vibrational space in
// mass-weighted Cartesian coordinates: the orthogonal complement of the
// infinitesimal translations and rotations about the centre of mass (the
// Eckart conditions; Wilson, Decius & Cross 1955, §11-2). Columns of the
// returned 3N×n matrix are the basis vectors; n is 3N−6, or 3N−5 for a
// linear molecule.
func VibrationalBasis(pos [][3]float64, masses []float64) (*mat.Dense, bool, error) {
	n := len(masses)
	if len(pos) != n || n == 0 {
		return nil, false, fmt.Errorf("%w: %d positions for %d masses", ErrInput, len(pos), n)
	}
	for a, m := range masses {
		if !(m > 0) || math.IsInf(m, 0) {
			return nil, false, fmt.Errorf("%w: mass of atom %d is %v amu, want > 0", ErrInput, a+1, m)
		}
	}
	n3 := 3 * n
	ortho := ExternalMotions(pos, masses)
	p := mat.NewSymDense(n3, nil)
	for i := range n3 {
		p.SetSym(i, i, 1)
	}
	for _, u := range ortho {
		for i := range n3 {
			for j := i; j < n3; j++ {
				p.SetSym(i, j, p.At(i, j)-u[i]*u[j])
			}
		}
	}
	var es mat.EigenSym
	if !es.Factorize(p, true) {
		return nil, false, fmt.Errorf("%w: eigen-decomposition of the Eckart projector", ErrNumerics)
	}
	vals := es.Values(nil)
	var vecs mat.Dense
	es.VectorsTo(&vecs)
	nvib := n3 - len(ortho)
	d := mat.NewDense(n3, max(nvib, 1), nil)
	col := 0
	for j := range vals {
		if vals[j] > 0.5 {
			for i := range n3 {
				d.Set(i, col, vecs.At(i, j))
			}
			col++
		}
	}
	if col != nvib {
		return nil, false, fmt.Errorf("%w: projector has %d unit eigenvalues, want %d", ErrNumerics, col, nvib)
	}
	if nvib == 0 {
		return nil, false, fmt.Errorf("%w: a single atom has no vibrations", ErrInput)
	}
	linear := len(ortho) == 5
	return d, linear, nil
}

// Analyze performs the harmonic analysis: it mass-weights the Cartesian
// Hessian (hartree/bohr²), projects out translations and rotations
// (Eckart), diagonalises in the vibrational space and derives normal
// modes, reduced masses, force constants, the zero-point energy and the
// rotational constants. Positions in bohr, masses in amu.
func Analyze(pos [][3]float64, masses []float64, hess []float64) (*Harmonic, error) {
	n := len(masses)
	if err := checkHessian(n, hess); err != nil {
		return nil, err
	}
	d, linear, err := VibrationalBasis(pos, masses)
	if err != nil {
		return nil, err
	}
	hmw := massWeight(masses, hess)
	_, nvib := d.Dims()
	var tmp mat.Dense
	tmp.Mul(hmw, d)
	var hd mat.Dense
	hd.Mul(d.T(), &tmp)
	hs := mat.NewSymDense(nvib, nil)
	for i := range nvib {
		for j := i; j < nvib; j++ {
			hs.SetSym(i, j, 0.5*(hd.At(i, j)+hd.At(j, i)))
		}
	}
	return fromInternal(pos, masses, d, hs, linear)
}

// fromInternal finishes the analysis from the mass-weighted Hessian hs in
// the vibrational basis d.
func fromInternal(pos [][3]float64, masses []float64, d *mat.Dense, hs *mat.SymDense, linear bool) (*Harmonic, error) {
	n := len(masses)
	n3 := 3 * n
	_, nvib := d.Dims()
	var es mat.EigenSym
	if !es.Factorize(hs, true) {
		return nil, fmt.Errorf("%w: eigen-decomposition of the projected Hessian", ErrNumerics)
	}
	vals := es.Values(nil)
	var c mat.Dense
	es.VectorsTo(&c)
	var l mat.Dense
	l.Mul(d, &c)
	com := centreOfMass(pos, masses)
	h := &Harmonic{Masses: append([]float64(nil), masses...), Linear: linear}
	for a := range n {
		h.Pos = append(h.Pos, [3]float64{pos[a][0] - com[0], pos[a][1] - com[1], pos[a][2] - com[2]})
	}
	for k := range nvib {
		lam := vals[k]
		h.EigenvaluesProjected = append(h.EigenvaluesProjected, lam)
		w := eigenvalueToCm1(lam)
		h.WavenumbersCm1 = append(h.WavenumbersCm1, w)
		h.Imaginary = append(h.Imaginary, lam < 0)
		lv := make([]float64, n3)
		for i := range n3 {
			lv[i] = l.At(i, k)
		}
		fixSign(lv)
		h.L = append(h.L, lv)
		disp := make([]float64, n3)
		s := 0.0
		for i := range n3 {
			disp[i] = lv[i] / math.Sqrt(masses[i/3])
			s += disp[i] * disp[i]
		}
		mu := 1 / s
		for i := range disp {
			disp[i] *= math.Sqrt(mu)
		}
		h.Displacement = append(h.Displacement, disp)
		h.ReducedMassAmu = append(h.ReducedMassAmu, mu)
		// k = λ μ with λ in hartree/(amu bohr²) and μ in amu.
		h.ForceConstMdynPerA = append(h.ForceConstMdynPerA, lam*mu*HartreePerBohr2InMdynPerAngstrom)
		if lam > 0 {
			h.ZPECm1 += 0.5 * w
		}
	}
	h.ZPEHartree = h.ZPECm1 / HartreeInCm1
	h.Inertia, h.Axes = principal(h.Pos, masses)
	h.RotCm1 = rotationalConstants(h.Inertia)
	return h, nil
}

// fixSign makes the largest component of v positive, so that modes come out
// the same from one run to the next (common practice).
func fixSign(v []float64) {
	big, at := 0.0, 0
	for i, x := range v {
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

func centreOfMass(pos [][3]float64, masses []float64) [3]float64 {
	var c [3]float64
	tot := 0.0
	for a, m := range masses {
		for k := range 3 {
			c[k] += m * pos[a][k]
		}
		tot += m
	}
	for k := range 3 {
		c[k] /= tot
	}
	return c
}

// ExternalMotions returns the infinitesimal translations and rotations
// about the centre of mass in mass-weighted Cartesian coordinates,
// orthonormalised (Gram–Schmidt, twice): 6 vectors, or 5 for a linear
// molecule (the rotation about its axis has no length). The vibrational
// space is their orthogonal complement (the Eckart conditions; Wilson,
// Decius & Cross 1955, §11-2). Masses must be positive.
func ExternalMotions(pos [][3]float64, masses []float64) [][]float64 {
	n := len(masses)
	com := centreOfMass(pos, masses)
	n3 := 3 * n
	var tr [][]float64
	for k := range 3 {
		v := make([]float64, n3)
		for a := range n {
			v[3*a+k] = math.Sqrt(masses[a])
		}
		tr = append(tr, v)
	}
	for k := range 3 {
		e := [3]float64{}
		e[k] = 1
		v := make([]float64, n3)
		for a := range n {
			r := [3]float64{pos[a][0] - com[0], pos[a][1] - com[1], pos[a][2] - com[2]}
			c := cross3(e, r)
			for q := range 3 {
				v[3*a+q] = math.Sqrt(masses[a]) * c[q]
			}
		}
		tr = append(tr, v)
	}
	// Gram–Schmidt (twice, for orthogonality to rounding); a rotation whose
	// norm collapses is the one about the axis of a linear molecule.
	var ortho [][]float64
	for _, v := range tr {
		n0 := math.Sqrt(dotv(v, v))
		for range 2 {
			for _, u := range ortho {
				c := dotv(u, v)
				for i := range v {
					v[i] -= c * u[i]
				}
			}
		}
		nv := math.Sqrt(dotv(v, v))
		if nv <= 1e-6*math.Max(n0, 1) {
			continue
		}
		for i := range v {
			v[i] /= nv
		}
		ortho = append(ortho, v)
	}
	return ortho
}

// InertiaTensor returns the inertia tensor (amu·bohr²) of the positions
// (bohr) about their centre of mass.
func InertiaTensor(pos [][3]float64, masses []float64) [3][3]float64 {
	com := centreOfMass(pos, masses)
	var t [3][3]float64
	for a, m := range masses {
		r := [3]float64{pos[a][0] - com[0], pos[a][1] - com[1], pos[a][2] - com[2]}
		r2 := r[0]*r[0] + r[1]*r[1] + r[2]*r[2]
		for i := range 3 {
			for j := range 3 {
				v := -m * r[i] * r[j]
				if i == j {
					v += m * r2
				}
				t[i][j] += v
			}
		}
	}
	return t
}

// principal returns the principal moments (ascending) and axes.
func principal(pos [][3]float64, masses []float64) ([3]float64, [3][3]float64) {
	t := InertiaTensor(pos, masses)
	s := mat.NewSymDense(3, nil)
	for i := range 3 {
		for j := i; j < 3; j++ {
			s.SetSym(i, j, t[i][j])
		}
	}
	var es mat.EigenSym
	var mom [3]float64
	var ax [3][3]float64
	if !es.Factorize(s, true) {
		return mom, ax
	}
	v := es.Values(nil)
	var vec mat.Dense
	es.VectorsTo(&vec)
	for k := range 3 {
		mom[k] = math.Max(v[k], 0)
		for q := range 3 {
			ax[k][q] = vec.At(q, k)
		}
	}
	return mom, ax
}

// rotationalConstants turns principal moments (amu·bohr², ascending) into
// A ≥ B ≥ C in cm⁻¹: B = ħ²/(2I) = 1/(2I) hartree with I in m_e·bohr².
func rotationalConstants(mom [3]float64) [3]float64 {
	var b [3]float64
	for k := range 3 {
		if mom[k] < linearTol {
			b[k] = math.Inf(1)
			continue
		}
		b[k] = HartreeInCm1 / (2 * mom[k] * AmuInElectronMass)
	}
	return b
}

// RotationalConstantsCm1 returns A ≥ B ≥ C (cm⁻¹) of the positions (bohr)
// and masses (amu); an entry is +Inf where the moment vanishes.
func RotationalConstantsCm1(pos [][3]float64, masses []float64) [3]float64 {
	mom, _ := principal(pos, masses)
	return rotationalConstants(mom)
}

func cross3(a, b [3]float64) [3]float64 {
	return [3]float64{a[1]*b[2] - a[2]*b[1], a[2]*b[0] - a[0]*b[2], a[0]*b[1] - a[1]*b[0]}
}

func dotv(a, b []float64) float64 {
	s := 0.0
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}
