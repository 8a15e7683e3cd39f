// Package analysis turns the finished points of a scan into its answers:
// the constants of every real well, the barriers between wells, the
// torsional levels of a periodic coordinate and the harmonic wavenumbers of
// a two-coordinate surface, each with the one kinetic model of the scanned
// coordinates ([planner.Spec.KineticMetric]) evaluated at the fitted
// stationary point. It is the single place that decides how a scan is
// analysed; `wellscan run`, `fit`, `report` and `status` all call [Analyse].
//
// # Units
//
// Point values are internal (bohr, radian) and energies hartree, as the
// store keeps them. Results carry their unit in field names and JSON keys;
// positions shown to people are in the spec's units (Å or bohr, degree),
// torsions unwrapped into the window the spec's grid is written in.
package analysis

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sort"

	"wellscan/fit"
	"wellscan/planner"
)

// Point is one finished point of a scan.
type Point struct {
	Key    string
	Values []float64 // internal units, one per coordinate
	Energy float64   // hartree
}

// Options tune the analysis; the zero value is the default.
type Options struct {
	// WindowEnergy (hartree) of the local polynomial fits; 0: fit's
	// default.
	WindowEnergy float64
	// EnergyNoise (hartree) expected in the energies; 0: fit's default.
	EnergyNoise float64
	// Limit, when set, is the dissociation limit (hartree) for D_e/D_0.
	Limit *float64
	// Isotopologues adds isotopologues to a diatomic bond scan (two atomic
	// masses each); the spec's own isotopologue always comes first.
	Isotopologues []fit.MassSet
	// NoLevels skips vibrational and torsional levels (quick summaries).
	NoLevels bool
}

// KineticValue is the kinetic metric at one stationary point.
type KineticValue struct {
	At    string  `json:"at"`    // where, e.g. "tau=60.000 deg"
	Value float64 `json:"value"` // in Unit
	Unit  string  `json:"unit"`  // "amu" or "amu·bohr²"
}

// Barrier is a maximum between two minima along a scan line.
type Barrier struct {
	// Position in display units (Unit), and its standard error.
	X       float64 `json:"x"`
	XStderr float64 `json:"x_stderr"`
	Unit    string  `json:"unit"`
	Energy  float64 `json:"energy_hartree"`
	// Height above the global minimum in three units, with the standard
	// error in cm⁻¹.
	HeightCm1    float64 `json:"height_cm1"`
	HeightStderr float64 `json:"height_stderr_cm1"`
	HeightKJMol  float64 `json:"height_kj_per_mol"`
	HeightKcal   float64 `json:"height_kcal_per_mol"`
	// Multiplicity: how many equivalent barriers one full turn of a
	// periodic coordinate has (1 otherwise).
	Multiplicity int `json:"multiplicity"`
	// The minima on either side (display units) and the height above each
	// (cm⁻¹).
	LeftMin        float64 `json:"left_minimum"`
	LeftHeightCm1  float64 `json:"above_left_minimum_cm1"`
	RightMin       float64 `json:"right_minimum"`
	RightHeightCm1 float64 `json:"above_right_minimum_cm1"`
	// Source says how it was located ("Fourier series", "local polynomial").
	Source string `json:"source"`
}

// Result is the analysis of a scan.
type Result struct {
	// Model names the analysis: "diatomic", "one-dimensional",
	// "torsion" (a full period, Fourier series and hindered rotor),
	// "torsion-partial" (local polynomials on part of a period) or
	// "surface" (two coordinates).
	Model string `json:"model"`
	// ScanMode is "rigid" or "relaxed" (planner.Spec.ScanMode).
	ScanMode string `json:"scan_mode"`
	// MassModel describes the kinetic model in words; Kinetic lists its
	// value at each stationary point analysed.
	MassModel string         `json:"mass_model"`
	Kinetic   []KineticValue `json:"kinetic,omitempty"`
	Curve     *fit.Result    `json:"curve,omitempty"`
	Minima    []fit.Minimum  `json:"minima,omitempty"`
	// Torsion is the full-period analysis; Barriers lists every barrier
	// of a 1-D scan (from the torsion analysis or the local fits).
	Torsion  *fit.TorsionResult `json:"torsion,omitempty"`
	Barriers []Barrier          `json:"barriers,omitempty"`
	Surface  *fit.SurfaceResult `json:"surface,omitempty"`
	// Stationary is the 2-D stationary point in display units, the unit
	// in the key (e.g. "r_angstrom", "theta_degree").
	Stationary map[string]float64 `json:"stationary_point,omitempty"`
	Points     int                `json:"points_done"`
	// NotUsed counts the scan's points that are not done, by state (the
	// caller fills it; the analysis sees done points only).
	NotUsed map[string]int    `json:"points_not_used,omitempty"`
	Units   map[string]string `json:"coordinate_units"`
	// Warnings about the scan as a whole (edge ramps that are not wells,
	// duplicates, a fall-back model), most serious first.
	Warnings []string `json:"warnings"`
}

