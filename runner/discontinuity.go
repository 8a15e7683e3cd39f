package runner

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"wellscan/parsers"
)

// Suspect is a done point whose energy or ⟨S²⟩ breaks with its
// neighbours along a scan line: a sign that the continuation guess
// carried the SCF onto another state (or that the point is wrong).
type Suspect struct {
	Key    string `json:"key"`
	Reason string `json:"reason"`
}

// DiscontinuityOptions tune [FindDiscontinuities]; zero fields take the
// defaults.
type DiscontinuityOptions struct {
	// EnergyTol (hartree) is the smallest deviation from the smooth curve
	// through the four nearest neighbours that is reported. Default 1e-3.
	EnergyTol float64
	// S2Tol is the largest change of ⟨S²⟩ between neighbours that is not
	// reported. Default 0.1.
	S2Tol float64
}

// FindDiscontinuities walks the done points of each scan line (points
// whose other coordinates agree) in coordinate order. It reports a point
// whose energy differs from the cubic through its two neighbours on each
// side by more than max(EnergyTol, 20 × the line's lower-quartile deviation) —
// the quartile keeps a coarse, steep but smooth curve quiet — and a point
// whose ⟨S²⟩ differs from its predecessor's by more than S2Tol. The
// result is sorted by key, one entry per key.
func FindDiscontinuities(recs []PointRecord, o DiscontinuityOptions) []Suspect {
	if o.EnergyTol <= 0 {
		o.EnergyTol = 1e-3
	}
	if o.S2Tol <= 0 {
		o.S2Tol = 0.1
	}
	var done []PointRecord
	for _, r := range recs {
		if r.State == Done && r.Energy != nil && len(r.Values) > 0 {
			done = append(done, r)
		}
	}
	found := map[string]string{}
	add := func(k, why string) {
		if _, ok := found[k]; !ok {
			found[k] = why
		}
	}
	if len(done) == 0 {
		return nil
	}
	for d := range len(done[0].Values) {
		for _, line := range scanLines(done, d) {
			for i := 1; i < len(line); i++ {
				a, b := line[i-1].SSquared, line[i].SSquared
				if a != nil && b != nil && math.Abs(*b-*a) > o.S2Tol {
					add(line[i].Key, fmt.Sprintf("⟨S²⟩ jumps from %.3f at %s to %.3f", *a, line[i-1].Key, *b))
				}
			}
			// Flag the worst point, drop it and look again, so that one bad
			// point does not drag its neighbours into the report.
			for len(line) >= 5 {
				worst, wdev, tol := energyOutlier(line, d, o.EnergyTol)
				if worst < 0 || math.Abs(wdev) <= tol {
					break
				}
				add(line[worst].Key, fmt.Sprintf("energy is %.2g hartree off the smooth curve through its neighbours", wdev))
				line = append(line[:worst:worst], line[worst+1:]...)
			}
		}
	}
	out := make([]Suspect, 0, len(found))
	for k, why := range found {
		out = append(out, Suspect{Key: k, Reason: why})
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Key < out[j].Key })
	return out
}

// energyOutlier returns the interior point of line (sorted along d) that
// deviates most from the cubic through its two neighbours on each side,
// its deviation, and the tolerance max(minTol, 20 × the lower-quartile deviation).
func energyOutlier(line []PointRecord, d int, minTol float64) (int, float64, float64) {
	worst, wdev := -1, 0.0
	var abs []float64
	for i := 2; i < len(line)-2; i++ {
		var xs, ys []float64
		for _, j := range []int{i - 2, i - 1, i + 1, i + 2} {
			xs = append(xs, line[j].Values[d])
			ys = append(ys, *line[j].Energy)
		}
		dev := *line[i].Energy - lagrange(xs, ys, line[i].Values[d])
		abs = append(abs, math.Abs(dev))
		if worst < 0 || math.Abs(dev) > math.Abs(wdev) {
			worst, wdev = i, dev
		}
	}
	sort.Float64s(abs)
	tol := minTol
	if len(abs) >= 3 {
		tol = math.Max(tol, 20*abs[len(abs)/4])
	}
	return worst, wdev, tol
}

// lagrange evaluates the interpolating polynomial through (xs, ys) at x.
func lagrange(xs, ys []float64, x float64) float64 {
	var s float64
	for i := range xs {
		l := 1.0
		for j := range xs {
			if j != i {
				l *= (x - xs[j]) / (xs[i] - xs[j])
			}
		}
		s += l * ys[i]
	}
	return s
}

// Jump is a done point that breaks away from both of its neighbours along
// one scan line. Energies are hartree.
type Jump struct {
	Key string
	// Coordinate is the index (in [[scan]] order) of the line's coordinate.
	Coordinate int
	Prev, Next string // the neighbours' keys
	Energy     float64
	PrevEnergy float64
	NextEnergy float64
	// Curve is the energy, interpolated through the neighbours, that comes
	// closest to Energy: the point is off the curve by Energy − Curve.
	Curve float64
}

