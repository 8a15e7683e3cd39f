package planner

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// Sample is what refinement needs to know about one point of the scan:
// its values (bohr, radians), the round it was planned in and, unless it
// failed, its energy (hartree).
type Sample struct {
	Key    string
	Values []float64
	Energy float64
	Round  int
	Failed bool
}

// RefineStatus says whether refinement wants another round.
type RefineStatus string

// Refinement outcomes.
const (
	RefineContinue  RefineStatus = "refining"         // Points holds the next round
	RefineConverged RefineStatus = "converged"        // every extremum converged (or reached the target step)
	RefineBudget    RefineStatus = "budget exhausted" // the round or point budget stopped it first
	RefineStalled   RefineStatus = "stalled"          // an extremum sits at an edge the grid cannot grow past
	RefineOff       RefineStatus = "off"              // refine.adaptive = false: the grid as written
)

// Extremum is the current estimate of one local minimum or maximum.
type Extremum struct {
	Kind      string    // "minimum" or "maximum"
	Values    []float64 // position, bohr or radians
	Energy    float64   // hartree, from the local fit
	Frequency float64   // harmonic wavenumber (cm⁻¹) from the fit curvature; NaN if unknown; negative for a maximum
	Mass      float64   // effective mass used (amu)
	AtEdge    bool      // the lowest (highest) point is at the edge of the grid
	Converged bool
	Shift     []float64 // change of position since the previous round (display units); nil if none
	Note      string
}

// RefinePlan is the outcome of one refinement step.
type RefinePlan struct {
	Points  []Point // to compute in the next round; empty unless Status is RefineContinue
	Status  RefineStatus
	Reason  string
	Extrema []Extremum
}

// shrink is the factor by which the refinement step falls each round
// (ours: fast enough to reach a 0.002 Å step from 0.05 Å in three rounds).
const shrink = 4

// Refine looks at every sample computed so far (round is the round just
// finished) and plans the next round: for every local minimum (and
// maximum, when refine.maxima is set) it extends the grid if the extremum
// sits at an edge, otherwise adds points around the fitted extremum with a
// step shrinking by 4 per round down to the target step, until the
// extremum position moves less than the tolerance and its harmonic
// frequency less than the frequency tolerance between rounds.
//
// Refine is deterministic: the same samples give the same plan, so a
// resumed scan plans exactly what an uninterrupted one would have.
//
// The local fit is a least-squares polynomial of degree ≤ 4 through the
// five samples nearest the lowest point (exact interpolation when there
// are five); the extremum is the stationary point of the fit inside the
// bracketing interval. Two-coordinate scans use a quadratic surface fit
// and test positions only.
func Refine(s *Spec, done []Sample, round int) RefinePlan {
	if s.ff != nil {
		return s.refineFF(done, round)
	}
	set := s.refine
	var ok []Sample
	for _, d := range done {
		if !d.Failed && !math.IsNaN(d.Energy) {
			ok = append(ok, d)
		}
	}
	var plan RefinePlan
	if len(s.coords) == 2 {
		plan = refine2D(s, done, ok, round)
	} else {
		plan = refine1D(s, done, ok, round)
	}
	if !set.Adaptive {
		plan.Points = nil
		plan.Status = RefineOff
		plan.Reason = "adaptive refinement is off (refine.adaptive = false); the grid was computed as written"
		return plan
	}
	if plan.Status != RefineContinue {
		return plan
	}
	if round >= set.MaxRounds {
		plan.Points = nil
		plan.Status = RefineBudget
		plan.Reason = fmt.Sprintf("round budget used up (refine.max_rounds = %d) before %s converged", set.MaxRounds, s.unconverged(plan.Extrema))
		return plan
	}
	if room := set.MaxPoints - len(done); len(plan.Points) > room {
		if room <= 0 {
			plan.Points = nil
			plan.Status = RefineBudget
			plan.Reason = fmt.Sprintf("point budget used up (refine.max_points = %d) before %s converged", set.MaxPoints, s.unconverged(plan.Extrema))
			return plan
		}
		plan.Points = plan.Points[:room]
		plan.Reason += fmt.Sprintf("; only %d new points fit the point budget (refine.max_points = %d)", room, set.MaxPoints)
	}
	return plan
}

