package parsers

import (
	"errors"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// The outputs below are formats invented for these tests; no real program
// writes them.
const toyLog = `== toy-scf 0.3 (a program invented for wellscan's tests) ==
geometry read: 2 atoms
 cycle   1   E = -75.10000000
 cycle   2   E = -75.90000000
 cycle   3   E = -76.01074650
converged after 3 cycles
Total energy = -76.0107465 Eh
Total energy:    -76.0107466   (again, with more digits)
wall time 0.2 s
`

const fortranLog = `  *** grid point run ***
  BINDING ENERGY = -0.7602683D+02 HARTREE
  TOTAL ENERGY   = -0.2068791D+04 EV
  TOTAL ENERGY   =  ****************
`

const jsonLog = `{"run": {"steps": [{"e": -75.1}, {"e": -76.0}], "final": {"energy_eV": "-2.0682D+03", "note": null, "flags": [true]}}}`

const jsonLines = `{"iter": 1, "energy": -1.0}
{"iter": 2, "energy": -1.1}
{"iter": 3, "energy": -1.17}
`

func TestExtractor_Extract_Found(t *testing.T) {
	tests := []struct {
		name   string
		spec   ExtractorSpec
		output string
		want   float64 // hartree
	}{
		{"regexp last", ExtractorSpec{Pattern: `E = (?P<energy>\S+)`, Unit: "hartree"}, toyLog, -76.0107465},
		{"regexp first", ExtractorSpec{Pattern: `E = (?P<energy>\S+)`, Match: "first", Unit: "Eh"}, toyLog, -75.1},
		{"regexp second", ExtractorSpec{Pattern: `E = (?P<energy>\S+)`, Match: "2", Unit: "hartree"}, toyLog, -75.9},
		{"regexp second from end", ExtractorSpec{Pattern: `E = (?P<energy>\S+)`, Match: "-2", Unit: "hartree"}, toyLog, -75.9},
		{"regexp line anchor", ExtractorSpec{Pattern: `^Total energy = (?P<energy>\S+)`, Unit: "hartree"}, toyLog, -76.0107465},
		{"regexp short group syntax", ExtractorSpec{Pattern: `^Total energy: +(?<energy>\S+)`, Unit: "hartree"}, toyLog, -76.0107466},
		{"label equals and colon, last", ExtractorSpec{Label: "Total energy", Unit: "hartree"}, toyLog, -76.0107466},
		{"label first", ExtractorSpec{Label: "Total energy", Match: "first", Unit: "hartree"}, toyLog, -76.0107465},
		{"label with trailing separator", ExtractorSpec{Label: "Total energy:", Match: "first", Unit: "hartree"}, toyLog, -76.0107465},
		{"label blanks inside", ExtractorSpec{Kind: "label", Label: "BINDING ENERGY", Unit: "hartree"}, fortranLog, -76.02683},
		{"label Fortran D in eV", ExtractorSpec{Label: "TOTAL ENERGY", Match: "first", Unit: "eV"}, fortranLog, -2068.791 / HartreeInEV},
		{"label value then comma", ExtractorSpec{Label: "e", Unit: "kJ/mol"}, "e = -2625.4996394799, converged\n", -1},
		{"label kcal/mol", ExtractorSpec{Label: "e", Unit: "kcal/mol"}, "e: -627.50947406\n", -627.50947406 / HartreeInKcalPerMol},
		{"label cm-1", ExtractorSpec{Label: "e", Unit: "cm⁻¹"}, "e = -219474.6313632\n", -1},
		{"json nested index", ExtractorSpec{Path: "run.steps[-1].e", Unit: "hartree"}, jsonLog, -76.0},
		{"json string with D", ExtractorSpec{Path: "run.final.energy_eV", Unit: "eV"}, jsonLog, -2068.2 / HartreeInEV},
		{"json lines last", ExtractorSpec{Path: "energy", Unit: "hartree"}, jsonLines, -1.17},
		{"json lines first", ExtractorSpec{Path: "energy", Match: "first", Unit: "hartree"}, jsonLines, -1.0},
		{"json whole document", ExtractorSpec{Kind: "json", Unit: "hartree"}, " -1.5e0 ", -1.5},
		{"json top-level array", ExtractorSpec{Path: "[1][0]", Unit: "hartree"}, "[[1], [-3.25, 0]]", -3.25},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			x, err := tc.spec.Compile()
			if err != nil {
				t.Fatalf("Compile(%+v) error: %v", tc.spec, err)
			}
			got, err := x.Extract([]byte(tc.output))
			if err != nil {
				t.Fatalf("Extract error: %v", err)
			}
			// 1e-12 relative: the only error is one rounding in the unit
			// division and one in parsing.
			if !scalar.EqualWithinAbsOrRel(got, tc.want, 0, 1e-12) {
				t.Errorf("Extract = %.15g, want %.15g", got, tc.want)
			}
		})
	}
}

