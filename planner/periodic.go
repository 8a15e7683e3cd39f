package planner

import (
	"fmt"
	"math"
	"sort"
)

// Periodic coordinates.
//
// A torsion is periodic in 360°, or in a shorter period when the rotating
// group is a symmetric rotor (scan.period). Its point values are kept
// canonical, in [0, period), so that equivalent geometries (−60° and 300°,
// or 0° and 120° for a methyl group) share one key and are computed once.
// A grid that covers the whole period wraps: its first and last points are
// neighbours. For people, values are unwrapped into the window that starts
// at the spec's lowest grid value (Coordinate.Origin), so a scan written
// from −180 to 180 is shown from −180 to 180.

// Periodic reports whether c is periodic (a torsion).
func (c Coordinate) Periodic() bool { return c.Period > 0 }

// PeriodDegrees is the period in degrees, 0 if c is not periodic.
func (c Coordinate) PeriodDegrees() float64 { return c.Period * 180 / math.Pi }

// keyQuantum is the smallest step of a key value in display units.
func (c Coordinate) keyQuantum() float64 { return math.Pow(10, -float64(c.Digits)) }

// canonicalDisplay maps a display value to its key value: rounded to the
// key precision and, for a periodic coordinate, into [0, period).
func (c Coordinate) canonicalDisplay(x float64) float64 {
	if !c.Periodic() {
		return roundTo(x, c.Digits)
	}
	p := c.PeriodDegrees()
	r := roundTo(math.Mod(x, p), c.Digits)
	if r < 0 {
		r = roundTo(r+p, c.Digits)
	}
	if r > p-c.keyQuantum()/2 {
		r = 0
	}
	return r
}

// Canonical maps an internal value (radians) of a periodic coordinate into
// [0, Period); other coordinates are returned unchanged.
func (c Coordinate) Canonical(v float64) float64 {
	if !c.Periodic() {
		return v
	}
	v = math.Mod(v, c.Period)
	if v < 0 {
		v += c.Period
	}
	if v >= c.Period {
		v = 0
	}
	return v
}

// Unwrap maps an internal value (radians) of a periodic coordinate to
// display units (degrees) inside the window [Origin, Origin+period) the
// spec's grid is written in. Other coordinates are only converted.
func (c Coordinate) Unwrap(v float64, u LengthUnit) float64 {
	x := c.Display(v, u)
	if !c.Periodic() {
		return x
	}
	p := c.PeriodDegrees()
	x = c.Origin + math.Mod(x-c.Origin, p)
	if x < c.Origin {
		x += p
	}
	return roundTo(x, c.Digits+3)
}

// Separation is the distance between two internal values of c: |a − b|,
// or for a periodic coordinate the shorter way round.
func (c Coordinate) Separation(a, b float64) float64 {
	d := math.Abs(a - b)
	if c.Periodic() {
		d = math.Mod(d, c.Period)
		d = math.Min(d, c.Period-d)
	}
	return d
}

// coversPeriod reports whether the canonical values xs (display units)
// cover the whole period p: the largest gap between neighbours on the
// circle is at most twice the largest of the others. A partial arc has one
// gap much larger than its steps.
func coversPeriod(xs []float64, p float64) bool {
	if len(xs) < 3 {
		return false
	}
	v := append([]float64(nil), xs...)
	sort.Float64s(v)
	gaps := make([]float64, len(v))
	for i := range v {
		next := v[(i+1)%len(v)]
		if i == len(v)-1 {
			next += p
		}
		gaps[i] = next - v[i]
	}
	sort.Float64s(gaps)
	return gaps[len(gaps)-1] <= 2*gaps[len(gaps)-2]*(1+1e-9)
}

// arcStart is where the arc of a partial periodic scan begins: the value
// just after the largest gap on the circle (internal units, canonical).
func arcStart(xs []float64, period float64) float64 {
	v := append([]float64(nil), xs...)
	sort.Float64s(v)
	best, start := -1.0, v[0]
	for i := range v {
		next := v[(i+1)%len(v)]
		if i == len(v)-1 {
			next += period
		}
		if g := next - v[i]; g > best {
			best, start = g, v[(i+1)%len(v)]
		}
	}
	return start
}

