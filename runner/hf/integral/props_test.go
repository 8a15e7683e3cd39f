package integral

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
)

// waterAtoms is the worked example's H2O geometry (bohr;
// testdata/worked-water/STO-3G/geom.dat).
func waterAtoms(t testing.TB) []atom {
	t.Helper()
	return readGeom(t, filepath.Join("..", "testdata", "worked-water", "STO-3G", "geom.dat"))
}

// benzeneAtoms is our own benzene geometry from standard bond lengths
// (C–C 1.39 Å, C–H 1.09 Å, regular hexagon in the xy plane), in bohr with
// 1 Å = 1/0.529177210903 bohr (CODATA 2018 Bohr radius). Not a reference
// structure: it only sizes the benchmarks.
func benzeneAtoms() []atom {
	const bohrPerAngstrom = 1 / 0.529177210903
	rc, rh := 1.39*bohrPerAngstrom, (1.39+1.09)*bohrPerAngstrom
	var out []atom
	for k := range 6 {
		phi := float64(k) * math.Pi / 3
		out = append(out, atom{6, [3]float64{rc * math.Cos(phi), rc * math.Sin(phi), 0}})
	}
	for k := range 6 {
		phi := float64(k) * math.Pi / 3
		out = append(out, atom{1, [3]float64{rh * math.Cos(phi), rh * math.Sin(phi), 0}})
	}
	return out
}

func basisShells(t testing.TB, file string, atoms []atom, pure bool) []Shell {
	t.Helper()
	b := readBasis(t, filepath.Join("testdata", "basis", file))
	sh, err := buildShells(atoms, b, pure)
	if err != nil {
		t.Fatal(err)
	}
	return sh
}

func TestNumFunctions_WaterBases(t *testing.T) {
	// Counts from the Basis Set Exchange-derived reference table
	// (testdata/README.md: H2O cc-pVDZ 25 Cartesian / 24 spherical,
	// 6-31G* 19 / 18).
	for _, tc := range []struct {
		file string
		pure bool
		want int
	}{
		{"cc-pvdz-HCO.json", true, 24},
		{"cc-pvdz-HCO.json", false, 25},
		{"6-31gs-HCO.json", false, 19},
		{"6-31gs-HCO.json", true, 18},
	} {
		sh := basisShells(t, tc.file, waterAtoms(t), tc.pure)
		if got := NumFunctions(sh); got != tc.want {
			t.Errorf("NumFunctions(%s, pure=%v) = %d, want %d", tc.file, tc.pure, got, tc.want)
		}
		if got := Overlap(sh, NormPerComponent).SymmetricDim(); got != tc.want {
			t.Errorf("Overlap(%s, pure=%v) dimension %d, want %d", tc.file, tc.pure, got, tc.want)
		}
	}
	// 102 Cartesian functions for benzene/6-31G* (6·15 + 6·2, same table).
	if got := NumFunctions(basisShells(t, "6-31gs-HCO.json", benzeneAtoms(), false)); got != 102 {
		t.Errorf("benzene 6-31G* has %d functions, want 102", got)
	}
}

func TestOverlap_PureShellIsOrthonormal(t *testing.T) {
	// Real solid harmonics of one shell are orthonormal (definition).
	for l := 2; l <= MaxL; l++ {
		sh := []Shell{{L: l, Center: [3]float64{0.3, -0.2, 0.1}, Exps: []float64{2.1, 0.6}, Coefs: []float64{0.4, 0.7}, Pure: true}}
		S := Overlap(sh, NormPerComponent)
		if S.SymmetricDim() != 2*l+1 {
			t.Fatalf("l=%d: %d functions, want %d", l, S.SymmetricDim(), 2*l+1)
		}
		for i := range 2*l + 1 {
			for j := 0; j <= i; j++ {
				want := 0.0
				if i == j {
					want = 1
				}
				// 1e-13: rounding only.
				if !scalar.EqualWithinAbs(S.At(i, j), want, 1e-13) {
					t.Errorf("l=%d: S[%d,%d] = %.16g, want %v", l, i, j, S.At(i, j), want)
				}
			}
		}
	}
}