// Analyse analyses the done points of the scan spec describes. It fails
// only when nothing can be analysed (too few points, no minimum).
func Analyse(ctx context.Context, spec *planner.Spec, pts []Point, opt Options) (*Result, error) {
	coords := spec.Coordinates()
	res := &Result{ScanMode: spec.ScanMode(), Units: map[string]string{}, Warnings: []string{}}
	for _, c := range coords {
		res.Units[c.Name] = c.UnitLabel(spec.Units()) + " at the edges; bohr or radian inside"
	}
	// One point per canonical key: keys written before torsions were kept
	// modulo their period may name one geometry twice.
	seen := map[string]int{}
	var clean []Point
	for _, p := range pts {
		if len(p.Values) != len(coords) {
			return nil, fmt.Errorf("analysis: point %s has %d values for %d coordinates", p.Key, len(p.Values), len(coords))
		}
		if math.IsNaN(p.Energy) || math.IsInf(p.Energy, 0) {
			return nil, fmt.Errorf("analysis: point %s has the energy %g", p.Key, p.Energy)
		}
		disp := make([]float64, len(coords))
		for i, c := range coords {
			disp[i] = c.Display(p.Values[i], spec.Units())
		}
		cp := spec.PointAt(disp)
		if j, ok := seen[cp.Key]; ok {
			if d := math.Abs(clean[j].Energy - p.Energy); d > 1e-8 {
				res.Warnings = append(res.Warnings, fmt.Sprintf("points %s and %s are the same geometry (%s) but their energies differ by %.3g E_h; the first is used", clean[j].Key, p.Key, cp.Key, d))
			}
			continue
		}
		seen[cp.Key] = len(clean)
		clean = append(clean, Point{Key: cp.Key, Values: cp.Values, Energy: p.Energy})
	}
	res.Points = len(clean)
	if len(clean) < 3 {
		return nil, fmt.Errorf("analysis: %d done points; at least 3 are needed", len(clean))
	}
	if len(coords) == 2 {
		return res, surface(ctx, spec, clean, opt, res)
	}
	c := coords[0]
	sort.Slice(clean, func(a, b int) bool { return clean[a].Values[0] < clean[b].Values[0] })
	xs := make([]float64, len(clean))
	es := make([]float64, len(clean))
	for i, p := range clean {
		xs[i], es[i] = p.Values[0], p.Energy
	}
	if c.Periodic() && c.FullPeriod {
		return res, torsion(ctx, spec, xs, es, opt, res)
	}
	return res, line(ctx, spec, xs, es, opt, res)
}

// massUnit labels the kinetic metric of coordinate c.
func massUnit(c planner.Coordinate) string {
	if c.Kind == planner.KindDistance {
		return "amu"
	}
	return "amu·bohr²"
}

// at describes a 1-D position for people.
func at(spec *planner.Spec, x float64) string {
	return spec.Describe([]float64{x})
}

