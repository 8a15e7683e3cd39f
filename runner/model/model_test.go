package model_test

import (
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/model"
)

func spec(t *testing.T, terms string) *planner.Spec {
	t.Helper()
	s, err := planner.Decode([]byte(`
[molecule]
geometry = """
Ar 0 0 0
Ar 0 0 3.8
"""
[[scan]]
name = "r"
bond = [1, 2]
from = 3.0
to = 5.0
step = 0.5
[engine]
kind = "model"
[engine.model]
offset = -1.0
`+terms), "test.toml")
	if err != nil {
		t.Fatal(err)
	}
	return s
}

func TestBackend_Energy_Shapes(t *testing.T) {
	tests := []struct {
		name, terms string
		q, want     float64
	}{
		// Morse: zero at r_e, D_e as r → ∞ (Morse 1929, by construction).
		{"morse at minimum", "[[engine.model.term]]\nshape = \"morse\"\ndepth = 0.1\nwidth = 1.0\ncenter = 2.0", 2.0, -1.0},
		{"morse dissociated", "[[engine.model.term]]\nshape = \"morse\"\ndepth = 0.1\nwidth = 1.0\ncenter = 2.0", 60, -0.9},
		// Lennard-Jones 12-6: minimum −ε at 2^{1/6} σ, zero at σ
		// (Jones 1924; textbook property of the 12-6 form).
		{"lj minimum", "[[engine.model.term]]\nshape = \"lennard-jones\"\ndepth = 0.0004\nsigma = 6.4", math.Pow(2, 1.0/6) * 6.4, -1.0004},
		{"lj at sigma", "[[engine.model.term]]\nshape = \"lennard-jones\"\ndepth = 0.0004\nsigma = 6.4", 6.4, -1.0},
		{"harmonic", "[[engine.model.term]]\nshape = \"harmonic\"\nforce = 0.5\ncenter = 2.0", 2.2, -1 + 0.5*0.5*0.04},
		// Double well: barrier h at c, zero at c ± w.
		{"double well barrier", "[[engine.model.term]]\nshape = \"double-well\"\ndepth = 0.01\nwidth = 0.5\ncenter = 3.0", 3.0, -0.99},
		{"double well minimum", "[[engine.model.term]]\nshape = \"double-well\"\ndepth = 0.01\nwidth = 0.5\ncenter = 3.0", 3.5, -1.0},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			b, err := model.New(spec(t, tc.terms))
			if err != nil {
				t.Fatal(err)
			}
			// 1e-12: closed-form expressions, rounding only.
			if got := b.Energy([]float64{tc.q}); !scalar.EqualWithinAbsOrRel(got, tc.want, 1e-12, 1e-12) {
				t.Errorf("Energy(%g) = %.15g, want %.15g", tc.q, got, tc.want)
			}
		})
	}
}

func TestBackend_Compute_GuessAndFailure(t *testing.T) {
	s := spec(t, "fail = [\"r=4.00000\"]\n[[engine.model.term]]\nshape = \"harmonic\"\nforce = 0.5\ncenter = 7.0")
	b, err := model.New(s)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	task := func(x float64, guess string) runner.Task {
		p := s.PointAt([]float64{x})
		d := filepath.Join(dir, p.Key)
		if err := os.MkdirAll(d, 0o755); err != nil {
			t.Fatal(err)
		}
		return runner.Task{Key: p.Key, Values: p.Values, Dir: d, GuessPath: guess}
	}
	first, err := b.Compute(t.Context(), task(3.0, ""))
	if err != nil || first.Extra["guess_distance"] != -1 || !first.Converged {
		t.Fatalf("cold point: %+v, %v", first, err)
	}
	t1 := task(3.5, filepath.Join(dir, "r=3.00000", first.Orbitals))
	second, err := b.Compute(t.Context(), t1)
	// 0.5 Å in bohr, from the two points' values.
	if want := 0.5 * planner.AngstromInBohr; err != nil || !scalar.EqualWithinAbs(second.Extra["guess_distance"], want, 1e-12) {
		t.Errorf("guess distance %v (%v), want %v", second.Extra["guess_distance"], err, want)
	}
	if _, err := b.Compute(t.Context(), task(4.0, "")); err == nil || !strings.Contains(err.Error(), "engine.model.fail") {
		t.Errorf("listed point: error %v", err)
	}
}