func (s *Spec) unconverged(ex []Extremum) string {
	var parts []string
	for _, e := range ex {
		if !e.Converged {
			parts = append(parts, e.Kind+" near "+s.describe(e.Values))
		}
	}
	if len(parts) == 0 {
		return "the scan"
	}
	return "the " + strings.Join(parts, " and the ")
}

// describe prints values in display units with their labels.
func (s *Spec) describe(v []float64) string {
	if s.ff != nil {
		return "force-field displacement"
	}
	var parts []string
	for i, c := range s.coords {
		parts = append(parts, fmt.Sprintf("%s=%.*f %s", c.Name, c.Digits, c.Unwrap(v[i], s.units), c.UnitLabel(s.units)))
	}
	return strings.Join(parts, ", ")
}

// Describe formats an extremum position for people, e.g. "r=1.12830 Å".
func (s *Spec) Describe(values []float64) string { return s.describe(values) }

type est1 struct {
	kind   string
	x, e   float64 // position (internal), fitted energy
	k      float64 // curvature, hartree per unit²
	gap    float64 // spacing of the samples bracketing x (internal)
	edge   int     // −1 lower edge, +1 upper edge, 0 interior
	idx    int     // index of the extreme sample
	freqOK bool
}

// extrema1D finds local minima (and maxima if asked) of sorted samples and
// fits each.
func extrema1D(xs, es []float64, maxima bool) []est1 {
	n := len(xs)
	var out []est1
	if n < 3 {
		return nil
	}
	for _, kind := range []string{"minimum", "maximum"} {
		if kind == "maximum" && !maxima {
			continue
		}
		sign := 1.0
		if kind == "maximum" {
			sign = -1
		}
		less := func(i, j int) bool { return sign*es[i] < sign*es[j] }
		for i := range n {
			var edge int
			switch {
			case i == 0:
				if !less(0, 1) {
					continue
				}
				edge = -1
			case i == n-1:
				if !less(n-1, n-2) {
					continue
				}
				edge = 1
			default:
				if !(less(i, i-1) && !less(i+1, i)) {
					continue
				}
			}
			e := est1{kind: kind, x: xs[i], e: es[i], idx: i, edge: edge}
			if edge == 0 {
				fitLocal(xs, es, i, &e)
			}
			out = append(out, e)
		}
	}
	return out
}

// fitLocal fits a polynomial through the samples nearest xs[i] and puts
// its stationary point inside (xs[i−1], xs[i+1]) into e.
func fitLocal(xs, es []float64, i int, e *est1) {
	n := len(xs)
	idx := make([]int, n)
	for k := range idx {
		idx[k] = k
	}
	sort.SliceStable(idx, func(a, b int) bool { return math.Abs(xs[idx[a]]-xs[i]) < math.Abs(xs[idx[b]]-xs[i]) })
	m := min(5, n)
	idx = idx[:m]
	deg := m - 1
	scale := 0.0
	for _, k := range idx {
		scale = math.Max(scale, math.Abs(xs[k]-xs[i]))
	}
	A := mat.NewDense(m, deg+1, nil)
	b := mat.NewVecDense(m, nil)
	for r, k := range idx {
		t := (xs[k] - xs[i]) / scale
		p := 1.0
		for c := 0; c <= deg; c++ {
			A.Set(r, c, p)
			p *= t
		}
		b.SetVec(r, es[k]-es[i])
	}
	var c mat.VecDense
	if err := c.SolveVec(A, b); err != nil {
		e.k = math.NaN()
		return
	}
	poly := func(t float64, d int) float64 {
		// d-th derivative of Σ c_j t^j at t.
		v := 0.0
		for j := deg; j >= d; j-- {
			f := 1.0
			for q := range d {
				f *= float64(j - q)
			}
			v = v*t + f*c.AtVec(j)
		}
		return v
	}
	lo, hi := (xs[i-1]-xs[i])/scale, (xs[i+1]-xs[i])/scale
	// Newton on p'(t) = 0 from the lowest sample, kept inside the bracket.
	t := 0.0
	for range 50 {
		d1, d2 := poly(t, 1), poly(t, 2)
		if d2 == 0 {
			break
		}
		nt := t - d1/d2
		nt = math.Max(lo, math.Min(hi, nt))
		if math.Abs(nt-t) < 1e-15 {
			t = nt
			break
		}
		t = nt
	}
	e.x = xs[i] + t*scale
	e.e = es[i] + poly(t, 0)
	e.k = poly(t, 2) / (scale * scale)
	e.freqOK = true
	for k := 1; k < n; k++ {
		if xs[k-1] <= e.x && e.x <= xs[k] {
			e.gap = xs[k] - xs[k-1]
			break
		}
	}
}

