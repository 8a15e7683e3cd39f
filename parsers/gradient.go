package parsers

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"regexp"
	"strings"
)

// ErrGradientMissing and ErrGradientInvalid are wrapped by the errors of
// [GradientExtractor.Extract]: no gradient where the extractor looks, or
// something there that is not N rows of three finite numbers.
var (
	ErrGradientMissing = errors.New("parsers: gradient missing")
	ErrGradientInvalid = errors.New("parsers: gradient invalid")
)

// BohrInAngstrom is the Bohr radius in Å (CODATA 2018, the source of the
// energy factors in units.go); repeated here because parsers imports no
// other wellscan package.
const BohrInAngstrom = 0.529177210903

// GradientUnit is the unit a program writes gradient (or force)
// components in. The zero value is invalid: a unit must always be named.
type GradientUnit string

// The gradient units a [GradientSpec] accepts.
const (
	HartreePerBohr     GradientUnit = "hartree/bohr"
	HartreePerAngstrom GradientUnit = "hartree/angstrom"
	EVPerAngstrom      GradientUnit = "eV/angstrom"
)

// ParseGradientUnit accepts, case-insensitively:
//
//	hartree/bohr, Eh/bohr, au, a.u.     → HartreePerBohr
//	hartree/angstrom, Eh/angstrom, hartree/Å, Eh/Å → HartreePerAngstrom
//	eV/angstrom, eV/Å, eV/A              → EVPerAngstrom
func ParseGradientUnit(s string) (GradientUnit, error) {
	t := strings.ToLower(strings.ReplaceAll(strings.TrimSpace(s), " ", ""))
	t = strings.ReplaceAll(t, "å", "angstrom")
	switch t {
	case "hartree/bohr", "eh/bohr", "au", "a.u.":
		return HartreePerBohr, nil
	case "hartree/angstrom", "eh/angstrom", "hartree/a", "eh/a":
		return HartreePerAngstrom, nil
	case "ev/angstrom", "ev/a":
		return EVPerAngstrom, nil
	case "":
		return "", errors.New("parsers: gradient unit missing: name it (hartree/bohr, hartree/angstrom or eV/angstrom)")
	}
	return "", fmt.Errorf("parsers: gradient unit %q: expected hartree/bohr, hartree/angstrom or eV/angstrom", clip(s))
}

// toHartreePerBohr is the factor that turns a component in u into
// hartree/bohr: dE/dx[bohr] = dE/dx[Å] · (Å per bohr).
func (u GradientUnit) toHartreePerBohr() float64 {
	switch u {
	case HartreePerAngstrom:
		return BohrInAngstrom
	case EVPerAngstrom:
		return BohrInAngstrom / HartreeInEV
	}
	return 1
}

// GradientSpec describes how to read a gradient (or forces) from a
// program's output: N rows of x, y, z, one per atom in input order.
//
// Kinds:
//
//   - "block": Label is text that starts a line (after blanks); the rows
//     follow it, each line ending in three numbers (anything before them,
//     an index or an element symbol, is ignored). Up to three lines
//     without three trailing numbers (a column header, a rule) may come
//     between the label and the first row.
//   - "regexp": Pattern is a regular expression with named groups x, y
//     and z, matched once per atom, in order, in multi-line mode.
//   - "json": Path selects an array of N arrays of three numbers, or a flat
//     array of 3N numbers.
//
// An empty Kind is inferred from which one of Label, Pattern and Path is
// set. Match picks the occurrence (of the label, of the run of N matches,
// of the JSON document): "last" (the default) or "first". Unit is
// required (see [ParseGradientUnit]); Sign is "gradient" (dE/dR, the
// default) or "force" (−dE/dR).
type GradientSpec struct {
	Kind    string
	Label   string
	Pattern string
	Path    string
	Match   string
	Unit    string
	Sign    string
}

