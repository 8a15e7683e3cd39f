package fit

import (
	"context"
	"math"
)

// levelPotential is the curve the level grid is solved on: inside the data
// an interpolant through every point, beyond the data ends two different
// continuations. Comparing the levels on the two measures how much each
// level depends on where the data stop.
//
// With a global reference form g (the Morse or extended Morse fit) the
// interpolant is g plus a not-a-knot cubic spline of the residuals e_i −
// g(r_i): it passes through every point, and between sparse points it
// follows the shape of the fitted form instead of the cubic's. Without one
// it is the not-a-knot cubic spline of the energies themselves. The spline
// is local in cost (a tridiagonal solve, see [spline]), so building the
// potential is linear in the number of points.
type levelPotential struct {
	ref   func(r float64) float64 // nil: no reference form
	fit   *MorseFit               // the reference fit, nil when ref is nil
	local bool                    // interpolate the residuals by local cubics instead (the interpolation check)
	resid *spline                 // residuals from ref (the energies when ref is nil)
	x     []float64
	label string
}

// refMaxRMS is the largest rms residual of a global fit, relative to the
// energy range of the data, for which it serves as the reference form: a
// fit worse than 1 % of the range does not describe the shape of the curve
// (common practice).
const refMaxRMS = 1e-2

// newLevelPotential builds the level potential over sorted points x (bohr),
// e (hartree), choosing as reference the better of the Morse and extended
// Morse fits (either may be nil). It reports false when no interpolant can
// be built (fewer than four points).
func newLevelPotential(ctx context.Context, x, e []float64, fits ...*MorseFit) (*levelPotential, bool, error) {
	if len(x) < 4 {
		return nil, false, nil
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range e {
		lo, hi = math.Min(lo, v), math.Max(hi, v)
	}
	var best *MorseFit
	for _, f := range fits {
		if f == nil || !(f.De > 0) || !(f.RMSResidual <= refMaxRMS*(hi-lo)) {
			continue
		}
		if best == nil || f.RMSResidual < best.RMSResidual {
			best = f
		}
	}
	lp, err := levelPotentialWith(ctx, x, e, best)
	if err != nil {
		if ctx.Err() != nil {
			return nil, false, err
		}
		if best == nil {
			return nil, false, nil
		}
		if lp, err = levelPotentialWith(ctx, x, e, nil); err != nil {
			if ctx.Err() != nil {
				return nil, false, err
			}
			return nil, false, nil
		}
	}
	return lp, true, nil
}

// levelPotentialWith builds the level potential on the given reference
// fit (nil: the spline of the energies).
func levelPotentialWith(ctx context.Context, x, e []float64, ref *MorseFit) (*levelPotential, error) {
	d := make([]float64, len(e))
	copy(d, e)
	if ref != nil {
		for i := range d {
			d[i] -= ref.Potential(x[i])
		}
	}
	s, err := newSpline(ctx, x, d)
	if err != nil {
		return nil, err
	}
	lp := &levelPotential{x: x, resid: s, fit: ref}
	if ref != nil {
		lp.ref = ref.Potential
		lp.label = ref.Form + " fit plus a not-a-knot cubic spline of its residuals through all points, continued past the data by the fit"
	} else {
		lp.label = "not-a-knot cubic spline through all points, continued past the data by its second-order Taylor expansion at each end"
	}
	return lp, nil
}

// thinned returns the level potential through every stride-th point (the
// ends and the given index always kept), on the same reference fit: the
// interpolation check of [solveWell]. ok is false when fewer than four
// points would remain.
func (p *levelPotential) thinned(ctx context.Context, e []float64, keep, stride int) (*levelPotential, bool, error) {
	n := len(p.x)
	var xs, es []float64
	for i := range n {
		if (i-keep)%stride == 0 || i == 0 || i == n-1 {
			xs = append(xs, p.x[i])
			es = append(es, e[i])
		}
	}
	if len(xs) < 4 || len(xs) == n {
		return nil, false, nil
	}
	lp, err := levelPotentialWith(ctx, xs, es, p.fit)
	if err != nil {
		if ctx.Err() != nil {
			return nil, false, err
		}
		return nil, false, nil
	}
	return lp, true, nil
}

// inside evaluates the interpolant (meaningful for x[0] ≤ r ≤ x[n−1]).
func (p *levelPotential) inside(r float64) float64 {
	v := p.resid.at(r)
	if p.local {
		v = p.resid.localCubic(r)
	}
	if p.ref != nil {
		v += p.ref(r)
	}
	return v
}

// edge holds the value and the first two derivatives of the interpolant at
// one data end, taken from one-sided differences inside the first interval.
type edge struct {
	at, v, d1, d2 float64
}

func (p *levelPotential) edgeAt(i, inward int) edge {
	a := p.x[i]
	h := 1e-3 * math.Abs(p.x[i+inward]-a) * float64(inward)
	f0, f1, f2, f3 := p.inside(a), p.inside(a+h), p.inside(a+2*h), p.inside(a+3*h)
	return edge{
		at: a,
		v:  f0,
		d1: (-3*f0 + 4*f1 - f2) / (2 * h),
		d2: (2*f0 - 5*f1 + 4*f2 - f3) / (h * h),
	}
}

// taylor continues the curve past the edge by its Taylor expansion to the
// given order (1: tangent line; 2: with the edge curvature, clamped at zero
// so that the wall never bends back).
func (g edge) taylor(r float64, order int) float64 {
	t := r - g.at
	v := g.v + g.d1*t
	if order >= 2 {
		v += 0.5 * math.Max(g.d2, 0) * t * t
	}
	return v
}

// continuations returns the model potential and the alternative one for
// the grid [lo, hi], which may reach past the data ends x[0] and x[n−1].
// The model continues the reference form (plus the residual at the edge) or,
// without a reference, the second-order Taylor expansion; the alternative
// is the second-order Taylor expansion with a reference and the tangent line
// without one. Both agree with the interpolant inside the data. The fit's
// continuation is kept from falling below the edge value, so that a fitted
// form that turns over far out cannot open a false well past the data.
func (p *levelPotential) continuations() (model, alt func(float64) float64) {
	n := len(p.x)
	left, right := p.edgeAt(0, 1), p.edgeAt(n-1, -1)
	a, b := p.x[0], p.x[n-1]
	cont := func(useRef bool, order int) func(float64) float64 {
		return func(r float64) float64 {
			switch {
			case r < a:
				if useRef {
					return math.Max(p.ref(r)+p.resid.at(a), left.v)
				}
				return left.taylor(r, order)
			case r > b:
				if useRef {
					return math.Max(p.ref(r)+p.resid.at(b), right.v)
				}
				return right.taylor(r, order)
			}
			return p.inside(r)
		}
	}
	if p.ref != nil {
		return cont(true, 0), cont(false, 2)
	}
	return cont(false, 2), cont(false, 1)
}

// localVariant returns the same potential with the residuals interpolated
// by the cubic through the four nearest points instead of the spline: a
// second interpolant of the same order whose difference from the first
// measures the interpolation error where the points are sparse.
func (p *levelPotential) localVariant() *levelPotential {
	q := *p
	q.local = true
	return &q
}

// gradient returns g_i = Σ_j w_j ∂V(r_j)/∂e_i, how a weighted sum of the
// potential's values responds to each energy e_i (the reference fit held
// fixed: the spline of the residuals absorbs any change of a point).
// Points past the data ends count at the end they continue from (to first
// order the continuations move with the edge value).
func (p *levelPotential) gradient(r, w []float64) []float64 {
	a, b := p.x[0], p.x[len(p.x)-1]
	rc := make([]float64, len(r))
	for j, v := range r {
		rc[j] = min(max(v, a), b)
	}
	return p.resid.gradient(rc, w)
}
