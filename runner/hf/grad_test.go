package hf_test

import (
	"context"
	"math"
	"testing"

	"wellscan/planner"
	"wellscan/runner/hf"
	"wellscan/runner/hf/basis"
)

// angstromMol builds a molecule from symbols and positions in Å
// (1 Å = 1/0.529177210903 bohr, CODATA 2018).
func angstromMol(t *testing.T, charge, mult int, syms []string, pos [][3]float64) planner.Molecule {
	t.Helper()
	var atoms []planner.Atom
	for i, s := range syms {
		el, err := planner.ElementBySymbol(s)
		if err != nil {
			t.Fatal(err)
		}
		var p [3]float64
		for x := range 3 {
			p[x] = pos[i][x] / 0.529177210903
		}
		atoms = append(atoms, planner.NewAtom(el, p))
	}
	return mustMol(t, atoms, charge, mult)
}

func lookupBasis(t *testing.T, name string) *basis.Set { return lookupBasisTB(t, name) }

func lookupBasisTB(t testing.TB, name string) *basis.Set {
	t.Helper()
	b, err := basis.Lookup(name)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// TestGradient_AnalyticMatchesDifferences compares the analytic RHF and
// UHF gradients with central differences of the SCF energy (step 1e-4
// bohr), on distorted geometries (our own, without symmetry) in bases with
// d functions, and checks that the total force and torque vanish.
func TestGradient_AnalyticMatchesDifferences(t *testing.T) {
	if testing.Short() {
		t.Skip("about 150 SCF energies")
	}
	cases := []struct {
		name   string
		basis  string
		method hf.Method
		charge int
		mult   int
		syms   []string
		pos    [][3]float64 // Å, our own distorted geometries
	}{
		{"H2O/cc-pVDZ rhf", "cc-pVDZ", hf.RHF, 0, 1, []string{"O", "H", "H"},
			[][3]float64{{0, 0, 0.05}, {0.78, 0.02, -0.50}, {-0.74, -0.05, -0.56}}},
		{"CH3/6-31G* uhf", "6-31G*", hf.UHF, 0, 2, []string{"C", "H", "H", "H"},
			[][3]float64{{0.02, -0.01, 0.08}, {1.09, 0, 0}, {-0.52, 0.93, -0.03}, {-0.55, -0.96, 0.02}}},
		{"NH3/6-31G** rhf", "6-31G**", hf.RHF, 0, 1, []string{"N", "H", "H", "H"},
			[][3]float64{{0, 0, 0.12}, {0.95, 0.05, -0.25}, {-0.50, 0.82, -0.28}, {-0.45, -0.88, -0.22}}},
	}
	ctx := context.Background()
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			mol := angstromMol(t, tc.charge, tc.mult, tc.syms, tc.pos)
			opts := hf.Options{Method: tc.method, Basis: lookupBasis(t, tc.basis), Workers: 2}
			opts.SCF.EnergyTol, opts.SCF.ErrorTol = 1e-12, 1e-10
			gr, err := hf.Gradient(ctx, mol, opts)
			if err != nil {
				t.Fatal(err)
			}
			if !gr.Analytic {
				t.Fatalf("%s: gradient not analytic", tc.name)
			}
			// Independent check: central differences of energies.
			fd, err := hf.GradientByDifferences(ctx, mol, opts, 1e-4, 2)
			if err != nil {
				t.Fatal(err)
			}
			var sum, torque [3]float64
			var worst float64
			for a := range mol.Atoms {
				for x := range 3 {
					// 1e-6 Eh/bohr: the bound; the difference
					// error is O(h²) ≈ 1e-8 and SCF noise 1e-12/1e-4.
					if d := gr.Gradient[a][x] - fd.Gradient[a][x]; math.Abs(d) > 1e-6 {
						t.Errorf("atom %d dir %d: analytic %.9f, difference %.9f Eh/bohr (Δ %.2e)", a, x, gr.Gradient[a][x], fd.Gradient[a][x], d)
					}
					sum[x] += gr.Gradient[a][x]
					worst = max(worst, math.Abs(gr.Gradient[a][x]-fd.Gradient[a][x]))
				}
				r, g := mol.Atoms[a].Pos, gr.Gradient[a]
				torque[0] += r[1]*g[2] - r[2]*g[1]
				torque[1] += r[2]*g[0] - r[0]*g[2]
				torque[2] += r[0]*g[1] - r[1]*g[0]
			}
			t.Logf("%s: max |analytic − difference| %.2e Eh/bohr, Σg %.1e, torque %.1e", tc.name, worst, math.Hypot(math.Hypot(sum[0], sum[1]), sum[2]), math.Hypot(math.Hypot(torque[0], torque[1]), torque[2]))
			for x := range 3 {
				// Translational and rotational invariance of the energy
				// (common practice): both vanish at SCF convergence; 1e-9
				// is the bound.
				if math.Abs(sum[x]) > 1e-9 || math.Abs(torque[x]) > 1e-9 {
					t.Errorf("total gradient %v, torque %v; want 0", sum, torque)
					break
				}
			}
		})
	}
}

