package planner

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
)

// Point is one grid point: its key and its coordinate values.
//
// Key is the canonical text of the values in display units at each
// coordinate's fixed precision ("r=1.12800", "r=0.95000,theta=104.500"), so
// planning the same point twice yields the same key. Values are the
// internal values (bohr, radians) of exactly the rounded display values, in
// [[scan]] order.
type Point struct {
	Key    string
	Values []float64
}

// Length keys carry 5 decimals (10 fm in Å) and angle keys 3 (0.001°):
// finer than any target step wellscan accepts (common practice for
// potential-curve grids is 1e-3 Å / 0.1° or coarser).
const (
	lengthDigits = 5
	angleDigits  = 3
)

// PointAt makes the point with display values x (the spec's length unit,
// degrees), rounding each to its key precision.
func (s *Spec) PointAt(x []float64) Point {
	var b strings.Builder
	vals := make([]float64, len(x))
	for i, c := range s.coords {
		r := c.canonicalDisplay(x[i])
		if i > 0 {
			b.WriteByte(',')
		}
		b.WriteString(c.Name)
		b.WriteByte('=')
		b.WriteString(strconv.FormatFloat(r, 'f', c.Digits, 64))
		vals[i] = c.Internal(r, s.units)
	}
	return Point{Key: b.String(), Values: vals}
}

// DisplayValues converts a point's values to display units; a periodic
// coordinate is unwrapped into the window the spec's grid is written in
// (Coordinate.Unwrap).
func (s *Spec) DisplayValues(p Point) []float64 {
	out := make([]float64, len(p.Values))
	for i, c := range s.coords {
		out[i] = roundTo(c.Unwrap(p.Values[i], s.units), c.Digits)
	}
	return out
}

// ParseKey rebuilds the point a key stands for; the key must be
// canonical (as PointAt writes it).
func (s *Spec) ParseKey(key string) (Point, error) {
	if s.ff != nil {
		return s.ffParseKey(key)
	}
	p, err := s.CanonicalPoint(key)
	if err != nil {
		return Point{}, err
	}
	if p.Key != key {
		return Point{}, fmt.Errorf("planner: key %q is not canonical (expected %q)", key, p.Key)
	}
	return p, nil
}

// CanonicalPoint reads a key that may not be canonical — written before a
// torsion's values were kept modulo its period ("phi=-60.000"), or with
// more digits — and returns the canonical point it stands for
// ("phi=300.000").
func (s *Spec) CanonicalPoint(key string) (Point, error) {
	if s.ff != nil {
		return s.ffParseKey(key)
	}
	parts := strings.Split(key, ",")
	if len(parts) != len(s.coords) {
		return Point{}, fmt.Errorf("planner: key %q: expected %d coordinate values", key, len(s.coords))
	}
	x := make([]float64, len(parts))
	for i, p := range parts {
		name, val, ok := strings.Cut(p, "=")
		if !ok || name != s.coords[i].Name {
			return Point{}, fmt.Errorf("planner: key %q: expected %q at position %d", key, s.coords[i].Name+"=…", i+1)
		}
		v, err := strconv.ParseFloat(val, 64)
		if err != nil {
			return Point{}, fmt.Errorf("planner: key %q: %w", key, err)
		}
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return Point{}, fmt.Errorf("planner: key %q: %s is not a finite number", key, val)
		}
		x[i] = v
	}
	return s.PointAt(x), nil
}

func roundTo(x float64, digits int) float64 {
	f := math.Pow(10, float64(digits))
	r := math.Round(x*f) / f
	if r == 0 {
		return 0 // no "-0.00000" keys
	}
	return r
}

