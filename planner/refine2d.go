package planner

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// refine2D refines the lowest (and, if asked, highest) point of a
// two-coordinate scan: a quadratic surface through the nine nearest
// samples gives the stationary point, a 3×3 patch with a shrinking step is
// added around it, and an extremum on an edge extends the grid by one
// line of three points. Convergence tests the position only.
func refine2D(s *Spec, done, ok []Sample, round int) RefinePlan {
	set := s.refine
	if len(ok) < 9 {
		return RefinePlan{Status: RefineStalled, Reason: fmt.Sprintf("only %d points succeeded; 2-D refinement needs at least 9", len(ok))}
	}
	known := map[string]bool{}
	for _, d := range done {
		known[d.Key] = true
	}
	plan := RefinePlan{Status: RefineConverged}
	var reasons, stalls []string
	add := func(x, y float64) bool {
		p := s.PointAt([]float64{s.coords[0].Display(x, s.units), s.coords[1].Display(y, s.units)})
		if known[p.Key] {
			return false
		}
		if _, err := s.Geometry(p); err != nil {
			return false
		}
		known[p.Key] = true
		plan.Points = append(plan.Points, p)
		return true
	}
	kinds := []string{"minimum"}
	if set.Maxima {
		kinds = append(kinds, "maximum")
	}
	for _, kind := range kinds {
		cur, cok := estimate2D(s, ok, round, kind)
		prev, pok := estimate2D(s, ok, round-1, kind)
		if !cok {
			continue
		}
		ex := Extremum{Kind: kind, Values: []float64{cur.x[0], cur.x[1]}, Energy: cur.e, Frequency: math.NaN(), AtEdge: cur.edge != [2]int{}}
		where := s.describe(ex.Values)
		if cur.edge != [2]int{} {
			grown := false
			for d := range 2 {
				if cur.edge[d] == 0 {
					continue
				}
				c := s.coords[d]
				ax := s.axes[d]
				lo0, hi0 := c.Internal(ax[0], s.units), c.Internal(ax[len(ax)-1], s.units)
				ext := 0
				for _, v := range distinct(ok, d) {
					if v < lo0-1e-12 || v > hi0+1e-12 {
						if (cur.edge[d] < 0) == (v < lo0) {
							ext++
						}
					}
				}
				next := cur.x[d] + float64(cur.edge[d])*cur.gap[d]
				if ext >= set.MaxExtensions || !valid(c, next, s.units) {
					continue
				}
				o := 1 - d
				for _, off := range []float64{-1, 0, 1} {
					var xy [2]float64
					xy[d] = next
					xy[o] = cur.x[o] + off*cur.gap[o]
					if add(xy[0], xy[1]) {
						grown = true
					}
				}
			}
			if grown {
				ex.Note = "at an edge: extending the grid"
				reasons = append(reasons, fmt.Sprintf("%s at the grid edge (%s): extending", kind, where))
			} else {
				ex.Note = "at an edge the grid cannot grow past"
				stalls = append(stalls, fmt.Sprintf("the %s at %s is at the grid edge and cannot be extended (refine.max_extensions = %d)", kind, where, set.MaxExtensions))
			}
			plan.Extrema = append(plan.Extrema, ex)
			continue
		}
		if pok && prev.edge == [2]int{} {
			var shift []float64
			conv := true
			for d := range 2 {
				c := s.coords[d]
				dx := c.Display(cur.x[d], s.units) - c.Display(prev.x[d], s.units)
				shift = append(shift, dx)
				if math.Abs(dx) >= set.Tolerance[d] {
					conv = false
				}
			}
			ex.Shift = shift
			if conv {
				ex.Converged = true
				ex.Note = fmt.Sprintf("converged: moved less than the tolerance since round %d", round-1)
				plan.Extrema = append(plan.Extrema, ex)
				continue
			}
		}
		var h [2]float64
		for d := range 2 {
			h[d] = math.Max(s.coords[d].Internal(set.TargetStep[d], s.units), cur.gap[d]/shrink)
		}
		n := 0
		for _, a := range []float64{0, -1, 1} {
			for _, b := range []float64{0, -1, 1} {
				if add(cur.x[0]+a*h[0], cur.x[1]+b*h[1]) {
					n++
				}
			}
		}
		if n == 0 {
			ex.Converged = true
			ex.Note = "reached the target step"
		} else {
			reasons = append(reasons, fmt.Sprintf("%s near %s: %d points", kind, where, n))
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
	default:
		plan.Reason = "every extremum converged"
	}
	return plan
}

type est2 struct {
	x    [2]float64
	e    float64
	gap  [2]float64
	edge [2]int
}

func distinct(ok []Sample, d int) []float64 {
	var v []float64
	for _, s := range ok {
		v = append(v, s.Values[d])
	}
	sort.Float64s(v)
	out := v[:0]
	for i, x := range v {
		if i == 0 || x-out[len(out)-1] > 1e-12 {
			out = append(out, x)
		}
	}
	return out
}

// estimate2D fits the extremum of kind among samples of rounds ≤ maxRound.
func estimate2D(s *Spec, all []Sample, maxRound int, kind string) (est2, bool) {
	var ok []Sample
	for _, d := range all {
		if d.Round <= maxRound {
			ok = append(ok, d)
		}
	}
	if len(ok) < 9 {
		return est2{}, false
	}
	sign := 1.0
	if kind == "maximum" {
		sign = -1
	}
	best := 0
	for i := range ok {
		if sign*ok[i].Energy < sign*ok[best].Energy {
			best = i
		}
	}
	b := ok[best]
	var est est2
	est.x = [2]float64{b.Values[0], b.Values[1]}
	est.e = b.Energy
	for d := range 2 {
		v := distinct(ok, d)
		i := sort.SearchFloat64s(v, b.Values[d]-1e-12)
		switch {
		case i == 0:
			est.edge[d] = -1
			est.gap[d] = v[1] - v[0]
		case i == len(v)-1:
			est.edge[d] = 1
			est.gap[d] = v[i] - v[i-1]
		default:
			est.gap[d] = math.Min(v[i]-v[i-1], v[i+1]-v[i])
		}
	}
	if est.edge != [2]int{} {
		return est, true
	}
	// Quadratic surface through the nine nearest samples (distances scaled
	// by the local spacings).
	idx := make([]int, len(ok))
	for i := range idx {
		idx[i] = i
	}
	dist := func(i int) float64 {
		dx := (ok[i].Values[0] - b.Values[0]) / est.gap[0]
		dy := (ok[i].Values[1] - b.Values[1]) / est.gap[1]
		return dx*dx + dy*dy
	}
	sort.SliceStable(idx, func(p, q int) bool { return dist(idx[p]) < dist(idx[q]) })
	idx = idx[:9]
	A := mat.NewDense(9, 6, nil)
	rhs := mat.NewVecDense(9, nil)
	for r, i := range idx {
		u := (ok[i].Values[0] - b.Values[0]) / est.gap[0]
		w := (ok[i].Values[1] - b.Values[1]) / est.gap[1]
		for c, v := range []float64{1, u, w, u * u, u * w, w * w} {
			A.Set(r, c, v)
		}
		rhs.SetVec(r, ok[i].Energy-b.Energy)
	}
	var c mat.VecDense
	if err := c.SolveVec(A, rhs); err != nil {
		return est, true
	}
	h := mat.NewDense(2, 2, []float64{2 * c.AtVec(3), c.AtVec(4), c.AtVec(4), 2 * c.AtVec(5)})
	g := mat.NewVecDense(2, []float64{-c.AtVec(1), -c.AtVec(2)})
	var t mat.VecDense
	if err := t.SolveVec(h, g); err != nil {
		return est, true
	}
	u := math.Max(-1, math.Min(1, t.AtVec(0)))
	w := math.Max(-1, math.Min(1, t.AtVec(1)))
	est.x[0] = b.Values[0] + u*est.gap[0]
	est.x[1] = b.Values[1] + w*est.gap[1]
	est.e = b.Energy + c.AtVec(0) + c.AtVec(1)*u + c.AtVec(2)*w + c.AtVec(3)*u*u + c.AtVec(4)*u*w + c.AtVec(5)*w*w
	return est, true
}
