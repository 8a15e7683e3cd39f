package command

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"wellscan/planner"
)

func writeTemplate(t *testing.T, text string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "point.tmpl")
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestConfig_Render_Helpers(t *testing.T) {
	job := Job{
		Title: "bent toy\nsecond line", Key: "r=0.95000,theta=104.500",
		Coords:     map[string]float64{"r": 0.95, "theta": 104.5, "r-2": 1},
		CoordUnits: map[string]string{"r": "angstrom", "theta": "degree", "r-2": "angstrom"},
		Atoms: []Atom{
			{Symbol: "O", Z: 8, Mass: 15.99491461957, Pos: [3]float64{0, 0, 0}},
			{Symbol: "H", Z: 1, Mass: 1.00782503223, Pos: [3]float64{0, 0, 1}},
			{Symbol: "H", Z: 1, Mass: 1.00782503223, Pos: [3]float64{0, -1e-14, -planner.AngstromInBohr}},
		},
		Charge: 1, Multiplicity: 2,
	}
	tests := []struct{ name, tmpl, want string }{
		{"title oneline", `{{oneline .Title}}`, "bent toy second line"},
		{"key and counts", `{{.Key}} {{.Charge}} {{.Multiplicity}} {{.Electrons}} {{.NAtoms}} {{.Input}}`, "r=0.95000,theta=104.500 1 2 9 3 toy.inp"},
		{"coordinate as Number", `{{.Coords.r}} {{.Units.theta}}`, "0.9500000000 degree"},
		{"coordinate by name", `{{.Coord "r-2"}}`, "1.0000000000"},
		{"fixed and sci", `{{fixed 3 .Coords.theta}} {{sci 4 .Coords.r}} {{fixed 2 7}}`, "104.500 9.5000E-01 7.00"},
		{"unit helpers", `{{fixed 6 (toBohr 1)}} {{fixed 6 (toAngstrom 1)}}`, "1.889726 0.529177"},
		// -1e-14 bohr prints as 0, never as "-0.0000000000".
		{"per-atom loop", `{{range .Atoms}}{{.Index}} {{.Symbol}} {{.Z}} {{fixed 4 .Mass}} {{.Bohr.Y}} {{fixed 6 .Ang.Z}}
{{end}}`, "1 O 8 15.9949 0.0000000000 0.000000\n2 H 1 1.0078 0.0000000000 0.529177\n3 H 1 1.0078 0.0000000000 -1.000000\n"},
		{"xyz bohr", `{{.XYZ "bohr"}}`, "O     0.0000000000    0.0000000000    0.0000000000\nH     0.0000000000    0.0000000000    1.0000000000\nH     0.0000000000    0.0000000000   -1.8897261246"},
		{"xyz angstrom", `{{.XYZ "angstrom"}}|`, "O     0.0000000000    0.0000000000    0.0000000000\nH     0.0000000000    0.0000000000    0.5291772109\nH     0.0000000000    0.0000000000   -1.0000000000|"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c := Config{Template: writeTemplate(t, tc.tmpl), InputName: "toy.inp"}
			got, err := c.Render(job)
			if err != nil {
				t.Fatalf("Render: %v", err)
			}
			if string(got) != tc.want {
				t.Errorf("Render(%q) =\n%q\nwant\n%q", tc.tmpl, got, tc.want)
			}
		})
	}
}

func TestConfig_Render_Errors(t *testing.T) {
	job := diatomic("", 1.1)
	tests := []struct{ name, tmpl, want string }{
		{"missing coordinate", "a\nb {{.Coords.theta}}\n", `point.tmpl:2:11: executing "`},
		{"missing coordinate names it", "{{.Coords.theta}}", `map has no entry for key "theta"`},
		{"missing unit", "{{.Units.theta}}", `map has no entry for key "theta"`},
		{"unknown field", "\n\n{{.Energy}}", "point.tmpl:3:2"},
		{"unknown coordinate by name", `{{.Coord "phi"}}`, `no coordinate "phi"; this scan has r`},
		{"bad length unit", `{{.XYZ "furlong"}}`, `unknown length unit "furlong"`},
		{"parse error", "x\n{{range .Atoms}}", "point.tmpl:2: unexpected EOF"},
		{"unknown function", "{{shq .Title}}", `function "shq" not defined`},
		{"bad precision", "{{fixed -1 .Coords.r}}", "fixed: -1 decimals"},
		{"not a number", "{{fixed 2 .Title}}", "fixed: expected a number, got string"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c := Config{Template: writeTemplate(t, tc.tmpl), InputName: "toy.inp"}
			_, err := c.Render(job)
			if err == nil || !strings.Contains(err.Error(), tc.want) || !strings.HasPrefix(err.Error(), "command: ") {
				t.Errorf("Render(%q) error %v, want one starting \"command: \" containing %q", tc.tmpl, err, tc.want)
			}
		})
	}
	c := Config{Template: filepath.Join(t.TempDir(), "absent.tmpl")}
	if _, err := c.Render(job); err == nil || !strings.Contains(err.Error(), "absent.tmpl") {
		t.Errorf("Render with no template file: %v", err)
	}
}
