package parsers

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// Units a table column may name. The strings are wellscan's canonical
// spellings; [ReadTable] accepts the aliases listed in its documentation.
const (
	UnitAngstrom = "angstrom"
	UnitBohr     = "bohr"
	UnitDegree   = "degree"
	UnitRadian   = "radian"
	UnitHartree  = "hartree"
	UnitEV       = "ev"
	UnitCm1      = "cm-1"
	UnitKJPerMol = "kj/mol"
	UnitKcalMol  = "kcal/mol"
)

// unitAliases maps every accepted spelling (lower case) to its canonical
// unit.
var unitAliases = map[string]string{
	"angstrom": UnitAngstrom, "angstroms": UnitAngstrom, "ang": UnitAngstrom, "å": UnitAngstrom,
	"bohr": UnitBohr, "a0": UnitBohr,
	"degree": UnitDegree, "degrees": UnitDegree, "deg": UnitDegree, "°": UnitDegree,
	"radian": UnitRadian, "radians": UnitRadian, "rad": UnitRadian,
	"hartree": UnitHartree, "eh": UnitHartree,
	"ev":   UnitEV,
	"cm-1": UnitCm1, "cm^-1": UnitCm1, "cm⁻¹": UnitCm1, "cm1": UnitCm1, "invcm": UnitCm1,
	"kj/mol": UnitKJPerMol, "kj_mol": UnitKJPerMol, "kjmol": UnitKJPerMol,
	"kcal/mol": UnitKcalMol, "kcal_mol": UnitKcalMol, "kcalmol": UnitKcalMol,
}

// UnitKind says what a canonical unit measures: "length", "angle",
// "energy", or "" for an unknown or empty unit.
func UnitKind(unit string) string {
	switch unit {
	case UnitAngstrom, UnitBohr:
		return "length"
	case UnitDegree, UnitRadian:
		return "angle"
	case UnitHartree, UnitEV, UnitCm1, UnitKJPerMol, UnitKcalMol:
		return "energy"
	}
	return ""
}

// Column is one column of a table: its name (lower case, without the unit)
// and its canonical unit ("" when the header gives none).
type Column struct {
	Name string
	Unit string
}

// Table is a numeric table read by [ReadTable]. Rows[i][j] is the value in
// column j of data row i, exactly as written (no unit conversion); Lines[i]
// is the file line of row i.
type Table struct {
	Columns []Column
	Rows    [][]float64
	Lines   []int
}

// Index returns the position of the column named name (case-insensitive),
// or −1.
func (t *Table) Index(name string) int {
	for j, c := range t.Columns {
		if strings.EqualFold(c.Name, name) {
			return j
		}
	}
	return -1
}

// Values returns a copy of column j.
func (t *Table) Values(j int) []float64 {
	v := make([]float64, len(t.Rows))
	for i, r := range t.Rows {
		v[i] = r[j]
	}
	return v
}

// MaxTableLine bounds the length of one table line (bytes).
const MaxTableLine = 1 << 20

