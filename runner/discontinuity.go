package runner

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
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
	dim := len(done[0].Values)
	for d := range dim {
		lines := map[string][]PointRecord{}
		for _, r := range done {
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
		for _, line := range lines {
			sort.Slice(line, func(i, j int) bool { return line[i].Values[d] < line[j].Values[d] })
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
