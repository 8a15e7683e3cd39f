package command

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// FuzzRender: any template text and any title/key either render or give
// an error, never a panic; a successful render is deterministic.
func FuzzRender(f *testing.F) {
	for _, s := range []string{
		"{{.NAtoms}}\n{{oneline .Title}} {{.Key}}\n{{.XYZ \"angstrom\"}}\n",
		"{{range .Atoms}}atom {{.Symbol}} {{.Ang.X}} {{.Ang.Y}} {{.Ang.Z}}\n{{end}}",
		`{{fixed 3 .Coords.r}} {{sci 4 .Coords.r}} {{.Coord "r"}} {{.Units.r}}`,
		`{{.Nope}}`, `{{.XYZ "parsec"}}`, `{{fixed -1 2}}`, `{{template "x"}}`, "{{", "}}{{end}}",
	} {
		f.Add(s, "toy title", "r=1.00000")
	}
	f.Fuzz(func(t *testing.T, tmpl, title, key string) {
		// A template is the user's own program; loops over huge ranges are
		// not what this target looks for.
		if len(tmpl) > 512 || strings.Contains(tmpl, "range") {
			t.Skip()
		}
		p := filepath.Join(t.TempDir(), "f.tmpl")
		if err := os.WriteFile(p, []byte(tmpl), 0o600); err != nil {
			t.Fatal(err)
		}
		c := Config{Template: p, InputName: "toy.inp"}
		job := Job{Title: title, Key: key, Coords: map[string]float64{"r": 1}, CoordUnits: map[string]string{"r": "angstrom"},
			Atoms:        []Atom{{Symbol: "H", Z: 1, Mass: 1.00782503223, Pos: [3]float64{0, 0, 0}}, {Symbol: "H", Z: 1, Mass: 1.00782503223, Pos: [3]float64{0, 0, 1.4}}},
			Multiplicity: 1}
		a, errA := c.Render(job)
		b, errB := c.Render(job)
		if (errA == nil) != (errB == nil) || !bytes.Equal(a, b) {
			t.Fatalf("two renders differ: %q (%v) vs %q (%v)", a, errA, b, errB)
		}
	})
}
