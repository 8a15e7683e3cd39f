package hf

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/mat"
)

// eigenSolver diagonalises real symmetric m×m matrices with a reusable
// LAPACK workspace, so the SCF loop does not allocate per iteration.
type eigenSolver struct {
	m    int
	a    []float64 // m×m row-major; eigenvectors (columns) after solve
	work []float64
}

func newEigenSolver(m int) *eigenSolver {
	e := &eigenSolver{m: m, a: make([]float64, m*m)}
	w := make([]float64, m)
	query := []float64{0}
	lapack64.Syev(lapack.EVCompute, blas64.Symmetric{Uplo: blas.Upper, N: m, Stride: m, Data: e.a}, w, query, -1)
	e.work = make([]float64, int(query[0]))
	return e
}

// solve diagonalises the symmetric part of src (m×m). Eigenvalues go to w
// in ascending order, eigenvectors (as columns) to vecs.
func (e *eigenSolver) solve(src *mat.Dense, w []float64, vecs *mat.Dense) error {
	m := e.m
	raw := src.RawMatrix()
	for i := range m {
		for j := i; j < m; j++ {
			e.a[i*m+j] = 0.5 * (raw.Data[i*raw.Stride+j] + raw.Data[j*raw.Stride+i])
		}
	}
	ok := lapack64.Syev(lapack.EVCompute, blas64.Symmetric{Uplo: blas.Upper, N: m, Stride: m, Data: e.a}, w, e.work, len(e.work))
	if !ok {
		return errors.New("hf: symmetric eigensolver did not converge")
	}
	vr := vecs.RawMatrix()
	for i := range m {
		copy(vr.Data[i*vr.Stride:i*vr.Stride+m], e.a[i*m:(i+1)*m])
	}
	return nil
}

// orthogonalizer returns X (n×m) with XᵀSX = 1, the number of dropped
// eigenvectors of S, and the kind actually used.
//
// References: P.-O. Löwdin, Adv. Quantum Chem. 5, 185 (1970),
// doi:10.1016/S0065-3276(08)60339-1 (from memory); Szabo & Ostlund,
// Modern Quantum Chemistry (Dover, 1996), §3.4.5.
func orthogonalizer(s *mat.SymDense, threshold float64, kind Orthogonalization) (*mat.Dense, int, Orthogonalization, error) {
	n := s.SymmetricDim()
	var eig mat.EigenSym
	if !eig.Factorize(s, true) {
		return nil, 0, kind, errors.New("hf: eigendecomposition of the overlap matrix failed")
	}
	vals := eig.Values(nil)
	var u mat.Dense
	eig.VectorsTo(&u)
	// A clearly negative eigenvalue means the matrix is not an overlap
	// matrix (Gram matrices are positive semidefinite); 1e-8 allows rounding.
	if vals[0] < -1e-8 {
		return nil, 0, kind, fmt.Errorf("hf: overlap matrix has a negative eigenvalue %g: not a valid overlap matrix", vals[0])
	}
	var keep []int
	for i, v := range vals {
		if v >= threshold {
			keep = append(keep, i)
		}
	}
	if len(keep) == 0 {
		return nil, n, kind, fmt.Errorf("hf: all %d overlap eigenvalues are below the linear-dependence threshold %g (largest %g)", n, threshold, vals[n-1])
	}
	dropped := n - len(keep)
	if kind == OrthSymmetric && dropped == 0 {
		x := mat.NewDense(n, n, nil)
		for i := range n {
			for j := range n {
				var sum float64
				for k := range n {
					sum += u.At(i, k) * u.At(j, k) / math.Sqrt(vals[k])
				}
				x.Set(i, j, sum)
			}
		}
		return x, 0, OrthSymmetric, nil
	}
	x := mat.NewDense(n, len(keep), nil)
	for c, k := range keep {
		f := 1 / math.Sqrt(vals[k])
		for i := range n {
			x.Set(i, c, u.At(i, k)*f)
		}
	}
	return x, dropped, OrthCanonical, nil
}

// symTrace returns Σ_ij a_ij b_ij for two symmetric matrices (= tr(AB)).
func symTrace(a, b *mat.SymDense) float64 {
	ra, rb := a.RawSymmetric(), b.RawSymmetric()
	n := ra.N
	var diag, off float64
	for i := range n {
		ia, ib := ra.Data[i*ra.Stride:], rb.Data[i*rb.Stride:]
		diag += ia[i] * ib[i]
		for j := i + 1; j < n; j++ {
			off += ia[j] * ib[j]
		}
	}
	return diag + 2*off
}

// denseDot returns Σ_ij a_ij b_ij (= tr(AᵀB)).
func denseDot(a, b *mat.Dense) float64 {
	ra, rb := a.RawMatrix(), b.RawMatrix()
	var sum float64
	for i := range ra.Rows {
		ia, ib := ra.Data[i*ra.Stride:i*ra.Stride+ra.Cols], rb.Data[i*rb.Stride:i*rb.Stride+rb.Cols]
		for j, v := range ia {
			sum += v * ib[j]
		}
	}
	return sum
}

// antisymInto stores a − aᵀ in dst and returns max |element|.
func antisymInto(dst, a *mat.Dense) float64 {
	ra, rd := a.RawMatrix(), dst.RawMatrix()
	var mx float64
	for i := range ra.Rows {
		for j := range ra.Cols {
			v := ra.Data[i*ra.Stride+j] - ra.Data[j*ra.Stride+i]
			rd.Data[i*rd.Stride+j] = v
			mx = math.Max(mx, math.Abs(v))
		}
	}
	return mx
}

// flatten copies the elements of a into dst (len rows·cols) row by row.
func flatten(dst []float64, a *mat.Dense) {
	ra := a.RawMatrix()
	for i := range ra.Rows {
		copy(dst[i*ra.Cols:(i+1)*ra.Cols], ra.Data[i*ra.Stride:i*ra.Stride+ra.Cols])
	}
}

// invSqrtSym returns M^{-1/2} for a symmetric positive-definite k×k matrix,
// or an error when its smallest eigenvalue is below minEig.
func invSqrtSym(m *mat.SymDense, minEig float64) (*mat.Dense, error) {
	k := m.SymmetricDim()
	var eig mat.EigenSym
	if !eig.Factorize(m, true) {
		return nil, errors.New("hf: eigendecomposition failed")
	}
	vals := eig.Values(nil)
	if vals[0] < minEig {
		return nil, fmt.Errorf("hf: metric matrix is near-singular (smallest eigenvalue %g < %g)", vals[0], minEig)
	}
	var u mat.Dense
	eig.VectorsTo(&u)
	r := mat.NewDense(k, k, nil)
	for i := range k {
		for j := range k {
			var sum float64
			for l := range k {
				sum += u.At(i, l) * u.At(j, l) / math.Sqrt(vals[l])
			}
			r.Set(i, j, sum)
		}
	}
	return r, nil
}