// InitialPoints is round 1: the grid of every coordinate (a product grid
// for two coordinates), sorted by key values.
// A torsion's values that are equivalent modulo its period give one
// point.
func (s *Spec) InitialPoints() []Point {
	if s.ff != nil {
		return s.ffInitialPoints()
	}
	var pts []Point
	seen := map[string]bool{}
	add := func(p Point) {
		if !seen[p.Key] {
			seen[p.Key] = true
			pts = append(pts, p)
		}
	}
	switch len(s.axes) {
	case 1:
		for _, x := range s.axes[0] {
			add(s.PointAt([]float64{x}))
		}
	case 2:
		for _, x := range s.axes[0] {
			for _, y := range s.axes[1] {
				add(s.PointAt([]float64{x, y}))
			}
		}
	}
	return pts
}

// Axis is the initial grid of coordinate i in display units.
func (s *Spec) Axis(i int) []float64 { return append([]float64(nil), s.axes[i]...) }

// axis builds the grid of one [[scan]] block in display units, or an
// error message for key.
func axisValues(sc ScanSpec, digits int) ([]float64, string, string) {
	var xs []float64
	if len(sc.Values) > 0 {
		if sc.From != nil || sc.To != nil || sc.Step != nil || sc.Count != nil || sc.Growth != nil {
			return nil, "values", "give either values or from/to with step or count, not both"
		}
		for _, v := range sc.Values {
			xs = append(xs, roundTo(v, digits))
		}
	} else {
		if sc.From == nil || sc.To == nil {
			if sc.From == nil {
				return nil, "from", "missing: give from and to with step or count, or a list of values"
			}
			return nil, "to", "missing: give from and to with step or count, or a list of values"
		}
		lo, hi := *sc.From, *sc.To
		if !(hi > lo) {
			if hi == lo {
				return nil, "to", fmt.Sprintf("empty range: from and to are both %g", lo)
			}
			return nil, "to", fmt.Sprintf("inverted range: to = %g is below from = %g (write the smaller value in from)", hi, lo)
		}
		switch {
		case sc.Step != nil && sc.Count != nil:
			return nil, "count", "give step or count, not both"
		case sc.Step != nil:
			st := *sc.Step
			if !(st > 0) {
				return nil, "step", fmt.Sprintf("must be positive, got %g", st)
			}
			if st > hi-lo {
				return nil, "step", fmt.Sprintf("step %g is larger than the range %g–%g", st, lo, hi)
			}
			g := 1.0
			if sc.Growth != nil {
				g = *sc.Growth
				if !(g >= 1) || g > 10 {
					return nil, "growth", fmt.Sprintf("must be between 1 and 10, got %g", g)
				}
			}
			x := lo
			for x <= hi+1e-9*st && len(xs) <= 10000 {
				xs = append(xs, roundTo(x, digits))
				x += st
				st *= g
			}
			if len(xs) > 10000 {
				return nil, "step", "more than 10000 grid values"
			}
		case sc.Count != nil:
			n := *sc.Count
			if n < 2 || n > 10000 {
				return nil, "count", fmt.Sprintf("must be between 2 and 10000, got %d", n)
			}
			if sc.Growth != nil {
				return nil, "growth", "works with step, not count"
			}
			for i := range n {
				xs = append(xs, roundTo(lo+(hi-lo)*float64(i)/float64(n-1), digits))
			}
		default:
			return nil, "step", "missing: give step or count with from and to"
		}
	}
	sort.Float64s(xs)
	out := xs[:0]
	for i, x := range xs {
		if i > 0 && x == out[len(out)-1] {
			if len(sc.Values) > 0 {
				return nil, "values", fmt.Sprintf("value %g appears twice (at the key precision of %d decimals)", x, digits)
			}
			return nil, "step", fmt.Sprintf("step is below the key precision of %d decimals", digits)
		}
		out = append(out, x)
	}
	return out, "", ""
}

// minSpacing is the smallest gap between consecutive values of xs.
func minSpacing(xs []float64) float64 {
	m := math.Inf(1)
	for i := 1; i < len(xs); i++ {
		m = math.Min(m, xs[i]-xs[i-1])
	}
	return m
}
