package command

import (
	"context"
	"fmt"
	"math"
	"os"
	"slices"
	"strconv"
	"strings"
	"text/template"

	"wellscan/planner"
)

// Atom is one nucleus of a point's geometry. Pos is in bohr; Mass in amu.
type Atom struct {
	Symbol string
	Z      int
	Mass   float64
	Pos    [3]float64
}

// Job is one point to run. Dir is its directory (created if absent);
// Coords holds the scanned coordinates' values in the spec's units, named
// in CoordUnits ("angstrom", "degree", …); Atoms are in bohr.
type Job struct {
	Dir                  string
	Title, Key           string
	Coords               map[string]float64
	CoordUnits           map[string]string
	Atoms                []Atom
	Charge, Multiplicity int
	// Attempt numbers the tries of the point (1 for the first); a program
	// left running by a killed run is adopted only for the same attempt.
	Attempt int
}

// Number is a value printed into an input. Printed as it is ({{.Coords.r}},
// {{.Mass}}) it shows 10 decimals, fixed-point, never an exponent, and
// never "-0.0000000000"; use the fixed and sci helpers for other layouts.
type Number float64

// String formats n with 10 decimals.
func (n Number) String() string { return fixedText(float64(n), 10) }

func fixedText(x float64, prec int) string {
	s := strconv.FormatFloat(x, 'f', prec, 64)
	if strings.HasPrefix(s, "-") && strings.Trim(s[1:], "0.") == "" {
		s = s[1:]
	}
	return s
}

// Vec is a position, printed component by component: {{.Ang.X}}.
type Vec struct{ X, Y, Z Number }

// AtomView is an atom as a template sees it in {{range .Atoms}}.
type AtomView struct {
	Index  int // 1-based position in the geometry
	Symbol string
	Z      int    // atomic number
	Mass   Number // amu
	Ang    Vec    // position in Å
	Bohr   Vec    // position in bohr
}

// Point is what a template's dot is. Fields:
//
//	.Title           the scan's title (may hold any text; see oneline)
//	.Key             the point's key, e.g. r=1.12800
//	.Coords.r        the value of coordinate r in its spec unit (a Number)
//	.Units.r         that unit's name, e.g. angstrom
//	.Charge          total charge
//	.Multiplicity    spin multiplicity 2S+1
//	.Electrons       electron count (sum of Z minus charge)
//	.NAtoms          number of atoms
//	.Atoms           per-atom: .Index .Symbol .Z .Mass .Ang.X … .Bohr.Z
//	.Input           the input file's name
//
// Methods:
//
//	{{.XYZ "angstrom"}}   the geometry, one "symbol x y z" line per atom,
//	                      in angstrom or bohr, no trailing newline
//	{{.Coord "r"}}        like .Coords.r, for names that are not
//	                      identifiers ({{.Coord "r-1"}})
//
// Functions:
//
//	fixed N X       X with N decimals            {{fixed 6 .Coords.r}}
//	sci N X         X as d.dddE±xx, N decimals   {{sci 8 .Mass}}
//	toBohr X        X (Å) in bohr                {{toBohr .Coords.r}}
//	toAngstrom X    X (bohr) in Å
//	oneline S       S with line breaks turned into blanks
//	                                             {{oneline .Title}}
//
// A missing map key ({{.Coords.q}} in a scan of r) is an error, not an
// empty value.
type Point struct {
	Title        string
	Key          string
	Coords       map[string]Number
	Units        map[string]string
	Charge       int
	Multiplicity int
	Electrons    int
	NAtoms       int
	Atoms        []AtomView
	Input        string
}

// XYZ returns the geometry as "symbol x y z" lines in unit ("angstrom" or
// "bohr", as the spec accepts them).
func (p Point) XYZ(unit string) (string, error) {
	u, ok := planner.ParseLengthUnit(unit)
	if !ok {
		return "", fmt.Errorf("unknown length unit %q; expected \"angstrom\" or \"bohr\"", unit)
	}
	var b strings.Builder
	for i, a := range p.Atoms {
		v := a.Bohr
		if u == planner.Angstrom {
			v = a.Ang
		}
		if i > 0 {
			b.WriteByte('\n')
		}
		fmt.Fprintf(&b, "%-2s %15s %15s %15s", a.Symbol, v.X, v.Y, v.Z)
	}
	return b.String(), nil
}

// Coord returns the value of coordinate name; an unknown name is an error
// that lists the known ones.
func (p Point) Coord(name string) (Number, error) {
	v, ok := p.Coords[name]
	if !ok {
		names := make([]string, 0, len(p.Coords))
		for k := range p.Coords {
			names = append(names, k)
		}
		slices.Sort(names)
		return 0, fmt.Errorf("no coordinate %q; this scan has %s", name, strings.Join(names, ", "))
	}
	return v, nil
}

