package fit

import (
	"context"
	"errors"
	"fmt"
	"sort"
)

// spline is a not-a-knot cubic spline through (x, y), x strictly
// increasing, stored as the knots and the second derivatives m at the
// knots. Building it costs time and memory linear in the number of knots:
// the not-a-knot end conditions are eliminated into the first and last
// rows, which leaves a tridiagonal system for the interior second
// derivatives (solved by the Thomas algorithm; the eliminated system stays
// diagonally dominant, so no pivoting is needed). Evaluation is a binary
// search plus the cubic of one interval.
//
// References:
//   - C. de Boor, A Practical Guide to Splines, revised ed., Springer 2001,
//     ch. IV (the not-a-knot end condition) and ch. V.
//   - W. H. Press et al., Numerical Recipes, 3rd ed., Cambridge 2007,
//     §3.3 (the second-derivative form of the cubic spline) and §2.4
//     (tridiagonal systems).
type spline struct {
	x, y, m []float64
	// Scratch for gradient, allocated on first use and reused: a spline
	// is not safe for concurrent calls of gradient.
	gy, gm, tsub, tdiag, tsup, lam, work []float64
}

// errShortSpline is returned for fewer than four knots.
var errShortSpline = errors.New("fit: a not-a-knot cubic spline needs at least 4 points")

// ctxEvery is how many loop iterations run between checks of the context
// in the linear-cost loops.
const ctxEvery = 1 << 14

// newSpline builds the spline; x must be strictly increasing. ctx is
// checked every ctxEvery knots.
func newSpline(ctx context.Context, x, y []float64) (*spline, error) {
	n := len(x)
	if n != len(y) {
		return nil, fmt.Errorf("fit: spline: %d knots but %d values", n, len(y))
	}
	if n < 4 {
		return nil, errShortSpline
	}
	for i := 1; i < n; i++ {
		if !(x[i] > x[i-1]) {
			return nil, fmt.Errorf("fit: spline: knots %d and %d (%g, %g) are not strictly increasing", i-1, i, x[i-1], x[i])
		}
	}
	sub, diag, sup, rhs := splineSystem(x, y)
	mi, err := solveTridiag(ctx, sub, diag, sup, rhs)
	if err != nil {
		return nil, err
	}
	m := make([]float64, n)
	copy(m[1:n-1], mi)
	h0, h1 := x[1]-x[0], x[2]-x[1]
	m[0] = m[1]*(1+h0/h1) - m[2]*h0/h1
	ha, hb := x[n-2]-x[n-3], x[n-1]-x[n-2]
	m[n-1] = m[n-2]*(1+hb/ha) - m[n-3]*hb/ha
	return &spline{x: x, y: y, m: m}, nil
}

// splineSystem returns the tridiagonal system T·M = R·y for the interior
// second derivatives M_1 … M_{n−2} (sub[0] and sup[k−1] unused).
func splineSystem(x, y []float64) (sub, diag, sup, rhs []float64) {
	n := len(x)
	k := n - 2
	sub, diag, sup, rhs = make([]float64, k), make([]float64, k), make([]float64, k), make([]float64, k)
	for i := 1; i <= n-2; i++ {
		hl, hr := x[i]-x[i-1], x[i+1]-x[i]
		j := i - 1
		sub[j], diag[j], sup[j] = hl, 2*(hl+hr), hr
		if y != nil {
			rhs[j] = 6 * ((y[i+1]-y[i])/hr - (y[i]-y[i-1])/hl)
		}
	}
	// Not-a-knot at the left: M_0 = M_1(1 + h0/h1) − M_2 h0/h1.
	h0, h1 := x[1]-x[0], x[2]-x[1]
	diag[0] = (h0 + h1) * (h0 + 2*h1) / h1
	sup[0] = (h1 - h0) * (h1 + h0) / h1
	// And at the right: M_{n−1} = M_{n−2}(1 + hb/ha) − M_{n−3} hb/ha.
	ha, hb := x[n-2]-x[n-3], x[n-1]-x[n-2]
	diag[k-1] = (hb + ha) * (hb + 2*ha) / ha
	sub[k-1] = (ha - hb) * (ha + hb) / ha
	return sub, diag, sup, rhs
}

// solveTridiag solves the tridiagonal system with sub-, main and
// super-diagonals by the Thomas algorithm.
func solveTridiag(ctx context.Context, sub, diag, sup, rhs []float64) ([]float64, error) {
	k := len(diag)
	c := make([]float64, k)
	d := make([]float64, k)
	for i := range k {
		if i%ctxEvery == 0 && ctx != nil {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
		}
		den := diag[i]
		if i > 0 {
			den -= sub[i] * c[i-1]
		}
		if den == 0 {
			return nil, errors.New("fit: spline: singular tridiagonal system")
		}
		if i < k-1 {
			c[i] = sup[i] / den
		}
		d[i] = rhs[i]
		if i > 0 {
			d[i] -= sub[i] * d[i-1]
		}
		d[i] /= den
	}
	for i := k - 2; i >= 0; i-- {
		d[i] -= c[i] * d[i+1]
	}
	return d, nil
}

