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
		parts = append(parts, fmt.Sprintf("%s=%.*f %s", c.Name, c.Digits, c.Display(v[i], s.units), c.UnitLabel(s.units)))
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
				v = append(v, xe{d.Values[0], d.Energy, d.Round})
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
	cur := extrema1D(xs, es, set.Maxima)
	pxs, pes := pick(round - 1)
	prev := extrema1D(pxs, pes, set.Maxima)

	// Every key planned or attempted so far, failed ones included, so a
	// point is never planned twice.
	known := map[string]bool{}
	var all []float64
	for _, d := range done {
		known[d.Key] = true
		all = append(all, d.Values[0])
	}
	axis := s.axes[0]
	lo0, hi0 := c.Internal(axis[0], s.units), c.Internal(axis[len(axis)-1], s.units)
	tgt := c.Internal(set.TargetStep[0], s.units)
	tol := set.Tolerance[0]

	plan := RefinePlan{Status: RefineConverged}
	var reasons, stalls []string
	add := func(x float64) bool {
		p := s.PointAt([]float64{c.Display(x, s.units)})
		if known[p.Key] {
			return false
		}
		for _, a := range all {
			if math.Abs(a-p.Values[0]) < tgt/2 {
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
		ex := Extremum{Kind: e.kind, Values: []float64{e.x}, Energy: e.e, Frequency: math.NaN(), AtEdge: e.edge != 0}
		if e.freqOK {
			if mu, err := s.EffectiveMass(Point{Key: "fit", Values: []float64{e.x}}, 0); err == nil {
				ex.Mass = mu
				ex.Frequency = Harmonic(e.k, mu)
			}
		}
		where := s.describe(ex.Values)
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
			if pe == nil || math.Abs(p.x-e.x) < math.Abs(pe.x-e.x) {
				pe = p
			}
		}
		if pe != nil && math.Abs(pe.x-e.x) < 2*math.Max(e.gap, pe.gap) {
			dx := c.Display(e.x, s.units) - c.Display(pe.x, s.units)
			ex.Shift = []float64{dx}
			dw := math.NaN()
			if pm, err := s.EffectiveMass(Point{Key: "fit", Values: []float64{pe.x}}, 0); err == nil && pe.freqOK {
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
		d := c.Display(x, u)
		return d >= -360 && d <= 360
	}
}