func TestOverlap_CartesianNormalisation(t *testing.T) {
	// NormPerComponent: unit diagonal; NormAxial: the x^L value
	// (2lx−1)!!(2ly−1)!!(2lz−1)!!/(2L−1)!! (⟨xy|xy⟩ = 1/3 for d, worked
	// example README).
	for l := 0; l <= MaxL; l++ {
		sh := []Shell{{L: l, Exps: []float64{1.7, 0.4}, Coefs: []float64{0.5, 0.6}}}
		sp := Overlap(sh, NormPerComponent)
		sa := Overlap(sh, NormAxial)
		for i, e := range cartExps(l) {
			if !scalar.EqualWithinAbs(sp.At(i, i), 1, 1e-13) {
				t.Errorf("l=%d comp %v: per-component norm %.16g", l, e, sp.At(i, i))
			}
			want := dfact(2*e[0]-1) * dfact(2*e[1]-1) * dfact(2*e[2]-1) / dfact(2*l-1)
			if !scalar.EqualWithinAbs(sa.At(i, i), want, 1e-13) {
				t.Errorf("l=%d comp %v: axial norm %.16g, want %.16g", l, e, sa.At(i, i), want)
			}
		}
	}
}

// testShells is a small mixed set with s…f shells on three centres.
func testShells(pure bool) []Shell {
	A := [3]float64{0.0, 0.1, -0.2}
	B := [3]float64{1.1, -0.4, 0.6}
	C := [3]float64{-0.7, 0.9, 0.3}
	return []Shell{
		{L: 0, Center: A, Atom: 0, Exps: []float64{3.4, 0.6}, Coefs: []float64{0.3, 0.8}},
		{L: 1, Center: A, Atom: 0, Exps: []float64{2.0, 0.5}, Coefs: []float64{0.4, 0.7}},
		{L: 2, Center: B, Atom: 1, Exps: []float64{1.3, 0.45}, Coefs: []float64{0.5, 0.6}, Pure: pure},
		{L: 1, Center: C, Atom: 2, Exps: []float64{0.9}, Coefs: []float64{1}},
		{L: 3, Center: C, Atom: 2, Exps: []float64{0.8}, Coefs: []float64{1}, Pure: pure},
		{L: 0, Center: B, Atom: 1, Exps: []float64{0.3}, Coefs: []float64{1}},
	}
}

func TestQuartet_PermutationSymmetry(t *testing.T) {
	// (ab|cd) = (ba|cd) = (ab|dc) = (cd|ab): a property of the exact
	// integrals; the code reaches each form by different recurrence paths
	// (which centre receives the angular momentum, which electron is
	// built first).
	for _, pure := range []bool{false, true} {
		ps := mustPrepare(testShells(pure), NormPerComponent)
		w := newERIWork(3)
		w2 := newERIWork(3)
		nsh := len(ps)
		for a := range nsh {
			for b := range nsh {
				for c := range nsh {
					for d := range nsh {
						p1, p2 := newShellPair(ps, a, b), newShellPair(ps, c, d)
						blk := append([]float64(nil), w.quartet(&p1, &p2)...)
						ref := func(i, j, k, l int) float64 { // indices in shells a,b,c,d
							// locate in pair order
							ii, jj := i, j
							if p1.s1 != a {
								ii, jj = j, i
							}
							kk, ll := k, l
							if p2.s1 != c {
								kk, ll = l, k
							}
							return blk[((ii*p1.n2+jj)*p2.n1+kk)*p2.n2+ll]
						}
						q1, q2 := newShellPair(ps, c, d), newShellPair(ps, a, b)
						swapped := w2.quartet(&q1, &q2)
						for i := range ps[a].nfunc {
							for j := range ps[b].nfunc {
								for k := range ps[c].nfunc {
									for l := range ps[d].nfunc {
										kk, ll := k, l
										if q1.s1 != c {
											kk, ll = l, k
										}
										ii, jj := i, j
										if q2.s1 != a {
											ii, jj = j, i
										}
										got := swapped[((kk*q1.n2+ll)*q2.n1+ii)*q2.n2+jj]
										want := ref(i, j, k, l)
										// 1e-13 absolute: rounding of O(1) integrals.
										if !scalar.EqualWithinAbsOrRel(got, want, 1e-13, 1e-12) {
											t.Fatalf("pure=%v shells (%d%d|%d%d) comp (%d%d|%d%d): %.16g vs %.16g", pure, a, b, c, d, i, j, k, l, got, want)
										}
									}
								}
							}
						}
					}
				}
			}
		}
	}
}

