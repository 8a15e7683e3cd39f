package parsers

import (
	"errors"
	"strings"
	"testing"
)

// TestExtractor_StrictNumbers is issue 15 item 5: a decimal comma,
// thousands separators or trailing garbage is an energy-invalid error that
// quotes the text, never a truncated number (-3050,5 eV read as -3050 eV).
func TestExtractor_StrictNumbers(t *testing.T) {
	tests := []struct {
		name   string
		spec   ExtractorSpec
		output string
		quote  string // the text the error must quote
	}{
		{"label, decimal comma", ExtractorSpec{Label: "well energy / eV", Unit: "eV"}, "well energy / eV : -3050,5\n", `"-3050,5"`},
		{"label, thousands separator", ExtractorSpec{Label: "total energy", Unit: "eV"}, "total energy = -3,050.5\n", `"-3,050.5"`},
		{"label, semicolon grouping", ExtractorSpec{Label: "total energy", Unit: "eV"}, "total energy = -3;050\n", `"-3;050"`},
		{"label, trailing garbage", ExtractorSpec{Label: "total energy", Unit: "hartree"}, "total energy = -76.02abc\n", `"-76.02abc"`},
		{"label, underscore grouping", ExtractorSpec{Label: "total energy", Unit: "hartree"}, "total energy = -76_020.5\n", `"-76_020.5"`},
		{"label, hexadecimal", ExtractorSpec{Label: "total energy", Unit: "hartree"}, "total energy = -0x1p4\n", `"-0x1p4"`},
		{"pattern stops at the comma", ExtractorSpec{Pattern: `well energy / eV : (?P<energy>[-0-9.]+)`, Unit: "eV"}, "well energy / eV : -3050,5\n", `"-3050,5"`},
		{"pattern stops before the exponent", ExtractorSpec{Pattern: `E = (?P<energy>[-0-9.]+)`, Unit: "hartree"}, "E = -76.4E-01\n", `"-76.4E-01"`},
		{"pattern stops inside the digits", ExtractorSpec{Pattern: `E = (?P<energy>-[0-9]{2})`, Unit: "hartree"}, "E = -7612\n", `"-7612"`},
		{"pattern takes a comma number", ExtractorSpec{Pattern: `E = (?P<energy>\S+)`, Unit: "hartree"}, "E = -76,5\n", `"-76,5"`},
		{"json string with comma", ExtractorSpec{Path: "e", Unit: "hartree"}, `{"e": "-76,5"}`, `"-76,5"`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			x, err := tc.spec.Compile()
			if err != nil {
				t.Fatal(err)
			}
			v, err := x.Extract([]byte(tc.output))
			if err == nil {
				t.Fatalf("Extract(%q) = %v, want an energy-invalid error", tc.output, v)
			}
			if !errors.Is(err, ErrEnergyInvalid) || !strings.Contains(err.Error(), tc.quote) {
				t.Errorf("Extract(%q) error = %v, want ErrEnergyInvalid quoting %s", tc.output, err, tc.quote)
			}
		})
	}
	// What stays accepted: a unit or a comment after a blank, a comma and
	// a word after the number, Fortran D exponents, a unit glued on as
	// letters after a pattern's group.
	good := []struct {
		spec   ExtractorSpec
		output string
		want   float64 // hartree; the outputs are written in hartree
	}{
		{ExtractorSpec{Label: "total energy", Unit: "hartree"}, "total energy = -76.5 hartree\n", -76.5},
		{ExtractorSpec{Label: "total energy", Unit: "hartree"}, "total energy = -76.5, converged\n", -76.5},
		{ExtractorSpec{Label: "total energy", Unit: "hartree"}, "total energy = -7.65D+01\n", -76.5},
		{ExtractorSpec{Pattern: `E=(?P<energy>[-0-9.]+)Eh`, Unit: "hartree"}, "E=-76.5Eh\n", -76.5},
		{ExtractorSpec{Pattern: `E = (?P<energy>\S+)`, Unit: "hartree"}, "E = .5e+2\n", 50},
	}
	for _, g := range good {
		x, err := g.spec.Compile()
		if err != nil {
			t.Fatal(err)
		}
		// Exact: these decimal texts parse to the same float64 as the
		// literal (strconv rounds correctly).
		if v, err := x.Extract([]byte(g.output)); err != nil || v != g.want {
			t.Errorf("Extract(%q) = %v, %v; want %v", g.output, v, err, g.want)
		}
	}
}