// interval returns k with x[k] ≤ r ≤ x[k+1], clamped to the first or last
// interval outside the knots.
func (s *spline) interval(r float64) int {
	n := len(s.x)
	k := sort.SearchFloat64s(s.x, r) - 1
	return min(max(k, 0), n-2)
}

// basis returns the weights of y_k, y_{k+1}, M_k, M_{k+1} at r in
// interval k.
func (s *spline) basis(k int, r float64) (a, b, c, d float64) {
	h := s.x[k+1] - s.x[k]
	t := (r - s.x[k]) / h
	u := 1 - t
	return u, t, h * h / 6 * (u*u*u - u), h * h / 6 * (t*t*t - t)
}

// at evaluates the spline (the cubic of the nearest end interval outside
// the knots).
func (s *spline) at(r float64) float64 {
	k := s.interval(r)
	a, b, c, d := s.basis(k, r)
	return a*s.y[k] + b*s.y[k+1] + c*s.m[k] + d*s.m[k+1]
}

// gradient returns g with g_i = Σ_j w_j ∂s(r_j)/∂y_i: how a weighted sum
// of spline values responds to each data value. It is the adjoint of
// building and evaluating the spline, so it costs one transposed
// tridiagonal solve (linear in the knots) whatever the number of
// evaluation points. The result lives in the spline's scratch space: it
// is valid until the next call.
func (s *spline) gradient(r, w []float64) []float64 {
	n := len(s.x)
	if s.gy == nil {
		s.gy, s.gm = make([]float64, n), make([]float64, n)
		// Tᵀ: sub- and super-diagonals of T swapped (shifted by one).
		sub, diag, sup, _ := splineSystem(s.x, nil)
		k := n - 2
		s.tsub, s.tsup, s.tdiag = make([]float64, k), make([]float64, k), diag
		for i := range k {
			if i > 0 {
				s.tsub[i] = sup[i-1]
			}
			if i < k-1 {
				s.tsup[i] = sub[i+1]
			}
		}
		s.lam, s.work = make([]float64, k), make([]float64, k)
	}
	gy, gm := s.gy, s.gm
	clear(gy)
	clear(gm)
	for j, rj := range r {
		k := s.interval(rj)
		a, b, c, d := s.basis(k, rj)
		gy[k] += w[j] * a
		gy[k+1] += w[j] * b
		gm[k] += w[j] * c
		gm[k+1] += w[j] * d
	}
	// M_0 and M_{n−1} are combinations of interior M (the not-a-knot
	// eliminations in newSpline).
	x := s.x
	h0, h1 := x[1]-x[0], x[2]-x[1]
	gm[1] += gm[0] * (1 + h0/h1)
	gm[2] -= gm[0] * h0 / h1
	ha, hb := x[n-2]-x[n-3], x[n-1]-x[n-2]
	gm[n-2] += gm[n-1] * (1 + hb/ha)
	gm[n-3] -= gm[n-1] * hb / ha
	// Interior M = T⁻¹ R y, so the gradient through M is Rᵀ T⁻ᵀ gm.
	lam := thomas(s.tsub, s.tdiag, s.tsup, gm[1:n-1], s.work, s.lam)
	if lam == nil {
		return gy
	}
	for i := 1; i <= n-2; i++ {
		l := 6 * lam[i-1]
		hl, hr := x[i]-x[i-1], x[i+1]-x[i]
		gy[i+1] += l / hr
		gy[i] -= l/hr + l/hl
		gy[i-1] += l / hl
	}
	return gy
}

// thomas solves a tridiagonal system into out with scratch c (both of the
// system's size); nil when it is singular.
func thomas(sub, diag, sup, rhs, c, out []float64) []float64 {
	k := len(diag)
	for i := range k {
		den := diag[i]
		if i > 0 {
			den -= sub[i] * c[i-1]
		}
		if den == 0 {
			return nil
		}
		if i < k-1 {
			c[i] = sup[i] / den
		}
		out[i] = rhs[i]
		if i > 0 {
			out[i] -= sub[i] * out[i-1]
		}
		out[i] /= den
	}
	for i := k - 2; i >= 0; i-- {
		out[i] -= c[i] * out[i+1]
	}
	return out
}

// localCubic evaluates the cubic through the four knots nearest r (two on
// each side inside; the first or last four near the ends): Lagrange
// interpolation, local and of the same order as the spline.
func (s *spline) localCubic(r float64) float64 {
	n := len(s.x)
	k := s.interval(r)
	lo := min(max(k-1, 0), n-4)
	v := 0.0
	for i := lo; i < lo+4; i++ {
		l := 1.0
		for j := lo; j < lo+4; j++ {
			if j != i {
				l *= (r - s.x[j]) / (s.x[i] - s.x[j])
			}
		}
		v += l * s.y[i]
	}
	return v
}