func TestExtractor_Extract_Fails(t *testing.T) {
	tests := []struct {
		name    string
		spec    ExtractorSpec
		output  string
		want    error
		message string // part of the detail
	}{
		{"no match", ExtractorSpec{Pattern: `final: (?P<energy>\S+)`, Unit: "hartree"}, toyLog, ErrEnergyMissing, "no line matches"},
		{"too few matches", ExtractorSpec{Pattern: `E = (?P<energy>\S+)`, Match: "5", Unit: "hartree"}, toyLog, ErrEnergyMissing, "occurs 3 times, but match 5"},
		{"too few from end", ExtractorSpec{Label: "Total energy", Match: "-3", Unit: "hartree"}, toyLog, ErrEnergyMissing, "occurs 2 times"},
		{"label absent", ExtractorSpec{Label: "Final energy", Unit: "hartree"}, toyLog, ErrEnergyMissing, `label "Final energy"`},
		{"label not at line start", ExtractorSpec{Label: "energy", Unit: "hartree"}, toyLog, ErrEnergyMissing, "no line matches"},
		{"NaN", ExtractorSpec{Label: "energy", Unit: "hartree"}, "energy = NaN\n", ErrEnergyInvalid, `"NaN" is not a finite number`},
		{"Inf", ExtractorSpec{Label: "energy", Unit: "eV"}, "energy = -Inf\n", ErrEnergyInvalid, "not a finite"},
		{"overflow beyond float64", ExtractorSpec{Label: "energy", Unit: "eV"}, "energy = -1D+999\n", ErrEnergyInvalid, "not a finite"},
		{"Fortran overflow stars", ExtractorSpec{Label: "TOTAL ENERGY", Unit: "eV"}, fortranLog, ErrEnergyInvalid, "is not a number"},
		{"label with nothing after", ExtractorSpec{Label: "energy", Unit: "eV"}, "energy =\n", ErrEnergyInvalid, "empty"},
		{"text in group", ExtractorSpec{Pattern: `converged (?P<energy>\w+)`, Unit: "hartree"}, toyLog, ErrEnergyInvalid, `"after" is not a number`},
		{"optional group unused", ExtractorSpec{Pattern: `converged( after (?P<energy>\d+))?`, Match: "first", Unit: "hartree"}, "converged\n", ErrEnergyInvalid, "took no part"},
		{"too many matches", ExtractorSpec{Pattern: `(?P<energy>a)`, Unit: "hartree"}, strings.Repeat("a\n", MaxMatches+1), ErrEnergyMissing, "more than 262144 times"},
		{"json not json", ExtractorSpec{Path: "energy", Unit: "hartree"}, toyLog, ErrEnergyMissing, "not JSON"},
		{"json truncated", ExtractorSpec{Path: "energy", Unit: "hartree"}, jsonLines + `{"iter": 4, "ener`, ErrEnergyMissing, "document 4"},
		{"json empty", ExtractorSpec{Path: "energy", Unit: "hartree"}, "  \n", ErrEnergyMissing, "no JSON document"},
		{"json key absent", ExtractorSpec{Path: "run.final.energy", Unit: "hartree"}, jsonLog, ErrEnergyMissing, `no key "energy" at run.final`},
		{"json index outside", ExtractorSpec{Path: "run.steps[2].e", Unit: "hartree"}, jsonLog, ErrEnergyMissing, "outside the 2-element array at run.steps"},
		{"json key of array", ExtractorSpec{Path: "run.steps.e", Unit: "hartree"}, jsonLog, ErrEnergyMissing, "asked of an array"},
		{"json null", ExtractorSpec{Path: "run.final.note", Unit: "hartree"}, jsonLog, ErrEnergyMissing, "is null"},
		{"json array value", ExtractorSpec{Path: "run.final.flags", Unit: "hartree"}, jsonLog, ErrEnergyInvalid, "is an array, not a number"},
		{"json bool value", ExtractorSpec{Path: "run.final.flags[0]", Unit: "hartree"}, jsonLog, ErrEnergyInvalid, "is a boolean"},
		{"json NaN string", ExtractorSpec{Path: "e", Unit: "hartree"}, `{"e": "NaN"}`, ErrEnergyInvalid, "not a finite"},
		{"json number overflow", ExtractorSpec{Path: "e", Unit: "hartree"}, `{"e": -1e400}`, ErrEnergyInvalid, "not a finite"},
		{"json too few documents", ExtractorSpec{Path: "energy", Match: "4", Unit: "hartree"}, jsonLines, ErrEnergyMissing, "holds 3 JSON document(s)"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			x, err := tc.spec.Compile()
			if err != nil {
				t.Fatalf("Compile(%+v) error: %v", tc.spec, err)
			}
			got, err := x.Extract([]byte(tc.output))
			if !errors.Is(err, tc.want) {
				t.Fatalf("Extract = %v, %v; want error %v", got, err, tc.want)
			}
			var xe *ExtractError
			if !errors.As(err, &xe) {
				t.Fatalf("error %T is not an *ExtractError", err)
			}
			if !strings.Contains(xe.Detail, tc.message) {
				t.Errorf("detail %q does not contain %q", xe.Detail, tc.message)
			}
			// The message must quote the end of the output so that the
			// user sees what the program last wrote.
			last := lastLine(tc.output)
			if !strings.Contains(err.Error(), last) {
				t.Errorf("error %q does not quote the last output line %q", err, last)
			}
		})
	}
}

