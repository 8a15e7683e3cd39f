package parsers

import (
	"bytes"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

func TestReadTable_Conventions(t *testing.T) {
	tests := []struct {
		name  string
		in    string
		cols  []Column
		rows  [][]float64
		lines []int
	}{
		{
			name:  "comma with bracket units and comments",
			in:    "# CO stretch, invented demo numbers\nr [angstrom], E [hartree]\n1.10, -112.70\n\n# refined\n1.13,-112.71\n",
			cols:  []Column{{"r", UnitAngstrom}, {"e", UnitHartree}},
			rows:  [][]float64{{1.10, -112.70}, {1.13, -112.71}},
			lines: []int{3, 6},
		},
		{
			name:  "blank-separated with suffix units and D exponents",
			in:    "r_bohr\tenergy_eV converged\n  2.0  -1.5D+00 true\n2.1 -1.6d0 0\n",
			cols:  []Column{{"r", UnitBohr}, {"energy", UnitEV}, {"converged", ""}},
			rows:  [][]float64{{2.0, -1.5, 1}, {2.1, -1.6, 0}},
			lines: []int{2, 3},
		},
		{
			// Issue 15 item 15: spreadsheet programs put a byte-order mark
			// before UTF-8 text; it was read as part of the first name.
			name:  "byte-order mark before the header",
			in:    "\ufeffr [angstrom], E [hartree]\n1.10, -112.70\n",
			cols:  []Column{{"r", UnitAngstrom}, {"e", UnitHartree}},
			rows:  [][]float64{{1.10, -112.70}},
			lines: []int{2},
		},
		{
			name:  "semicolon, parentheses, kJ/mol, CRLF",
			in:    "theta (deg);E (kJ/mol);weight\r\n104.5;-0.25;2\r\n",
			cols:  []Column{{"theta", UnitDegree}, {"e", UnitKJPerMol}, {"weight", ""}},
			rows:  [][]float64{{104.5, -0.25, 2}},
			lines: []int{2},
		},
		{
			name:  "blank-separated with bracket units apart",
			in:    "r [bohr]   E (eV)\n1 2\n",
			cols:  []Column{{"r", UnitBohr}, {"e", UnitEV}},
			rows:  [][]float64{{1, 2}},
			lines: []int{2},
		},
		{
			name:  "longest suffix wins",
			in:    "x_a0,e_kj_mol,e2_cm-1\n1,2,3\n",
			cols:  []Column{{"x", UnitBohr}, {"e", UnitKJPerMol}, {"e2", UnitCm1}},
			rows:  [][]float64{{1, 2, 3}},
			lines: []int{2},
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			tab, err := ReadTable(strings.NewReader(tc.in), "t.csv")
			if err != nil {
				t.Fatal(err)
			}
			if len(tab.Columns) != len(tc.cols) {
				t.Fatalf("columns = %v, want %v", tab.Columns, tc.cols)
			}
			for j, c := range tc.cols {
				if tab.Columns[j] != c {
					t.Errorf("column %d = %+v, want %+v", j, tab.Columns[j], c)
				}
			}
			if len(tab.Rows) != len(tc.rows) {
				t.Fatalf("%d rows, want %d", len(tab.Rows), len(tc.rows))
			}
			for i, r := range tc.rows {
				if tab.Lines[i] != tc.lines[i] {
					t.Errorf("row %d from line %d, want %d", i, tab.Lines[i], tc.lines[i])
				}
				for j, v := range r {
					// Decimal parsing is exact to the last bit for these
					// short numbers; 1e-15 only absorbs representation.
					if !scalar.EqualWithinAbsOrRel(tab.Rows[i][j], v, 0, 1e-15) {
						t.Errorf("row %d col %d = %g, want %g", i, j, tab.Rows[i][j], v)
					}
				}
			}
		})
	}
}