// FindJumps applies the energy-jump rule to the done points of recs with
// threshold maxJump (hartree; ≤ 0: off). Along each scan line (points
// whose other coordinates agree, in coordinate order) an interior point is
// a jump when
//
//   - its energy lies more than maxJump above both neighbours, or more
//     than maxJump below both ([parsers.Plausibility.CheckNeighbours]), and
//   - every low-order polynomial through its neighbours (the cubic through
//     two on each side, the quadratics through two on one side and one on
//     the other, whichever exist) misses it by more than maxJump and by
//     more than the curve's own bending at its neighbours ([ownBend]: a
//     coarse grid on a smooth curve bends as much there), and
//   - the curve bends the other way at its neighbours than at the point
//     (second differences of opposite sign), as a spike makes it do; a
//     coarsely sampled well or barrier bends the same way at the point
//     and at least one neighbour.
//
// The first condition alone would flag a real minimum on a coarse grid
// (the curve rises on both sides); the other two ask whether the curve
// through the neighbours explains the point, which it does at a minimum.
// A steep repulsive wall never meets the first condition: it falls
// monotonically. A point with only one neighbour on each
// side and none further out cannot be told from an extremum and is never
// flagged; nor are the ends of a line, nor the lowest done point of the
// whole scan.
//
// Within a line the worst jump is taken out first and the line looked at
// again, so a spike does not drag its neighbours in. The result is
// sorted by key, one entry per key; the same records always give the
// same result.
func FindJumps(recs []PointRecord, maxJump float64) []Jump {
	return FindJumpsPeriodic(recs, maxJump, nil)
}

// FindJumpsPeriodic is [FindJumps] for scans with periodic coordinates:
// periods[d] > 0 (radian) marks coordinate d as a torsion whose grid
// covers its whole period, so that its first and last points are
// neighbours across the seam. Each such line is judged twice, as written
// and turned by half a period, so every point is judged between two
// neighbours.
func FindJumpsPeriodic(recs []PointRecord, maxJump float64, periods []float64) []Jump {
	if !(maxJump > 0) {
		return nil
	}
	plaus := parsers.Plausibility{MaxJump: maxJump, AllowPositive: true}
	var done []PointRecord
	for _, r := range recs {
		if r.State == Done && r.Energy != nil && len(r.Values) > 0 {
			done = append(done, r)
		}
	}
	if len(done) == 0 {
		return nil
	}
	// The lowest done point of the whole scan is never a jump: a point
	// that lowers the scan's global minimum is the minimum the scan is
	// looking for (or a lower state, which a variational method may
	// legitimately find), and failing it sends refinement elsewhere.
	lowest := done[0].Key
	low := *done[0].Energy
	for _, r := range done[1:] {
		if *r.Energy < low {
			lowest, low = r.Key, *r.Energy
		}
	}
	found := map[string]Jump{}
	dim := len(done[0].Values)
	for d := range dim {
		lines := scanLines(done, d)
		if d < len(periods) && periods[d] > 0 {
			lines = append(lines, turnedLines(lines, d, periods[d])...)
		}
		for _, line := range lines {
			for len(line) >= 4 {
				worst, wj, wdev := -1, Jump{}, 0.0
				for i := 1; i+1 < len(line); i++ {
					if line[i].Key == lowest {
						continue
					}
					e, ep, en := *line[i].Energy, *line[i-1].Energy, *line[i+1].Energy
					if plaus.CheckNeighbours(ep, e, en) == nil {
						continue
					}
					curve, ok := closestCurve(line, i, d)
					if !ok || math.Abs(e-curve) <= math.Max(maxJump, ownBend(line, i, d)) || smoothExtremum(line, i, d) {
						continue
					}
					if dev := math.Abs(e - curve); worst < 0 || dev > wdev {
						worst, wdev = i, dev
						wj = Jump{Key: line[i].Key, Coordinate: d, Prev: line[i-1].Key, Next: line[i+1].Key,
							Energy: e, PrevEnergy: ep, NextEnergy: en, Curve: curve}
					}
				}
				if worst < 0 {
					break
				}
				if _, ok := found[wj.Key]; !ok {
					found[wj.Key] = wj
				}
				line = append(line[:worst:worst], line[worst+1:]...)
			}
		}
	}
	out := make([]Jump, 0, len(found))
	for _, j := range found {
		out = append(out, j)
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Key < out[j].Key })
	return out
}

// scanLines groups records (all of the same dimension) into the lines
// along coordinate d, each sorted along d; lines come in a fixed order.
func scanLines(recs []PointRecord, d int) [][]PointRecord {
	dim := len(recs[0].Values)
	lines := map[string][]PointRecord{}
	for _, r := range recs {
		if len(r.Values) != dim {
			continue
		}
		var other []string
		for k, v := range r.Values {
			if k != d {
				other = append(other, strconv.FormatFloat(v, 'g', 9, 64))
			}
		}
		id := strings.Join(other, ",")
		lines[id] = append(lines[id], r)
	}
	ids := make([]string, 0, len(lines))
	for id := range lines {
		ids = append(ids, id)
	}
	sort.Strings(ids)
	out := make([][]PointRecord, 0, len(ids))
	for _, id := range ids {
		line := lines[id]
		sort.Slice(line, func(i, j int) bool { return line[i].Values[d] < line[j].Values[d] })
		out = append(out, line)
	}
	return out
}