// ReadTable reads a small numeric table, wellscan's convention for curves
// computed elsewhere:
//
//   - Lines whose first non-blank character is '#' are comments; blank lines
//     are skipped.
//   - The first other line is the header. If it contains a comma the table
//     is comma-separated, else if it contains a semicolon it is
//     semicolon-separated, else fields are separated by blanks or tabs.
//   - Each header field names a column and, optionally, its unit: either in
//     brackets, "r [angstrom]" or "E (eV)", or as a suffix after the last
//     underscore, "r_bohr", "energy_hartree", "e_kj_mol". Units accepted
//     (any case): angstrom/ang/Å, bohr/a0, degree/deg/°, radian/rad,
//     hartree/Eh, eV, cm-1/cm^-1/cm⁻¹, kJ/mol, kcal/mol. A bracketed unit
//     that is none of these is an error; a suffix that is none of these is
//     part of the name (so "weight" and "is_converged" are plain columns).
//     A name is letters, digits and _ - . / ^; in a blank-separated table a
//     bracketed unit may stand apart from its name ("r [bohr] E [eV]").
//   - Every data line has one number per column. Numbers may use E or
//     Fortran D exponents; in columns without a unit, true/false and
//     yes/no are read as 1/0 (for a "converged" column).
//
// name labels errors, which give file:line:column ("scan.csv:7:12: …").
func ReadTable(r io.Reader, name string) (*Table, error) {
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 64*1024), MaxTableLine)
	line := 0
	var t *Table
	sep := byte(0)
	for sc.Scan() {
		line++
		text := strings.TrimSuffix(sc.Text(), "\r")
		if line == 1 {
			// A byte-order mark, as spreadsheet programs write before
			// UTF-8 text, is not part of the first column's name.
			text = strings.TrimPrefix(text, "\ufeff")
		}
		if !utf8.ValidString(text) {
			return nil, fmt.Errorf("parsers: %s:%d: line is not valid UTF-8 text", name, line)
		}
		trimmed := strings.TrimSpace(text)
		if trimmed == "" || strings.HasPrefix(trimmed, "#") {
			continue
		}
		if t == nil {
			switch {
			case strings.Contains(text, ","):
				sep = ','
			case strings.Contains(text, ";"):
				sep = ';'
			}
			cols, col, err := parseHeader(text, sep)
			if err != nil {
				return nil, fmt.Errorf("parsers: %s:%d:%d: %w", name, line, col, err)
			}
			t = &Table{Columns: cols}
			continue
		}
		fields := splitFields(text, sep)
		if len(fields) != len(t.Columns) {
			col := 1
			if len(fields) > len(t.Columns) {
				col = fields[len(t.Columns)].col
			}
			return nil, fmt.Errorf("parsers: %s:%d:%d: %d value(s) but the header names %d column(s) (%s)", name, line, col, len(fields), len(t.Columns), columnList(t.Columns))
		}
		row := make([]float64, len(fields))
		for j, f := range fields {
			v, err := parseCell(f.text, t.Columns[j].Unit == "")
			if err != nil {
				return nil, fmt.Errorf("parsers: %s:%d:%d: column %q: %w", name, line, f.col, t.Columns[j].Name, err)
			}
			row[j] = v
		}
		t.Rows = append(t.Rows, row)
		t.Lines = append(t.Lines, line)
	}
	if err := sc.Err(); err != nil {
		if errors.Is(err, bufio.ErrTooLong) {
			return nil, fmt.Errorf("parsers: %s:%d: line longer than %d bytes", name, line+1, MaxTableLine)
		}
		return nil, fmt.Errorf("parsers: %s:%d: %w", name, line, err)
	}
	if t == nil {
		return nil, fmt.Errorf("parsers: %s: no header line (expected column names such as \"r [angstrom], energy [hartree]\")", name)
	}
	if len(t.Rows) == 0 {
		return nil, fmt.Errorf("parsers: %s: the table has a header but no data lines", name)
	}
	return t, nil
}

type field struct {
	text string
	col  int // 1-based byte column of the field's first character
}

func splitFields(text string, sep byte) []field {
	var out []field
	if sep == 0 {
		i := 0
		for i < len(text) {
			for i < len(text) && (text[i] == ' ' || text[i] == '\t') {
				i++
			}
			if i >= len(text) {
				break
			}
			j := i
			for j < len(text) && text[j] != ' ' && text[j] != '\t' {
				j++
			}
			out = append(out, field{text[i:j], i + 1})
			i = j
		}
		return out
	}
	start := 0
	for i := 0; i <= len(text); i++ {
		if i == len(text) || text[i] == sep {
			raw := text[start:i]
			lead := len(raw) - len(strings.TrimLeft(raw, " \t"))
			out = append(out, field{strings.TrimSpace(raw), start + lead + 1})
			start = i + 1
		}
	}
	return out
}

// parseHeader returns the columns, or the 1-based byte column of the bad
// header field and the error.
func parseHeader(text string, sep byte) ([]Column, int, error) {
	fields := splitFields(text, sep)
	if sep == 0 {
		// "r [bohr] E [eV]": a bracketed unit belongs to the name before it.
		var merged []field
		for _, f := range fields {
			if len(merged) > 0 && (f.text[0] == '[' || f.text[0] == '(') {
				last := &merged[len(merged)-1]
				last.text += " " + f.text
				continue
			}
			merged = append(merged, f)
		}
		fields = merged
	}
	seen := map[string]int{}
	cols := make([]Column, 0, len(fields))
	for _, f := range fields {
		c, err := parseColumn(f.text)
		if err != nil {
			return nil, f.col, err
		}
		if prev, dup := seen[c.Name]; dup {
			return nil, f.col, fmt.Errorf("column name %q appears twice (columns %d and %d)", c.Name, prev, len(cols)+1)
		}
		seen[c.Name] = len(cols) + 1
		cols = append(cols, c)
	}
	return cols, 0, nil
}