func torsion(ctx context.Context, spec *planner.Spec, xs, es []float64, opt Options, res *Result) error {
	c := spec.Coordinates()[0]
	res.Model = "torsion"
	res.MassModel = fmt.Sprintf("internal rotation: reduced moment of inertia of the rotating group (%s) from the scan's own atomic displacements with overall rotation and translation removed; hindered-rotor levels with its value at the global minimum", massUnit(c))
	inertia := func(x float64) (float64, error) {
		return spec.EffectiveMass(planner.Point{Key: "analysis", Values: []float64{x}}, 0)
	}
	to := fit.TorsionOptions{Inertia: inertia, EnergyNoise: opt.EnergyNoise}
	if opt.NoLevels {
		to.Inertia = nil
	}
	tr, err := fit.Torsion(ctx, xs, es, c.Period, to)
	if err != nil {
		return fmt.Errorf("analysis: torsion %s: %w", c.Name, err)
	}
	if opt.NoLevels {
		// Harmonic wavenumbers are cheap; only the levels are skipped.
		for i := range tr.Minima {
			m := &tr.Minima[i]
			if in, err := inertia(m.XDegree * math.Pi / 180); err == nil && m.Curvature > 0 {
				m.Inertia = in
				m.HarmonicCm1 = math.Sqrt(m.Curvature/(in*fit.AmuInElectronMass)) * fit.HartreeInCm1
				m.HarmonicStderr = m.HarmonicCm1 * m.CurvatureStderr / (2 * m.Curvature)
			}
		}
	}
	// Positions for people: unwrapped into the spec's window.
	unwrap := func(deg float64) float64 { return c.Unwrap(deg*math.Pi/180, spec.Units()) }
	for i := range tr.Minima {
		m := &tr.Minima[i]
		m.XDegree = unwrap(m.XDegree)
		for k := range m.Positions {
			m.Positions[k] = unwrap(m.Positions[k])
		}
		sort.Float64s(m.Positions)
		if m.Inertia > 0 {
			res.Kinetic = append(res.Kinetic, KineticValue{At: at(spec, m.XDegree*math.Pi/180), Value: m.Inertia, Unit: massUnit(c)})
		}
	}
	for i := range tr.Barriers {
		b := &tr.Barriers[i]
		b.XDegree = unwrap(b.XDegree)
		for k := range b.Positions {
			b.Positions[k] = unwrap(b.Positions[k])
		}
		sort.Float64s(b.Positions)
		b.LeftMinDegree, b.RightMinDegree = unwrap(b.LeftMinDegree), unwrap(b.RightMinDegree)
		res.Barriers = append(res.Barriers, Barrier{X: b.XDegree, XStderr: b.XStderr, Unit: "degree", Energy: b.Energy,
			HeightCm1: b.HeightCm1, HeightStderr: b.HeightStderr, HeightKJMol: b.HeightKJMol, HeightKcal: b.HeightKcal,
			Multiplicity: b.Multiplicity, LeftMin: b.LeftMinDegree, LeftHeightCm1: b.LeftHeightCm1,
			RightMin: b.RightMinDegree, RightHeightCm1: b.RightHeightCm1, Source: "Fourier series"})
	}
	res.Torsion = tr
	res.Warnings = append(res.Warnings, tr.Warnings...)
	return nil
}