func lastLine(s string) string {
	lines := strings.Split(strings.TrimRight(s, "\n \t"), "\n")
	l := strings.TrimSpace(lines[len(lines)-1])
	if l == "" {
		return "(the output is empty)"
	}
	return l
}

func TestExtractor_Extract_Zero(t *testing.T) {
	var x Extractor
	if _, err := x.Extract([]byte("e = 1")); err == nil {
		t.Fatal("zero Extractor: Extract gave no error")
	}
}

func TestExtractorSpec_Compile_Errors(t *testing.T) {
	tests := []struct {
		name    string
		spec    ExtractorSpec
		message string
	}{
		{"nothing set", ExtractorSpec{Unit: "eV"}, "set one of pattern"},
		{"two set", ExtractorSpec{Pattern: `(?P<energy>\S+)`, Label: "e", Unit: "eV"}, "pattern and label are all set"},
		{"bad regexp", ExtractorSpec{Pattern: `E = (?P<energy>\S+`, Unit: "eV"}, "not a valid regular expression: error parsing regexp: missing closing )"},
		{"no energy group", ExtractorSpec{Pattern: `E = (?P<value>\S+)`, Unit: "eV"}, "has no group named energy"},
		{"unnamed group only", ExtractorSpec{Pattern: `E = (\S+)`, Unit: "eV"}, "has no group named energy"},
		{"empty match", ExtractorSpec{Pattern: `(?P<energy>\S*)`, Unit: "eV"}, "matches the empty text"},
		{"unknown unit", ExtractorSpec{Label: "e", Unit: "Ry"}, `unknown energy unit "Ry"`},
		{"missing unit", ExtractorSpec{Label: "e"}, "energy unit missing"},
		{"bad match", ExtractorSpec{Label: "e", Unit: "eV", Match: "middle"}, `energy match "middle"`},
		{"zero match", ExtractorSpec{Label: "e", Unit: "eV", Match: "0"}, `energy match "0"`},
		{"unknown kind", ExtractorSpec{Kind: "xml", Path: "a", Unit: "eV"}, `unknown energy extractor kind "xml"`},
		{"kind and wrong field", ExtractorSpec{Kind: "regexp", Label: "e", Unit: "eV"}, "takes a pattern, not a label"},
		{"label only separator", ExtractorSpec{Label: " = ", Unit: "eV"}, "no text before the separator"},
		{"label not UTF-8", ExtractorSpec{Label: "\x94", Unit: "eV"}, "not valid UTF-8"},
		{"label two lines", ExtractorSpec{Label: "a\nb", Unit: "eV"}, "spans several lines"},
		{"bad json path", ExtractorSpec{Path: "a..b", Unit: "eV"}, "expected a key"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := tc.spec.Compile()
			if err == nil {
				t.Fatalf("Compile(%+v) gave no error", tc.spec)
			}
			if !strings.Contains(err.Error(), tc.message) || !strings.HasPrefix(err.Error(), "parsers: ") {
				t.Errorf("Compile error %q, want it to start with \"parsers: \" and contain %q", err, tc.message)
			}
		})
	}
}

