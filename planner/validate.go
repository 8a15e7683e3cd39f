package planner

import (
	"bytes"
	"fmt"
	"math"
	"regexp"
	"sort"
	"strconv"
	"strings"

	"wellscan/parsers"
)

// RefineSettings are the resolved refinement settings (defaults applied).
// Per-coordinate values are in display units (the spec's length unit or
// degrees), indexed like Spec.Coordinates.
type RefineSettings struct {
	Adaptive           bool
	TargetStep         []float64
	Tolerance          []float64
	FrequencyTolerance float64 // cm⁻¹
	MaxRounds          int
	MaxPoints          int
	MaxExtensions      int
	Maxima             bool
}

// Refinement returns the resolved refinement settings.
func (s *Spec) Refinement() RefineSettings { return s.refine }

// Defaults for refinement (ours, except the tolerances the issue sets).
const (
	DefaultLengthTolerance    = 1e-4 // Å
	DefaultAngleTolerance     = 0.01 // degrees
	DefaultFrequencyTolerance = 0.5  // cm⁻¹
	DefaultMaxRounds          = 12
	DefaultMaxPoints          = 400
	DefaultMaxExtensions      = 6
	DefaultAttempts           = 3
	// DefaultMaxJump (hartree) for [checks] max_jump_hartree: far above
	// the point-to-point change of a bound curve at the steps scans use
	// near a minimum (a stiff bond, k ≈ 1.2 hartree/bohr², changes by
	// about 0.02 hartree over 0.1 Å), far below the gap to another SCF
	// solution that makes a point jump (a few tenths of a hartree).
	// Common practice; the numbers are order-of-magnitude estimates.
	DefaultMaxJump = 0.05
	// maxMaxJump bounds the setting: anything larger is not a check.
	maxMaxJump = 100.0
)

var nameRE = regexp.MustCompile(`^[A-Za-z][A-Za-z0-9_]{0,15}$`)

func (s *Spec) validate() error {
	if err := s.buildMolecule(); err != nil {
		return err
	}
	if s.single {
		if err := s.checkSingle(); err != nil {
			return err
		}
	} else if s.meta.IsDefined("forcefield") {
		if len(s.Scan) > 0 {
			return s.errAt("forcefield", "give [[scan]] blocks or a [forcefield] table, not both")
		}
		if err := s.buildForceField(); err != nil {
			return err
		}
	} else {
		if err := s.buildCoordinates(); err != nil {
			return err
		}
		if err := s.buildRefine(); err != nil {
			return err
		}
	}
	if err := s.validateEngine(); err != nil {
		return err
	}
	if err := s.validateQueue(); err != nil {
		return err
	}
	if err := s.validateChecks(); err != nil {
		return err
	}
	if err := s.validateRelax(); err != nil {
		return err
	}
	// Every initial point must give a sensible geometry.
	for _, p := range s.InitialPoints() {
		if _, err := s.Geometry(p); err != nil {
			return s.errAt("scan", "%v", strings.TrimPrefix(err.Error(), "planner: "))
		}
	}
	return nil
}

