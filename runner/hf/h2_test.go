package hf

import (
	"context"
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
)

// A minimal test-only integral code for contracted s-type Gaussians, using
// the closed forms of Szabo & Ostlund, Modern Quantum Chemistry (Dover,
// 1996), Appendix A (overlap, kinetic, nuclear attraction and two-electron
// integrals over 1s Gaussians; equation numbers from memory), with
// F0(t) = ½√(π/t) erf(√t).

type sFunc struct {
	center [3]float64
	exps   []float64
	coefs  []float64 // multiply normalised primitives
}

// STO-3G contraction of a ζ = 1 Slater 1s: Szabo & Ostlund §3.6.1 (from memory).
var sto3gZeta1 = struct{ exps, coefs []float64 }{
	exps:  []float64{0.109818, 0.405771, 2.22766},
	coefs: []float64{0.444635, 0.535328, 0.154329},
}

func sto3gH(center [3]float64, zeta float64) sFunc {
	f := sFunc{center: center, coefs: sto3gZeta1.coefs}
	for _, a := range sto3gZeta1.exps {
		f.exps = append(f.exps, a*zeta*zeta) // exponents scale with ζ²
	}
	return f
}

func boysF0(t float64) float64 {
	if t < 1e-12 {
		return 1 - t/3
	}
	return 0.5 * math.Sqrt(math.Pi/t) * math.Erf(math.Sqrt(t))
}

func dist2(a, b [3]float64) float64 {
	var s float64
	for i := range a {
		s += (a[i] - b[i]) * (a[i] - b[i])
	}
	return s
}

func gaussProduct(a float64, A [3]float64, b float64, B [3]float64) (p float64, P [3]float64, k float64) {
	p = a + b
	for i := range P {
		P[i] = (a*A[i] + b*B[i]) / p
	}
	return p, P, math.Exp(-a * b / p * dist2(A, B))
}

func primNorm(a float64) float64 { return math.Pow(2*a/math.Pi, 0.75) }

type sSystem struct {
	basis   []sFunc
	nuclei  [][3]float64
	charges []float64
}

func (sys sSystem) oneElectron() (s, t, v *mat.SymDense) {
	n := len(sys.basis)
	s, t, v = mat.NewSymDense(n, nil), mat.NewSymDense(n, nil), mat.NewSymDense(n, nil)
	for i, fi := range sys.basis {
		for j := i; j < n; j++ {
			fj := sys.basis[j]
			var ss, tt, vv float64
			for pi, a := range fi.exps {
				for pj, b := range fj.exps {
					c := fi.coefs[pi] * fj.coefs[pj] * primNorm(a) * primNorm(b)
					p, P, k := gaussProduct(a, fi.center, b, fj.center)
					mu, r2 := a*b/p, dist2(fi.center, fj.center)
					ov := math.Pow(math.Pi/p, 1.5) * k
					ss += c * ov
					tt += c * mu * (3 - 2*mu*r2) * ov
					for ci, C := range sys.nuclei {
						vv += c * (-2 * math.Pi * sys.charges[ci] / p) * k * boysF0(p*dist2(P, C))
					}
				}
			}
			s.SetSym(i, j, ss)
			t.SetSym(i, j, tt)
			v.SetSym(i, j, vv)
		}
	}
	return s, t, v
}

func (sys sSystem) eri() []float64 {
	n := len(sys.basis)
	out := make([]float64, n*n*n*n)
	for i, fi := range sys.basis {
		for j, fj := range sys.basis {
			for k, fk := range sys.basis {
				for l, fl := range sys.basis {
					var sum float64
					for pi, a := range fi.exps {
						for pj, b := range fj.exps {
							p, P, kab := gaussProduct(a, fi.center, b, fj.center)
							for pk, c := range fk.exps {
								for pl, d := range fl.exps {
									q, Q, kcd := gaussProduct(c, fk.center, d, fl.center)
									coef := fi.coefs[pi] * fj.coefs[pj] * fk.coefs[pk] * fl.coefs[pl] *
										primNorm(a) * primNorm(b) * primNorm(c) * primNorm(d)
									sum += coef * 2 * math.Pow(math.Pi, 2.5) / (p * q * math.Sqrt(p+q)) * kab * kcd *
										boysF0(p*q/(p+q)*dist2(P, Q))
								}
							}
						}
					}
					out[((i*n+j)*n+k)*n+l] = sum
				}
			}
		}
	}
	return out
}

