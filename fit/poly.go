package fit

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Poly is a polynomial in the displacement from Origin:
// P(x) = Σ_k Coef[k]·(x − Origin)^k. Cov, when not nil, is the covariance
// matrix of Coef from the weighted least-squares fit that produced it.
//
// A Poly is a value; its methods do not modify it.
type Poly struct {
	Origin float64
	Coef   []float64
	Cov    *mat.SymDense
}

// Eval returns P(x).
func (p Poly) Eval(x float64) float64 { return p.Deriv(x, 0) }

// Deriv returns the n-th derivative of P at x.
func (p Poly) Deriv(x float64, n int) float64 {
	return polyDeriv(p.Coef, x-p.Origin, n)
}

func polyDeriv(c []float64, t float64, n int) float64 {
	s := 0.0
	for k := len(c) - 1; k >= n; k-- {
		f := 1.0
		for j := 0; j < n; j++ {
			f *= float64(k - j)
		}
		s = s*t + f*c[k]
	}
	return s
}

// polyFit is the outcome of one weighted least-squares polynomial fit.
type polyFit struct {
	poly  Poly
	rss   float64 // weighted residual sum of squares
	s2    float64 // residual variance estimate rss/(n−p); 0 if n == p
	loocv float64 // weighted mean squared leave-one-out residual
	n     int
}

var errSingular = errors.New("fit: the least-squares problem is singular (too few distinct coordinates for the degree)")

// fitPoly fits a polynomial of degree deg in (x − origin) to (x, y) with
// weights w (nil means equal weights), by QR factorisation of the weighted
// Vandermonde matrix in the scaled variable t = (x − origin)/s, s =
// max|x − origin|, which keeps the matrix well conditioned up to degree 8.
// The leave-one-out residuals come from the hat-matrix diagonal,
// e_i/(1 − h_ii) (common practice; e.g. T. Hastie, R. Tibshirani,
// J. Friedman, The Elements of Statistical Learning, 2nd ed., Springer
// 2009, eq. 7.52).
func fitPoly(x, y, w []float64, origin float64, deg int) (polyFit, error) {
	n, p := len(x), deg+1
	if n < p {
		return polyFit{}, fmt.Errorf("fit: %d points cannot determine a degree-%d polynomial", n, deg)
	}
	s := 0.0
	for _, xi := range x {
		s = math.Max(s, math.Abs(xi-origin))
	}
	if s == 0 {
		return polyFit{}, errSingular
	}
	a := mat.NewDense(n, p, nil)
	b := mat.NewVecDense(n, nil)
	for i := range n {
		sw := 1.0
		if w != nil {
			sw = math.Sqrt(w[i])
		}
		t := (x[i] - origin) / s
		v := sw
		for k := range p {
			a.Set(i, k, v)
			v *= t
		}
		b.SetVec(i, sw*y[i])
	}
	var qr mat.QR
	qr.Factorize(a)
	var rfull mat.Dense
	qr.RTo(&rfull)
	r := mat.NewTriDense(p, mat.Upper, nil)
	for i := range p {
		for j := i; j < p; j++ {
			r.SetTri(i, j, rfull.At(i, j))
		}
	}
	for k := range p {
		if math.Abs(r.At(k, k)) < 1e-12*math.Abs(r.At(0, 0)) {
			return polyFit{}, errSingular
		}
	}
	var d mat.VecDense
	if err := qr.SolveVecTo(&d, false, b); err != nil {
		return polyFit{}, errSingular
	}
	var rinv mat.TriDense
	if err := rinv.InverseTri(r); err != nil {
		return polyFit{}, errSingular
	}
	// Thin Q = A R⁻¹ gives the hat diagonal h_ii = |Q_i|².
	var q mat.Dense
	q.Mul(a, &rinv)
	rss, loo, wsum := 0.0, 0.0, 0.0
	for i := range n {
		fi := 0.0
		for k := p - 1; k >= 0; k-- {
			fi = fi*((x[i]-origin)/s) + d.AtVec(k)
		}
		wi := 1.0
		if w != nil {
			wi = w[i]
		}
		res := y[i] - fi
		rss += wi * res * res
		h := 0.0
		for k := range p {
			h += q.At(i, k) * q.At(i, k)
		}
		if h < 1-1e-10 {
			l := res / (1 - h)
			loo += wi * l * l
		} else {
			loo = math.Inf(1)
		}
		wsum += wi
	}
	f := polyFit{rss: rss, loocv: loo / wsum, n: n}
	if n > p {
		f.s2 = rss / float64(n-p)
	}
	coef := make([]float64, p)
	scale := make([]float64, p)
	sk := 1.0
	for k := range p {
		scale[k] = sk
		coef[k] = d.AtVec(k) / sk
		sk *= s
	}
	// Cov(d) = s² R⁻¹R⁻ᵀ, then undo the scaling of t.
	cov := mat.NewSymDense(p, nil)
	for i := range p {
		for j := i; j < p; j++ {
			v := 0.0
			for k := max(i, j); k < p; k++ {
				v += rinv.At(i, k) * rinv.At(j, k)
			}
			cov.SetSym(i, j, f.s2*v/(scale[i]*scale[j]))
		}
	}
	f.poly = Poly{Origin: origin, Coef: coef, Cov: cov}
	return f, nil
}

// minimumOf finds the minimum of P inside [lo, hi] nearest to start, by
// Newton's method on P' with a bracketing fall-back. ok is false when P has
// no interior minimum in the interval (the lowest value is at an end).
func minimumOf(c []float64, start, lo, hi float64) (t float64, ok bool) {
	// Coarse scan first: Newton from the lowest grid point of a fine scan is
	// robust against the polynomial's wiggles far from the data.
	const m = 400
	best, bestT := math.Inf(1), start
	for i := 0; i <= m; i++ {
		ti := lo + (hi-lo)*float64(i)/m
		if v := polyDeriv(c, ti, 0); v < best {
			best, bestT = v, ti
		}
	}
	t = bestT
	for range 100 {
		d1, d2 := polyDeriv(c, t, 1), polyDeriv(c, t, 2)
		if d2 <= 0 {
			break
		}
		step := d1 / d2
		t -= step
		if t < lo || t > hi {
			return bestT, false
		}
		if math.Abs(step) <= 1e-15*math.Max(1, math.Abs(t)) {
			break
		}
	}
	if polyDeriv(c, t, 2) <= 0 || t <= lo || t >= hi {
		return bestT, false
	}
	return t, true
}