func (s *Spec) buildMolecule() error {
	ms := s.MoleculeInput
	if !s.meta.IsDefined("molecule") {
		return s.errAt("molecule", "missing: the spec needs a [molecule] table with a geometry")
	}
	u := Angstrom
	if ms.Units != "" {
		var ok bool
		if u, ok = ParseLengthUnit(ms.Units); !ok {
			return s.errAt("molecule.units", "unknown unit %q (use \"angstrom\" or \"bohr\")", ms.Units)
		}
	}
	s.units = u
	var frame parsers.Frame
	switch {
	case ms.Geometry != "" && ms.File != "":
		return s.errAt("molecule.file", "give geometry or file, not both")
	case ms.Geometry != "":
		first := s.lineOf("molecule.geometry")
		if first == 0 {
			first = 1
		}
		// A multi-line string starting with """ and a newline begins on the
		// next line.
		lines := strings.Split(string(s.text), "\n")
		if first <= len(lines) && strings.HasSuffix(strings.TrimSpace(lines[first-1]), `"""`) {
			first++
		}
		f, err := parsers.ReadGeometryBlock(ms.Geometry, s.file, first)
		if err != nil {
			return &SpecError{File: s.file, Line: s.lineOf("molecule.geometry"), Key: "molecule.geometry", Msg: strings.TrimPrefix(err.Error(), "parsers: ")}
		}
		frame = f
	case ms.File != "":
		path, err := WithinDir(s.dir, ms.File)
		if err != nil {
			return s.errAt("molecule.file", "%s", strings.TrimPrefix(err.Error(), "planner: "))
		}
		data, err := readCapped(path, MaxMoleculeBytes, "an XYZ file")
		if err != nil {
			return s.errAt("molecule.file", "%s", strings.TrimPrefix(err.Error(), "planner: "))
		}
		frames, err := parsers.ReadXYZ(bytes.NewReader(data), path)
		if err != nil {
			return s.errAt("molecule.file", "%s", strings.TrimPrefix(err.Error(), "parsers: "))
		}
		frame = frames[0]
	default:
		return s.errAt("molecule", "missing geometry: give geometry = \"\"\"…\"\"\" (element x y z per line) or file = \"….xyz\"")
	}
	geoKey := "molecule.geometry"
	if ms.File != "" {
		geoKey = "molecule.file"
	}
	if err := s.checkAtoms(geoKey, frame.Coords); err != nil {
		return err
	}
	atoms := make([]Atom, len(frame.Labels))
	for i, l := range frame.Labels {
		e, a, m, err := ParseIsotope(l)
		if err != nil {
			return s.errAt("molecule.geometry", "atom %d: %s", i+1, strings.TrimPrefix(err.Error(), "planner: "))
		}
		var pos [3]float64
		for k := range 3 {
			pos[k] = u.ToBohr(frame.Coords[i][k])
		}
		atoms[i] = Atom{Element: e, Pos: pos, MassNumber: a, Mass: m}
	}
	for _, k := range sortedKeys(ms.Isotopes) {
		idx, err := strconv.Atoi(k)
		if err != nil || idx < 1 || idx > len(atoms) {
			return s.errAt("molecule.isotopes."+k, "expected an atom number from 1 to %d", len(atoms))
		}
		e, a, m, err := ParseIsotope(ms.Isotopes[k])
		if err != nil {
			return s.errAt("molecule.isotopes."+k, "%s", strings.TrimPrefix(err.Error(), "planner: "))
		}
		if e.Z != atoms[idx-1].Element.Z {
			return s.errAt("molecule.isotopes."+k, "atom %d is %s, not %s", idx, atoms[idx-1].Element.Symbol, e.Symbol)
		}
		atoms[idx-1].MassNumber, atoms[idx-1].Mass = a, m
	}
	nuclear := 0
	for _, a := range atoms {
		nuclear += a.Element.Z
	}
	if err := s.checkCharge(ms.Charge, nuclear); err != nil {
		return err
	}
	mol, err := NewMolecule(atoms, ms.Charge, ms.Multiplicity)
	if err != nil {
		key := "molecule.geometry"
		if !strings.Contains(err.Error(), "too close") {
			key = "molecule.multiplicity"
			if !s.meta.IsDefined("molecule", "multiplicity") {
				key = "molecule.charge"
			}
		}
		return s.errAt(key, "%s", strings.TrimPrefix(err.Error(), "planner: "))
	}
	s.mol = mol
	return nil
}