// TestGradient_MP2ByDifferences checks the MP2 gradient (central
// differences, step geomopt.DefaultFDStep) against an independent
// directional difference of the MP2 energy along a fixed direction, and
// that it sums to zero over the atoms.
func TestGradient_MP2ByDifferences(t *testing.T) {
	if testing.Short() {
		t.Skip("about 20 MP2 energies")
	}
	ctx := context.Background()
	mol := angstromMol(t, 0, 1, []string{"O", "H", "H"}, [][3]float64{{0, 0, 0.05}, {0.78, 0.02, -0.50}, {-0.74, -0.05, -0.56}})
	opts := hf.Options{Method: hf.MP2, Basis: lookupBasis(t, "6-31G"), Workers: 2}
	opts.SCF.EnergyTol, opts.SCF.ErrorTol = 1e-12, 1e-10
	gr, err := hf.Gradient(ctx, mol, opts)
	if err != nil {
		t.Fatal(err)
	}
	if gr.Analytic || gr.Displacements != 18 {
		t.Fatalf("mp2 gradient: analytic %v, %d displacements; want differences over 18", gr.Analytic, gr.Displacements)
	}
	// Direction u (our own, unit length after normalisation) and the
	// directional derivative (E(x+δu) − E(x−δu))/2δ.
	u := []float64{0.3, -0.2, 0.5, -0.4, 0.1, 0.2, 0.6, 0.3, -0.1}
	var nu float64
	for _, v := range u {
		nu += v * v
	}
	nu = math.Sqrt(nu)
	const delta = 2e-3 // bohr
	shift := func(s float64) float64 {
		m := mol.Clone()
		for a := range m.Atoms {
			for x := range 3 {
				m.Atoms[a].Pos[x] += s * u[3*a+x] / nu
			}
		}
		r, err := hf.Energy(ctx, m, opts)
		if err != nil {
			t.Fatal(err)
		}
		return r.Energy
	}
	want := (shift(delta) - shift(-delta)) / (2 * delta) // independent directional difference
	var got float64
	var sum [3]float64
	for a := range mol.Atoms {
		for x := range 3 {
			got += gr.Gradient[a][x] * u[3*a+x] / nu
			sum[x] += gr.Gradient[a][x]
		}
	}
	// Both are O(h²) differences with h ≤ 2e-3 bohr: truncation ≈ 1e-6
	// Eh/bohr (common practice).
	if math.Abs(got-want) > 5e-6 {
		t.Errorf("mp2 g·u = %.8f Eh/bohr, directional difference %.8f", got, want)
	}
	for x := range 3 {
		if math.Abs(sum[x]) > 1e-6 { // translational invariance, to difference accuracy
			t.Errorf("mp2 Σ_A g = %v, want 0", sum)
		}
	}
}