func parseColumn(s string) (Column, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return Column{}, errors.New("empty column name in the header")
	}
	for _, br := range [][2]string{{"[", "]"}, {"(", ")"}} {
		if i := strings.Index(s, br[0]); i >= 0 {
			if !strings.HasSuffix(s, br[1]) {
				return Column{}, fmt.Errorf("column %q: expected the unit to end with %q", clip(s), br[1])
			}
			name := strings.ToLower(strings.TrimSpace(s[:i]))
			unit := strings.ToLower(strings.TrimSpace(s[i+1 : len(s)-1]))
			if name == "" {
				return Column{}, fmt.Errorf("column %q has a unit but no name", clip(s))
			}
			if err := checkName(name); err != nil {
				return Column{}, err
			}
			u, ok := unitAliases[unit]
			if !ok {
				return Column{}, fmt.Errorf("column %q: unknown unit %q (lengths: angstrom, bohr; angles: degree, radian; energies: hartree, eV, cm-1, kJ/mol, kcal/mol)", clip(name), clip(unit))
			}
			return Column{Name: name, Unit: u}, nil
		}
	}
	low := strings.ToLower(s)
	if err := checkName(low); err != nil {
		return Column{}, err
	}
	// Longest matching unit suffix wins ("e_kj_mol" before "mol").
	best := ""
	for alias := range unitAliases {
		if strings.HasSuffix(low, "_"+alias) && len(low) > len(alias)+1 && len(alias) > len(best) {
			best = alias
		}
	}
	if best != "" {
		return Column{Name: low[:len(low)-len(best)-1], Unit: unitAliases[best]}, nil
	}
	return Column{Name: low}, nil
}

// checkName accepts column names of letters, digits, '_', '-', '.', '/'
// and '^' (the last three appear in unit suffixes such as "e_cm-1").
func checkName(name string) error {
	for _, r := range name {
		if !(unicode.IsLetter(r) || unicode.IsDigit(r) || strings.ContainsRune("_-./^⁻¹", r)) {
			return fmt.Errorf("column name %q: only letters, digits and _ - . / ^ are allowed in a name (put the unit in brackets: \"r [angstrom]\")", clip(name))
		}
	}
	return nil
}

func parseCell(s string, allowBool bool) (float64, error) {
	if s == "" {
		return 0, errors.New("empty value")
	}
	if allowBool {
		switch strings.ToLower(s) {
		case "true", "yes":
			return 1, nil
		case "false", "no":
			return 0, nil
		}
	}
	v, err := ParseFloat(s)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		var ne *strconv.NumError
		if errors.As(err, &ne) && errors.Is(ne.Err, strconv.ErrRange) {
			return 0, fmt.Errorf("%q is out of the range of a float64", clip(s))
		}
		return 0, fmt.Errorf("expected a finite number, got %q", clip(s))
	}
	return v, nil
}

func columnList(cols []Column) string {
	names := make([]string, len(cols))
	for i, c := range cols {
		names[i] = c.Name
	}
	return strings.Join(names, ", ")
}

// WriteTable writes t in the comma-separated form ReadTable reads: a header
// "name [unit]" per column and each value with the shortest decimal form
// that reads back exactly.
func WriteTable(w io.Writer, t *Table) error {
	bw := bufio.NewWriter(w)
	for j, c := range t.Columns {
		if j > 0 {
			bw.WriteString(",")
		}
		bw.WriteString(c.Name)
		if c.Unit != "" {
			bw.WriteString(" [" + c.Unit + "]")
		}
	}
	bw.WriteString("\n")
	for _, r := range t.Rows {
		for j, v := range r {
			if j > 0 {
				bw.WriteString(",")
			}
			bw.WriteString(strconv.FormatFloat(v, 'g', -1, 64))
		}
		bw.WriteString("\n")
	}
	return bw.Flush()
}