func TestEnergyUnit_ToHartree_CODATA(t *testing.T) {
	tests := []struct {
		name  string
		unit  string
		value float64
		want  float64 // hartree
	}{
		// One hartree in each unit: CODATA 2018 (Tiesinga et al., Rev. Mod.
		// Phys. 93, 025010 (2021)), Table XXIV/XXV energy relationships.
		{"hartree", "hartree", -1.25, -1.25},
		{"eV", "eV", 27.211386245988, 1},
		{"kJ/mol", "kJ/mol", 2625.4996394799, 1},
		{"cm-1", "cm^-1", 219474.63136320, 1},
		// The thermochemical calorie is exactly 4.184 J (NIST SP 811,
		// 2008, appendix B.8).
		{"kcal/mol", "kcal/mol", 2625.4996394799 / 4.184, 1},
		// Cross-checks through other CODATA 2018 relationships: 1 eV =
		// 8065.543937 cm⁻¹ (electron volt–inverse metre, exact, shown to 10
		// digits) and 1 eV = 96.48533212 kJ/mol (Faraday constant
		// 96485.33212 C/mol, exact, times 1 V).
		{"eV via cm-1", "1/cm", 8065.543937, 1 / 27.211386245988},
		{"eV via kJ/mol", "KJ/MOL", 96.48533212, 1 / 27.211386245988},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			u, err := ParseEnergyUnit(tc.unit)
			if err != nil {
				t.Fatal(err)
			}
			got := u.ToHartree(tc.value)
			// 1e-10 relative: the cross-check values are quoted to 10
			// significant digits; the factors agree far better than that.
			if !scalar.EqualWithinAbsOrRel(got, tc.want, 0, 1e-10) {
				t.Errorf("%s.ToHartree(%v) = %.15g, want %.15g", u, tc.value, got, tc.want)
			}
		})
	}
	if v := EnergyUnit("furlong").ToHartree(1); !math.IsNaN(v) {
		t.Errorf("unknown unit ToHartree = %v, want NaN", v)
	}
}

func TestTail_LastLines(t *testing.T) {
	var b strings.Builder
	for i := range 20 {
		b.WriteString(strings.Repeat("x", i) + "\n")
	}
	got := Tail([]byte(b.String()), 3)
	want := "last 3 line(s) of the output:\n  | " + strings.Repeat("x", 17) + "\n  | " + strings.Repeat("x", 18) + "\n  | " + strings.Repeat("x", 19)
	if got != want {
		t.Errorf("Tail = %q, want %q", got, want)
	}
	long := Tail([]byte(strings.Repeat("é", 300)), 1)
	if len(long) > 300 || !strings.HasSuffix(long, "…") {
		t.Errorf("Tail of a long line = %q (%d bytes), want it clipped", long, len(long))
	}
	if got := Tail(nil, 5); got != "(the output is empty)" {
		t.Errorf("Tail(nil) = %q", got)
	}
}

func TestPlausibility_Check(t *testing.T) {
	tests := []struct {
		p    Plausibility
		e    float64
		fail bool
	}{
		{Plausibility{}, -76.02, false},
		{Plausibility{}, 0, false},
		{Plausibility{}, 0.5, true},
		{Plausibility{AllowPositive: true}, 0.5, false},
		{Plausibility{AllowPositive: true}, math.NaN(), true},
		{Plausibility{}, math.Inf(-1), true},
	}
	for _, tc := range tests {
		err := tc.p.Check(tc.e)
		if (err != nil) != tc.fail || (err != nil && !errors.Is(err, ErrEnergyInvalid)) {
			t.Errorf("%+v.Check(%v) = %v, want failure %v wrapping ErrEnergyInvalid", tc.p, tc.e, err, tc.fail)
		}
	}
}

