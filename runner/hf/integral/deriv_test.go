package integral

import (
	"context"
	"math"
	"math/rand/v2"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// gradShells is testShells plus a g shell and a second d shell, on three
// centres: every angular momentum 0..4, Cartesian or pure.
func gradShells(pure bool) []Shell {
	sh := testShells(pure)
	A := sh[0].Center
	sh = append(sh,
		Shell{L: 4, Center: A, Atom: 0, Exps: []float64{1.1, 0.5}, Coefs: []float64{0.6, 0.5}, Pure: pure},
		Shell{L: 2, Center: sh[3].Center, Atom: 2, Exps: []float64{0.7}, Coefs: []float64{1}, Pure: pure},
	)
	return sh
}

func randomSym(rng *rand.Rand, n int, scale float64) *mat.SymDense {
	m := mat.NewSymDense(n, nil)
	for i := range n {
		for j := 0; j <= i; j++ {
			m.SetSym(i, j, scale*(rng.Float64()-0.5))
		}
	}
	return m
}

// moveAtom returns the shells and charges with atom a displaced by h
// along x.
func moveAtom(shells []Shell, ch []PointCharge, a, x int, h float64) ([]Shell, []PointCharge) {
	s2 := append([]Shell(nil), shells...)
	for i := range s2 {
		if s2[i].Atom == a {
			s2[i].Center[x] += h
		}
	}
	c2 := append([]PointCharge(nil), ch...)
	c2[a].Pos[x] += h
	return s2, c2
}

func symDot(a, b *mat.SymDense) float64 {
	n := a.SymmetricDim()
	var s float64
	for i := range n {
		for j := range n {
			s += a.At(i, j) * b.At(i, j)
		}
	}
	return s
}

// TestOneElectronGradient_FiniteDifference checks the analytic
// derivative integrals against central differences of the independent
// integral code: E1(X) = Σ d·(T+V)(X) − Σ w·S(X) with fixed matrices,
// every angular momentum 0..4, Cartesian and pure.
func TestOneElectronGradient_FiniteDifference(t *testing.T) {
	const h = 1e-4   // bohr
	const tol = 1e-7 // Eh/bohr: central-difference error O(h²·E''') ≈ 1e-8 here (common practice)
	for _, pure := range []bool{false, true} {
		shells := gradShells(pure)
		ch := []PointCharge{{Z: 3, Pos: shells[0].Center}, {Z: 2, Pos: shells[2].Center}, {Z: 1.5, Pos: shells[3].Center}}
		n := NumFunctions(shells)
		rng := rand.New(rand.NewPCG(7, uint64(n)))
		t.Logf("seed 7/%d", n)
		d, w := randomSym(rng, n, 1), randomSym(rng, n, 1)
		basis, chg, err := OneElectronGradient(shells, NormPerComponent, ch, d, w, 3)
		if err != nil {
			t.Fatal(err)
		}
		e1 := func(s []Shell, c []PointCharge) float64 {
			return symDot(d, Kinetic(s, NormPerComponent)) + symDot(d, Nuclear(s, NormPerComponent, c)) - symDot(w, Overlap(s, NormPerComponent))
		}
		for a := range 3 {
			for x := range 3 {
				sp, cp := moveAtom(shells, ch, a, x, h)
				sm, cm := moveAtom(shells, ch, a, x, -h)
				fd := (e1(sp, cp) - e1(sm, cm)) / (2 * h) // independent: central difference of the integrals
				got := basis[a][x] + chg[a][x]
				if math.Abs(got-fd) > tol {
					t.Errorf("pure=%v atom %d dir %d: analytic %.10f, finite difference %.10f", pure, a, x, got, fd)
				}
			}
		}
	}
}

// TestTwoElectronGradient_FiniteDifference checks the derivative
// quartets against central differences of E2 = ½ Σ D·J(D) − ½ Σ_s D^s·K(D^s)
// computed with the in-core integrals, for random spin densities.
func TestTwoElectronGradient_FiniteDifference(t *testing.T) {
	const h = 1e-4   // bohr
	const tol = 1e-7 // Eh/bohr: central-difference error (common practice)
	ctx := context.Background()
	for _, pure := range []bool{false, true} {
		shells := gradShells(pure)
		n := NumFunctions(shells)
		rng := rand.New(rand.NewPCG(11, uint64(n)))
		t.Logf("seed 11/%d", n)
		da, db := randomSym(rng, n, 0.6), randomSym(rng, n, 0.6)
		g, err := TwoElectronGradient(ctx, shells, NormPerComponent, 2, da, db, 3, 1e-14)
		if err != nil {
			t.Fatal(err)
		}
		dt := mat.NewSymDense(n, nil)
		dt.AddSym(da, db)
		e2 := func(s []Shell) float64 {
			eri, err := ComputeERI(ctx, s, NormPerComponent, 2)
			if err != nil {
				t.Fatal(err)
			}
			js := []*mat.SymDense{mat.NewSymDense(n, nil), mat.NewSymDense(n, nil), mat.NewSymDense(n, nil)}
			ks := []*mat.SymDense{mat.NewSymDense(n, nil), mat.NewSymDense(n, nil), mat.NewSymDense(n, nil)}
			if err := eri.JK(ctx, []*mat.SymDense{dt, da, db}, js, ks); err != nil {
				t.Fatal(err)
			}
			return 0.5*symDot(dt, js[0]) - 0.5*(symDot(da, ks[1])+symDot(db, ks[2]))
		}
		var sum [3]float64
		for a := range 3 {
			for x := range 3 {
				sp, _ := moveAtom(shells, make([]PointCharge, 3), a, x, h)
				sm, _ := moveAtom(shells, make([]PointCharge, 3), a, x, -h)
				fd := (e2(sp) - e2(sm)) / (2 * h) // independent: central difference of the integrals
				if math.Abs(g[a][x]-fd) > tol {
					t.Errorf("pure=%v atom %d dir %d: analytic %.10f, finite difference %.10f", pure, a, x, g[a][x], fd)
				}
				sum[x] += g[a][x]
			}
		}
		for x := range 3 {
			// Translational invariance: the sum over atoms vanishes
			// exactly in exact arithmetic (common practice); 1e-10
			// allows for rounding in the sums.
			if math.Abs(sum[x]) > 1e-10 {
				t.Errorf("pure=%v: Σ_A g[A][%d] = %g, want 0", pure, x, sum[x])
			}
		}
	}
}

// TestTwoElectronGradient_Cancelled checks that a cancelled context is
// reported and the workers are joined.
func TestTwoElectronGradient_Cancelled(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	shells := gradShells(true)
	n := NumFunctions(shells)
	d := mat.NewSymDense(n, nil)
	if _, err := TwoElectronGradient(ctx, shells, NormPerComponent, 2, d, d, 3, 0); err == nil {
		t.Fatal("TwoElectronGradient with a cancelled context: no error")
	}
	if _, err := TwoElectronGradient(context.Background(), shells, NormPerComponent, 2, d, d, 2, 0); err == nil {
		t.Fatal("TwoElectronGradient with an atom index out of range: no error")
	}
}

// TestTwoElectronGradient_OnePassMatchesSeparate compares the one-pass
// shifted-class recurrence with the separate quartets over shifted shells
// (an independent route through the integral code), for every angular
// momentum to g.
func TestTwoElectronGradient_OnePassMatchesSeparate(t *testing.T) {
	ctx := context.Background()
	for _, pure := range []bool{false, true} {
		shells := gradShells(pure)
		n := NumFunctions(shells)
		rng := rand.New(rand.NewPCG(5, uint64(n)))
		da, db := randomSym(rng, n, 0.6), randomSym(rng, n, 0.6)
		a, err := twoElectronGradient(ctx, shells, NormPerComponent, 2, da, db, 3, 1e-14, false)
		if err != nil {
			t.Fatal(err)
		}
		b, err := twoElectronGradient(ctx, shells, NormPerComponent, 2, da, db, 3, 1e-14, true)
		if err != nil {
			t.Fatal(err)
		}
		for i := range a {
			for x := range 3 {
				// Same sums in another order: rounding only (1e-10 on
				// components of order 1).
				if math.Abs(a[i][x]-b[i][x]) > 1e-10 {
					t.Errorf("pure=%v atom %d dir %d: one pass %.12f, separate %.12f", pure, i, x, a[i][x], b[i][x])
				}
			}
		}
	}
}

// TestTwoElectronGradient_PrimitiveScreening: at the default threshold the
// one-pass route drops primitive quartets below a hundredth of it (see
// derivWork.primCut); the separate-quartet route keeps them all. For
// water in cc-pVDZ (contracted s shells of 9 primitives on O) with a
// random density of the size of a real one, the two agree to 1e-9
// Eh/bohr: three orders below the 1e-6 gradient accuracy, and
// far above rounding (common practice for a screening error budget).
func TestTwoElectronGradient_PrimitiveScreening(t *testing.T) {
	ctx := context.Background()
	water := readGeom(t, filepath.Join("..", "testdata", "worked-water", "STO-3G", "geom.dat"))
	shells := basisShells(t, "cc-pvdz-HCO.json", water, true)
	n := NumFunctions(shells)
	rng := rand.New(rand.NewPCG(7, uint64(n)))
	da := randomSym(rng, n, 0.5)
	a, err := twoElectronGradient(ctx, shells, NormPerComponent, 2, da, da, len(water), 0, false)
	if err != nil {
		t.Fatal(err)
	}
	b, err := twoElectronGradient(ctx, shells, NormPerComponent, 2, da, da, len(water), 0, true)
	if err != nil {
		t.Fatal(err)
	}
	worst := 0.0
	for i := range a {
		for x := range 3 {
			worst = math.Max(worst, math.Abs(a[i][x]-b[i][x]))
		}
	}
	t.Logf("largest difference screened − unscreened: %.2e Eh/bohr", worst)
	if worst > 1e-9 {
		t.Errorf("primitive screening changes the gradient by %.2e Eh/bohr, want ≤ 1e-9", worst)
	}
}