// GradientExtractor reads a gradient. Build it with [GradientSpec.Compile];
// it is immutable and safe for concurrent use.
type GradientExtractor struct {
	kind  string
	desc  string
	label string
	re    *regexp.Regexp
	gx    [3]int
	path  JSONPath
	last  bool
	unit  GradientUnit
	force bool
}

// maxGradientAtoms bounds the rows a gradient may have.
const maxGradientAtoms = 1 << 16

// Compile checks the spec and returns its extractor.
func (s GradientSpec) Compile() (GradientExtractor, error) {
	kind := strings.ToLower(strings.TrimSpace(s.Kind))
	if kind == "" {
		var set []string
		if s.Label != "" {
			set, kind = append(set, "label"), "block"
		}
		if s.Pattern != "" {
			set, kind = append(set, "pattern"), KindRegexp
		}
		if s.Path != "" {
			set, kind = append(set, "path"), KindJSON
		}
		switch len(set) {
		case 0:
			return GradientExtractor{}, errors.New("parsers: gradient: set one of label (the line before the rows), pattern (a regular expression with groups x, y, z) or path (a JSON path)")
		case 1:
		default:
			return GradientExtractor{}, fmt.Errorf("parsers: gradient: %s are all set; set only one", strings.Join(set, " and "))
		}
	}
	unit, err := ParseGradientUnit(s.Unit)
	if err != nil {
		return GradientExtractor{}, err
	}
	x := GradientExtractor{kind: kind, unit: unit}
	switch m := strings.ToLower(strings.TrimSpace(s.Match)); m {
	case "", "last":
		x.last = true
	case "first":
	default:
		return GradientExtractor{}, fmt.Errorf("parsers: gradient match %q: expected first or last", clip(s.Match))
	}
	switch sg := strings.ToLower(strings.TrimSpace(s.Sign)); sg {
	case "", "gradient":
	case "force", "forces":
		x.force = true
	default:
		return GradientExtractor{}, fmt.Errorf("parsers: gradient sign %q: expected gradient (dE/dR) or force (−dE/dR)", clip(s.Sign))
	}
	switch kind {
	case "block":
		l := strings.TrimSpace(s.Label)
		if l == "" || strings.ContainsAny(l, "\r\n") {
			return GradientExtractor{}, fmt.Errorf("parsers: gradient label %q: want the text that starts one line", clip(s.Label))
		}
		x.label, x.desc = l, fmt.Sprintf("gradient block after %q", clip(l))
	case KindRegexp:
		re, err := regexp.Compile("(?m)" + s.Pattern)
		if err != nil {
			return GradientExtractor{}, fmt.Errorf("parsers: gradient pattern %q is not a valid regular expression: %w", clip(s.Pattern), err)
		}
		for i, n := range []string{"x", "y", "z"} {
			x.gx[i] = re.SubexpIndex(n)
			if x.gx[i] < 0 {
				return GradientExtractor{}, fmt.Errorf("parsers: gradient pattern %q has no group named %s: put (?P<x>…), (?P<y>…) and (?P<z>…) around the numbers", clip(s.Pattern), n)
			}
		}
		if re.Match(nil) {
			return GradientExtractor{}, fmt.Errorf("parsers: gradient pattern %q matches the empty text", clip(s.Pattern))
		}
		x.re, x.desc = re, fmt.Sprintf("gradient pattern %q", clip(s.Pattern))
	case KindJSON:
		p, err := ParseJSONPath(s.Path)
		if err != nil {
			return GradientExtractor{}, err
		}
		x.path, x.desc = p, fmt.Sprintf("gradient at JSON path %q", clip(p.String()))
	default:
		return GradientExtractor{}, fmt.Errorf("parsers: unknown gradient kind %q: expected block, regexp or json", clip(s.Kind))
	}
	return x, nil
}

