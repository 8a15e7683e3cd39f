package parsers

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// An output of our own invention with a forces block in eV/Å.
const gradientLog = `step 1
 atomic forces (eV/Angstrom)
   #   atom        fx           fy           fz
   1   O      0.100000    -0.200000     0.000000
   2   H     -0.050000     0.100000     0.300000
   3   H     -0.050000     0.100000    -0.300000
total energy = -2075.3 eV
`

func TestGradientExtractor_Kinds(t *testing.T) {
	// eV/Å → hartree/bohr: × 0.529177210903 / 27.211386245988 (CODATA
	// 2018), and force → gradient: × −1.
	f := -BohrInAngstrom / HartreeInEV
	want := [][3]float64{{0.1 * f, -0.2 * f, 0}, {-0.05 * f, 0.1 * f, 0.3 * f}, {-0.05 * f, 0.1 * f, -0.3 * f}}
	cases := []struct {
		name   string
		spec   GradientSpec
		output string
	}{
		{"block", GradientSpec{Label: "atomic forces", Unit: "eV/Å", Sign: "force"}, gradientLog},
		{"regexp", GradientSpec{Pattern: `^\s+\d+\s+[A-Z][a-z]?\s+(?P<x>\S+)\s+(?P<y>\S+)\s+(?P<z>\S+)$`, Unit: "eV/angstrom", Sign: "force"}, gradientLog},
		{"json nested", GradientSpec{Path: "result.forces", Unit: "eV/A", Sign: "force"},
			`{"result": {"forces": [[0.1, -0.2, 0], [-0.05, 0.1, 0.3], [-0.05, 0.1, -0.3]]}}`},
		{"json flat", GradientSpec{Path: "f", Unit: "ev/angstrom", Sign: "forces"},
			`{"f": [1, 1, 1, 1, 1, 1, 1, 1, 1]}` + "\n" + `{"f": [0.1, -0.2, 0, -0.05, 0.1, 0.3, -0.05, 0.1, -0.3]}`},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			x, err := tc.spec.Compile()
			if err != nil {
				t.Fatal(err)
			}
			g, err := x.Extract([]byte(tc.output), 3)
			if err != nil {
				t.Fatal(err)
			}
			for i := range want {
				for k := range 3 {
					if math.Abs(g[i][k]-want[i][k]) > 1e-15 { // exact conversion up to rounding
						t.Errorf("g[%d][%d] = %g, want %g", i, k, g[i][k], want[i][k])
					}
				}
			}
		})
	}
}

func TestGradientExtractor_Errors(t *testing.T) {
	for _, tc := range []struct {
		name string
		spec GradientSpec
		want string
	}{
		{"no unit", GradientSpec{Label: "g"}, "unit missing"},
		{"bad unit", GradientSpec{Label: "g", Unit: "kJ"}, "expected hartree/bohr"},
		{"bad sign", GradientSpec{Label: "g", Unit: "au", Sign: "up"}, "gradient sign"},
		{"no groups", GradientSpec{Pattern: `(?P<x>\S+)`, Unit: "au"}, "no group named y"},
		{"two kinds", GradientSpec{Label: "g", Path: "a", Unit: "au"}, "set only one"},
	} {
		if _, err := tc.spec.Compile(); err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: %v, want %q", tc.name, err, tc.want)
		}
	}
	x, _ := GradientSpec{Label: "atomic forces", Unit: "au"}.Compile()
	if _, err := x.Extract([]byte(gradientLog), 4); !errors.Is(err, ErrGradientInvalid) {
		t.Errorf("4 atoms from a 3-row block: %v, want ErrGradientInvalid", err)
	}
	if _, err := x.Extract([]byte("nothing here"), 3); !errors.Is(err, ErrGradientMissing) {
		t.Errorf("no block: %v, want ErrGradientMissing", err)
	}
}

func FuzzGradientBlock(f *testing.F) {
	f.Add([]byte(gradientLog), "atomic forces", 3)
	f.Add([]byte("grad\n1 H 1e-3 2 3\n"), "grad", 1)
	f.Add([]byte("grad\n\n--\n1 H NaN 2 3\n"), "grad", 1)
	f.Fuzz(func(t *testing.T, output []byte, label string, n int) {
		x, err := GradientSpec{Label: label, Unit: "hartree/bohr"}.Compile()
		if err != nil {
			return
		}
		g, err := x.Extract(output, n)
		if err != nil {
			if !errors.Is(err, ErrGradientMissing) && !errors.Is(err, ErrGradientInvalid) {
				t.Fatalf("error %v wraps neither sentinel", err)
			}
			return
		}
		if len(g) != n {
			t.Fatalf("%d rows for %d atoms", len(g), n)
		}
		// Round trip: format what was read and read it again.
		syms := make([]string, n)
		for i := range syms {
			syms[i] = "X"
		}
		y, err := GradientSpec{Label: "wellscan gradient", Unit: "hartree/bohr"}.Compile()
		if err != nil {
			t.Fatal(err)
		}
		h, err := y.Extract([]byte(FormatGradientBlock("wellscan gradient", syms, g)), n)
		if err != nil {
			t.Fatalf("round trip: %v", err)
		}
		for i := range g {
			if g[i] != h[i] { // exact: every digit is written
				t.Fatalf("round trip row %d: %v → %v", i, g[i], h[i])
			}
		}
	})
}

func FuzzGradientJSON(f *testing.F) {
	f.Add([]byte(`{"result": {"forces": [[0.1, -0.2, 0], [-0.05, 0.1, 0.3]]}}`), "result.forces", 2)
	f.Add([]byte(`{"g": [1, 2, 3]}`), "g", 1)
	f.Add([]byte(`[[1,2,"3"]]`), "", 1)
	f.Fuzz(func(t *testing.T, output []byte, path string, n int) {
		x, err := GradientSpec{Kind: "json", Path: path, Unit: "au"}.Compile()
		if err != nil {
			return
		}
		g, err := x.Extract(output, n)
		if err != nil {
			if !errors.Is(err, ErrGradientMissing) && !errors.Is(err, ErrGradientInvalid) {
				t.Fatalf("error %v wraps neither sentinel", err)
			}
			return
		}
		for _, r := range g {
			for _, v := range r {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					t.Fatalf("non-finite %v without an error", v)
				}
			}
		}
	})
}