func TestReadTable_BadInput_PreciseErrors(t *testing.T) {
	tests := []struct {
		name, in, want string
	}{
		{"empty", "# nothing\n\n", "t.csv: no header line"},
		{"header only", "r [bohr], e [hartree]\n", "t.csv: the table has a header but no data lines"},
		{"unknown unit", "r [nm], e [hartree]\n1,2\n", "t.csv:1:1: column \"r\": unknown unit \"nm\""},
		{"unknown unit second column", "r [bohr], e [furlong]\n1,2\n", "t.csv:1:11: column \"e\": unknown unit"},
		{"duplicate", "r_bohr,r_angstrom\n1,2\n", "t.csv:1:8: column name \"r\" appears twice"},
		{"bad number", "r [bohr], e [hartree]\n1.0, -1.x\n", "t.csv:2:6: column \"e\": expected a finite number, got \"-1.x\""},
		{"too many values", "r_bohr e_hartree\n1 2 3\n", "t.csv:2:5: 3 value(s) but the header names 2 column(s)"},
		{"too few values", "r_bohr,e_hartree\n1\n", "t.csv:2:1: 1 value(s) but the header names 2 column(s)"},
		{"NaN", "r_bohr,e_hartree\n1,NaN\n", "t.csv:2:3: column \"e\": expected a finite number"},
		{"bool in a unit column", "r_bohr,e_hartree\n1,true\n", "t.csv:2:3: column \"e\": expected a finite number"},
		{"unclosed bracket", "r [bohr, e\n1,2\n", "t.csv:1:1: column \"r [bohr\": expected the unit to end with \"]\""},
		{"name with a blank", "my r [bohr], e_hartree\n1,2\n", "t.csv:1:1: column name \"my r\": only letters"},
		{"empty cell", "r_bohr,e_hartree\n1,\n", "t.csv:2:3: column \"e\": empty value"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ReadTable(strings.NewReader(tc.in), "t.csv")
			if err == nil {
				t.Fatalf("ReadTable(%q) gave no error, want %q", tc.in, tc.want)
			}
			if !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error = %q, want it to contain %q", err, tc.want)
			}
		})
	}
}

func TestUnitKind(t *testing.T) {
	for u, want := range map[string]string{UnitAngstrom: "length", UnitRadian: "angle", UnitCm1: "energy", "": ""} {
		if got := UnitKind(u); got != want {
			t.Errorf("UnitKind(%q) = %q, want %q", u, got, want)
		}
	}
}

// FuzzReadTable: the reader never panics; what it accepts writes back and
// reads again to the same table (round trip).
func FuzzReadTable(f *testing.F) {
	for _, s := range []string{
		"r [angstrom], E [hartree]\n1.10, -112.70\n1.13,-112.71\n",
		"# comment\nr_bohr e_eV converged\n2.0 -1.5D+00 true\n",
		"theta (deg);E (kJ/mol)\r\n104.5;-0.25\r\n",
		"r [nm]\n1\n",
		"a,b,c\n1,2\n",
		",\n,\n",
		"r_bohr\n1\n",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, in string) {
		tab, err := ReadTable(strings.NewReader(in), "fuzz")
		if err != nil {
			if tab != nil {
				t.Fatal("error with a non-nil table")
			}
			return
		}
		var buf bytes.Buffer
		if err := WriteTable(&buf, tab); err != nil {
			t.Fatal(err)
		}
		again, err := ReadTable(&buf, "again")
		if err != nil {
			// Names that the writer cannot express unambiguously are fine to
			// reject only if the writer's form is ambiguous: report them.
			t.Fatalf("written table does not read back: %v\n%s", err, buf.String())
		}
		if len(again.Columns) != len(tab.Columns) || len(again.Rows) != len(tab.Rows) {
			t.Fatalf("round trip changed the shape: %v → %v", tab.Columns, again.Columns)
		}
		for j := range tab.Columns {
			if again.Columns[j] != tab.Columns[j] {
				t.Fatalf("column %d: %+v → %+v", j, tab.Columns[j], again.Columns[j])
			}
		}
		for i := range tab.Rows {
			for j := range tab.Rows[i] {
				if again.Rows[i][j] != tab.Rows[i][j] {
					t.Fatalf("row %d col %d: %v → %v", i, j, tab.Rows[i][j], again.Rows[i][j])
				}
			}
		}
	})
}
