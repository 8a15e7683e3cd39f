package hf_test

import (
	"context"
	"errors"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"

	"wellscan/planner"
	"wellscan/runner/hf"
	"wellscan/runner/hf/basis"
	"wellscan/runner/hf/integral"
)

// moERI is the brute-force transform (pq|rs) = Σ C_μp C_νq C_λr C_σs (μν|λσ)
// over all MOs, one quarter at a time (independent of the batched code).
func moERI(eri *integral.ERI, c1, c2 *mat.Dense) []float64 {
	n, m := c1.Dims()
	a := make([]float64, n*n*n*n)
	for i := range n {
		for j := range n {
			for k := range n {
				for l := range n {
					a[((i*n+j)*n+k)*n+l] = eri.At(i, j, k, l)
				}
			}
		}
	}
	quarter := func(in []float64, c *mat.Dense, d0, d1, d2 int, dn int) []float64 {
		// transform the leading index (size dn) of in[dn][d0][d1][d2] with c (n×m), rotating it to the end.
		out := make([]float64, d0*d1*d2*m)
		for p := range m {
			for mu := range dn {
				cv := c.At(mu, p)
				if cv == 0 {
					continue
				}
				src := in[mu*d0*d1*d2 : (mu+1)*d0*d1*d2]
				for x, v := range src {
					out[x*m+p] += cv * v
				}
			}
		}
		return out
	}
	// (μν|λσ) → (pν|λσ) stored [ν][λ][σ][p] → … → [p][q][r][s].
	b := quarter(a, c1, n, n, n, n)
	b = quarter(b, c1, n, n, m, n)
	b = quarter(b, c2, n, m, m, n)
	b = quarter(b, c2, m, m, m, n)
	return b
}