// rotate applies the orthogonal matrix R and the shift to every centre.
func transformShells(sh []Shell, R *mat.Dense, shift [3]float64) []Shell {
	out := make([]Shell, len(sh))
	for i, s := range sh {
		s.Center = transformPoint(s.Center, R, shift)
		out[i] = s
	}
	return out
}

func transformPoint(p [3]float64, R *mat.Dense, shift [3]float64) [3]float64 {
	var q [3]float64
	for r := range 3 {
		q[r] = shift[r]
		for c := range 3 {
			q[r] += R.At(r, c) * p[c]
		}
	}
	return q
}

func randomRotation(rng *rand.Rand) *mat.Dense {
	var qr mat.QR
	m := mat.NewDense(3, 3, nil)
	for i := range 3 {
		for j := range 3 {
			m.Set(i, j, rng.NormFloat64())
		}
	}
	qr.Factorize(m)
	var q mat.Dense
	qr.QTo(&q)
	return &q
}

// eriNorms returns the Frobenius norm of the full ERI tensor and the
// "trace" Σ_ij (ii|jj), both invariant under orthogonal changes of basis
// within shells.
func eriNorms(e *ERI) (frob, tr float64) {
	n := e.NumFunctions()
	for i := range n {
		for j := range n {
			tr += e.At(i, i, j, j)
			for k := range n {
				for l := range n {
					v := e.At(i, j, k, l)
					frob += v * v
				}
			}
		}
	}
	return math.Sqrt(frob), tr
}

func TestComputeERI_RigidMotionInvariance(t *testing.T) {
	// Under a rotation, s and p functions and pure shells transform by
	// orthogonal matrices within each shell, so Frobenius norms and traces
	// of S, T, V and of the ERI tensor are invariant; under a translation
	// every element is (physical invariance; common practice).
	const seed = 20261201
	rng := rand.New(rand.NewPCG(seed, 1))
	t.Logf("seed %d", seed)
	cases := []struct {
		name   string
		shells []Shell
		atoms  []atom
	}{
		{"water STO-3G (s,p)", loadWorked(t, "STO-3G", NormPerComponent).shells, waterAtoms(t)},
		{"water cc-pVDZ pure", basisShells(t, "cc-pvdz-HCO.json", waterAtoms(t), true), waterAtoms(t)},
		{"mixed pure s..f", testShells(true), nil},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			R := randomRotation(rng)
			shift := [3]float64{rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64()}
			eye := mat.NewDense(3, 3, []float64{1, 0, 0, 0, 1, 0, 0, 0, 1})
			moved := transformShells(tc.shells, R, shift)
			shifted := transformShells(tc.shells, eye, shift)
			var ch, chMoved []PointCharge
			for _, a := range tc.atoms {
				ch = append(ch, PointCharge(a))
				chMoved = append(chMoved, PointCharge{a.Z, transformPoint(a.Pos, R, shift)})
			}
			if ch == nil {
				ch = []PointCharge{{1.5, [3]float64{0.2, 0.3, 0.4}}}
				chMoved = []PointCharge{{1.5, transformPoint(ch[0].Pos, R, shift)}}
			}
			ctx := t.Context()
			e0, err := ComputeERI(ctx, tc.shells, NormPerComponent, 2)
			if err != nil {
				t.Fatal(err)
			}
			e1, err := ComputeERI(ctx, moved, NormPerComponent, 2)
			if err != nil {
				t.Fatal(err)
			}
			e2, err := ComputeERI(ctx, shifted, NormPerComponent, 1)
			if err != nil {
				t.Fatal(err)
			}
			f0, t0 := eriNorms(e0)
			f1, t1 := eriNorms(e1)
			// 1e-11 relative: rounding accumulated over ~1e6 terms.
			if !scalar.EqualWithinRel(f0, f1, 1e-11) || !scalar.EqualWithinRel(t0, t1, 1e-11) {
				t.Errorf("rotation: ‖ERI‖ %.15g → %.15g, trace %.15g → %.15g", f0, f1, t0, t1)
			}
			n := e0.NumFunctions()
			for i := range n {
				for j := 0; j <= i; j++ {
					for k := range n {
						for l := 0; l <= k; l++ {
							if a, b := e0.At(i, j, k, l), e2.At(i, j, k, l); !scalar.EqualWithinAbsOrRel(a, b, 1e-12, 1e-12) {
								t.Fatalf("translation: (%d%d|%d%d) %.15g → %.15g", i, j, k, l, a, b)
							}
						}
					}
				}
			}
			for _, m := range []struct {
				name string
				a, b *mat.SymDense
			}{
				{"S", Overlap(tc.shells, NormPerComponent), Overlap(moved, NormPerComponent)},
				{"T", Kinetic(tc.shells, NormPerComponent), Kinetic(moved, NormPerComponent)},
				{"V", Nuclear(tc.shells, NormPerComponent, ch), Nuclear(moved, NormPerComponent, chMoved)},
			} {
				na, nb := mat.Norm(m.a, 2), mat.Norm(m.b, 2)
				ta, tb := mat.Trace(m.a), mat.Trace(m.b)
				// 1e-12 relative: rounding.
				if !scalar.EqualWithinRel(na, nb, 1e-12) || !scalar.EqualWithinRel(ta, tb, 1e-12) {
					t.Errorf("rotation: ‖%s‖ %.15g → %.15g, trace %.15g → %.15g", m.name, na, nb, ta, tb)
				}
			}
		})
	}
}

