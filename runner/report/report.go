package report

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"sort"
	"strconv"
	"time"

	"wellscan/fit"
	"wellscan/planner"
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
}

// Conditions describe how the scan was computed.
type Conditions struct {
	Title        string
	Dir          string
	Formula      string
	Charge       int
	Multiplicity int
	// Engine is the engine kind ("builtin", "command", "model").
	Engine  string
	Method  string
	Basis   string
	Backend string
	// Mode is "rigid" or "relaxed" ("" reads as rigid).
	Mode    string
	Version string
	Date    time.Time
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
	Fit       any
	FitError  string
	MassModel string
	// Notes are further warnings of the scan itself (refinement status,
	// round budget), shown with the fit's warnings.
	Notes []string
}

// Files returns the names of the files [Write] writes, relative to the
// report directory.
func Files() []string {
	return []string{"curve.csv", "fit.json", "curve.svg", "curve.png", "summary.md", "summary.html"}
}

// Write writes every report file into dir (created if needed), each
// through a temporary file and a rename so that a reader never sees half a
// file.
func Write(ctx context.Context, dir string, in Input) (err error) {
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
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("report: %w", err)
	}
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
	fig, err := NewFigure(in)
	if err != nil {
		return err
	}
	var svg, png bytes.Buffer
	if err := fig.WriteSVG(&svg); err != nil {
		return err
	}
	if err := fig.WritePNG(&png); err != nil {
		return err
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
		if err := writeAtomic(filepath.Join(dir, name), b); err != nil {
			return err
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

func writeAtomic(path string, b []byte) error {
	f, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".tmp*")
	if err != nil {
		return fmt.Errorf("report: %w", err)
	}
	_, werr := f.Write(b)
	cerr := f.Close()
	if err := errors.Join(werr, cerr); err != nil {
		os.Remove(f.Name())
		return fmt.Errorf("report: %s: %w", path, err)
	}
	if err := os.Chmod(f.Name(), 0o644); err != nil {
		os.Remove(f.Name())
		return fmt.Errorf("report: %w", err)
	}
	if err := os.Rename(f.Name(), path); err != nil {
		os.Remove(f.Name())
		return fmt.Errorf("report: %w", err)
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
	if err := in.check(); err != nil {
		return err
	}
	cw := csv.NewWriter(w)
	head := []string{"key"}
	for _, a := range in.Axes {
		u, _ := otherUnit(a)
		head = append(head, fmt.Sprintf("%s [%s]", a.Name, a.Unit), fmt.Sprintf("%s [%s]", a.Name, u))
	}
	head = append(head, "energy [hartree]", "relative [cm-1]", "relative [kJ/mol]", "state", "scan")
	if err := cw.Write(head); err != nil {
		return fmt.Errorf("report: curve.csv: %w", err)
	}
	ref, _, _ := in.Reference()
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
		row = append(row, p.State, modeWord(in.Conditions.Mode))
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

// WriteFitJSON writes fit.json: in.Fit, indented; or, when there is no
// fit, an object with the reason.
func WriteFitJSON(w io.Writer, in Input) error {
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