// line analyses a 1-D scan that is not a full-period torsion: a bond
// length, a bend (mirrored about 180° when it reaches the linear
// geometry), or part of a torsion's period.
func line(ctx context.Context, spec *planner.Spec, xs, es []float64, opt Options, res *Result) error {
	c := spec.Coordinates()[0]
	mol, err := spec.Molecule()
	if err != nil {
		return err
	}
	view := planner.View1D(c, xs, es)
	fo := fit.Options{WindowEnergy: opt.WindowEnergy, EnergyNoise: opt.EnergyNoise, Asymptote: opt.Limit, NoLevels: opt.NoLevels}
	if c.Kind != planner.KindDistance {
		fo.Kind = fit.Angle
	}
	diatomic := len(mol.Atoms) == 2 && c.Kind == planner.KindDistance
	lowest := 0
	for i := range xs {
		if es[i] < es[lowest] {
			lowest = i
		}
	}
	massAt := func(x float64) (float64, error) {
		return spec.EffectiveMass(planner.Point{Key: "analysis", Values: []float64{view.Back(x)}}, 0)
	}
	formula := mol.Isotopologue() // HDO, not H2O
	switch {
	case diatomic:
		res.Model = "diatomic"
		res.MassModel = "diatomic: reduced mass of the two atoms (masses from the spec, AME2020); rotational constants from r_e"
		name := planner.IsotopeLabel(mol.Atoms[0].Element.Symbol, mol.Atoms[0].MassNumber) + planner.IsotopeLabel(mol.Atoms[1].Element.Symbol, mol.Atoms[1].MassNumber)
		fo.Isotopologues = append([]fit.MassSet{{Name: name, Masses: []float64{mol.Atoms[0].Mass, mol.Atoms[1].Mass}}}, opt.Isotopologues...)
	default:
		if len(opt.Isotopologues) > 0 {
			return errors.New("analysis: extra isotopologues by atomic masses apply to a diatomic bond scan only; give a polyatomic's isotopes in the spec's [molecule] isotopes")
		}
		res.Model = "one-dimensional"
		if c.Periodic() {
			res.Model = "torsion-partial"
		}
		res.MassModel = fmt.Sprintf("1-D along the scan (rigid): kinetic metric of %s (%s) from the atoms' displacement along the scan with overall translation and rotation removed, evaluated at each minimum", c.Name, massUnit(c))
		if spec.Relaxed() {
			// The energies are the relaxed path's; the mass is still the
			// scanned coordinate's own displacement from the reference
			// geometry (the relaxed path's kinetic coupling is not used).
			res.MassModel = fmt.Sprintf("1-D along the scan (relaxed energies: every other coordinate optimised at each point): kinetic metric of %s (%s) from the scanned coordinate's own displacement at the reference geometry, overall translation and rotation removed, evaluated at each minimum; the relaxed path's own kinetic coupling is not included", c.Name, massUnit(c))
		}
		mu, err := spec.EffectiveMass(planner.Point{Key: "analysis", Values: []float64{xs[lowest]}}, 0)
		if err != nil {
			return fmt.Errorf("analysis: kinetic metric of %s: %w", c.Name, err)
		}
		fo.Isotopologues = []fit.MassSet{{Name: formula, EffectiveMass: mu}}
	}
	if view.Mirrored {
		res.Warnings = append(res.Warnings, fmt.Sprintf("the bend %s reaches 180°: its energy is even about the linear geometry, so the points are mirrored about 180° for the fit", c.Name))
	}
	if view.RangeEdges {
		res.Warnings = append(res.Warnings, fmt.Sprintf("the torsion %s covers only part of its %g° period: each well is analysed locally (no Fourier series, no hindered-rotor levels); scan the whole period for those", c.Name, c.PeriodDegrees()))
	}
	cr, err := fit.Curve(ctx, view.Xs, view.Es, fo)
	if err != nil {
		return fmt.Errorf("analysis: %w", err)
	}
	// Keep the wells of the original half (a mirrored bend) or the middle
	// copy, and only wells the data bracket.
	noise := opt.EnergyNoise
	if noise == 0 {
		noise = 1e-7
	}
	var keep []fit.Minimum
	for _, m := range cr.Minima {
		x := m.XE
		if x < view.Lo-1e-9 || x > view.Hi+1e-9 {
			continue
		}
		if why := unbracketed(view.Xs, view.Es, m, noise); why != "" {
			res.Warnings = append(res.Warnings, fmt.Sprintf("no constants for the lowest point near %s: %s", at(spec, view.Back(x)), why))
			continue
		}
		keep = append(keep, m)
	}
	if len(keep) == 0 {
		res.Curve = cr
		res.Warnings = append(res.Warnings, cr.Warnings...)
		return errors.New("analysis: no well is bracketed by the data: the energies fall toward an end of the scan (extend the scan past the lowest point)")
	}
	// The kinetic metric at each well's own minimum (polyatomics): refit
	// with it when it differs from the first guess.
	if !diatomic {
		for i := range keep {
			mu, err := massAt(keep[i].XE)
			if err != nil {
				return fmt.Errorf("analysis: kinetic metric of %s at %s: %w", c.Name, at(spec, view.Back(keep[i].XE)), err)
			}
			if math.Abs(mu-fo.Isotopologues[0].EffectiveMass) > 1e-12*mu {
				o := fo
				o.Isotopologues = []fit.MassSet{{Name: formula, EffectiveMass: mu}}
				again, err := fit.Curve(ctx, view.Xs, view.Es, o)
				if err != nil {
					return fmt.Errorf("analysis: %w", err)
				}
				for _, m := range again.Minima {
					if math.Abs(m.XE-keep[i].XE) < 1e-9 {
						keep[i] = m
					}
				}
			}
			res.Kinetic = append(res.Kinetic, KineticValue{At: at(spec, view.Back(keep[i].XE)), Value: mu, Unit: massUnit(c)})
		}
	}
	for i := range keep {
		m := &keep[i]
		if c.Kind != planner.KindDistance {
			m.ThetaEDegree = c.Unwrap(view.Back(m.XE), spec.Units())
		}
		m.Label = fmt.Sprintf("well %d", i+1)
		if view.Mirrored && math.Abs(m.ThetaEDegree-180) < 1e-3 {
			m.Warnings = append(m.Warnings, "the minimum is linear: the bend is doubly degenerate (two perpendicular planes), so ω_e is the harmonic bending wavenumber but the levels listed are those of the one plane scanned, not the bending levels of the linear molecule (which carry vibrational angular momentum)")
		}
	}
	cr.Minima = keep
	res.Curve, res.Minima = cr, keep
	res.Barriers = lineBarriers(spec, view, keep, noise)
	return nil
}