func randomDensity(rng *rand.Rand, n int) *mat.SymDense {
	d := mat.NewSymDense(n, nil)
	for i := range n {
		for j := 0; j <= i; j++ {
			d.SetSym(i, j, rng.Float64()-0.5)
		}
	}
	return d
}

func TestJK_InCoreDirectBruteForce(t *testing.T) {
	// J and K from the definitions with ERI.At (brute force), from the
	// in-core blocks, the packed in-core loop and the direct code must
	// agree: the same
	// sums in different orders. Tolerance 1e-12 absolute (brief) for
	// densities with elements up to 0.5.
	const seed = 7
	rng := rand.New(rand.NewPCG(seed, 2))
	t.Logf("seed %d", seed)
	for _, tc := range []struct {
		name   string
		shells []Shell
		norm   CartNorm
	}{
		{"DZP axial", loadWorked(t, "DZP", NormAxial).shells, NormAxial},
		{"water cc-pVDZ pure", basisShells(t, "cc-pvdz-HCO.json", waterAtoms(t), true), NormPerComponent},
		{"mixed Cartesian s..f", testShells(false), NormPerComponent},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ctx := t.Context()
			n := NumFunctions(tc.shells)
			dens := []*mat.SymDense{randomDensity(rng, n), randomDensity(rng, n)}
			eri, err := ComputeERI(ctx, tc.shells, tc.norm, 2)
			if err != nil {
				t.Fatal(err)
			}
			newPair := func() ([]*mat.SymDense, []*mat.SymDense) {
				return []*mat.SymDense{mat.NewSymDense(n, nil), mat.NewSymDense(n, nil)},
					[]*mat.SymDense{mat.NewSymDense(n, nil), mat.NewSymDense(n, nil)}
			}
			jI, kI := newPair()
			if err := eri.JK(ctx, dens, jI, kI); err != nil {
				t.Fatal(err)
			}
			packed, err := ComputePacked(ctx, tc.shells, tc.norm, 2)
			if err != nil {
				t.Fatal(err)
			}
			jP, kP := newPair()
			if err := packed.JK(ctx, dens, jP, kP); err != nil {
				t.Fatal(err)
			}
			for _, workers := range []int{1, 2} {
				for _, thr := range []float64{0, 1e-14} {
					dir, err := NewDirect(tc.shells, tc.norm, workers, thr)
					if err != nil {
						t.Fatal(err)
					}
					jD, kD := newPair()
					if err := dir.JK(ctx, dens, jD, kD); err != nil {
						t.Fatal(err)
					}
					for d := range dens {
						for i := range n {
							for j := 0; j <= i; j++ {
								var jb, kb float64
								for k := range n {
									for l := range n {
										dkl := dens[d].At(k, l)
										jb += eri.At(i, j, k, l) * dkl
										kb += eri.At(i, k, j, l) * dkl
									}
								}
								for _, c := range []struct {
									what      string
									got, want float64
								}{
									{"J in-core", jI[d].At(i, j), jb},
									{"K in-core", kI[d].At(i, j), kb},
									{"J packed", jP[d].At(i, j), jb},
									{"K packed", kP[d].At(i, j), kb},
									{"J direct", jD[d].At(i, j), jb},
									{"K direct", kD[d].At(i, j), kb},
								} {
									if !scalar.EqualWithinAbs(c.got, c.want, 1e-12) {
										t.Fatalf("workers %d thr %g: %s[%d][%d,%d] = %.15g, brute force %.15g", workers, thr, c.what, d, i, j, c.got, c.want)
									}
								}
							}
						}
					}
				}
			}
		})
	}
}