func (s *Spec) buildCoordinates() error {
	if len(s.Scan) == 0 {
		return s.errAt("scan", "missing: give one or two [[scan]] blocks (to optimise one geometry, use wellscan relax DIR)")
	}
	if len(s.Scan) > 2 {
		return s.errAt(fmt.Sprintf("scan[%d]", 3), "at most two [[scan]] blocks (a 1-D scan or a 2-D product grid)")
	}
	g := bondGraph(s.mol)
	names := map[string]bool{}
	n := len(s.mol.Atoms)
	for bi, sc := range s.Scan {
		key := func(k string) string { return fmt.Sprintf("scan[%d].%s", bi+1, k) }
		type def struct {
			name    string
			kind    CoordKind
			members [][]int
		}
		var defs []def
		if sc.Bond != nil {
			defs = append(defs, def{"bond", KindDistance, [][]int{sc.Bond}})
		}
		if sc.Angle != nil {
			defs = append(defs, def{"angle", KindAngle, [][]int{sc.Angle}})
		}
		if sc.Torsion != nil {
			defs = append(defs, def{"torsion", KindTorsion, [][]int{sc.Torsion}})
		}
		if sc.Bonds != nil {
			defs = append(defs, def{"bonds", KindDistance, sc.Bonds})
		}
		if sc.Angles != nil {
			defs = append(defs, def{"angles", KindAngle, sc.Angles})
		}
		if sc.Torsions != nil {
			defs = append(defs, def{"torsions", KindTorsion, sc.Torsions})
		}
		if len(defs) != 1 {
			if len(defs) == 0 {
				return s.errAt(fmt.Sprintf("scan[%d]", bi+1), "no coordinate: give one of bond, angle, torsion (or bonds, angles, torsions to tie several)")
			}
			return s.errAt(key(defs[1].name), "a [[scan]] block scans one coordinate; %s and %s are both given", defs[0].name, defs[1].name)
		}
		d := defs[0]
		if len(d.members) == 0 {
			return s.errAt(key(d.name), "empty list")
		}
		c := Coordinate{Name: sc.Name, Kind: d.kind, Digits: lengthDigits}
		if d.kind != KindDistance {
			c.Digits = angleDigits
		}
		if c.Name == "" {
			c.Name = map[CoordKind]string{KindDistance: "r", KindAngle: "theta", KindTorsion: "phi"}[d.kind]
			if names[c.Name] {
				c.Name += strconv.Itoa(bi + 1)
			}
		}
		if !nameRE.MatchString(c.Name) {
			return s.errAt(key("name"), "%q is not a usable name (a letter, then letters, digits or _; at most 16)", c.Name)
		}
		if names[c.Name] {
			return s.errAt(key("name"), "name %q is used by two [[scan]] blocks", c.Name)
		}
		names[c.Name] = true
		for _, m := range d.members {
			if len(m) != d.kind.arity() {
				return s.errAt(key(d.name), "a %s needs %d atom numbers, got %v", d.kind, d.kind.arity(), m)
			}
			idx := make([]int, len(m))
			for i, a := range m {
				if a < 1 || a > n {
					return s.errAt(key(d.name), "atom %d is out of range (the molecule has %d atoms)", a, n)
				}
				idx[i] = a - 1
				for j := range i {
					if m[j] == a {
						return s.errAt(key(d.name), "atom %d appears twice in %v; the coordinate's atoms must differ", a, m)
					}
				}
			}
			if d.kind == KindTorsion {
				p := func(i int) [3]float64 { return s.mol.Atoms[idx[i]].Pos }
				for _, tri := range [][3]int{{0, 1, 2}, {1, 2, 3}} {
					th := angle3(p(tri[0]), p(tri[1]), p(tri[2]))
					if math.Sin(th) < 1e-3 {
						return s.errAt(key(d.name), "atoms %d, %d, %d are collinear (angle %.4g°), so the torsion %v is undefined",
							m[tri[0]], m[tri[1]], m[tri[2]], th*180/math.Pi, m)
					}
				}
			}
			c.Members = append(c.Members, idx)
		}
		if err := s.resolveMoving(&c, sc, g, key("moving")); err != nil {
			return err
		}
		// Tied members must not push each other's atoms.
		owner := map[int]int{}
		for mi, mv := range c.Moving {
			for _, a := range mv {
				if o, ok := owner[a]; ok && o != mi {
					return s.errAt(key("moving"), "atom %d moves with tied members %d and %d; tied coordinates need separate moving atoms", a+1, o+1, mi+1)
				}
				owner[a] = mi
			}
		}
		if err := s.resolvePeriod(&c, sc, key("period")); err != nil {
			return err
		}
		if k, msg := checkScanNumbers(sc); msg != "" {
			return s.errAt(key(k), "%s", msg)
		}
		ax, k, msg := axisValues(sc, c.Digits)
		if msg != "" {
			return s.errAt(key(k), "%s", msg)
		}
		for _, x := range ax {
			v := c.Internal(x, s.units)
			switch {
			case d.kind == KindDistance && !(x > 0):
				return s.errAt(key(grideKey(sc)), "bond length %g %s is not positive", x, c.UnitLabel(s.units))
			case d.kind == KindDistance && !(v > MinSeparation):
				return s.errAt(key(grideKey(sc)), "bond length %g %s is shorter than the closest approach of two nuclei wellscan allows (%g bohr = %.4g Å)", x, c.UnitLabel(s.units), MinSeparation, MinSeparation*BohrInAngstrom)
			case d.kind == KindDistance && v*BohrInAngstrom > MaxCoordinate:
				return s.errAt(key(grideKey(sc)), "bond length %g %s is longer than %g Å; check the exponent", x, c.UnitLabel(s.units), MaxCoordinate)
			case d.kind == KindAngle && !(x > 0 && x <= 180):
				return s.errAt(key(grideKey(sc)), "angle %g° is outside (0°, 180°]", x)
			case d.kind == KindTorsion && !(x >= -360 && x <= 360):
				return s.errAt(key(grideKey(sc)), "torsion %g° is outside [−360°, 360°]", x)
			}
		}
		s.finishPeriodicAxis(&c, ax, c.Name)
		s.coords = append(s.coords, c)
		s.axes = append(s.axes, ax)
	}
	total := 1
	for _, ax := range s.axes {
		total *= len(ax)
	}
	if total > MaxGridPoints {
		k := fmt.Sprintf("scan[%d]", len(s.Scan))
		return s.errAt(k, "the grid has %d points (%s), more than the %d a scan may start with; use fewer values or let refinement add points", total, gridShape(s.axes), MaxGridPoints)
	}
	return nil
}