// unbracketed says why a fitted minimum is not a well the data support,
// or "" when it is: the data must rise above it on both sides by more
// than the noise.
func unbracketed(xs, es []float64, m fit.Minimum, noise float64) string {
	thr := m.EMin + math.Max(10*noise, 3*m.EMinStderr)
	left, right := false, false
	for i := range xs {
		if xs[i] < m.XE && es[i] > thr {
			left = true
		}
		if xs[i] > m.XE && es[i] > thr {
			right = true
		}
	}
	switch {
	case m.XE <= xs[0] || m.XE >= xs[len(xs)-1]:
		return "its fitted minimum lies outside the sampled range, so it is an extrapolation, not a well"
	case !left || !right:
		return "the data do not rise on both sides of it (an edge ramp, not a bracketed well)"
	}
	return ""
}

// lineBarriers locates the maxima between consecutive wells of a 1-D scan
// with the local polynomial of fit.Extremum.
func lineBarriers(spec *planner.Spec, view planner.LineView, wells []fit.Minimum, noise float64) []Barrier {
	c := spec.Coordinates()[0]
	if len(wells) < 2 {
		return nil
	}
	xs, es := view.Xs, view.Es
	ws := append([]fit.Minimum(nil), wells...)
	sort.Slice(ws, func(a, b int) bool { return ws[a].XE < ws[b].XE })
	emin := math.Inf(1)
	var eminSE float64
	for _, w := range ws {
		if w.EMin < emin {
			emin, eminSE = w.EMin, w.EMinStderr
		}
	}
	var out []Barrier
	for k := 0; k+1 < len(ws); k++ {
		a, b := ws[k], ws[k+1]
		// The highest sample between the two minima.
		top := -1
		for i := 1; i < len(xs)-1; i++ {
			if xs[i] > a.XE && xs[i] < b.XE && (top < 0 || es[i] > es[top]) {
				top = i
			}
		}
		if top < 0 {
			continue
		}
		ex, err := fit.Extremum(xs, es, top, 5)
		if err != nil || !(ex.K < 0) {
			ex = fit.LocalExtremum{X: xs[top], E: es[top], Inside: false}
		}
		pos := view.Back(ex.X)
		h := (ex.E - emin) * fit.HartreeInCm1
		unit := "degree"
		scale := 180 / math.Pi
		if c.Kind == planner.KindDistance {
			unit = string(spec.Units())
			scale = c.Display(1, spec.Units())
		}
		br := Barrier{X: c.Unwrap(pos, spec.Units()), XStderr: ex.XStderr * scale, Unit: unit, Energy: ex.E,
			HeightCm1: h, HeightStderr: math.Hypot(ex.EStderr, eminSE) * fit.HartreeInCm1,
			HeightKJMol: h / fit.HartreeInCm1 * fit.HartreeInKJPerMol, HeightKcal: h / fit.HartreeInCm1 * fit.HartreeInKcalPerMol,
			Multiplicity: 1, LeftMin: c.Unwrap(view.Back(a.XE), spec.Units()), LeftHeightCm1: (ex.E - a.EMin) * fit.HartreeInCm1,
			RightMin: c.Unwrap(view.Back(b.XE), spec.Units()), RightHeightCm1: (ex.E - b.EMin) * fit.HartreeInCm1,
			Source: "local polynomial"}
		if !ex.Inside {
			br.Source = "highest sampled point (the local polynomial found no maximum between its neighbours)"
		}
		out = append(out, br)
	}
	return out
}