// h2Input builds H2 at bond length r (bohr) in STO-3G with ζ = 1.24.
func h2Input(r float64, restricted bool, opts SCFOptions) (SCFInput, *mat.SymDense, *mat.SymDense, []float64) {
	a, b := [3]float64{}, [3]float64{0, 0, r}
	sys := sSystem{basis: []sFunc{sto3gH(a, 1.24), sto3gH(b, 1.24)}, nuclei: [][3]float64{a, b}, charges: []float64{1, 1}}
	s, t, v := sys.oneElectron()
	h := mat.NewSymDense(2, nil)
	h.AddSym(t, v)
	eri := sys.eri()
	return SCFInput{S: s, Hcore: h, JK: &incoreJK{n: 2, eri: eri}, ENuc: 1 / r, NAlpha: 1, NBeta: 1, Restricted: restricted, Options: opts}, s, h, eri
}

// H2 at R = 1.4 bohr, STO-3G (ζ = 1.24): the integrals and energy of
// Szabo & Ostlund, Modern Quantum Chemistry (Dover, 1996), §3.5.2
// (values printed to 4 decimals; section and values from memory).
func TestRunSCF_H2_SzaboOstlund(t *testing.T) {
	in, s, h, eri := h2Input(1.4, true, SCFOptions{})
	at := func(i, j, k, l int) float64 { return eri[((i*2+j)*2+k)*2+l] }
	checks := []struct {
		name      string
		got, want float64
	}{
		{"S12", s.At(0, 1), 0.6593},         // Szabo & Ostlund §3.5.2
		{"H11", h.At(0, 0), -1.1204},        // Szabo & Ostlund §3.5.2
		{"H12", h.At(0, 1), -0.9584},        // Szabo & Ostlund §3.5.2
		{"(11|11)", at(0, 0, 0, 0), 0.7746}, // Szabo & Ostlund §3.5.2
		{"(11|22)", at(0, 0, 1, 1), 0.5697}, // Szabo & Ostlund §3.5.2
		{"(21|11)", at(1, 0, 0, 0), 0.4441}, // Szabo & Ostlund §3.5.2
		{"(21|21)", at(1, 0, 1, 0), 0.2970}, // Szabo & Ostlund §3.5.2
	}
	for _, c := range checks {
		if !scalar.EqualWithinAbs(c.got, c.want, 5e-5) { // 5e-5: half a unit in the 4th printed decimal
			t.Errorf("%s = %.6f, want %.4f", c.name, c.got, c.want)
		}
	}
	res, err := RunSCF(context.Background(), in)
	if err != nil {
		t.Fatal(err)
	}
	if !scalar.EqualWithinAbs(res.Energy, -1.1167, 5e-5) { // Szabo & Ostlund §3.5.2: E = −1.1167 Eh; 5e-5: 4 decimals
		t.Errorf("RHF E = %.6f, want -1.1167", res.Energy)
	}
	if !scalar.EqualWithinAbs(res.Orbitals.EnergiesAlpha[0], -0.5782, 5e-5) || // Szabo & Ostlund §3.5.2: ε1 = −0.5782
		!scalar.EqualWithinAbs(res.Orbitals.EnergiesAlpha[1], 0.6703, 5e-5) { // ε2 = 0.6703
		t.Errorf("orbital energies %v, want -0.5782, 0.6703", res.Orbitals.EnergiesAlpha)
	}
	// Near equilibrium RHF is stable: a symmetry-broken UHF start returns to it.
	uin, _, _, _ := h2Input(1.4, false, SCFOptions{GuessMixAngle: math.Pi / 4, EnergyTol: 1e-12, ErrorTol: 1e-10})
	u, err := RunSCF(context.Background(), uin)
	if err != nil {
		t.Fatal(err)
	}
	if !scalar.EqualWithinAbs(u.Energy, res.Energy, 1e-9) || u.S2 > 1e-8 { // 1e-9: default RHF EnergyTol-level agreement
		t.Errorf("UHF at 1.4 bohr: E = %.10f, ⟨S²⟩ = %g; want RHF %.10f and 0", u.Energy, u.S2, res.Energy)
	}
}