func newPoint(job Job, input string) Point {
	p := Point{
		Title:        job.Title,
		Key:          job.Key,
		Coords:       make(map[string]Number, len(job.Coords)),
		Units:        make(map[string]string, len(job.CoordUnits)),
		Charge:       job.Charge,
		Multiplicity: job.Multiplicity,
		NAtoms:       len(job.Atoms),
		Input:        input,
	}
	for k, v := range job.Coords {
		p.Coords[k] = Number(v)
	}
	for k, v := range job.CoordUnits {
		p.Units[k] = v
	}
	z := 0
	for i, a := range job.Atoms {
		z += a.Z
		ang := func(k int) Number { return Number(a.Pos[k] * planner.BohrInAngstrom) }
		p.Atoms = append(p.Atoms, AtomView{
			Index:  i + 1,
			Symbol: a.Symbol,
			Z:      a.Z,
			Mass:   Number(a.Mass),
			Ang:    Vec{ang(0), ang(1), ang(2)},
			Bohr:   Vec{Number(a.Pos[0]), Number(a.Pos[1]), Number(a.Pos[2])},
		})
	}
	p.Electrons = z - job.Charge
	return p
}

func toFloat(x any) (float64, error) {
	switch t := x.(type) {
	case Number:
		return float64(t), nil
	case float64:
		return t, nil
	case int:
		return float64(t), nil
	case int64:
		return float64(t), nil
	}
	return 0, fmt.Errorf("expected a number, got %T", x)
}

var helpers = template.FuncMap{
	"fixed": func(prec int, x any) (string, error) {
		v, err := toFloat(x)
		if err != nil {
			return "", fmt.Errorf("fixed: %w", err)
		}
		if prec < 0 || prec > 30 {
			return "", fmt.Errorf("fixed: %d decimals; expected 0 to 30", prec)
		}
		return fixedText(v, prec), nil
	},
	"sci": func(prec int, x any) (string, error) {
		v, err := toFloat(x)
		if err != nil {
			return "", fmt.Errorf("sci: %w", err)
		}
		if prec < 0 || prec > 30 {
			return "", fmt.Errorf("sci: %d decimals; expected 0 to 30", prec)
		}
		return strconv.FormatFloat(v, 'E', prec, 64), nil
	},
	"toBohr": func(x any) (Number, error) {
		v, err := toFloat(x)
		return Number(v * planner.AngstromInBohr), err
	},
	"toAngstrom": func(x any) (Number, error) {
		v, err := toFloat(x)
		return Number(v * planner.BohrInAngstrom), err
	},
	"oneline": func(s string) string {
		return strings.Join(strings.FieldsFunc(s, func(r rune) bool { return r == '\n' || r == '\r' }), " ")
	},
}

// Render reads the template file and renders the input for job. Errors
// carry the template's file name and line (text/template's
// "template: FILE:LINE:COL: …") and the point's key.
func (c Config) Render(job Job) ([]byte, error) {
	return c.RenderContext(context.Background(), job)
}

// RenderContext is Render bounded by ctx (a cancellation, the point's
// timeout; without a deadline, DefaultRenderTimeout) and by
// MaxInputBytes.
func (c Config) RenderContext(ctx context.Context, job Job) ([]byte, error) {
	tmpl := c.parsed
	if tmpl == nil {
		var err error
		if tmpl, err = c.parseTemplate(); err != nil {
			return nil, err
		}
	}
	p := newPoint(job, c.InputName)
	for _, v := range p.Coords {
		if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
			return nil, fmt.Errorf("command: point %s: a coordinate value is not finite", job.Key)
		}
	}
	out, err := execute(ctx, tmpl, p)
	if err != nil {
		return nil, fmt.Errorf("command: point %s: %w", job.Key, err)
	}
	return out, nil
}

// maxTemplateBytes caps the input template read (1 MiB).
const maxTemplateBytes = 1 << 20

func (c Config) parseTemplate() (*template.Template, error) {
	if err := planner.CheckRegular(c.Template); err != nil {
		return nil, fmt.Errorf("command: input template: %s", strings.TrimPrefix(err.Error(), "planner: "))
	}
	if st, err := os.Stat(c.Template); err == nil && st.Size() > maxTemplateBytes {
		return nil, fmt.Errorf("command: template %s is %d bytes, more than the %d an input template may have", c.Template, st.Size(), maxTemplateBytes)
	}
	text, err := os.ReadFile(c.Template)
	if err != nil {
		return nil, fmt.Errorf("command: input template: %w", err)
	}
	tmpl, err := template.New(c.Template).Option("missingkey=error").Funcs(helpers).Parse(string(text))
	if err != nil {
		return nil, fmt.Errorf("command: %w", err)
	}
	if err := checkLiteralRanges(tmpl); err != nil {
		return nil, err
	}
	return tmpl, nil
}