func gridShape(axes [][]float64) string {
	var parts []string
	for _, ax := range axes {
		parts = append(parts, strconv.Itoa(len(ax)))
	}
	return strings.Join(parts, " × ")
}

func grideKey(sc ScanSpec) string {
	if len(sc.Values) > 0 {
		return "values"
	}
	return "from"
}

// resolveMoving fills c.Moving from the spec's moving key or from
// connectivity.
func (s *Spec) resolveMoving(c *Coordinate, sc ScanSpec, g [][]int, key string) error {
	n := len(s.mol.Atoms)
	var lists [][]int
	switch v := sc.Moving.(type) {
	case nil:
	case []any:
		flat := true
		for _, x := range v {
			if _, ok := x.(int64); !ok {
				flat = false
			}
		}
		if flat {
			l := make([]int, len(v))
			for i, x := range v {
				l[i] = int(x.(int64))
			}
			lists = [][]int{l}
		} else {
			for _, x := range v {
				inner, ok := x.([]any)
				if !ok {
					return s.errAt(key, "expected a list of atom numbers, or one list per tied member")
				}
				var l []int
				for _, y := range inner {
					iy, ok := y.(int64)
					if !ok {
						return s.errAt(key, "expected atom numbers, got %v", y)
					}
					l = append(l, int(iy))
				}
				lists = append(lists, l)
			}
		}
	default:
		return s.errAt(key, "expected a list of atom numbers, or one list per tied member")
	}
	if lists != nil && len(lists) != len(c.Members) {
		return s.errAt(key, "%d moving lists for %d tied members", len(lists), len(c.Members))
	}
	for mi, m := range c.Members {
		if lists == nil {
			mv, err := defaultMoving(g, c.Kind, m)
			if err != nil {
				return s.errAt(key, "%s", err)
			}
			c.Moving = append(c.Moving, mv)
			continue
		}
		fixed := m[:len(m)-1]
		if c.Kind == KindTorsion {
			fixed = m[:2]
		}
		var mv []int
		for _, a := range lists[mi] {
			if a < 1 || a > n {
				return s.errAt(key, "atom %d is out of range (the molecule has %d atoms)", a, n)
			}
			for _, f := range fixed {
				if f == a-1 {
					return s.errAt(key, "atom %d defines the %s and stays fixed; it cannot be in the moving list", a, c.Kind)
				}
			}
			mv = append(mv, a-1)
		}
		if c.Kind != KindTorsion && !containsInt(mv, m[len(m)-1]) {
			return s.errAt(key, "the moving atoms must include atom %d, the last atom of the %s", m[len(m)-1]+1, c.Kind)
		}
		sort.Ints(mv)
		c.Moving = append(c.Moving, mv)
	}
	return nil
}

func containsInt(xs []int, x int) bool {
	for _, y := range xs {
		if y == x {
			return true
		}
	}
	return false
}