func TestComputeERI_Errors(t *testing.T) {
	for _, tc := range []struct {
		name string
		sh   []Shell
	}{
		{"L too high", []Shell{{L: MaxL + 1, Exps: []float64{1}, Coefs: []float64{1}}}},
		{"length mismatch", []Shell{{L: 0, Exps: []float64{1, 2}, Coefs: []float64{1}}}},
		{"negative exponent", []Shell{{L: 0, Exps: []float64{-1}, Coefs: []float64{1}}}},
		{"zero contraction", []Shell{{L: 1, Exps: []float64{1}, Coefs: []float64{0}}}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if _, err := ComputeERI(t.Context(), tc.sh, NormPerComponent, 1); err == nil {
				t.Error("ComputeERI: no error")
			}
			if _, err := NewDirect(tc.sh, NormPerComponent, 1, 1e-12); err == nil {
				t.Error("NewDirect: no error")
			}
			if err := Validate(tc.sh); err == nil {
				t.Error("Validate: no error")
			}
		})
	}
}

func TestComputeERI_PointChargeLimit(t *testing.T) {
	// An s function with a very large exponent ζ gives a charge
	// distribution φ² of unit charge and width ~1/√ζ, so
	// (ab|φφ) → ⟨a|1/|r−C||b⟩ = −V_ab/Z as ζ → ∞, with an error of order
	// ρ_ab(C)·π/(4ζ) (electrostatics of a Gaussian charge; common
	// practice). This ties the Head-Gordon–Pople ERIs for up to g
	// functions to the McMurchie–Davidson nuclear attraction, itself
	// checked by quadrature. ζ = 1e9 gives errors ~1e-9; tolerance 1e-7.
	C := [3]float64{0.4, -0.3, 0.8}
	for _, pure := range []bool{false, true} {
		shells := []Shell{
			{L: 3, Center: [3]float64{0, 0.2, -0.1}, Exps: []float64{1.1, 0.4}, Coefs: []float64{0.6, 0.5}, Pure: pure},
			{L: 4, Center: [3]float64{0.9, -0.5, 0.3}, Exps: []float64{0.9}, Coefs: []float64{1}, Pure: pure},
			{L: 2, Center: [3]float64{-0.6, 0.4, 0.2}, Exps: []float64{0.7}, Coefs: []float64{1}, Pure: pure},
			{L: 0, Center: C, Exps: []float64{1e9}, Coefs: []float64{1}},
		}
		eri, err := ComputeERI(t.Context(), shells, NormPerComponent, 2)
		if err != nil {
			t.Fatal(err)
		}
		V := Nuclear(shells[:3], NormPerComponent, []PointCharge{{Z: 1, Pos: C}})
		n := V.SymmetricDim()
		s := n // index of the sharp s function
		for i := range n {
			for j := 0; j <= i; j++ {
				got, want := eri.At(i, j, s, s), -V.At(i, j)
				if !scalar.EqualWithinAbsOrRel(got, want, 1e-7, 1e-7) {
					t.Errorf("pure=%v: (%d %d|ss) = %.12g, ⟨%d|1/r_C|%d⟩ = %.12g", pure, i, j, got, i, j, want)
				}
			}
		}
	}
}

func TestComputeERI_CancelledContext(t *testing.T) {
	ctx, cancel := context.WithCancel(t.Context())
	cancel()
	sh := basisShells(t, "cc-pvdz-HCO.json", waterAtoms(t), true)
	if _, err := ComputeERI(ctx, sh, NormPerComponent, 2); !errors.Is(err, context.Canceled) {
		t.Errorf("ComputeERI(cancelled) error = %v, want context.Canceled", err)
	}
	dir, err := NewDirect(sh, NormPerComponent, 2, 1e-12)
	if err != nil {
		t.Fatal(err)
	}
	n := NumFunctions(sh)
	one := func() []*mat.SymDense { return []*mat.SymDense{mat.NewSymDense(n, nil)} }
	if err := dir.JK(ctx, one(), one(), one()); !errors.Is(err, context.Canceled) {
		t.Errorf("Direct.JK(cancelled) error = %v, want context.Canceled", err)
	}
}

