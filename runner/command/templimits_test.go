package command

import (
	"context"
	"errors"
	"strings"
	"testing"
	"time"

	"wellscan/parsers"
	"wellscan/runner"
)

// TestConfig_Render_Limits is issue 15 item 10: a template that loops a
// constant number of times far beyond any input, or writes more than an
// input can be, fails fast with ErrRenderLimit naming the template; a
// render honours cancellation.
func TestConfig_Render_Limits(t *testing.T) {
	job := Job{Key: "r=1.00000", Coords: map[string]float64{"r": 1}, CoordUnits: map[string]string{"r": "angstrom"},
		Atoms: []Atom{{Symbol: "H", Z: 1}, {Symbol: "H", Z: 1, Pos: [3]float64{0, 0, 1.4}}}}
	tests := []struct {
		name, tmpl, want string
	}{
		{"empty range 1e11", "{{range 100000000000}}{{end}}", "more than the 1000000 a template may loop over a constant"},
		{"range 1e8 writing", "{{range 100000000}}x{{end}}", "more than the 1000000"},
		{"nested ranges multiply", "{{range 2000}}{{range $i := 2000}}{{end}}{{end}}", "runs 4e+06 times"},
		{"range in a defined template", `{{define "loop"}}{{range 10000000}}{{end}}{{end}}{{template "loop"}}`, "more than the 1000000"},
		{"output beyond 16 MiB", "{{range .Atoms}}{{range 1000000}}xxxxxxxxxxxxxxxxxxxx{{end}}{{end}}", "grew past 16777216 bytes"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c := Config{Template: writeTemplate(t, tc.tmpl), InputName: "p.inp", Args: []string{"true"}, Energy: parsers.ExtractorSpec{Label: "e", Unit: "hartree"}}
			start := time.Now()
			_, err := c.Render(job)
			if !errors.Is(err, ErrRenderLimit) || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("Render = %v, want ErrRenderLimit saying %q", err, tc.want)
			}
			if !strings.Contains(err.Error(), "point.tmpl") && !strings.Contains(err.Error(), "r=1.00000") {
				t.Errorf("error %q names neither the template nor the point", err)
			}
			if d := time.Since(start); d > 5*time.Second {
				t.Errorf("refusing took %v", d)
			}
		})
	}
	// A million constant iterations per atom are allowed, but a cancelled
	// context stops the render at once.
	c := Config{Template: writeTemplate(t, "{{range .Atoms}}{{range 1000000}}{{range 1}}{{end}}{{end}}{{end}}"), InputName: "p.inp", Args: []string{"true"}, Energy: parsers.ExtractorSpec{Label: "e", Unit: "hartree"}}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	start := time.Now()
	if _, err := c.RenderContext(ctx, job); !errors.Is(err, context.Canceled) {
		t.Errorf("RenderContext(cancelled) = %v, want context.Canceled", err)
	}
	if d := time.Since(start); d > time.Second {
		t.Errorf("a cancelled render took %v to return", d)
	}
}

// TestConfig_Run_OutputCap is issue 15 item 11: a program's output is
// read for an energy only up to 64 MiB; a larger one fails the point with
// a message instead of being read whole into memory.
func TestConfig_Run_OutputCap(t *testing.T) {
	if testing.Short() {
		t.Skip("writes 70 MB")
	}
	c := morseConfig(t)
	c.Args = []string{"head", "-c", "70000000", "/dev/zero"}
	out, err := c.Run(t.Context(), diatomic(t.TempDir(), 1.13))
	if out.Class != runner.ClassOutputMissing || err == nil || !strings.Contains(err.Error(), "more than the 67108864 read for an energy") {
		t.Fatalf("Run = %v (%s), want output-missing naming the 64 MiB cap", err, out.Class)
	}
}
