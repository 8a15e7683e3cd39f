package fit

import (
	"errors"
	"fmt"
	"math"
	"sort"
)

// LocalExtremum is a stationary point of a curve located by a local
// polynomial.
type LocalExtremum struct {
	// X (bohr or radian) and E (hartree) of the stationary point, and the
	// curvature K = d²E/dx² there (hartree per unit²: negative at a
	// maximum). XStderr, EStderr and KStderr are first-order standard
	// errors from the fit's covariance (zero when the polynomial passes
	// exactly through its points).
	X, E, K                   float64
	XStderr, EStderr, KStderr float64
	// Degree of the polynomial and the points it used.
	Degree, Points int
	// Inside is false when the stationary point is not inside the interval
	// between the samples on either side of x[i] (then X is the sample).
	Inside bool
}

// Extremum locates the stationary point of the curve (x sorted ascending,
// e) near the interior sample i: a least-squares polynomial of degree
// min(4, n−1) through the n samples nearest x[i] (n ≥ 3; 5 is the usual
// choice), its stationary point by Newton's method from x[i], kept inside
// (x[i−1], x[i+1]). It serves minima and maxima alike, and is the one
// local polynomial that refinement and the barrier analysis share.
func Extremum(x, e []float64, i, n int) (LocalExtremum, error) {
	if len(x) != len(e) {
		return LocalExtremum{}, fmt.Errorf("fit: extremum: %d coordinates but %d energies", len(x), len(e))
	}
	if i <= 0 || i >= len(x)-1 {
		return LocalExtremum{}, fmt.Errorf("fit: extremum: sample %d of %d is not interior", i, len(x))
	}
	if n < 3 {
		return LocalExtremum{}, errors.New("fit: extremum: need at least 3 samples")
	}
	idx := make([]int, len(x))
	for k := range idx {
		idx[k] = k
	}
	sort.SliceStable(idx, func(a, b int) bool { return math.Abs(x[idx[a]]-x[i]) < math.Abs(x[idx[b]]-x[i]) })
	n = min(n, len(x))
	idx = idx[:n]
	sort.Ints(idx)
	deg := min(4, n-1)
	wx, wy := make([]float64, n), make([]float64, n)
	for k, j := range idx {
		wx[k], wy[k] = x[j], e[j]
	}
	pf, err := fitPoly(wx, wy, nil, x[i], deg)
	if err != nil {
		return LocalExtremum{}, err
	}
	c := pf.poly.Coef
	lo, hi := x[i-1]-x[i], x[i+1]-x[i]
	t := 0.0
	inside := true
	for range 60 {
		d1, d2 := polyDeriv(c, t, 1), polyDeriv(c, t, 2)
		if d2 == 0 {
			inside = false
			break
		}
		nt := t - d1/d2
		if nt <= lo || nt >= hi {
			nt = math.Max(lo, math.Min(hi, nt))
			inside = false
		}
		if math.Abs(nt-t) < 1e-15*math.Max(1, math.Abs(x[i])) {
			t = nt
			break
		}
		t = nt
	}
	if !inside && (t <= lo || t >= hi) {
		t = 0
	}
	out := LocalExtremum{X: x[i] + t, E: polyDeriv(c, t, 0), K: polyDeriv(c, t, 2), Degree: deg, Points: n, Inside: inside}
	if cov := pf.poly.Cov; cov != nil && pf.s2 > 0 {
		// First order: the root moves by −δP′/P″, the energy by δP, the
		// curvature by δP″ + P‴·dx.
		p := len(c)
		d3 := polyDeriv(c, t, 3)
		gx, ge, gk := make([]float64, p), make([]float64, p), make([]float64, p)
		for k := range p {
			tk := func(d int) float64 { // d-th derivative of t^k
				if k < d {
					return 0
				}
				f := 1.0
				for j := range d {
					f *= float64(k - j)
				}
				return f * math.Pow(t, float64(k-d))
			}
			gx[k] = -tk(1) / out.K
			ge[k] = tk(0)
			gk[k] = tk(2) + d3*gx[k]
		}
		v := func(g []float64) float64 {
			s := 0.0
			for a := range p {
				for b := range p {
					s += g[a] * cov.At(a, b) * g[b]
				}
			}
			return math.Sqrt(math.Max(s, 0))
		}
		out.XStderr, out.EStderr, out.KStderr = v(gx), v(ge), v(gk)
	}
	return out, nil
}
