package report

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"runtime"
	"sort"
	"strconv"
	"time"

	"wellscan/fit"
	"wellscan/planner"
	"wellscan/runner/analysis"
)

// Axis is one scanned coordinate as the spec names it.
type Axis struct {
	Name string
	// Kind is "distance", "angle" or "torsion".
	Kind string
	// Unit is the display unit of Point.Values: "angstrom" or "bohr" for a
	// distance, "degree" for an angle or torsion.
	Unit string
	// Digits is the number of decimals of a point key (display units).
	Digits int
}

// IsLength reports whether the axis is a distance.
func (a Axis) IsLength() bool { return a.Kind == "distance" }

// Point is one point of the scan.
type Point struct {
	Key string
	// Values in the axes' display units, one per axis.
	Values []float64
	// State is the point's lifecycle state ("done", "failed", …).
	State string
	// Energy in hartree; nil unless the point is done.
	Energy   *float64
	Attempts int
	// Error is the point's last error, if any.
	Error string

	// Diagnostics of the calculation, where the backend reported them:
	// SCF iterations (0: unknown), ⟨S²⟩ of a UHF reference, the dipole
	// moment's magnitude in debye, and the MP2 energy parts.
	Iterations  int
	SSquared    *float64
	DipoleDebye *float64
	MP2         *MP2Parts
}

// MP2Parts are the pieces of an MP2 energy, in hartree: the reference
// (Hartree–Fock) energy and the correlation energy, split into its
// same-spin and opposite-spin pair contributions.
type MP2Parts struct {
	Reference, Correlation, SameSpin, OppositeSpin float64
}

// Warning is one warning of the report. Level is "serious" (a number may
// be wrong without looking wrong: shown in the alarm box), "caution" or
// "note"; warnings are listed in that order.
type Warning struct {
	Level string
	Text  string
}

// Conditions describe how the scan was computed.
type Conditions struct {
	Title string
	Dir   string
	// Formula names the molecule as its isotopologue ("HDO", "¹³CO").
	Formula      string
	Charge       int
	Multiplicity int
	// Engine is the engine kind ("builtin", "command", "model").
	Engine  string
	Method  string
	Basis   string
	Backend string
	Version string
	Date    time.Time
	// ScanKind is "rigid" (the coordinates not scanned stay at the
	// reference geometry) or "relaxed".
	ScanKind string
	// Geometry is the reference geometry, one "symbol x y z" line per
	// atom in Å.
	Geometry []string
	// Isotopes lists the atoms with an isotope other than the most
	// abundant one; empty: every atom has its most abundant isotope.
	Isotopes []string
	// SCF states the SCF convergence criteria; FrozenCore whether MP2
	// left the cores uncorrelated (empty when not MP2).
	SCF        string
	FrozenCore string
}

// Input is everything a report is made from. Curve (1-D) or Surface (2-D)
// may be nil when the fit failed; FitError then says why.
type Input struct {
	Conditions Conditions
	Axes       []Axis
	Points     []Point
	Curve      *fit.Result
	Surface    *fit.SurfaceResult
	// Fit is written as fit.json (the command's full fit record).
	Fit      any
	FitError string
	// Analysis is the scan's analysis (torsion series, barriers, kinetic
	// model); nil for a table that is not a scan.
	Analysis  *analysis.Result
	MassModel string
	// Notes are further warnings of the scan itself (refinement status,
	// round budget), shown with the fit's warnings.
	Notes []string
	// Warnings are the scan's own warnings with their level (those
	// `wellscan status` shows), most serious first.
	Warnings []Warning
}

// Files returns the names of the files [Write] writes, relative to the
// report directory. The figure (curve.svg, curve.png) is left out when no
// point has an energy ([Input.HasEnergies]).
func Files() []string {
	return []string{"curve.csv", "fit.json", "curve.svg", "curve.png", "summary.md", "summary.html"}
}

// HasEnergies reports whether any point has an energy (and so whether
// there is a figure to draw).
func (in Input) HasEnergies() bool {
	for _, p := range in.Points {
		if p.Energy != nil {
			return true
		}
	}
	return false
}

// Dest receives the report's files by name (relative to the report
// directory). A scan's report goes through the runner's confined writer,
// which refuses symbolic links and keeps every file inside the scan
// directory.
type Dest interface {
	WriteFile(name string, data []byte) error
	// Remove removes name; a name that does not exist is not an error.
	Remove(name string) error
}

