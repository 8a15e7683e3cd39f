package fit

import (
	"context"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/interp"
)

func TestSpline_MatchesDenseNotAKnot(t *testing.T) {
	const seed = 11
	t.Logf("seed %d", seed)
	rng := rand.New(rand.NewPCG(seed, 3))
	for _, n := range []int{4, 5, 7, 30} {
		x := make([]float64, n)
		y := make([]float64, n)
		v := 0.0
		for i := range x {
			v += 0.05 + rng.Float64()
			x[i] = v
			y[i] = rng.NormFloat64()
		}
		s, err := newSpline(context.Background(), x, y)
		if err != nil {
			t.Fatal(err)
		}
		// Independent reference: gonum's not-a-knot spline, which solves
		// the full (dense) system.
		var ref interp.NotAKnotCubic
		if err := ref.Fit(x, y); err != nil {
			t.Fatal(err)
		}
		for k := range 200 {
			r := x[0] + (x[n-1]-x[0])*float64(k)/199
			// 1e-9: both are exact solutions of the same linear system;
			// the difference is round-off of two solvers.
			near(t, "spline", s.at(r), ref.Predict(r), 1e-9, 1e-9)
		}
	}
}

func TestSpline_CubicReproducedExactly(t *testing.T) {
	// A not-a-knot spline reproduces any cubic (de Boor 2001, ch. IV).
	p := func(r float64) float64 { return 1 - 2*r + 0.5*r*r - 0.3*r*r*r }
	x := []float64{0.1, 0.2, 0.5, 1.1, 1.3, 2.9, 3.0, 4.5}
	y := make([]float64, len(x))
	for i := range x {
		y[i] = p(x[i])
	}
	s, err := newSpline(context.Background(), x, y)
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range []float64{0.15, 0.7, 2.0, 3.7, 4.4} {
		near(t, "cubic", s.at(r), p(r), 1e-11, 0) // round-off only
	}
}

func TestSpline_GradientMatchesFiniteDifferences(t *testing.T) {
	x := []float64{0.3, 0.5, 0.9, 1.0, 1.6, 2.0, 2.8, 3.1, 4.0}
	y := []float64{3, 1, 0.2, 0.1, 0.4, 0.9, 1.5, 1.6, 1.8}
	r := []float64{0.35, 0.95, 1.2, 2.5, 3.9}
	w := []float64{0.1, 0.5, -0.3, 0.2, 0.7}
	s, err := newSpline(context.Background(), x, y)
	if err != nil {
		t.Fatal(err)
	}
	g := s.gradient(r, w)
	f := func(y []float64) float64 {
		sp, err := newSpline(context.Background(), x, y)
		if err != nil {
			t.Fatal(err)
		}
		v := 0.0
		for j := range r {
			v += w[j] * sp.at(r[j])
		}
		return v
	}
	for i := range y {
		yp := append([]float64(nil), y...)
		ym := append([]float64(nil), y...)
		yp[i] += 1e-4
		ym[i] -= 1e-4
		// The map is linear, so the central difference is exact up to
		// round-off (independent computation: rebuild and re-evaluate).
		near(t, "dS/dy_"+itoa(i), g[i], (f(yp)-f(ym))/2e-4, 1e-8, 0)
	}
}

func TestSpline_Cancelled(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	n := 2 * ctxEvery
	x := make([]float64, n)
	for i := range x {
		x[i] = float64(i)
	}
	if _, err := newSpline(ctx, x, x); err == nil {
		t.Error("a cancelled context gave no error")
	}
}
