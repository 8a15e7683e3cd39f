package integral

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/integrate/quad"
)

// Independent numerical integration of one-electron integrals between
// single-primitive Cartesian Gaussians, by product Gauss–Hermite
// quadrature (gonum integrate/quad.Hermite; exact for polynomial ×
// Gaussian with enough nodes) and, for 1/|r−C|, the Gaussian transform
// 1/r = (2/√π) ∫₀^∞ exp(−t²r²) dt (the Gaussian transform; common practice)
// with the t integral by Gauss–Legendre (gonum quad.Legendre) after
// t = u/(1−u).

const hermiteNodes = 24 // exact for polynomial degree < 48

// gauss1D integrates e^{−a(x−A)² − b(x−B)² − c(x−C)²} · poly(x) over the
// real line.
func gauss1D(a, A, b, B, c, C float64, poly func(x float64) float64) float64 {
	s := a + b + c
	X := (a*A + b*B + c*C) / s
	K := a*A*A + b*B*B + c*C*C - s*X*X
	rs := math.Sqrt(s)
	v := quad.Fixed(func(y float64) float64 { return poly(X + y/rs) }, math.Inf(-1), math.Inf(1), hermiteNodes, quad.Hermite{}, 0)
	return math.Exp(-K) * v / rs
}

type prim struct {
	n   [3]int
	a   float64
	ctr [3]float64
}

func pw(x float64, k int) float64 {
	if k < 0 {
		return 0
	}
	return math.Pow(x, float64(k))
}

// overlapQ is ⟨g1|exp(−c|r−C|²)|g2⟩ for unnormalised primitives.
func overlapQ(g1, g2 prim, c float64, C [3]float64) float64 {
	v := 1.0
	for d := range 3 {
		i, j := g1.n[d], g2.n[d]
		A, B := g1.ctr[d], g2.ctr[d]
		v *= gauss1D(g1.a, A, g2.a, B, c, C[d], func(x float64) float64 { return pw(x-A, i) * pw(x-B, j) })
	}
	return v
}

// kineticQ is ½ ∫ ∇g1·∇g2.
func kineticQ(g1, g2 prim) float64 {
	var s [3]float64
	var dd [3]float64
	for d := range 3 {
		i, j := g1.n[d], g2.n[d]
		A, B, a, b := g1.ctr[d], g2.ctr[d], g1.a, g2.a
		s[d] = gauss1D(a, A, b, B, 0, 0, func(x float64) float64 { return pw(x-A, i) * pw(x-B, j) })
		dd[d] = gauss1D(a, A, b, B, 0, 0, func(x float64) float64 {
			da := float64(i)*pw(x-A, i-1) - 2*a*pw(x-A, i+1)
			db := float64(j)*pw(x-B, j-1) - 2*b*pw(x-B, j+1)
			return da * db
		})
	}
	return 0.5 * (dd[0]*s[1]*s[2] + s[0]*dd[1]*s[2] + s[0]*s[1]*dd[2])
}

// nuclearQ is −Z ⟨g1|1/|r−C||g2⟩.
func nuclearQ(g1, g2 prim, Z float64, C [3]float64) float64 {
	f := func(u float64) float64 {
		t := u / (1 - u)
		return overlapQ(g1, g2, t*t, C) / ((1 - u) * (1 - u))
	}
	v := quad.Fixed(f, 0, 1, 400, quad.Legendre{}, 0)
	return -Z * 2 / math.SqrtPi * v
}

func TestOneBody_QuadratureHigherL(t *testing.T) {
	// Off-centre d–f, f–f, d–d and d–s pairs plus one point charge.
	type shellDef struct {
		l   int
		a   float64
		ctr [3]float64
	}
	defs := []shellDef{
		{2, 0.8, [3]float64{0.1, -0.3, 0.4}},
		{3, 0.5, [3]float64{-0.6, 0.5, 1.1}},
		{3, 1.3, [3]float64{0.7, 0.2, -0.5}},
		{0, 0.35, [3]float64{-0.2, -0.9, 0.3}},
	}
	C := PointCharge{Z: 1.3, Pos: [3]float64{0.3, 0.9, -0.7}}
	var shells []Shell
	for _, d := range defs {
		shells = append(shells, Shell{L: d.l, Center: d.ctr, Exps: []float64{d.a}, Coefs: []float64{1}})
	}
	S := Overlap(shells, NormPerComponent)
	T := Kinetic(shells, NormPerComponent)
	V := Nuclear(shells, NormPerComponent, []PointCharge{C})
	// functions with unnormalised primitives and their quadrature norms
	var ps []prim
	for _, d := range defs {
		for _, e := range cartExps(d.l) {
			ps = append(ps, prim{n: e, a: d.a, ctr: d.ctr})
		}
	}
	norm := make([]float64, len(ps))
	for i, g := range ps {
		norm[i] = 1 / math.Sqrt(overlapQ(g, g, 0, [3]float64{}))
	}
	// Tolerance 1e-9 absolute/relative: the brief's target; Hermite
	// quadrature is exact here and 400-point Legendre converges to ~1e-13.
	const tol = 1e-9
	checked := 0
	for i := range ps {
		for j := 0; j <= i; j++ {
			nn := norm[i] * norm[j]
			for _, c := range []struct {
				name      string
				got, want float64
			}{
				{"S", S.At(i, j), nn * overlapQ(ps[i], ps[j], 0, [3]float64{})},
				{"T", T.At(i, j), nn * kineticQ(ps[i], ps[j])},
				{"V", V.At(i, j), nn * nuclearQ(ps[i], ps[j], C.Z, C.Pos)},
			} {
				checked++
				if !scalar.EqualWithinAbsOrRel(c.got, c.want, tol, tol) {
					t.Errorf("%s[%d,%d] = %.12g, quadrature %.12g", c.name, i, j, c.got, c.want)
				}
			}
		}
	}
	if checked == 0 {
		t.Fatal("nothing checked")
	}
}
