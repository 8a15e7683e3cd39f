package fit

import (
	"math"
	"testing"
)

func TestSurface2D_QuarticSurface_RecoversHessianAndGF(t *testing.T) {
	// Invented test surface with a known minimum at (x0, y0) and Hessian F,
	// plus cubic and quartic terms that vanish at the minimum.
	const (
		x0, y0        = 1.81, 1.95
		f11, f12, f22 = 0.50, -0.01, 0.16
	)
	v := func(x, y float64) float64 {
		u, w := x-x0, y-y0
		return -76 + 0.5*f11*u*u + f12*u*w + 0.5*f22*w*w - 0.3*u*u*u + 0.05*u*w*w + 0.2*u*u*u*u + 0.03*w*w*w*w
	}
	var xs, ys, es []float64
	for i := -5; i <= 5; i++ {
		for j := -5; j <= 5; j++ {
			x, y := x0+0.02*float64(i)+0.003, y0+0.04*float64(j)-0.005
			xs, ys, es = append(xs, x), append(ys, y), append(es, v(x, y))
		}
	}
	g := [2][2]float64{{1/massH + 1/mass16O, -0.06}, {-0.06, 1.6}}
	res, err := Surface2D(xs, ys, es, SurfaceOptions{G: g})
	if err != nil {
		t.Fatal(err)
	}
	// The quartic is exactly representable, so the fit is exact to
	// round-off (1e-8 absolute for the conditioning of 15 columns).
	near(t, "x", res.X, x0, 1e-8, 0)
	near(t, "y", res.Y, y0, 1e-8, 0)
	near(t, "E", res.E, -76, 1e-10, 0)
	near(t, "F11", res.Hessian[0][0], f11, 1e-7, 0)
	near(t, "F12", res.Hessian[0][1], f12, 1e-7, 0)
	near(t, "F22", res.Hessian[1][1], f22, 1e-7, 0)
	// Eigenvalues of the 2×2 product GF in closed form, λ = (tr ±
	// √(tr² − 4 det))/2 (elementary algebra), ω = √λ (Wilson, Decius &
	// Cross 1955).
	gf := [2][2]float64{
		{g[0][0]*f11 + g[0][1]*f12, g[0][0]*f12 + g[0][1]*f22},
		{g[1][0]*f11 + g[1][1]*f12, g[1][0]*f12 + g[1][1]*f22},
	}
	tr, det := gf[0][0]+gf[1][1], gf[0][0]*gf[1][1]-gf[0][1]*gf[1][0]
	want := []float64{(tr - math.Sqrt(tr*tr-4*det)) / 2, (tr + math.Sqrt(tr*tr-4*det)) / 2}
	for k := range 2 {
		w := math.Sqrt(want[k]/AmuInElectronMass) * HartreeInCm1
		near(t, "ω_"+itoa(k+1), res.Frequencies[k], w, 0, 1e-6)
	}
}

func TestSurface2D_TooFewPoints_Errors(t *testing.T) {
	if _, err := Surface2D([]float64{0, 1, 2}, []float64{0, 1, 2}, []float64{1, 0, 1}, SurfaceOptions{}); err == nil {
		t.Error("3 points for a quartic surface gave no error")
	}
}