// WriteTo renders every report file and hands each to dest.
func WriteTo(ctx context.Context, dest Dest, in Input) (err error) {
	// The plotting library reports some impossible requests by panicking;
	// turn those into an error, keep runtime errors (our bugs) as panics.
	defer func() {
		if r := recover(); r != nil {
			if re, ok := r.(runtime.Error); ok {
				panic(re)
			}
			err = fmt.Errorf("report: drawing the figure: %v", r)
		}
	}()
	if err := in.check(); err != nil {
		return err
	}
	in = in.cleaned()
	var csvb, jsonb, md, html bytes.Buffer
	if err := WriteCSV(&csvb, in); err != nil {
		return err
	}
	if err := WriteFitJSON(&jsonb, in); err != nil {
		return err
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	// With no energy at all (every point failed) there is nothing to
	// draw; the summary still reports the failures.
	var svg, png bytes.Buffer
	if in.HasEnergies() {
		fig, err := NewFigure(in)
		if err != nil {
			return err
		}
		if err := fig.WriteSVG(&svg); err != nil {
			return err
		}
		if err := fig.WritePNG(&png); err != nil {
			return err
		}
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	if err := WriteMarkdown(&md, in); err != nil {
		return err
	}
	if err := WriteHTML(&html, in, svg.Bytes()); err != nil {
		return err
	}
	for name, b := range map[string][]byte{"curve.csv": csvb.Bytes(), "fit.json": jsonb.Bytes(), "curve.svg": svg.Bytes(),
		"curve.png": png.Bytes(), "summary.md": md.Bytes(), "summary.html": html.Bytes()} {
		if b == nil && (name == "curve.svg" || name == "curve.png") {
			// A figure of an earlier report must not pass for this one's.
			if err := dest.Remove(name); err != nil {
				return fmt.Errorf("report: %w", err)
			}
			continue
		}
		if err := dest.WriteFile(name, b); err != nil {
			return fmt.Errorf("report: %s: %w", name, err)
		}
	}
	return nil
}

func (in Input) check() error {
	if len(in.Axes) == 0 || len(in.Axes) > 2 {
		return fmt.Errorf("report: %d scanned coordinates; a report covers 1 or 2", len(in.Axes))
	}
	for _, p := range in.Points {
		if len(p.Values) != len(in.Axes) {
			return fmt.Errorf("report: point %s has %d coordinate values for %d axes", p.Key, len(p.Values), len(in.Axes))
		}
		if p.Energy != nil && (math.IsNaN(*p.Energy) || math.IsInf(*p.Energy, 0)) {
			return fmt.Errorf("report: point %s has a non-finite energy", p.Key)
		}
	}
	return nil
}

// Reference returns the energy relative energies are measured from
// (hartree) and what it is: the lowest fitted minimum, else the lowest
// done point. ok is false when no point has an energy.
func (in Input) Reference() (e float64, what string, ok bool) {
	if in.Curve != nil && len(in.Curve.Minima) > 0 {
		e = math.Inf(1)
		for _, m := range in.Curve.Minima {
			e = math.Min(e, m.EMin)
		}
		return e, "fitted minimum", true
	}
	if in.Surface != nil {
		return in.Surface.E, "fitted stationary point of the surface", true
	}
	e = math.Inf(1)
	for _, p := range in.Points {
		if p.Energy != nil && *p.Energy < e {
			e, ok = *p.Energy, true
		}
	}
	return e, "lowest computed point", ok
}

// otherUnit returns the name of the second unit of an axis and the factor
// from the display unit to it.
func otherUnit(a Axis) (string, float64) {
	switch {
	case a.IsLength() && a.Unit == "bohr":
		return "angstrom", planner.BohrInAngstrom
	case a.IsLength():
		return "bohr", planner.AngstromInBohr
	}
	return "radian", math.Pi / 180
}

// sortedPoints returns the points ordered by their coordinate values.
func (in Input) sortedPoints() []Point {
	ps := append([]Point(nil), in.Points...)
	sort.SliceStable(ps, func(i, j int) bool {
		for k := range ps[i].Values {
			if ps[i].Values[k] != ps[j].Values[k] {
				return ps[i].Values[k] < ps[j].Values[k]
			}
		}
		return ps[i].Key < ps[j].Key
	})
	return ps
}

// WriteCSV writes curve.csv: one row per point, ordered by coordinate,
// with the coordinates in the spec's unit and the other unit of the pair,
// the energy in hartree (10 decimals), relative to [Input.Reference] in
// cm⁻¹ (4 decimals) and kJ/mol (6 decimals), and the state. Energies of
// points that are not done are left empty. Units are named in the header
// in brackets.
func WriteCSV(w io.Writer, in Input) error {
	in = in.cleaned()
	if err := in.check(); err != nil {
		return err
	}
	cw := csv.NewWriter(w)
	head := []string{"key"}
	for _, a := range in.Axes {
		u, _ := otherUnit(a)
		head = append(head, fmt.Sprintf("%s [%s]", a.Name, a.Unit), fmt.Sprintf("%s [%s]", a.Name, u))
	}
	// Relative energies are above the lowest computed point, a reference
	// that needs no fit: curve.csv and `wellscan export` (which never
	// fits) give the same numbers.
	head = append(head, "energy [hartree]", "above lowest point [cm-1]", "above lowest point [kJ/mol]", "state", "scan")
	diag := in.diagnosticColumns()
	for _, d := range diag {
		head = append(head, d.head)
	}
	if err := cw.Write(head); err != nil {
		return fmt.Errorf("report: curve.csv: %w", err)
	}
	ref := math.Inf(1)
	for _, p := range in.Points {
		if p.Energy != nil {
			ref = math.Min(ref, *p.Energy)
		}
	}
	for _, p := range in.sortedPoints() {
		row := []string{p.Key}
		for k, a := range in.Axes {
			_, f := otherUnit(a)
			row = append(row, strconv.FormatFloat(p.Values[k], 'f', a.Digits, 64), strconv.FormatFloat(p.Values[k]*f, 'f', a.Digits+2, 64))
		}
		if p.Energy != nil {
			d := *p.Energy - ref
			row = append(row, strconv.FormatFloat(*p.Energy, 'f', 10, 64),
				strconv.FormatFloat(d*planner.HartreeInCm1, 'f', 4, 64),
				strconv.FormatFloat(d*planner.HartreeInKJPerMol, 'f', 6, 64))
		} else {
			row = append(row, "", "", "")
		}
		row = append(row, p.State, modeWord(in.Conditions.ScanKind))
		for _, d := range diag {
			row = append(row, d.cell(p))
		}
		if err := cw.Write(row); err != nil {
			return fmt.Errorf("report: curve.csv: %w", err)
		}
	}
	cw.Flush()
	if err := cw.Error(); err != nil {
		return fmt.Errorf("report: curve.csv: %w", err)
	}
	return nil
}

// diagColumn is one diagnostic column of curve.csv.
type diagColumn struct {
	head string
	cell func(Point) string
}

// diagnosticColumns are the diagnostic columns some point has data for,
// in a fixed order: SCF iterations, ⟨S²⟩, dipole (debye), MP2 parts
// (hartree). A scan whose backend reports none (a model potential, most
// external programs) gets none.
func (in Input) diagnosticColumns() []diagColumn {
	var it, s2, dip, mp2 bool
	for _, p := range in.Points {
		it = it || p.Iterations > 0
		s2 = s2 || p.SSquared != nil
		dip = dip || p.DipoleDebye != nil
		mp2 = mp2 || p.MP2 != nil
	}
	f := func(v *float64, prec int) string {
		if v == nil {
			return ""
		}
		return strconv.FormatFloat(*v, 'f', prec, 64)
	}
	mp := func(get func(MP2Parts) float64) func(Point) string {
		return func(p Point) string {
			if p.MP2 == nil {
				return ""
			}
			v := get(*p.MP2)
			return f(&v, 10)
		}
	}
	var out []diagColumn
	if it {
		out = append(out, diagColumn{"scf iterations", func(p Point) string {
			if p.Iterations == 0 {
				return ""
			}
			return strconv.Itoa(p.Iterations)
		}})
	}
	if s2 {
		out = append(out, diagColumn{"<S^2>", func(p Point) string { return f(p.SSquared, 6) }})
	}
	if dip {
		out = append(out, diagColumn{"dipole [debye]", func(p Point) string { return f(p.DipoleDebye, 6) }})
	}
	if mp2 {
		out = append(out,
			diagColumn{"mp2 reference [hartree]", mp(func(m MP2Parts) float64 { return m.Reference })},
			diagColumn{"mp2 correlation [hartree]", mp(func(m MP2Parts) float64 { return m.Correlation })},
			diagColumn{"mp2 same-spin [hartree]", mp(func(m MP2Parts) float64 { return m.SameSpin })},
			diagColumn{"mp2 opposite-spin [hartree]", mp(func(m MP2Parts) float64 { return m.OppositeSpin })})
	}
	return out
}

// WriteFitJSON writes fit.json: in.Fit, indented; or, when there is no
// fit, an object with the reason.
func WriteFitJSON(w io.Writer, in Input) error {
	in = in.cleaned()
	v := in.Fit
	if v == nil {
		v = map[string]string{"error": in.FitError}
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	if err := enc.Encode(v); err != nil {
		return fmt.Errorf("report: fit.json: %w", err)
	}
	return nil
}
