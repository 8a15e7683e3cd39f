package geomopt

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// wilsonB returns the values q and the Wilson matrix B (len(prims) × 3N),
// B_ij = ∂q_i/∂x_j.
func wilsonB(prims []Prim, x []float64) ([]float64, *mat.Dense) {
	m, n := len(prims), len(x)
	q := make([]float64, m)
	B := mat.NewDense(max(m, 1), max(n, 1), nil)
	for i, p := range prims {
		v, g := p.valueGrad(x, true)
		q[i] = v
		atoms := p.Atoms
		if p.Kind == PrimCart {
			atoms = atoms[:1]
		}
		for k, a := range atoms {
			for d := range 3 {
				B.Set(i, 3*a+d, B.At(i, 3*a+d)+g[k][d])
			}
		}
	}
	return q, B
}

// pinvSym returns the pseudo-inverse of the symmetric matrix a, dropping
// eigenvalues below rel·max eigenvalue, and the number kept.
func pinvSym(a *mat.SymDense, rel float64) (*mat.SymDense, int, error) {
	var eig mat.EigenSym
	if !eig.Factorize(a, true) {
		return nil, 0, fmt.Errorf("geomopt: eigendecomposition failed")
	}
	vals := eig.Values(nil)
	var vecs mat.Dense
	eig.VectorsTo(&vecs)
	top := 0.0
	for _, v := range vals {
		top = max(top, math.Abs(v))
	}
	n := len(vals)
	out := mat.NewSymDense(n, nil)
	kept := 0
	for k, v := range vals {
		if v <= rel*top || v <= 0 {
			continue
		}
		kept++
		col := mat.Col(nil, k, &vecs)
		out.SymRankOne(out, 1/v, mat.NewVecDense(n, col))
	}
	return out, kept, nil
}

// rankB is the numerical rank of B at x (relative threshold 1e-8 on the
// eigenvalues of BBᵀ).
func rankB(prims []Prim, x []float64) int {
	if len(prims) == 0 {
		return 0
	}
	_, B := wilsonB(prims, x)
	var g mat.SymDense
	g.SymOuterK(1, B)
	_, k, err := pinvSym(&g, 1e-8)
	if err != nil {
		return 0
	}
	return k
}

// rfoStep returns the rational-function step for gradient g and Hessian
// h: the lowest eigenvector (v, v₀) of [[H, g], [gᵀ, 0]] gives
// Δq = v/v₀.
//
// Reference: A. Banerjee, N. Adams, J. Simons, R. Shepard, J. Phys. Chem.
// 89, 52 (1985), doi:10.1021/j100247a015 (from memory).
func rfoStep(h *mat.SymDense, g []float64) ([]float64, error) {
	m := len(g)
	aug := mat.NewSymDense(m+1, nil)
	for i := range m {
		for j := i; j < m; j++ {
			aug.SetSym(i, j, h.At(i, j))
		}
		aug.SetSym(i, m, g[i])
	}
	var eig mat.EigenSym
	if !eig.Factorize(aug, true) {
		return nil, fmt.Errorf("geomopt: rational-function eigenproblem failed")
	}
	var vecs mat.Dense
	eig.VectorsTo(&vecs)
	// Values are ascending; column 0 is the lowest.
	v0 := vecs.At(m, 0)
	if math.Abs(v0) < 1e-12 {
		// Degenerate: fall back to steepest descent.
		out := make([]float64, m)
		for i := range out {
			out[i] = -g[i]
		}
		return out, nil
	}
	out := make([]float64, m)
	for i := range out {
		out[i] = vecs.At(i, 0) / v0
	}
	return out, nil
}

func vecNorm(v []float64) float64 {
	var s float64
	for _, x := range v {
		s += x * x
	}
	return math.Sqrt(s)
}

func maxAbs(v []float64) float64 {
	var m float64
	for _, x := range v {
		m = max(m, math.Abs(x))
	}
	return m
}

func rms(v []float64) float64 {
	if len(v) == 0 {
		return 0
	}
	return vecNorm(v) / math.Sqrt(float64(len(v)))
}