func TestJK_BadArguments(t *testing.T) {
	sh := testShells(false)
	n := NumFunctions(sh)
	eri, err := ComputeERI(t.Context(), sh, NormPerComponent, 1)
	if err != nil {
		t.Fatal(err)
	}
	dir, err := NewDirect(sh, NormPerComponent, 1, 0)
	if err != nil {
		t.Fatal(err)
	}
	good := []*mat.SymDense{mat.NewSymDense(n, nil)}
	small := []*mat.SymDense{mat.NewSymDense(n-1, nil)}
	for _, tc := range []struct {
		name       string
		dens, j, k []*mat.SymDense
	}{
		{"wrong size density", small, good, good},
		{"wrong size K", good, good, small},
		{"count mismatch", good, nil, good},
		{"nil matrix", good, []*mat.SymDense{nil}, good},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if err := eri.JK(t.Context(), tc.dens, tc.j, tc.k); err == nil {
				t.Error("ERI.JK: no error")
			}
			if err := dir.JK(t.Context(), tc.dens, tc.j, tc.k); err == nil {
				t.Error("Direct.JK: no error")
			}
		})
	}
	if _, err := NewDirect(sh, NormPerComponent, 1, -1); err == nil {
		t.Error("NewDirect(threshold −1): no error")
	}
}

func TestDipole_OriginShift(t *testing.T) {
	// ⟨μ|r−O|ν⟩ = ⟨μ|r|ν⟩ − O·S_μν (linearity; definition).
	sh := testShells(true)
	O := [3]float64{0.7, -1.2, 2.5}
	d0 := Dipole(sh, NormPerComponent, [3]float64{})
	dO := Dipole(sh, NormPerComponent, O)
	S := Overlap(sh, NormPerComponent)
	n := S.SymmetricDim()
	for k := range 3 {
		for i := range n {
			for j := 0; j <= i; j++ {
				want := d0[k].At(i, j) - O[k]*S.At(i, j)
				// 1e-13: rounding of O(1) values.
				if !scalar.EqualWithinAbs(dO[k].At(i, j), want, 1e-13) {
					t.Errorf("dipole %d [%d,%d] = %.15g, want %.15g", k, i, j, dO[k].At(i, j), want)
				}
			}
		}
	}
}

func TestC2S_DAndFRows(t *testing.T) {
	// Real solid harmonics over axially normalised Cartesians, order
	// m = −l…l. d: √3 xy, √3 yz, z² − ½(x²+y²), √3 xz, (√3/2)(x²−y²);
	// f m = −3: √(5/8)(3x²y − y³), m = 0: z³ − (3/2)(x²z + y²z). From memory
	// of Helgaker, Jørgensen & Olsen (2000), Table 6.3 (solid harmonics).
	s3, s58 := math.Sqrt(3), math.Sqrt(5.0/8)
	want := map[int][][]float64{
		2: {
			{0, s3, 0, 0, 0, 0},
			{0, 0, 0, 0, s3, 0},
			{-0.5, 0, 0, -0.5, 0, 1},
			{0, 0, s3, 0, 0, 0},
			{s3 / 2, 0, 0, -s3 / 2, 0, 0},
		},
	}
	for l, rows := range want {
		nc := ncart(l)
		for m, row := range rows {
			for c, w := range row {
				if got := c2sTables[l][m*nc+c]; !scalar.EqualWithinAbs(got, w, 1e-14) {
					t.Errorf("l=%d m=%d comp %d: %.16g, want %.16g", l, m-l, c, got, w)
				}
			}
		}
	}
	f := c2sTables[3]
	// f order: xxx,xxy,xxz,xyy,xyz,xzz,yyy,yyz,yzz,zzz
	for _, c := range []struct {
		m, comp int
		want    float64
	}{{-3, 1, 3 * s58}, {-3, 6, -s58}, {0, 9, 1}, {0, 2, -1.5}, {0, 7, -1.5}} {
		if got := f[(c.m+3)*10+c.comp]; !scalar.EqualWithinAbs(got, c.want, 1e-14) {
			t.Errorf("f m=%d comp %d: %.16g, want %.16g", c.m, c.comp, got, c.want)
		}
	}
}