// LineView is the samples of a 1-D scan laid out on a line for the
// search for extrema: a full-period torsion as three copies shifted by
// −period, 0 and +period (so that the extrema of the middle copy have
// neighbours on both sides and the scan wraps), a partial torsion arc
// unwrapped so that it is contiguous, and a bend that reaches 180° mirrored
// about 180° (the energy is even there, so a minimum at 180° is interior).
type LineView struct {
	Xs, Es []float64
	// Lo, Hi: only extrema with Lo ≤ x ≤ Hi are kept (the middle copy, or
	// the unmirrored half).
	Lo, Hi float64
	// rangeEdges: the ends of the line are the ends of a partial torsion
	// range, which is refined inside its range only (never extended).
	RangeEdges bool
	// Wrapped: a full-period torsion laid out as three copies; Mirrored:
	// a bend mirrored about 180°.
	Wrapped, Mirrored bool
	// back maps a line position to the coordinate's own value (canonical
	// for a torsion, folded back below 180° for a mirrored bend).
	Back func(x float64) float64
	// inside reports whether a line position may get a new point.
	Inside func(x float64) bool
}

// View1D lays the sorted samples (xs, es; internal units, canonical) of
// coordinate c out as a line.
func View1D(c Coordinate, xs, es []float64) LineView {
	v := LineView{Xs: xs, Es: es, Lo: math.Inf(-1), Hi: math.Inf(1),
		Back: func(x float64) float64 { return x }, Inside: func(float64) bool { return true }}
	switch {
	case c.Periodic() && c.FullPeriod && len(xs) >= 3:
		n := len(xs)
		v.Xs, v.Es = make([]float64, 0, 3*n), make([]float64, 0, 3*n)
		for _, shift := range []float64{-c.Period, 0, c.Period} {
			for i := range xs {
				v.Xs = append(v.Xs, xs[i]+shift)
				v.Es = append(v.Es, es[i])
			}
		}
		v.Lo, v.Hi = 0, math.Nextafter(c.Period, 0)
		v.Back = c.Canonical
		v.Wrapped = true
	case c.Periodic() && len(xs) >= 2:
		start := arcStart(xs, c.Period)
		type xe struct{ x, e float64 }
		u := make([]xe, len(xs))
		for i := range xs {
			u[i] = xe{start + c.Canonical(xs[i]-start), es[i]}
		}
		sort.Slice(u, func(a, b int) bool { return u[a].x < u[b].x })
		v.Xs, v.Es = make([]float64, len(u)), make([]float64, len(u))
		for i := range u {
			v.Xs[i], v.Es[i] = u[i].x, u[i].e
		}
		lo, hi := v.Xs[0], v.Xs[len(v.Xs)-1]
		v.RangeEdges = true
		v.Back = c.Canonical
		v.Inside = func(x float64) bool { return x >= lo && x <= hi }
	case c.Kind == KindAngle && len(xs) > 0 && xs[len(xs)-1] >= math.Pi-1e-9:
		n := len(xs)
		v.Xs, v.Es = append([]float64(nil), xs...), append([]float64(nil), es...)
		for i := n - 2; i >= 0; i-- {
			v.Xs = append(v.Xs, 2*math.Pi-xs[i])
			v.Es = append(v.Es, es[i])
		}
		v.Hi = math.Pi + 1e-9
		v.Mirrored = true
		v.Back = func(x float64) float64 {
			if x > math.Pi {
				return 2*math.Pi - x
			}
			return x
		}
	}
	return v
}

