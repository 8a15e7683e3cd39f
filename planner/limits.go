package planner

import (
	"fmt"
	"math"
)

// Limits on what a spec may ask for. Each one is far above any real scan
// and stops a mistaken or hostile spec before it costs memory or time.
const (
	// MaxAtoms is the largest molecule a spec may hold. Connectivity is
	// found by comparing every pair of atoms, so time grows with the square
	// of the count; 5000 atoms take well under a second, far beyond what
	// any electronic-structure point of a scan handles.
	MaxAtoms = 5000
	// MaxCoordinate is the largest absolute Cartesian coordinate (Å). A
	// molecule 10 000 Å across is a typing mistake (an exponent too many),
	// and beyond about 1e15 the float64 arithmetic that sets a scanned
	// coordinate loses every digit.
	MaxCoordinate = 1e4
	// MaxGridPoints bounds the initial grid (the product of the axes),
	// checked before any point is built: 10⁵ points of even the cheapest
	// engine is days of work and megabytes per point on disk.
	MaxGridPoints = 100000
	// MaxNegativeCharge bounds the extra electrons: a charge below −10
	// is a typing mistake for any molecule a scan treats.
	MaxNegativeCharge = 10
)

// finite reports whether x is neither NaN nor infinite.
func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// checkAtoms refuses a molecule with too many atoms or a coordinate that
// is not finite or absurdly large; key names the geometry's source and
// line(i) gives the text line of atom i, 0 when unknown.
func (s *Spec) checkAtoms(key string, coords [][3]float64) error {
	if len(coords) > MaxAtoms {
		return s.errAt(key, "%d atoms, more than the %d wellscan accepts in one molecule", len(coords), MaxAtoms)
	}
	axes := "xyz"
	for i, c := range coords {
		for k, x := range c {
			if !finite(x) {
				return s.errAt(key, "atom %d: %c coordinate %g is not a finite number", i+1, axes[k], x)
			}
			if a := s.units.ToBohr(math.Abs(x)) * BohrInAngstrom; a > MaxCoordinate {
				return s.errAt(key, "atom %d: %c coordinate %g %s is more than %g Å from the origin; check the exponent", i+1, axes[k], x, s.units, MaxCoordinate)
			}
		}
	}
	return nil
}

// checkCharge refuses charges that leave no electrons or add absurdly
// many; nuclear is the sum of the atomic numbers.
func (s *Spec) checkCharge(charge, nuclear int) error {
	if charge < -MaxNegativeCharge || charge >= nuclear {
		return s.errAt("molecule.charge", "charge %+d is outside the range wellscan accepts for this molecule, %d to %+d (the nuclei carry %+d; at least one electron must remain)",
			charge, -MaxNegativeCharge, nuclear-1, nuclear)
	}
	return nil
}

// checkScanNumbers refuses NaN and infinite numbers in a [[scan]] block,
// naming the key that holds them.
func checkScanNumbers(sc ScanSpec) (string, string) {
	for _, f := range []struct {
		key string
		v   *float64
	}{{"from", sc.From}, {"to", sc.To}, {"step", sc.Step}, {"growth", sc.Growth}, {"period", sc.Period}} {
		if f.v != nil && !finite(*f.v) {
			return f.key, fmt.Sprintf("must be a finite number, got %g", *f.v)
		}
	}
	for i, v := range sc.Values {
		if !finite(v) {
			return "values", fmt.Sprintf("value %d is %g; every value must be a finite number", i+1, v)
		}
	}
	return "", ""
}

// checkModelNumbers refuses NaN and infinite constants in the model
// engine's terms and offset.
func (s *Spec) checkModelNumbers() error {
	m := s.Engine.Model
	if !finite(m.Offset) {
		return s.errAt("engine.model.offset", "must be a finite energy in hartree, got %g", m.Offset)
	}
	for i, t := range m.Terms {
		for _, f := range []struct {
			name string
			v    float64
		}{{"depth", t.Depth}, {"center", t.Center}, {"width", t.Width}, {"sigma", t.Sigma}, {"force", t.Force}, {"tilt", t.Tilt}} {
			if !finite(f.v) {
				return s.errAt(fmt.Sprintf("engine.model.term[%d].%s", i+1, f.name), "must be a finite number, got %g", f.v)
			}
		}
	}
	return nil
}