// surface analyses a two-coordinate scan: a polynomial surface, its
// stationary point, and the GF problem with the kinetic metric evaluated
// there.
func surface(ctx context.Context, spec *planner.Spec, pts []Point, opt Options, res *Result) error {
	coords := spec.Coordinates()
	res.Model = "surface"
	x := make([]float64, len(pts))
	y := make([]float64, len(pts))
	e := make([]float64, len(pts))
	lowest := 0
	for k, p := range pts {
		x[k], y[k], e[k] = p.Values[0], p.Values[1], p.Energy
		if e[k] < e[lowest] {
			lowest = k
		}
	}
	gAt := func(vals []float64) ([2][2]float64, error) {
		m, err := spec.KineticMetric(planner.Point{Key: "analysis", Values: vals})
		if err != nil {
			return [2][2]float64{}, err
		}
		det := m[0][0]*m[1][1] - m[0][1]*m[1][0]
		if !(det > 0) {
			return [2][2]float64{}, fmt.Errorf("the kinetic metric of %s and %s is singular (the two coordinates move the atoms the same way)", coords[0].Name, coords[1].Name)
		}
		return [2][2]float64{{m[1][1] / det, -m[0][1] / det}, {-m[1][0] / det, m[0][0] / det}}, nil
	}
	g0, err := gAt(pts[lowest].Values)
	if err != nil {
		return fmt.Errorf("analysis: %w", err)
	}
	so := fit.SurfaceOptions{G: g0, WindowEnergy: opt.WindowEnergy}
	sr, err := fit.Surface2D(x, y, e, so)
	if err != nil {
		quartErr := err
		so.Degree = 2
		if sr, err = fit.Surface2D(x, y, e, so); err != nil {
			return fmt.Errorf("analysis: %w", err)
		}
		res.Warnings = append(res.Warnings, quadraticWarning(x, y, e, sr, so, quartErr))
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	g, err := gAt([]float64{sr.X, sr.Y})
	if err != nil {
		return fmt.Errorf("analysis: kinetic metric at the stationary point: %w", err)
	}
	if err := sr.SetKinetic(g); err != nil {
		return fmt.Errorf("analysis: %w", err)
	}
	res.Surface = sr
	res.MassModel = "2-D: kinetic metric of the two scanned coordinates (their atoms' displacements with overall translation and rotation removed) at the fitted stationary point; GF problem with G = metric⁻¹"
	res.Stationary = map[string]float64{}
	for i, v := range []float64{sr.X, sr.Y} {
		c := coords[i]
		unit := "degree"
		if c.Kind == planner.KindDistance {
			unit = string(spec.Units())
		}
		res.Stationary[c.Name+"_"+unit] = c.Unwrap(v, spec.Units())
	}
	m, _ := spec.KineticMetric(planner.Point{Key: "analysis", Values: []float64{sr.X, sr.Y}})
	for i, c := range coords {
		res.Kinetic = append(res.Kinetic, KineticValue{At: "stationary point, " + c.Name + "·" + c.Name, Value: m[i][i], Unit: massUnit(c)})
	}
	return nil
}

// quadraticWarning measures how far the quadratic fall-back's wavenumbers
// can be off, from the data: the same quadratic fitted to the points in a
// window half as wide changes them by this much.
func quadraticWarning(x, y, e []float64, sr *fit.SurfaceResult, so fit.SurfaceOptions, quartErr error) string {
	msg := fmt.Sprintf("the grid does not determine a quartic surface (%v); a QUADRATIC surface was used: no anharmonic coupling", quartErr)
	narrow := so
	narrow.WindowEnergy = so.WindowEnergy
	if narrow.WindowEnergy == 0 {
		narrow.WindowEnergy = 0.02
	}
	narrow.WindowEnergy /= 2
	if alt, err := fit.Surface2D(x, y, e, narrow); err == nil && len(alt.Frequencies) == len(sr.Frequencies) {
		worst := 0.0
		for i := range alt.Frequencies {
			worst = math.Max(worst, math.Abs(alt.Frequencies[i]-sr.Frequencies[i]))
		}
		msg += fmt.Sprintf("; halving the energy window moves the wavenumbers by up to %.1f cm⁻¹ (first-guess metric), so they are uncertain by at least that much: refine the grid near the minimum", worst)
	} else {
		msg += "; too few points near the minimum to say how far off the wavenumbers are: refine the grid near the minimum"
	}
	return msg
}
