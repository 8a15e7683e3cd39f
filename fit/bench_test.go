package fit

import (
	"context"
	"fmt"
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

// largeCurve is a CO-like Morse curve on n even points from 1.6 to 6 bohr
// (deterministic; no noise).
func largeCurve(n int) ([]float64, []float64) {
	r := linspace(1.6, 6, n)
	return r, sampleAt(coLike.v, r)
}

// BenchmarkCurve_LargeN measures the cost growth with the number of
// points: issue 14 asks for 10,000 points in at most 1 s and 50 MB, and a
// bounded 200,000-point fit (the interpolant is a banded spline, the global
// fits thin to maxGlobalPoints, the level grid is set by the well).
func BenchmarkCurve_LargeN(b *testing.B) {
	opt := Options{Isotopologues: []MassSet{{Masses: []float64{mass12C, mass16O}}}}
	for _, n := range []int{1000, 10000, 200000} {
		r, e := largeCurve(n)
		b.Run(fmt.Sprintf("n=%d", n), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				if _, err := Curve(context.Background(), r, e, opt); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