// The hydrogen atom in the molecular STO-3G function (ζ = 1.24), one α
// electron: E = T11 + V11 = 0.7600 − 1.2266 = −0.4666 Eh from the integrals
// printed in Szabo & Ostlund, Modern Quantum Chemistry (Dover, 1996),
// §3.5.2 (kinetic and nucleus-1 attraction of function 1; from memory).
// Scaling the exponents by ζ² scales T by ζ² and V by ζ (common practice:
// virial scaling), which checks the ζ = 1 atom against the same numbers.
func TestRunSCF_HAtom_STO3G(t *testing.T) {
	atomEnergy := func(zeta float64) float64 {
		t.Helper()
		sys := sSystem{basis: []sFunc{sto3gH([3]float64{}, zeta)}, nuclei: [][3]float64{{}}, charges: []float64{1}}
		s, tk, v := sys.oneElectron()
		h := mat.NewSymDense(1, nil)
		h.AddSym(tk, v)
		res, err := RunSCF(context.Background(), SCFInput{S: s, Hcore: h, JK: &incoreJK{n: 1, eri: sys.eri()}, NAlpha: 1})
		if err != nil {
			t.Fatal(err)
		}
		return res.Energy
	}
	if e := atomEnergy(1.24); !scalar.EqualWithinAbs(e, 0.7600-1.2266, 1e-4) { // 1e-4: two 4-decimal numbers summed
		t.Errorf("E(H, ζ=1.24) = %.6f, want -0.4666", e)
	}
	const z = 1.24
	if e, want := atomEnergy(1), 0.7600/(z*z)-1.2266/z; !scalar.EqualWithinAbs(e, want, 1e-4) { // 1e-4: as above
		t.Errorf("E(H, ζ=1) = %.6f, want %.6f from scaling", e, want)
	}
}

// Stretched H2: RHF dissociates wrongly; UHF from a HOMO/LUMO-mixed guess
// breaks the symmetry and goes to two hydrogen atoms (⟨S²⟩ → 1).
func TestRunSCF_H2_StretchedUHFBelowRHF(t *testing.T) {
	const r = 12.0 // bohr: the atoms' STO-3G functions barely overlap
	rin, _, _, _ := h2Input(r, true, SCFOptions{})
	rhf, err := RunSCF(context.Background(), rin)
	if err != nil {
		t.Fatal(err)
	}
	uin, _, _, _ := h2Input(r, false, SCFOptions{GuessMixAngle: math.Pi / 4})
	uhf, err := RunSCF(context.Background(), uin)
	if err != nil {
		t.Fatal(err)
	}
	// Two separate H atoms (ζ = 1.24): 2 × the one-centre core energy.
	atom := sSystem{basis: []sFunc{sto3gH([3]float64{}, 1.24)}, nuclei: [][3]float64{{}}, charges: []float64{1}}
	_, ta, va := atom.oneElectron()
	want := 2 * (ta.At(0, 0) + va.At(0, 0))
	if !scalar.EqualWithinAbs(uhf.Energy, want, 1e-5) { // 1e-5: residual interaction at 12 bohr
		t.Errorf("UHF E(12 bohr) = %.8f, want 2 E(H) = %.8f", uhf.Energy, want)
	}
	if uhf.Energy > rhf.Energy-0.1 { // the RHF dissociation error in a minimal basis is ~0.3 Eh (common practice)
		t.Errorf("UHF E = %.6f is not well below RHF E = %.6f", uhf.Energy, rhf.Energy)
	}
	if !scalar.EqualWithinAbs(uhf.S2, 1, 1e-3) { // singlet–triplet mixture of two free spins: ⟨S²⟩ = 1
		t.Errorf("⟨S²⟩ = %g, want ≈ 1", uhf.S2)
	}
	// The high-spin triplet (two α electrons) is degenerate with the
	// broken-symmetry singlet at this distance, and ⟨S²⟩ = S(S+1) = 2 exactly.
	tin, _, _, _ := h2Input(r, false, SCFOptions{})
	tin.NAlpha, tin.NBeta = 2, 0
	trip, err := RunSCF(context.Background(), tin)
	if err != nil {
		t.Fatal(err)
	}
	if !scalar.EqualWithinAbs(trip.Energy, uhf.Energy, 1e-5) || !scalar.EqualWithinAbs(trip.S2, 2, 1e-12) { // 1e-5: residual interaction at 12 bohr
		t.Errorf("triplet E = %.8f, ⟨S²⟩ = %g; want ≈ %.8f and 2", trip.Energy, trip.S2, uhf.Energy)
	}
	// Without the mixing the UHF stays on the RHF solution (α = β by symmetry).
	uin.Options.GuessMixAngle = 0
	same, err := RunSCF(context.Background(), uin)
	if err != nil {
		t.Fatal(err)
	}
	if !scalar.EqualWithinAbs(same.Energy, rhf.Energy, 1e-9) { // 1e-9: EnergyTol-level
		t.Errorf("unmixed UHF E = %.10f, RHF %.10f", same.Energy, rhf.Energy)
	}
}