func (s *Spec) buildRefine() error {
	r := s.Refine
	out := RefineSettings{Adaptive: true, FrequencyTolerance: DefaultFrequencyTolerance,
		MaxRounds: DefaultMaxRounds, MaxPoints: DefaultMaxPoints, MaxExtensions: DefaultMaxExtensions}
	// Barriers are what a torsion scan is for: maxima are refined by
	// default when a coordinate is a torsion.
	for _, c := range s.coords {
		if c.Kind == KindTorsion {
			out.Maxima = true
		}
	}
	if r.Maxima != nil {
		out.Maxima = *r.Maxima
	}
	if r.Adaptive != nil {
		out.Adaptive = *r.Adaptive
	}
	if r.FrequencyTolerance != nil {
		if !(*r.FrequencyTolerance > 0) || !finite(*r.FrequencyTolerance) {
			return s.errAt("refine.frequency_tolerance", "must be positive (cm⁻¹), got %g", *r.FrequencyTolerance)
		}
		out.FrequencyTolerance = *r.FrequencyTolerance
	}
	for _, x := range []struct {
		p   *int
		dst *int
		key string
		min int
	}{{r.MaxRounds, &out.MaxRounds, "max_rounds", 1}, {r.MaxPoints, &out.MaxPoints, "max_points", 1}, {r.MaxExtensions, &out.MaxExtensions, "max_extensions", 0}} {
		if x.p != nil {
			if *x.p < x.min || *x.p > 100000 {
				return s.errAt("refine."+x.key, "must be between %d and 100000, got %d", x.min, *x.p)
			}
			*x.dst = *x.p
		}
	}
	for i, c := range s.coords {
		prec := math.Pow(10, -float64(c.Digits))
		sp := minSpacing(s.axes[i])
		if math.IsInf(sp, 1) {
			sp = 1
		}
		tgt := math.Max(sp/25, 10*prec)
		if r.TargetStep != nil {
			tgt = *r.TargetStep
			if !finite(tgt) {
				return s.errAt("refine.target_step", "must be a finite step, got %g", tgt)
			}
			if !(tgt >= 10*prec) {
				return s.errAt("refine.target_step", "%g is below 10× the key precision of %s (%g %s)", tgt, c.Name, prec, c.UnitLabel(s.units))
			}
		}
		tol := DefaultAngleTolerance
		if c.Kind == KindDistance {
			tol = s.units.FromBohr(DefaultLengthTolerance * AngstromInBohr)
		}
		if r.Tolerance != nil {
			tol = *r.Tolerance
			if !(tol > 0) || !finite(tol) {
				return s.errAt("refine.tolerance", "must be positive, got %g", tol)
			}
		}
		out.TargetStep = append(out.TargetStep, tgt)
		out.Tolerance = append(out.Tolerance, tol)
	}
	n := 1
	for _, ax := range s.axes {
		n *= len(ax)
	}
	if out.Adaptive && n > out.MaxPoints {
		return s.errAt("refine.max_points", "the initial grid already has %d points, more than max_points = %d", n, out.MaxPoints)
	}
	s.refine = out
	return nil
}

var modelShapes = map[string]bool{"morse": true, "lennard-jones": true, "harmonic": true, "double-well": true, "cosine": true}

