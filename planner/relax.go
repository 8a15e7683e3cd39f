package planner

import (
	"fmt"
	"math"
	"path/filepath"
)

// RelaxSpec is the [relax] table: settings of relaxed scans (a [[scan]]
// block with relax = true). At a relaxed point every scanned coordinate
// (each tied member) is held at the point's value and every other degree
// of freedom is optimised; Hold lists further coordinates to keep at
// their values in the spec's geometry.
type RelaxSpec struct {
	// Hold lists extra coordinates held fixed, by 1-based atoms: two
	// atoms a distance, three a bend, four a torsion.
	Hold [][]int `toml:"hold"`
	// Tie lists groups of coordinates (same atom-list forms as Hold, all
	// of one kind) that stay equal to each other while they relax, for
	// example [[[1, 2], [1, 3]]] for two bonds kept symmetric.
	Tie [][][]int `toml:"tie"`
	// MaxSteps bounds the gradients per point (0: 100).
	MaxSteps int `toml:"max_steps"`
	// Tighter divides every convergence threshold of the optimiser
	// (0: 1, the defaults).
	Tighter float64 `toml:"tighter"`
}

// HeldCoordinate is one coordinate a relaxed point keeps fixed: Kind and
// 0-based Atoms, and Value (bohr or radians), the value to hold, or NaN
// for "the value in the point's geometry".
type HeldCoordinate struct {
	Kind  CoordKind
	Atoms []int
	Label string // for messages, e.g. "scan r (member 1)" or "[relax] hold 2"
	Value float64
}

// Relaxed reports whether the spec's points are relaxed (every other
// coordinate optimised) rather than rigid.
func (s *Spec) Relaxed() bool {
	if s.single {
		return true
	}
	for _, sc := range s.Scan {
		if sc.Relax != nil && *sc.Relax {
			return true
		}
	}
	return false
}

// ScanMode is "relaxed" or "rigid", the word every screen, export and
// report shows.
func (s *Spec) ScanMode() string {
	if s.Relaxed() {
		return "relaxed"
	}
	return "rigid"
}

// Held lists the coordinates a relaxed point holds: every member of every
// scanned coordinate (Value NaN: the point's own value, which its
// geometry has), then [relax] hold in the spec's order (Value: measured
// in the spec's geometry). Nil for a rigid scan.
func (s *Spec) Held() []HeldCoordinate {
	if !s.Relaxed() {
		return nil
	}
	var out []HeldCoordinate
	for _, c := range s.coords {
		for k, m := range c.Members {
			out = append(out, HeldCoordinate{Kind: c.Kind, Atoms: append([]int(nil), m...),
				Label: fmt.Sprintf("scan %s (member %d)", c.Name, k+1), Value: math.NaN()})
		}
	}
	for i, h := range s.Relax.Hold {
		kind := CoordKind(len(h) - 1)
		atoms := make([]int, len(h))
		for k, a := range h {
			atoms[k] = a - 1
		}
		c := Coordinate{Kind: kind, Members: [][]int{atoms}}
		out = append(out, HeldCoordinate{Kind: kind, Atoms: atoms, Label: fmt.Sprintf("[relax] hold %d", i+1), Value: c.Measure(s.mol, 0)})
	}
	return out
}

// Ties lists the [relax] tie groups as 0-based coordinates (each group
// at least two of one kind). Nil for a rigid scan.
func (s *Spec) Ties() [][]HeldCoordinate {
	if !s.Relaxed() {
		return nil
	}
	var out [][]HeldCoordinate
	for gi, g := range s.Relax.Tie {
		var grp []HeldCoordinate
		for mi, m := range g {
			atoms := make([]int, len(m))
			for k, a := range m {
				atoms[k] = a - 1
			}
			grp = append(grp, HeldCoordinate{Kind: CoordKind(len(m) - 1), Atoms: atoms,
				Label: fmt.Sprintf("[relax] tie %d member %d", gi+1, mi+1), Value: math.NaN()})
		}
		out = append(out, grp)
	}
	return out
}

// RelaxLimits returns the per-point gradient limit (0: the optimiser's
// default) and the threshold divisor (≥ 1 tightens).
func (s *Spec) RelaxLimits() (maxSteps int, tighter float64) {
	tighter = s.Relax.Tighter
	if tighter == 0 {
		tighter = 1
	}
	return s.Relax.MaxSteps, tighter
}

// GeometryFrom sets the scanned coordinates of m (for example the relaxed
// geometry of a neighbouring point) to values (bohr, radians, in [[scan]]
// order), moving the same atoms as Geometry, and checks the result the
// same way. It is how a relaxed point starts from its neighbour.
func (s *Spec) GeometryFrom(m Molecule, values []float64) (Molecule, error) {
	if len(m.Atoms) != len(s.mol.Atoms) {
		return Molecule{}, fmt.Errorf("planner: geometry has %d atoms, the spec's molecule %d", len(m.Atoms), len(s.mol.Atoms))
	}
	if len(values) != len(s.coords) {
		return Molecule{}, fmt.Errorf("planner: %d values for %d scan coordinates", len(values), len(s.coords))
	}
	g := m.Clone()
	for i, c := range s.coords {
		c.set(&g, values[i])
	}
	for i, c := range s.coords {
		for k := range c.Members {
			d := c.Measure(g, k) - values[i]
			if c.Kind == KindTorsion {
				d = wrap(d)
			}
			if math.Abs(d) > 1e-9*math.Max(1, math.Abs(values[i])) {
				return Molecule{}, fmt.Errorf("%w: %s (member %d) cannot be set from this geometry", ErrCoordinatesInterfere, c.Name, k+1)
			}
		}
	}
	return NewMolecule(g.Atoms, g.Charge, g.Multiplicity)
}