func TestPlausibility_Spikes(t *testing.T) {
	p := Plausibility{MaxJump: 0.5}
	tests := []struct {
		name string
		e    []float64
		want []int
	}{
		{"smooth", []float64{-1.0, -1.1, -1.15, -1.1, -1.0}, nil},
		{"spike down", []float64{-1.0, -1.1, -3.0, -1.1, -1.0}, []int{2}},
		{"spike up", []float64{-1.0, -1.1, -0.5, -1.1, -1.0}, []int{2}},
		// A step: far from one neighbour, near the other; a change of
		// state is possible there, so it is not flagged.
		{"step", []float64{-1.0, -1.1, -2.0, -2.01, -2.02}, nil},
		// A steep wall: 1 hartree down on each side of the middle point,
		// above one neighbour and below the other; not a spike.
		{"steep monotonic wall", []float64{1.0, 0.0, -1.0, -1.9, -2.5}, nil},
		{"just inside the limit", []float64{-1.0, -1.1, -1.59, -1.1, -1.0}, nil},
		{"end point never", []float64{-5.0, -1.1, -1.15}, nil},
		{"NaN neighbour skipped", []float64{-1.0, math.NaN(), -3.0, -1.1}, nil},
		{"short", []float64{-1}, nil},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := p.Spikes(tc.e)
			if len(got) != len(tc.want) {
				t.Fatalf("Spikes(%v) = %v, want %v", tc.e, got, tc.want)
			}
			for i := range got {
				if got[i] != tc.want[i] {
					t.Fatalf("Spikes(%v) = %v, want %v", tc.e, got, tc.want)
				}
			}
		})
	}
	if err := (Plausibility{}).CheckNeighbours(-1, -10, -1); err != nil {
		t.Errorf("MaxJump 0 must switch the check off, got %v", err)
	}
	if err := p.CheckNeighbours(-1, -10, -1); !errors.Is(err, ErrEnergyInvalid) {
		t.Errorf("CheckNeighbours spike = %v, want ErrEnergyInvalid", err)
	}
}

func TestParseJSONPath_Syntax(t *testing.T) {
	tests := []struct {
		in, canon string
		ok        bool
	}{
		{"", "", true},
		{"a", "a", true},
		{"a.b.c", "a.b.c", true},
		{"steps[-1].total", "steps[-1].total", true},
		{"[0][2]", "[0][2]", true},
		{"a[01]", "a[1]", true},
		{"energy (eV)", "energy (eV)", true},
		{"a..b", "", false},
		{".a", "", false},
		{"a.", "", false},
		{"a.[0]", "", false},
		{"a[", "", false},
		{"a]", "", false},
		{"a[x]", "", false},
		{"a[]", "", false},
		{"a[+1]", "", false},
		{"a[0]b", "", false},
		{"a[99999999999999999999]", "", false},
	}
	for _, tc := range tests {
		p, err := ParseJSONPath(tc.in)
		if (err == nil) != tc.ok {
			t.Errorf("ParseJSONPath(%q) error = %v, want ok %v", tc.in, err, tc.ok)
			continue
		}
		if tc.ok && p.String() != tc.canon {
			t.Errorf("ParseJSONPath(%q).String() = %q, want %q", tc.in, p.String(), tc.canon)
		}
	}
}

func TestParseFloat_FortranAndHex(t *testing.T) {
	tests := []struct {
		in   string
		want float64
		ok   bool
	}{
		{"-0.7602683D+02", -76.02683, true},
		{"1.5d-3", 1.5e-3, true},
		{"-76.02", -76.02, true},
		// A hexadecimal float's digit d is not an exponent.
		{"0xdp0", 13, true},
		{"-0x1.dp1", -3.625, true},
		{"1.0dd5", 0, false},
	}
	for _, tc := range tests {
		got, err := ParseFloat(tc.in)
		if (err == nil) != tc.ok || (tc.ok && got != tc.want) {
			t.Errorf("ParseFloat(%q) = %v, %v; want %v (ok %v)", tc.in, got, err, tc.want, tc.ok)
		}
	}
}