// extrema finds the extrema of the view that lie in its kept range.
func (v LineView) extrema(maxima bool) []est1 {
	var out []est1
	for _, e := range extrema1D(v.Xs, v.Es, maxima) {
		if x := v.Xs[e.idx]; x >= v.Lo && x <= v.Hi {
			out = append(out, e)
		}
	}
	return out
}

func refine1D(s *Spec, done, ok []Sample, round int) RefinePlan {
	set := s.refine
	c := s.coords[0]
	type xe struct {
		x, e float64
		r    int
	}
	pick := func(maxRound int) ([]float64, []float64) {
		var v []xe
		for _, d := range ok {
			if d.Round <= maxRound {
				v = append(v, xe{c.Canonical(d.Values[0]), d.Energy, d.Round})
			}
		}
		sort.Slice(v, func(a, b int) bool { return v[a].x < v[b].x })
		xs, es := make([]float64, len(v)), make([]float64, len(v))
		for i := range v {
			xs[i], es[i] = v[i].x, v[i].e
		}
		return xs, es
	}
	xs, es := pick(round)
	if len(xs) < 3 {
		return RefinePlan{Status: RefineStalled, Reason: fmt.Sprintf("only %d points succeeded; refinement needs at least 3", len(xs))}
	}
	view := View1D(c, xs, es)
	cur := view.extrema(set.Maxima)
	pxs, pes := pick(round - 1)
	var prev []est1
	var pview LineView
	if len(pxs) >= 3 {
		pview = View1D(c, pxs, pes)
		prev = pview.extrema(set.Maxima)
	}

	// Every key planned or attempted so far, failed ones included, so a
	// point is never planned twice.
	known := map[string]bool{}
	var all []float64
	for _, d := range done {
		known[d.Key] = true
		all = append(all, c.Canonical(d.Values[0]))
	}
	axis := s.axes[0]
	lo0, hi0 := c.Internal(axis[0], s.units), c.Internal(axis[len(axis)-1], s.units)
	tgt := c.Internal(set.TargetStep[0], s.units)
	tol := set.Tolerance[0]

	plan := RefinePlan{Status: RefineConverged}
	var reasons, stalls []string
	// add plans a point at line position x (if it is new and allowed).
	add := func(x float64) bool {
		if !view.Inside(x) {
			return false
		}
		p := s.PointAt([]float64{c.Display(view.Back(x), s.units)})
		if known[p.Key] {
			return false
		}
		for _, a := range all {
			if c.Separation(a, p.Values[0]) < tgt/2 {
				return false
			}
		}
		if _, err := s.Geometry(p); err != nil {
			return false
		}
		known[p.Key] = true
		all = append(all, p.Values[0])
		plan.Points = append(plan.Points, p)
		return true
	}
	for _, e := range cur {
		pos := view.Back(e.x)
		ex := Extremum{Kind: e.kind, Values: []float64{pos}, Energy: e.e, Frequency: math.NaN(), AtEdge: e.edge != 0}
		if e.freqOK {
			if mu, err := s.EffectiveMass(Point{Key: "fit", Values: []float64{pos}}, 0); err == nil {
				ex.Mass = mu
				ex.Frequency = Harmonic(e.k, mu)
			}
		}
		where := s.describe(ex.Values)
		if e.edge != 0 && view.RangeEdges {
			side := map[int]string{-1: "lower", 1: "upper"}[e.edge]
			ex.Note = fmt.Sprintf("at the %s end of the torsion range; a torsion is refined inside its range only", side)
			stalls = append(stalls, fmt.Sprintf("the %s at %s is at the %s end of the scanned torsion range, which is not extended: widen from/to, or scan the whole period (%g°) to analyse it", e.kind, where, side, c.PeriodDegrees()))
			plan.Extrema = append(plan.Extrema, ex)
			continue
		}
		if e.edge != 0 {
			// Extend outward by the spacing at that edge.
			var step, next float64
			var ext int
			if e.edge < 0 {
				step = xs[1] - xs[0]
				next = xs[0] - step
				for _, a := range all {
					if a < lo0-1e-12 {
						ext++
					}
				}
			} else {
				step = xs[len(xs)-1] - xs[len(xs)-2]
				next = xs[len(xs)-1] + step
				for _, a := range all {
					if a > hi0+1e-12 {
						ext++
					}
				}
				if c.Kind == KindAngle && next > math.Pi && xs[len(xs)-1] < math.Pi {
					// A bend grows up to the linear geometry, where its
					// energy is even; past it the points repeat.
					next = math.Pi
				}
			}
			side := map[int]string{-1: "lower", 1: "upper"}[e.edge]
			if ext >= set.MaxExtensions {
				ex.Note = fmt.Sprintf("at the %s edge after %d extensions (refine.max_extensions)", side, ext)
				stalls = append(stalls, fmt.Sprintf("the %s at %s is still at the %s edge after %d extensions (refine.max_extensions = %d)", e.kind, where, side, ext, set.MaxExtensions))
			} else if !valid(c, next, s.units) || !add(next) {
				ex.Note = fmt.Sprintf("at the %s edge; the grid cannot grow past %s", side, where)
				stalls = append(stalls, fmt.Sprintf("the %s at %s is at the %s edge and the grid cannot be extended there", e.kind, where, side))
			} else {
				ex.Note = fmt.Sprintf("at the %s edge: extending the grid", side)
				reasons = append(reasons, fmt.Sprintf("%s at the %s edge (%s): extending to %s", e.kind, side, where, s.describe([]float64{next})))
			}
			plan.Extrema = append(plan.Extrema, ex)
			continue
		}
		// Match the previous round's estimate of the same extremum.
		var pe *est1
		for i := range prev {
			p := &prev[i]
			if p.kind != e.kind || p.edge != 0 {
				continue
			}
			if pe == nil || c.Separation(pview.Back(p.x), pos) < c.Separation(pview.Back(pe.x), pos) {
				pe = p
			}
		}
		if pe != nil && c.Separation(pview.Back(pe.x), pos) < 2*math.Max(e.gap, pe.gap) {
			ppos := pview.Back(pe.x)
			dx := c.Display(pos, s.units) - c.Display(ppos, s.units)
			if c.Periodic() {
				dx = math.Remainder(dx, c.PeriodDegrees())
			}
			ex.Shift = []float64{dx}
			dw := math.NaN()
			if pm, err := s.EffectiveMass(Point{Key: "fit", Values: []float64{ppos}}, 0); err == nil && pe.freqOK {
				dw = ex.Frequency - Harmonic(pe.k, pm)
			}
			if math.Abs(dx) < tol && (math.Abs(dw) < set.FrequencyTolerance || math.IsNaN(ex.Frequency)) {
				ex.Converged = true
				ex.Note = fmt.Sprintf("converged: moved %.2g %s and ω changed %.2g cm⁻¹ since round %d", math.Abs(dx), c.UnitLabel(s.units), math.Abs(dw), round-1)
				plan.Extrema = append(plan.Extrema, ex)
				continue
			}
		}
		h := math.Max(tgt, e.gap/shrink)
		n := 0
		for _, x := range []float64{e.x, e.x - h, e.x + h} {
			if add(x) {
				n++
			}
		}
		if n == 0 {
			ex.Converged = true
			ex.Note = fmt.Sprintf("reached the target step %g %s", set.TargetStep[0], c.UnitLabel(s.units))
		} else {
			reasons = append(reasons, fmt.Sprintf("%s near %s: %d points at step %.3g %s", e.kind, where, n, c.Display(h, s.units), c.UnitLabel(s.units)))
		}
		plan.Extrema = append(plan.Extrema, ex)
	}
	switch {
	case len(plan.Points) > 0:
		plan.Status = RefineContinue
		plan.Reason = strings.Join(reasons, "; ")
	case len(stalls) > 0:
		plan.Status = RefineStalled
		plan.Reason = strings.Join(stalls, "; ")
	case len(cur) == 0:
		plan.Status = RefineConverged
		plan.Reason = "no local minimum in the scanned range"
	default:
		plan.Reason = "every extremum converged"
	}
	return plan
}

// valid reports whether internal value x is a possible value of c.
func valid(c Coordinate, x float64, u LengthUnit) bool {
	switch c.Kind {
	case KindDistance:
		return x > MinSeparation
	case KindAngle:
		d := c.Display(x, u)
		return d > 0 && d <= 180
	default:
		return !math.IsNaN(x) && !math.IsInf(x, 0)
	}
}