// TestRunMP2_SpinOrbitalBruteForce checks UMP2 on an open-shell radical
// (OH, doublet) and RMP2 on water against the spin-orbital definition
// E(2) = ¼ Σ_ijab |⟨ij||ab⟩|² / (ε_i + ε_j − ε_a − ε_b) (A. Szabo and
// N. S. Ostlund, Modern Quantum Chemistry, Dover 1996, eq. 6.74, from
// memory), evaluated by brute force on the same orbitals; same-spin
// quadruples give E_ss, mixed ones E_os. Same orbitals, so only rounding
// separates the two: 1e-12 Eh.
func TestRunMP2_SpinOrbitalBruteForce(t *testing.T) {
	cases := []struct {
		name          string
		atoms         []planner.Atom
		charge, mult  int
		basis         string
		frozen        int
		wantReference hf.Method
	}{
		{"OH/6-31G", []planner.Atom{atom(t, "O", 0, 0, 0), atom(t, "H", 0, 0.3, 1.83)}, 0, 2, "6-31G", 0, hf.UHF},
		{"OH/6-31G/frozen", []planner.Atom{atom(t, "O", 0, 0, 0), atom(t, "H", 0, 0.3, 1.83)}, 0, 2, "6-31G", 1, hf.UHF},
		{"H2O+/STO-3G", []planner.Atom{atom(t, "O", 0, 0, 0), atom(t, "H", 0, 1.4, 1.1), atom(t, "H", 0, -1.4, 1.1)}, 1, 2, "STO-3G", 0, hf.UHF},
		{"H2O/6-31G", []planner.Atom{atom(t, "O", 0, 0, 0), atom(t, "H", 0, 1.4, 1.1), atom(t, "H", 0, -1.4, 1.1)}, 0, 1, "6-31G", 1, hf.RHF},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			mol := mustMol(t, tc.atoms, tc.charge, tc.mult)
			bs := testBasis(t, tc.basis)
			res, err := hf.Energy(t.Context(), mol, hf.Options{Basis: bs})
			if err != nil {
				t.Fatal(err)
			}
			shells, err := bs.Shells(mol, basis.Convention(0))
			if err != nil {
				t.Fatal(err)
			}
			eri, err := integral.ComputeERI(t.Context(), shells, integral.NormPerComponent, 2)
			if err != nil {
				t.Fatal(err)
			}
			got, err := hf.RunMP2(t.Context(), res.SCFResult, eri, hf.MP2Options{Frozen: tc.frozen, Workers: 2})
			if err != nil {
				t.Fatal(err)
			}
			if got.Reference != tc.wantReference {
				t.Fatalf("reference %s, want %s", got.Reference, tc.wantReference)
			}
			o := res.Orbitals
			ca, cb := o.CAlpha, o.Beta()
			eb, ob := o.EnergiesBeta, o.OccBeta
			if o.Restricted {
				eb, ob = o.EnergiesAlpha, o.OccAlpha
			}
			_, m := ca.Dims()
			g := map[[2]int][]float64{{0, 0}: moERI(eri, ca, ca), {0, 1}: moERI(eri, ca, cb), {1, 1}: moERI(eri, cb, cb)}
			g[[2]int{1, 0}] = moERI(eri, cb, ca)
			type so struct {
				p, s int
				e    float64
			}
			var occ, vir []so
			for s, oc := range [][]float64{o.OccAlpha, ob} {
				es := [][]float64{o.EnergiesAlpha, eb}[s]
				nocc := 0
				for p := range m {
					if oc[p] > 0.5 {
						if nocc >= tc.frozen { // orbitals come sorted by energy
							occ = append(occ, so{p, s, es[p]})
						}
						nocc++
					} else {
						vir = append(vir, so{p, s, es[p]})
					}
				}
			}
			// ⟨pq|rs⟩ = (pr|qs) δ(σp,σr) δ(σq,σs).
			phys := func(p, q, r, s so) float64 {
				if p.s != r.s || q.s != s.s {
					return 0
				}
				return g[[2]int{p.s, q.s}][((p.p*m+r.p)*m+q.p)*m+s.p]
			}
			var ss, os float64
			for _, i := range occ {
				for _, j := range occ {
					for _, a := range vir {
						for _, b := range vir {
							v := phys(i, j, a, b) - phys(i, j, b, a)
							e := 0.25 * v * v / (i.e + j.e - a.e - b.e)
							if i.s == j.s {
								ss += e
							} else {
								os += e
							}
						}
					}
				}
			}
			if !scalar.EqualWithinAbs(got.SameSpin, ss, 1e-12) || !scalar.EqualWithinAbs(got.OppositeSpin, os, 1e-12) {
				t.Errorf("E_ss, E_os = %.14f, %.14f; brute force %.14f, %.14f", got.SameSpin, got.OppositeSpin, ss, os)
			}
			if got.SameSpin >= 0 || got.OppositeSpin >= 0 {
				t.Errorf("E_ss, E_os = %g, %g; both must be negative", got.SameSpin, got.OppositeSpin)
			}
			// Batched (one occupied orbital at a time) and integral-direct agree.
			direct, err := integral.NewDirect(shells, integral.NormPerComponent, 2, 1e-12)
			if err != nil {
				t.Fatal(err)
			}
			// The smallest budget that works (in 512-byte steps) must split
			// the occupied orbitals into several batches.
			minMem := func(src hf.PairBlockSource) int64 {
				mem := int64(512)
				for {
					if _, err := hf.RunMP2(t.Context(), res.SCFResult, src, hf.MP2Options{Frozen: tc.frozen, Workers: 2, Memory: mem}); err == nil {
						return mem
					}
					mem += 512
				}
			}
			unbatched := 1
			if !o.Restricted {
				unbatched = 2 // one α and one β pass
			}
			for _, opts := range []struct {
				src hf.PairBlockSource
				mem int64
			}{{eri, minMem(eri)}, {direct, 0}, {direct, minMem(direct)}} {
				b, err := hf.RunMP2(t.Context(), res.SCFResult, opts.src, hf.MP2Options{Frozen: tc.frozen, Workers: 2, Memory: opts.mem})
				if err != nil {
					t.Fatal(err)
				}
				if opts.mem > 0 && b.Batches <= unbatched {
					t.Errorf("%T, budget %d: %d batches, want more than %d", opts.src, opts.mem, b.Batches, unbatched)
				}
				if !scalar.EqualWithinAbs(b.Correlation, got.Correlation, 1e-12) {
					t.Errorf("%T, %d batches: E(2) %.14f, want %.14f", opts.src, b.Batches, b.Correlation, got.Correlation)
				}
			}
			ctx, cancel := context.WithCancel(t.Context())
			cancel()
			if _, err := hf.RunMP2(ctx, res.SCFResult, eri, hf.MP2Options{}); !errors.Is(err, context.Canceled) {
				t.Errorf("cancelled context: %v", err)
			}
		})
	}
}