// checkPeriodSymmetry verifies that rotating each member's moving atoms by
// the declared period about the torsion axis maps them onto atoms of the
// same element (within tol bohr): only then are the geometries at τ and
// τ + period the same molecule and their energies equal.
func (s *Spec) checkPeriodSymmetry(c Coordinate, key string) error {
	const tol = 0.1 * AngstromInBohr // lenient: reference geometries are often drawn by hand
	for mi, m := range c.Members {
		mol := s.mol.Clone()
		j, k := mol.Atoms[m[1]].Pos, mol.Atoms[m[2]].Pos
		axis := sub(k, j)
		if norm(axis) == 0 {
			return s.errAt(key, "torsion %s: axis atoms %d and %d coincide", atomList(m), m[1]+1, m[2]+1)
		}
		orig := s.mol.Clone()
		rotate(&mol, c.Moving[mi], k, unit(axis), c.Period)
		for _, a := range c.Moving[mi] {
			best := math.Inf(1)
			for _, b := range c.Moving[mi] {
				if orig.Atoms[b].Element.Z != mol.Atoms[a].Element.Z {
					continue
				}
				best = math.Min(best, Distance3(mol.Atoms[a].Pos, orig.Atoms[b].Pos))
			}
			if best > tol {
				return s.errAt(key, "period %g° is not a symmetry of the group that torsion %s (member %d) rotates: turned by %g°, atom %d (%s) lands %.2f Å from the nearest %s atom of the group; give the period of this rotor (360 when it has no rotational symmetry)",
					c.PeriodDegrees(), atomList(m), mi+1, c.PeriodDegrees(), a+1, mol.Atoms[a].Element.Symbol, best*BohrInAngstrom, mol.Atoms[a].Element.Symbol)
			}
		}
	}
	return nil
}

// resolvePeriod sets c.Period from scan.period (degrees) for a torsion and
// checks it; a period on another coordinate is an error.
func (s *Spec) resolvePeriod(c *Coordinate, sc ScanSpec, key string) error {
	if c.Kind != KindTorsion {
		if sc.Period != nil {
			return s.errAt(key, "only a torsion is periodic; %s is a %s", c.Name, c.Kind)
		}
		return nil
	}
	p := 360.0
	if sc.Period != nil {
		p = *sc.Period
		if math.IsNaN(p) || math.IsInf(p, 0) || !(p > 0) || p > 360 {
			return s.errAt(key, "must be a period in degrees between 0 and 360 that divides 360 (e.g. 120 for a methyl group), got %g", p)
		}
		n := math.Round(360 / p)
		if n < 1 || n > 12 || math.Abs(n*p-360) > 1e-6 {
			return s.errAt(key, "%g° does not divide 360° into whole parts; a rotor's period is 360/n (180, 120, 90, 72, 60 …)", p)
		}
		p = 360 / n
	}
	c.Period = p * math.Pi / 180
	if sc.Period != nil && p < 360 {
		return s.checkPeriodSymmetry(*c, key)
	}
	return nil
}

// finishPeriodicAxis canonicalises the grid of a periodic coordinate:
// values equivalent modulo the period collapse into one (with a note when
// the written range is longer than the period) and FullPeriod and Origin
// are set.
func (s *Spec) finishPeriodicAxis(c *Coordinate, ax []float64, name string) {
	if !c.Periodic() || len(ax) == 0 {
		return
	}
	c.Origin = ax[0]
	seen := map[float64]bool{}
	var canon []float64
	for _, x := range ax {
		k := c.canonicalDisplay(x)
		if !seen[k] {
			seen[k] = true
			canon = append(canon, k)
		}
	}
	p := c.PeriodDegrees()
	if ax[len(ax)-1]-ax[0] > p+c.keyQuantum()/2 {
		s.notes = append(s.notes, fmt.Sprintf("scan %s: the range %g–%g° is longer than the period %g°; it is folded into one period (%d distinct points of %d written)",
			name, ax[0], ax[len(ax)-1], p, len(canon), len(ax)))
	}
	c.FullPeriod = coversPeriod(canon, p)
}

// Notes are remarks on the spec that are not errors (a range folded into
// one period), for plan and run to print.
func (s *Spec) Notes() []string { return append([]string(nil), s.notes...) }