// validateRelax checks [relax] and the relax switches of the [[scan]]
// blocks.
func (s *Spec) validateRelax() error {
	relaxed := 0
	for _, sc := range s.Scan {
		if sc.Relax != nil && *sc.Relax {
			relaxed++
		}
	}
	if relaxed > 0 && relaxed < len(s.Scan) {
		return s.errAt("scan", "relax = true in %d of %d [[scan]] blocks: a point is either relaxed or rigid, so set it in every block (or none)", relaxed, len(s.Scan))
	}
	if s.single && s.Engine.Kind == "model" {
		return s.errAt("engine.kind", "wellscan relax needs an engine that computes molecules (builtin or command); a model potential has no geometry to optimise")
	}
	if relaxed > 0 && s.Engine.Kind == "model" {
		return s.errAt("scan", "relax = true needs an engine that computes molecules (builtin or command); a model potential has no other coordinates to optimise")
	}
	r := s.Relax
	if relaxed == 0 && !s.single && (len(r.Hold) > 0 || len(r.Tie) > 0 || r.MaxSteps != 0 || r.Tighter != 0) {
		return s.errAt("relax", "[relax] settings apply to relaxed scans only; add relax = true to the [[scan]] blocks")
	}
	if r.MaxSteps < 0 {
		return s.errAt("relax.max_steps", "max_steps = %d, want ≥ 1 (or leave it out for 100)", r.MaxSteps)
	}
	if r.Tighter < 0 || math.IsNaN(r.Tighter) || math.IsInf(r.Tighter, 0) {
		return s.errAt("relax.tighter", "tighter = %v, want a positive factor (1 = default thresholds)", r.Tighter)
	}
	n := len(s.mol.Atoms)
	for gi, g := range r.Tie {
		if len(g) < 2 {
			return s.errAt("relax.tie", "group %d has %d coordinate(s); a tie needs at least two", gi+1, len(g))
		}
		for mi, m := range g {
			if len(m) < 2 || len(m) > 4 {
				return s.errAt("relax.tie", "group %d member %d lists %d atoms; give 2 (distance), 3 (bend) or 4 (torsion)", gi+1, mi+1, len(m))
			}
			if len(m) != len(g[0]) {
				return s.errAt("relax.tie", "group %d mixes kinds (%d and %d atoms): tie distances to distances, bends to bends", gi+1, len(g[0]), len(m))
			}
			seen := map[int]bool{}
			for _, a := range m {
				if a < 1 || a > n || seen[a] {
					return s.errAt("relax.tie", "group %d member %d: atom %d outside 1..%d or repeated", gi+1, mi+1, a, n)
				}
				seen[a] = true
			}
		}
	}
	for i, h := range r.Hold {
		if len(h) < 2 || len(h) > 4 {
			return s.errAt("relax.hold", "entry %d lists %d atoms; give 2 (distance), 3 (bend) or 4 (torsion)", i+1, len(h))
		}
		seen := map[int]bool{}
		for _, a := range h {
			if a < 1 || a > n {
				return s.errAt("relax.hold", "entry %d: atom %d outside 1..%d", i+1, a, n)
			}
			if seen[a] {
				return s.errAt("relax.hold", "entry %d: atom %d repeated", i+1, a)
			}
			seen[a] = true
		}
	}
	return nil
}

// relaxFingerprint is what a relaxed scan adds to the engine fingerprint
// (nil for a rigid scan, whose fingerprint stays as before).
func (s *Spec) relaxFingerprint() any {
	if !s.Relaxed() {
		return nil
	}
	return map[string]any{"hold": s.Relax.Hold, "tie": s.Relax.Tie, "max_steps": s.Relax.MaxSteps, "tighter": s.Relax.Tighter}
}

// LoadSingle reads the spec of one geometry optimisation (`wellscan relax
// DIR`): [molecule], [engine] (builtin or command), optionally [relax]
// (hold, tie, max_steps, tighter) and [queue] (threads), and no [[scan]]
// blocks, [refine] or [forcefield]. The spec counts as relaxed (Relaxed
// is true, Held lists the [relax] holds only, Coordinates is empty), so a
// backend computes its one point as it would a relaxed scan point, with
// no coordinate values.
func LoadSingle(path string) (*Spec, error) {
	data, err := readCapped(path, MaxSpecBytes, "a spec")
	if err != nil {
		return nil, err
	}
	return decode(data, path, filepath.Dir(path), true)
}

// DecodeSingle is LoadSingle for a spec held in memory; filename labels
// errors and is the base for relative paths.
func DecodeSingle(data []byte, filename string) (*Spec, error) {
	if len(data) > MaxSpecBytes {
		return nil, fmt.Errorf("planner: %s: %d bytes, more than the %d a spec may have", filename, len(data), MaxSpecBytes)
	}
	return decode(data, filename, filepath.Dir(filename), true)
}

// Single reports whether the spec describes one geometry optimisation
// (LoadSingle) rather than a scan.
func (s *Spec) Single() bool { return s.single }

// checkSingle refuses the tables of a scan in a single-geometry spec.
func (s *Spec) checkSingle() error {
	switch {
	case len(s.Scan) > 0:
		return s.errAt("scan[1]", "wellscan relax optimises the one geometry in [molecule] and takes no [[scan]] blocks; run a scan with wellscan run (relax = true in each [[scan]] for a relaxed scan)")
	case s.meta.IsDefined("forcefield"):
		return s.errAt("forcefield", "wellscan relax takes no [forcefield] table; compute a force field with wellscan run")
	case s.meta.IsDefined("refine"):
		return s.errAt("refine", "[refine] applies to scans; wellscan relax computes one geometry")
	}
	return nil
}
