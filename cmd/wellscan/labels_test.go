package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"wellscan/planner"
)

// TestScanLabel: a label states the isotopologue, the method (MP2 with
// its core treatment), the basis and that the scan is rigid.
func TestScanLabel(t *testing.T) {
	cases := []struct {
		example, old, new, want string
	}{
		{"water-stretch", "", "", "H2O · RHF/6-31G* · rigid scan"},
		{"water-stretch", "[molecule]\n", "[molecule]\nisotopes = { 2 = \"2H\" }\n", "HDO · RHF/6-31G* · rigid scan"},
		{"water-stretch", "[molecule]\n", "[molecule]\nisotopes = { 2 = \"D\", 3 = \"D\" }\n", "D2O · RHF/6-31G* · rigid scan"},
		{"water-stretch", "method = \"rhf\"", "method = \"mp2\"", "H2O · MP2(fc)/6-31G* · rigid scan"},
		{"water-stretch", "method = \"rhf\"", "method = \"mp2\"\nfrozen_core = false", "H2O · MP2(full)/6-31G* · rigid scan"},
	}
	for _, tc := range cases {
		t.Run(tc.want, func(t *testing.T) {
			b, err := os.ReadFile(filepath.Join("../../testdata/examples", tc.example, "scan.toml"))
			if err != nil {
				t.Fatal(err)
			}
			text := string(b)
			if tc.old != "" {
				if !strings.Contains(text, tc.old) {
					t.Fatalf("example lacks %q", tc.old)
				}
				text = strings.Replace(text, tc.old, tc.new, 1)
			}
			spec, err := planner.Decode([]byte(text), filepath.Join(t.TempDir(), "scan.toml"))
			if err != nil {
				t.Fatal(err)
			}
			mol, _ := spec.Molecule()
			if got := scanLabel(spec, mol); got != tc.want {
				t.Errorf("scanLabel = %q, want %q", got, tc.want)
			}
		})
	}
}

// TestRun_SummaryStatesDefaults: a run whose spec leaves out the
// multiplicity and the method says which it used.
func TestRun_SummaryStatesDefaults(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "oh")
	if err := os.Mkdir(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	writeSpec(t, dir, "[molecule]\ngeometry = \"\"\"\nO 0 0 0\nH 0 0 0.97\n\"\"\"\n[[scan]]\nbond = [1, 2]\nvalues = [0.95, 0.97]\n[refine]\nadaptive = false\n[engine]\nkind = \"builtin\"\nbasis = \"STO-3G\"\n")
	code, out, errs := wellscan(t, "run", "-q", dir)
	want := "defaults used: multiplicity 2 (the lowest for 9 electrons; give the multiplicity if the ground state has more unpaired electrons); method UHF (default for multiplicity 2)"
	if code != 0 || !strings.Contains(out, want) || !strings.Contains(out, "label: OH · UHF/STO-3G · rigid scan") {
		t.Errorf("run: exit %d\n%s%s\nwant %q", code, out, errs, want)
	}
}