// The scan use-case: orbitals of a neighbouring geometry (different S and
// H) as the guess. They are re-orthonormalised in the new metric, converge
// faster than the core guess, and keep the electronic state: broken-
// symmetry UHF orbitals from 12 bohr stay broken-symmetry at 8 bohr
// without any mixing.
func TestRunSCF_GuessOrbitals_NeighbouringGeometry(t *testing.T) {
	ctx := context.Background()
	prev, _, _, _ := h2Input(1.4, true, SCFOptions{})
	p, err := RunSCF(ctx, prev)
	if err != nil {
		t.Fatal(err)
	}
	core, _, _, _ := h2Input(1.5, true, SCFOptions{})
	c, err := RunSCF(ctx, core)
	if err != nil {
		t.Fatal(err)
	}
	next, _, _, _ := h2Input(1.5, true, SCFOptions{})
	next.GuessOrbitals = p.Orbitals
	n, err := RunSCF(ctx, next)
	if err != nil {
		t.Fatal(err)
	}
	if !scalar.EqualWithinAbs(n.Energy, c.Energy, 1e-10) || n.Iterations > c.Iterations { // 1e-10: EnergyTol
		t.Errorf("from neighbour: E = %.12f in %d iterations; core guess: %.12f in %d", n.Energy, n.Iterations, c.Energy, c.Iterations)
	}

	far, _, _, _ := h2Input(12, false, SCFOptions{GuessMixAngle: math.Pi / 4})
	f, err := RunSCF(ctx, far)
	if err != nil {
		t.Fatal(err)
	}
	mid, _, _, _ := h2Input(8, false, SCFOptions{})
	mid.GuessOrbitals = f.Orbitals
	m, err := RunSCF(ctx, mid)
	if err != nil {
		t.Fatal(err)
	}
	midRHF, _, _, _ := h2Input(8, true, SCFOptions{})
	r, err := RunSCF(ctx, midRHF)
	if err != nil {
		t.Fatal(err)
	}
	if m.S2 < 0.9 || m.Energy > r.Energy-0.1 { // broken-symmetry state: ⟨S²⟩ near 1, far below RHF (see the 12-bohr test)
		t.Errorf("8 bohr from 12-bohr UHF orbitals: E = %.6f, ⟨S²⟩ = %.4f; RHF E = %.6f", m.Energy, m.S2, r.Energy)
	}
}
