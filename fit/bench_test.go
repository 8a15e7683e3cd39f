package fit

import (
	"context"
	"testing"
)

func BenchmarkCurve(b *testing.B) {
	// A 40-point curve: fine steps near r_e, coarse wings (seeded by
	// construction; no randomness).
	m := coLike
	r := refinedGrid(1.7, m.re, 4.0, 0.02, 0.25)
	e := sampleAt(m.v, r)
	if len(r) < 35 || len(r) > 45 {
		b.Fatalf("grid has %d points, want about 40", len(r))
	}
	opt := Options{Isotopologues: []MassSet{{Masses: []float64{mass12C, mass16O}}}}
	b.Run("n=40", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if _, err := Curve(context.Background(), r, e, opt); err != nil {
				b.Fatal(err)
			}
		}
	})
}

func BenchmarkLevels(b *testing.B) {
	m := testMorse
	b.Run("n=400", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if _, err := Levels(m.v, m.mu, 0.6, 12, 400, 0); err != nil {
				b.Fatal(err)
			}
		}
	})
}
