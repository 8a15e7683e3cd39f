package fit

import (
	"math"

	"gonum.org/v1/gonum/interp"
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
// it is the not-a-knot cubic spline of the energies themselves.
type levelPotential struct {
	ref   func(r float64) float64 // nil: no reference form
	resid interp.NotAKnotCubic    // residuals from ref (the energies when ref is nil)
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
func newLevelPotential(x, e []float64, fits ...*MorseFit) (*levelPotential, bool) {
	if len(x) < 4 {
		return nil, false
	}
	lp := &levelPotential{x: x}
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
	d := make([]float64, len(e))
	copy(d, e)
	if best != nil {
		for i := range d {
			d[i] -= best.Potential(x[i])
		}
	}
	if lp.resid.Fit(x, d) != nil {
		best = nil
		if lp.resid.Fit(x, e) != nil {
			return nil, false
		}
	}
	if best != nil {
		lp.ref = best.Potential
		lp.label = best.Form + " fit plus a not-a-knot cubic spline of its residuals through all points, continued past the data by the fit"
	} else {
		lp.label = "not-a-knot cubic spline through all points, continued past the data by its second-order Taylor expansion at each end"
	}
	return lp, true
}

// inside evaluates the interpolant (meaningful for x[0] ≤ r ≤ x[n−1]).
func (p *levelPotential) inside(r float64) float64 {
	v := p.resid.Predict(r)
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
					return math.Max(p.ref(r)+p.resid.Predict(a), left.v)
				}
				return left.taylor(r, order)
			case r > b:
				if useRef {
					return math.Max(p.ref(r)+p.resid.Predict(b), right.v)
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