func (s *Spec) validateEngine() error {
	e := s.Engine
	builtinKeys := []string{"method", "basis", "cartesian", "max_iterations", "convergence", "guess", "memory_mb", "frozen_core", "basis_limit", "core_correction"}
	not := func(kind string, keys ...string) error {
		for _, k := range keys {
			if s.meta.IsDefined("engine", k) {
				return s.errAt("engine."+k, "belongs to another engine kind; engine.kind is %q", kind)
			}
		}
		return nil
	}
	switch e.Kind {
	case "builtin":
		if err := not("builtin", "model", "command"); err != nil {
			return err
		}
		switch strings.ToLower(e.Method) {
		case "rhf":
			if s.mol.Multiplicity != 1 {
				return s.errAt("engine.method", "rhf needs a closed-shell molecule (multiplicity 1), this one has multiplicity %d; use method = \"uhf\"", s.mol.Multiplicity)
			}
		case "ccsd", "ccsd(t)":
			if s.mol.Multiplicity != 1 {
				return s.errAt("engine.method", "%s is implemented for closed-shell molecules (multiplicity 1, RHF reference) only; this one has multiplicity %d", strings.ToLower(e.Method), s.mol.Multiplicity)
			}
		case "uhf", "mp2":
		case "":
			// The default of `wellscan energy` too: RHF for a singlet,
			// UHF otherwise.
			s.Engine.Method = DefaultMethod(s.mol.Multiplicity)
		default:
			return s.errAt("engine.method", "unknown method %q (the built-in engine does \"rhf\", \"uhf\", \"mp2\", \"ccsd\" and \"ccsd(t)\")", e.Method)
		}
		if e.FrozenCore != nil && !IsCorrelated(e.Method) {
			return s.errAt("engine.frozen_core", "only applies to the correlated methods mp2, ccsd and ccsd(t)")
		}
		if s.meta.IsDefined("engine", "basis_limit") {
			switch {
			case len(e.BasisLimit) != 2 || strings.TrimSpace(e.BasisLimit[0]) == "" || strings.TrimSpace(e.BasisLimit[1]) == "":
				return s.errAt("engine.basis_limit", "give two basis sets, smaller first, e.g. basis_limit = [\"cc-pVTZ\", \"cc-pVQZ\"]")
			case strings.TrimSpace(e.Basis) != "":
				return s.errAt("engine.basis", "give either basis or basis_limit, not both")
			case !IsCorrelated(e.Method):
				return s.errAt("engine.basis_limit", "extrapolates a correlation energy: use method = \"mp2\", \"ccsd\" or \"ccsd(t)\"")
			}
		} else if strings.TrimSpace(e.Basis) == "" {
			return s.errAt("engine.basis", "missing: give a basis set name, e.g. basis = \"6-31G*\"")
		}
		if s.meta.IsDefined("engine", "core_correction") {
			switch {
			case strings.TrimSpace(e.CoreCorrection) == "":
				return s.errAt("engine.core_correction", "give a core–valence basis set, e.g. core_correction = \"cc-pCVTZ\"")
			case len(e.BasisLimit) == 0:
				return s.errAt("engine.core_correction", "applies to a basis-set limit: give basis_limit too")
			case e.FrozenCore != nil && !*e.FrozenCore:
				return s.errAt("engine.core_correction", "adds all-electron minus frozen-core energies, so frozen_core must not be false")
			}
		}
		if e.MaxIterations < 0 {
			return s.errAt("engine.max_iterations", "must not be negative, got %d", e.MaxIterations)
		}
		if e.MemoryMB < 0 {
			return s.errAt("engine.memory_mb", "must not be negative, got %d (leave it out for a budget from the machine's available memory)", e.MemoryMB)
		}
		if e.Convergence != nil && !(*e.Convergence > 0 && *e.Convergence < 1) {
			return s.errAt("engine.convergence", "must be between 0 and 1 hartree, got %g", *e.Convergence)
		}
		if e.Guess != "" && e.Guess != "neighbour" && e.Guess != "fresh" {
			return s.errAt("engine.guess", "unknown guess %q (use \"neighbour\" or \"fresh\")", e.Guess)
		}
	case "model":
		if err := not("model", append(builtinKeys, "command")...); err != nil {
			return err
		}
		if err := s.checkModelNumbers(); err != nil {
			return err
		}
		if len(e.Model.Terms) == 0 {
			return s.errAt("engine.model", "missing: give at least one [[engine.model.term]] with a shape")
		}
		for i, t := range e.Model.Terms {
			key := func(k string) string { return fmt.Sprintf("engine.model.term[%d].%s", i+1, k) }
			if t.Coordinate != "" && s.CoordinateIndex(t.Coordinate) < 0 {
				return s.errAt(key("coordinate"), "no [[scan]] block is named %q", t.Coordinate)
			}
			if !modelShapes[t.Shape] {
				return s.errAt(key("shape"), "unknown shape %q (use morse, lennard-jones, harmonic, double-well or cosine)", t.Shape)
			}
			pos := func(name string, v float64) error {
				if !(v > 0) {
					return s.errAt(key(name), "must be positive for a %s term, got %g", t.Shape, v)
				}
				return nil
			}
			var err error
			switch t.Shape {
			case "morse":
				if err = pos("depth", t.Depth); err == nil {
					err = pos("width", t.Width)
				}
			case "lennard-jones":
				if err = pos("depth", t.Depth); err == nil {
					err = pos("sigma", t.Sigma)
				}
			case "harmonic":
				err = pos("force", t.Force)
			case "double-well":
				if err = pos("depth", t.Depth); err == nil {
					err = pos("width", t.Width)
				}
			case "cosine":
				if err = pos("depth", t.Depth); err == nil && !(t.Fold >= 1 && t.Fold <= 12) {
					err = s.errAt(key("fold"), "a cosine term needs fold = n, the number of wells per turn (1 to 12), got %d", t.Fold)
				}
			}
			if err != nil {
				return err
			}
		}
		for _, k := range sortedKeys(e.Model.Spikes) {
			if _, err := s.ParseKey(k); err != nil {
				return s.errAt("engine.model.spikes", "%q: %s", k, strings.TrimPrefix(err.Error(), "planner: "))
			}
			if v := e.Model.Spikes[k]; math.IsNaN(v) || math.IsInf(v, 0) {
				return s.errAt("engine.model.spikes", "%q: expected a finite energy in hartree, got %g", k, v)
			}
		}
		for i, k := range e.Model.Fail {
			if _, err := s.ParseKey(k); err != nil {
				return s.errAt("engine.model.fail", "entry %d: %s", i+1, strings.TrimPrefix(err.Error(), "planner: "))
			}
		}
	case "command":
		if err := not("command", append(builtinKeys, "model")...); err != nil {
			return err
		}
		if !s.meta.IsDefined("engine", "command") {
			return s.errAt("engine.command", "missing: the command engine needs an [engine.command] table")
		}
	case "":
		return s.errAt("engine.kind", "missing: give kind = \"builtin\", \"model\" or \"command\"")
	default:
		return s.errAt("engine.kind", "unknown engine %q (use \"builtin\", \"model\" or \"command\")", e.Kind)
	}
	return nil
}