// String describes the extractor.
func (x GradientExtractor) String() string {
	if x.kind == "" {
		return "(no gradient extractor)"
	}
	which, sign := "last", "gradient"
	if !x.last {
		which = "first"
	}
	if x.force {
		sign = "force"
	}
	return fmt.Sprintf("%s (%s, %s, %s)", x.desc, which, sign, x.unit)
}

// Extract returns the gradient dE/dR of natoms atoms in hartree/bohr
// (forces are negated, units converted). Errors wrap ErrGradientMissing or
// ErrGradientInvalid and quote the end of the output.
func (x GradientExtractor) Extract(output []byte, natoms int) ([][3]float64, error) {
	if natoms < 1 || natoms > maxGradientAtoms {
		return nil, fmt.Errorf("%w: %d atoms asked for", ErrGradientInvalid, natoms)
	}
	var rows [][3]float64
	var err error
	switch x.kind {
	case "block":
		rows, err = x.block(output, natoms)
	case KindRegexp:
		rows, err = x.regexp(output, natoms)
	case KindJSON:
		rows, err = x.json(output, natoms)
	default:
		return nil, errors.New("parsers: Extract called on a GradientExtractor not built by GradientSpec.Compile")
	}
	if err != nil {
		return nil, fmt.Errorf("%w\n%s", err, Tail(output, TailLines))
	}
	return x.finish(rows)
}

// finish checks the rows read and converts them to hartree/bohr (forces
// negated).
func (x GradientExtractor) finish(rows [][3]float64) ([][3]float64, error) {
	f := x.unit.toHartreePerBohr()
	if x.force {
		f = -f
	}
	for i := range rows {
		for k := range 3 {
			v := rows[i][k]
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("%w: %s: atom %d component %d is %v", ErrGradientInvalid, x.desc, i+1, k+1, v)
			}
			rows[i][k] = v * f
		}
	}
	return rows, nil
}

// trailing3 returns the last three whitespace-separated fields of line as
// numbers, if they are numbers.
func trailing3(line string) ([3]float64, bool) {
	fs := strings.Fields(line)
	var out [3]float64
	if len(fs) < 3 {
		return out, false
	}
	for k := range 3 {
		v, err := ParseFloat(fs[len(fs)-3+k])
		if err != nil {
			return out, false
		}
		out[k] = v
	}
	return out, true
}

func (x GradientExtractor) block(output []byte, natoms int) ([][3]float64, error) {
	lines := strings.Split(string(output), "\n")
	at := -1
	for i, l := range lines {
		if strings.HasPrefix(strings.TrimLeft(l, " \t"), x.label) {
			at = i
			if !x.last {
				break
			}
		}
	}
	if at < 0 {
		return nil, fmt.Errorf("%w: no line starts with %q", ErrGradientMissing, clip(x.label))
	}
	i := at + 1
	for skipped := 0; i < len(lines); i++ {
		if strings.TrimSpace(lines[i]) == "" {
			continue
		}
		if _, ok := trailing3(lines[i]); ok {
			break
		}
		if skipped++; skipped > 3 {
			return nil, fmt.Errorf("%w: %s: no row of three numbers within three lines of the label (line %d)", ErrGradientMissing, x.desc, at+1)
		}
	}
	var rows [][3]float64
	for ; i < len(lines) && len(rows) < natoms; i++ {
		r, ok := trailing3(lines[i])
		if !ok {
			return nil, fmt.Errorf("%w: %s: line %d is not a row of three numbers after %d of %d rows: %q", ErrGradientInvalid, x.desc, i+1, len(rows), natoms, clip(lines[i]))
		}
		rows = append(rows, r)
	}
	if len(rows) < natoms {
		return nil, fmt.Errorf("%w: %s: %d rows, want %d (one per atom)", ErrGradientMissing, x.desc, len(rows), natoms)
	}
	return rows, nil
}

