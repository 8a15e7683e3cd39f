package hf

import (
	"gonum.org/v1/gonum/mat"
)

// diis is Pulay's direct inversion in the iterative subspace for Fock
// matrices: it keeps the last few Fock matrices F_i with their error
// vectors e_i and returns F = Σ c_i F_i with the c_i minimising |Σ c_i e_i|²
// subject to Σ c_i = 1, i.e. it solves
//
//	[ B   1 ] [c]   [0]
//	[ 1ᵀ  0 ] [λ] = [1],   B_ij = e_i · e_j.
//
// For UHF one vector holds the α and β errors together and the same
// coefficients extrapolate both Fock matrices.
//
// References:
//   - P. Pulay, Chem. Phys. Lett. 73, 393 (1980), doi:10.1016/0009-2614(80)80396-4.
//   - P. Pulay, J. Comput. Chem. 3, 556 (1982), doi:10.1002/jcc.540030413
//     (commutator FDS − SDF as the error vector).
type diis struct {
	size, ns int
	slots    []diisSlot // oldest first; len is the number stored
	free     []diisSlot
	coef     []float64
}

type diisSlot struct {
	focks []*mat.Dense // one per spin, m×m orthogonal basis
	err   []float64
}

func newDIIS(size, ns, m, errLen int) *diis {
	d := &diis{size: size, ns: ns, coef: make([]float64, size)}
	for range size {
		s := diisSlot{err: make([]float64, errLen)}
		for range ns {
			s.focks = append(s.focks, mat.NewDense(m, m, nil))
		}
		d.free = append(d.free, s)
	}
	d.slots = make([]diisSlot, 0, size)
	return d
}

func (d *diis) reset() {
	d.free = append(d.free, d.slots...)
	d.slots = d.slots[:0]
}

// push stores copies of the Fock matrices; fill writes the error vector.
func (d *diis) push(focks []*mat.Dense, fill func(err []float64)) {
	var s diisSlot
	if len(d.slots) == d.size {
		s = d.slots[0]
		copy(d.slots, d.slots[1:])
		d.slots = d.slots[:len(d.slots)-1]
	} else {
		s = d.free[len(d.free)-1]
		d.free = d.free[:len(d.free)-1]
	}
	for i, f := range focks {
		s.focks[i].Copy(f)
	}
	fill(s.err)
	d.slots = append(d.slots, s)
}

// extrapolate writes Σ c_i F_i to out and returns the number of vectors
// used. With fewer than two vectors, or when every subsystem is singular,
// it copies the newest Fock matrices and returns 1. Oldest vectors are
// dropped while the B matrix is too ill-conditioned to solve.
func (d *diis) extrapolate(out []*mat.Dense) int {
	k := len(d.slots)
	if k == 0 {
		return 0
	}
	for start := 0; k-start >= 2; start++ {
		if d.solve(start) {
			for s := range d.ns {
				ro := out[s].RawMatrix()
				for i := start; i < k; i++ {
					c, rf := d.coef[i-start], d.slots[i].focks[s].RawMatrix()
					for r := range ro.Rows {
						dst := ro.Data[r*ro.Stride : r*ro.Stride+ro.Cols]
						src := rf.Data[r*rf.Stride : r*rf.Stride+rf.Cols]
						for q, v := range src {
							if i == start {
								dst[q] = c * v
							} else {
								dst[q] += c * v
							}
						}
					}
				}
			}
			return k - start
		}
	}
	for s := range d.ns {
		out[s].Copy(d.slots[k-1].focks[s])
	}
	return 1
}

// solve finds the coefficients for slots[start:]; false if ill-conditioned.
func (d *diis) solve(start int) bool {
	vs := d.slots[start:]
	errs := make([][]float64, len(vs))
	for i, v := range vs {
		errs[i] = v.err
	}
	return pulayWeights(errs, d.coef)
}

// pulayWeights solves Pulay's DIIS equations for the error vectors errs
// (oldest first): the weights c with Σ c_i = 1 that minimise
// |Σ c_i e_i|², written to coef[:len(errs)], from the B matrix scaled by
// its largest diagonal element. It returns false, leaving coef undefined,
// when the system is too ill-conditioned to solve (condition number above
// 1e14: nearly parallel error vectors, which the callers answer by
// dropping the oldest, common practice). When every error vanishes any
// affine combination is exact and the newest gets weight 1. The SCF's
// Fock extrapolation and the coupled-cluster amplitude extrapolation
// both use it.
func pulayWeights(errs [][]float64, coef []float64) bool {
	k := len(errs)
	a := mat.NewDense(k+1, k+1, nil)
	var scale float64
	for i := range k {
		for j := 0; j <= i; j++ {
			var b float64
			for p, v := range errs[i] {
				b += v * errs[j][p]
			}
			a.Set(i, j, b)
			a.Set(j, i, b)
		}
		scale = max(scale, a.At(i, i))
	}
	if scale == 0 {
		clear(coef[:k])
		coef[k-1] = 1
		return true
	}
	for i := range k {
		for j := range k {
			a.Set(i, j, a.At(i, j)/scale)
		}
		a.Set(i, k, 1)
		a.Set(k, i, 1)
	}
	var lu mat.LU
	lu.Factorize(a)
	if c := lu.Cond(); c > 1e14 || c != c {
		return false
	}
	rhs := mat.NewVecDense(k+1, nil)
	rhs.SetVec(k, 1)
	var x mat.VecDense
	if err := lu.SolveVecTo(&x, false, rhs); err != nil {
		return false
	}
	for i := range k {
		coef[i] = x.AtVec(i)
	}
	return true
}