func (s *Spec) validateQueue() error {
	q := &s.Queue
	switch q.Kind {
	case "":
		q.Kind = "local"
	case "local", "slurm", "batch":
	default:
		return s.errAt("queue.kind", "unknown queue %q (use \"local\", \"slurm\", or \"batch\" with [queue.batch] scheduler = \"torque\", \"lsf\" or \"sge\")", q.Kind)
	}
	if q.Workers < 0 || q.Workers > 4096 {
		return s.errAt("queue.workers", "must be between 0 (all CPUs) and 4096, got %d", q.Workers)
	}
	if q.Threads < 0 || q.Threads > 4096 {
		return s.errAt("queue.threads", "must be between 0 (automatic) and 4096, got %d", q.Threads)
	}
	if q.Attempts == 0 {
		q.Attempts = DefaultAttempts
	}
	if q.Attempts < 1 || q.Attempts > 100 {
		return s.errAt("queue.attempts", "must be between 1 and 100, got %d", q.Attempts)
	}
	return nil
}

func (s *Spec) validateChecks() error {
	if v := s.Checks.MaxJumpHartree; v != nil && !(*v >= 0 && *v <= maxMaxJump) {
		return s.errAt("checks.max_jump_hartree", "must be between 0 (off) and %g hartree, got %g", maxMaxJump, *v)
	}
	return nil
}

// MaxJump is the energy-jump threshold in hartree ([checks]
// max_jump_hartree, default DefaultMaxJump); 0 means the check is off.
func (s *Spec) MaxJump() float64 {
	if s.ff != nil {
		return 0 // the energy-jump rule follows scan lines, which a force field has not
	}
	if v := s.Checks.MaxJumpHartree; v != nil {
		return *v
	}
	return DefaultMaxJump
}

// CoordinateIndex returns the index of the coordinate named name, or −1.
func (s *Spec) CoordinateIndex(name string) int {
	for i, c := range s.coords {
		if c.Name == name {
			return i
		}
	}
	return -1
}

// DefaultMethod is the built-in engine's method when a spec or `wellscan
// energy` names none: "rhf" for a singlet, "uhf" otherwise.
func DefaultMethod(multiplicity int) string {
	if multiplicity == 1 {
		return "rhf"
	}
	return "uhf"
}