func (x GradientExtractor) regexp(output []byte, natoms int) ([][3]float64, error) {
	ms := x.re.FindAllSubmatch(output, MaxMatches)
	if len(ms) < natoms {
		return nil, fmt.Errorf("%w: %s matched %d time(s), want %d (one per atom)", ErrGradientMissing, x.desc, len(ms), natoms)
	}
	if x.last {
		ms = ms[len(ms)-natoms:]
	} else {
		ms = ms[:natoms]
	}
	rows := make([][3]float64, natoms)
	for i, m := range ms {
		for k, g := range x.gx {
			v, err := ParseFloat(strings.TrimSpace(string(m[g])))
			if err != nil {
				return nil, fmt.Errorf("%w: %s: atom %d: %q is not a number", ErrGradientInvalid, x.desc, i+1, clip(string(m[g])))
			}
			rows[i][k] = v
		}
	}
	return rows, nil
}

func (x GradientExtractor) json(output []byte, natoms int) ([][3]float64, error) {
	dec := json.NewDecoder(bytes.NewReader(output))
	dec.UseNumber()
	var doc any
	found := false
	for {
		var d any
		err := dec.Decode(&d)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("%w: looking for %s: the output is not JSON (near byte %d): %v", ErrGradientMissing, x.desc, dec.InputOffset(), err)
		}
		if _, _, ok := x.path.Lookup(d); ok {
			doc, found = d, true
			if !x.last {
				break
			}
		}
	}
	if !found {
		return nil, fmt.Errorf("%w: no JSON document has %s", ErrGradientMissing, x.desc)
	}
	v, _, _ := x.path.Lookup(doc)
	arr, ok := v.([]any)
	if !ok {
		return nil, fmt.Errorf("%w: %s is %s, not an array", ErrGradientInvalid, x.desc, jsonKind(v))
	}
	num := func(e any) (float64, bool) {
		switch t := e.(type) {
		case json.Number:
			f, err := t.Float64()
			return f, err == nil
		case float64:
			return t, true
		case string:
			f, err := ParseFloat(strings.TrimSpace(t))
			return f, err == nil
		}
		return 0, false
	}
	rows := make([][3]float64, natoms)
	switch {
	case len(arr) == natoms && natoms > 0 && isArray(arr[0]):
		for i, e := range arr {
			r, ok := e.([]any)
			if !ok || len(r) != 3 {
				return nil, fmt.Errorf("%w: %s: row %d is not three numbers", ErrGradientInvalid, x.desc, i+1)
			}
			for k := range 3 {
				if rows[i][k], ok = num(r[k]); !ok {
					return nil, fmt.Errorf("%w: %s: row %d component %d is not a number", ErrGradientInvalid, x.desc, i+1, k+1)
				}
			}
		}
	case len(arr) == 3*natoms:
		for j, e := range arr {
			var ok bool
			if rows[j/3][j%3], ok = num(e); !ok {
				return nil, fmt.Errorf("%w: %s: element %d is not a number", ErrGradientInvalid, x.desc, j+1)
			}
		}
	default:
		return nil, fmt.Errorf("%w: %s has %d elements; want %d rows of three or %d numbers", ErrGradientInvalid, x.desc, len(arr), natoms, 3*natoms)
	}
	return rows, nil
}

func isArray(v any) bool { _, ok := v.([]any); return ok }

// FormatGradientBlock writes a gradient (hartree/bohr) as a block that a
// GradientSpec{Label: label, Unit: "hartree/bohr"} reads back exactly:
// the label line, then one line per atom "i symbol x y z" with every
// digit needed.
func FormatGradientBlock(label string, symbols []string, g [][3]float64) string {
	var b strings.Builder
	b.WriteString(label)
	b.WriteString("\n")
	for i, r := range g {
		sym := "X"
		if i < len(symbols) {
			sym = symbols[i]
		}
		fmt.Fprintf(&b, "%d %s %s %s %s\n", i+1, sym, fmtG(r[0]), fmtG(r[1]), fmtG(r[2]))
	}
	return b.String()
}

func fmtG(v float64) string { return fmt.Sprint(v) }