// ownBend is the curve's own scale at line[i], measured without the
// point: the largest distance of a neighbour from the chord through its
// two neighbours on the same side, or through the neighbours across the
// gap at i (the stencils {i−3, i−2, i−1}, {i−2, i−1, i+1}, {i−1, i+1, i+2}
// and {i+1, i+2, i+3}, whichever exist). A smooth curve sampled coarsely
// bends by about as much at its neighbours as at the point, so a point
// that misses the curve through its neighbours by less than this is not
// told apart from the curve's own shape; a spike on a well-sampled curve
// misses it by far more.
func ownBend(line []PointRecord, i, d int) float64 {
	b := 0.0
	for _, st := range [][3]int{{i - 3, i - 2, i - 1}, {i - 2, i - 1, i + 1}, {i - 1, i + 1, i + 2}, {i + 1, i + 2, i + 3}} {
		if st[0] < 0 || st[2] >= len(line) {
			continue
		}
		x0, x1, x2 := line[st[0]].Values[d], line[st[1]].Values[d], line[st[2]].Values[d]
		e0, e1, e2 := *line[st[0]].Energy, *line[st[1]].Energy, *line[st[2]].Energy
		chord := e0 + (e2-e0)*(x1-x0)/(x2-x0)
		b = math.Max(b, math.Abs(e1-chord))
	}
	return b
}

// smoothExtremum reports whether line[i] (above or below both
// neighbours) sits where the sampled curve bends the same way at i and at
// one of its neighbours (one that has two neighbours of its own): a well
// or a barrier the grid resolves coarsely. A spike bends the curve the
// other way at both neighbours: a point pushed down by s makes the second
// difference at i−1 and i+1 smaller by s, negative once s exceeds the
// curve's own second difference there (for a well, about k·h² at step h).
// One neighbour is enough to explain the point because on a very coarse
// grid the far side of a well is already past its inflection (for a
// Morse well, ln 2/a beyond the minimum) and bends the other way there.
// So a downward jump smaller than the curve's change over a step is not
// told apart from a minimum — it cannot be, from the energies alone.
func smoothExtremum(line []PointRecord, i, d int) bool {
	bend := func(j int) float64 {
		x0, x1, x2 := line[j-1].Values[d], line[j].Values[d], line[j+1].Values[d]
		e0, e1, e2 := *line[j-1].Energy, *line[j].Energy, *line[j+1].Energy
		return (e2-e1)/(x2-x1) - (e1-e0)/(x1-x0)
	}
	b := bend(i)
	for _, j := range []int{i - 1, i + 1} {
		if j >= 1 && j+1 < len(line) && bend(j)*b > 0 {
			return true
		}
	}
	return false
}

// closestCurve interpolates the energy at line[i] from its neighbours
// with every stencil that exists — {i−2, i−1, i+1, i+2} (cubic),
// {i−2, i−1, i+1} and {i−1, i+1, i+2} (quadratics) — and returns the value
// nearest the point's own energy; ok is false when no stencil exists.
func closestCurve(line []PointRecord, i, d int) (float64, bool) {
	e := *line[i].Energy
	best, ok := 0.0, false
	for _, st := range [][]int{{i - 2, i - 1, i + 1, i + 2}, {i - 2, i - 1, i + 1}, {i - 1, i + 1, i + 2}} {
		if st[0] < 0 || st[len(st)-1] >= len(line) {
			continue
		}
		var xs, ys []float64
		for _, j := range st {
			xs = append(xs, line[j].Values[d])
			ys = append(ys, *line[j].Energy)
		}
		v := lagrange(xs, ys, line[i].Values[d])
		if !ok || math.Abs(e-v) < math.Abs(e-best) {
			best, ok = v, true
		}
	}
	return best, ok
}

// turnedLines returns copies of the lines of a periodic coordinate d with
// the values in the upper half of the period moved down by one period and
// re-sorted: the seam of the copy lies opposite the original's, so points
// at the ends of one are interior in the other. Keys are kept.
func turnedLines(lines [][]PointRecord, d int, period float64) [][]PointRecord {
	var out [][]PointRecord
	for _, line := range lines {
		c := make([]PointRecord, len(line))
		for i, r := range line {
			v := append([]float64(nil), r.Values...)
			if v[d] >= period/2 {
				v[d] -= period
			}
			r.Values = v
			c[i] = r
		}
		sort.SliceStable(c, func(a, b int) bool { return c[a].Values[d] < c[b].Values[d] })
		out = append(out, c)
	}
	return out
}
