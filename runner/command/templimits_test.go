package command

import (
	"context"
	"errors"
	"math"
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

// TestConfig_Run_OutputCap is issue 15 item 11: what must be read whole
// for an energy is read only up to 64 MiB. 70 MB without a line break
// cannot be read line by line; the point fails with a message naming the
// cap and why, instead of the output being read whole into memory.
func TestConfig_Run_OutputCap(t *testing.T) {
	if testing.Short() {
		t.Skip("writes 70 MB")
	}
	c := morseConfig(t)
	c.Args = []string{"head", "-c", "70000000", "/dev/zero"}
	out, err := c.Run(t.Context(), diatomic(t.TempDir(), 1.13))
	if out.Class != runner.ClassOutputMissing || !errors.Is(err, parsers.ErrOutputTooLarge) || !strings.Contains(err.Error(), "more than 67108864 bytes") || !strings.Contains(err.Error(), "longer than 1048576 bytes") {
		t.Fatalf("Run = %v (%s), want output-missing naming the 64 MiB cap and the over-long line", err, out.Class)
	}
}

// TestConfig_Run_LargeOutputStreamed is issue 15 item 11: a label
// extractor reads a program's output line by line, so 100 MB of output
// (more than the 64 MiB read whole before) gives its energy.
func TestConfig_Run_LargeOutputStreamed(t *testing.T) {
	if testing.Short() {
		t.Skip("writes 100 MB")
	}
	c := morseConfig(t)
	c.Args = []string{"sh", "-c", `yes "  cycle  delta E = 1.0e-05  rms D = 2.0e-05" | head -c 100000000; echo; echo "well energy / eV : -2000.5"`}
	out, err := c.Run(t.Context(), diatomic(t.TempDir(), 1.13))
	if err != nil {
		t.Fatalf("Run = %v (%s)", err, out.Class)
	}
	// CODATA 2018: 1 hartree = 27.211386245988 eV; the factor is the
	// same constant, so only rounding (1 ulp) separates the two.
	if want := -2000.5 / 27.211386245988; math.Abs(out.Energy-want) > 1e-12 {
		t.Errorf("E = %.12f hartree, want %.12f", out.Energy, want)
	}
}
