package hf

import (
	"errors"
	"math"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
)

// commutatorAO returns max |FDS − SDF| for the result's densities, with F
// rebuilt from scratch by the JK builder: an independent check that a
// result is a stationary point.
func commutatorAO(t *testing.T, jk JKBuilder, s, h *mat.SymDense, res *SCFResult) float64 {
	t.Helper()
	n := s.SymmetricDim()
	dens := []*mat.SymDense{res.DensityAlpha, res.DensityBeta}
	j := []*mat.SymDense{mat.NewSymDense(n, nil), mat.NewSymDense(n, nil)}
	k := []*mat.SymDense{mat.NewSymDense(n, nil), mat.NewSymDense(n, nil)}
	if err := jk.JK(t.Context(), dens, j, k); err != nil {
		t.Fatal(err)
	}
	var mx float64
	for sp := range 2 {
		f := mat.NewDense(n, n, nil)
		for a := range n {
			for b := range n {
				f.Set(a, b, h.At(a, b)+j[0].At(a, b)+j[1].At(a, b)-k[sp].At(a, b))
			}
		}
		var fd, fds mat.Dense
		fd.Mul(f, dens[sp])
		fds.Mul(&fd, s)
		for a := range n {
			for b := range n {
				mx = math.Max(mx, math.Abs(fds.At(a, b)-fds.At(b, a)))
			}
		}
	}
	return mx
}

// A deliberately hard, fictitious problem: water/DZ with every two-electron
// integral multiplied by 3. DIIS alone wanders for 200 iterations (found by
// trying scale factors); the fall-back chain (damping) converges it.
func TestRunSCF_Fallback_RecoversHardProblem(t *testing.T) {
	if testing.Short() {
		t.Skip("runs 200 iterations on the DZ case")
	}
	w := loadWorked(t, workedCases[1])
	jk := &incoreJK{n: w.n, eri: w.eri, scale: 3}
	in := w.input(true, SCFOptions{MaxIterations: 200, DisableFallback: true})
	in.JK = jk
	if _, err := RunSCF(t.Context(), in); !errors.Is(err, ErrNotConverged) {
		t.Fatalf("DIIS only: error = %v, want ErrNotConverged (the problem is meant to be hard)", err)
	}
	in.Options.DisableFallback = false
	res, err := RunSCF(t.Context(), in)
	if err != nil {
		t.Fatal(err)
	}
	stages := map[Stage]bool{}
	for _, it := range res.History {
		stages[it.Stage] = true
	}
	if !stages[StageDamped] {
		t.Errorf("stages used %v, want the damped stage", stages)
	}
	// Stationary: 1e-7 covers ErrorTol 1e-8 in the orthogonal basis mapped back to AOs.
	if c := commutatorAO(t, jk, w.s, w.h, res); c > 1e-7 {
		t.Errorf("max |FDS − SDF| = %g at the returned density", c)
	}
}

// Damping and level shifting change the path, not the solution.
func TestRunSCF_Options_SameSolution(t *testing.T) {
	w := loadWorked(t, workedCases[0])
	ref, err := RunSCF(t.Context(), w.input(true, SCFOptions{}))
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name string
		opts SCFOptions
	}{
		{"damping 0.3", SCFOptions{Damping: 0.3}},
		{"level shift 0.5", SCFOptions{LevelShift: 0.5}},
		{"damping and shift, no DIIS", SCFOptions{Damping: 0.2, LevelShift: 1, DisableDIIS: true, MaxIterations: 300}},
		{"GWH guess", SCFOptions{Guess: GuessGWH}},
		{"DIIS subspace 3", SCFOptions{DIISSize: 3}},
		{"AO DIIS error", SCFOptions{DIISError: DIISErrorAO}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			res, err := RunSCF(t.Context(), w.input(true, tc.opts))
			if err != nil {
				t.Fatal(err)
			}
			if !scalar.EqualWithinAbs(res.Energy, ref.Energy, 1e-9) { // 1e-9: both converged to EnergyTol 1e-10
				t.Errorf("E = %.12f, default options give %.12f", res.Energy, ref.Energy)
			}
		})
	}
}

// Linear dependence: a basis with one function duplicated has a zero
// eigenvalue of S. Canonical orthogonalisation drops it, and the energy is
// that of the original basis.
func TestRunSCF_LinearDependence_DropsAndKeepsEnergy(t *testing.T) {
	w := loadWorked(t, workedCases[0])
	ref, err := RunSCF(t.Context(), w.input(true, SCFOptions{}))
	if err != nil {
		t.Fatal(err)
	}
	n, dup := w.n, 5 // duplicate function 5 (H1 1s)
	src := func(i int) int {
		if i == n {
			return dup
		}
		return i
	}
	m := n + 1
	grow := func(a *mat.SymDense) *mat.SymDense {
		b := mat.NewSymDense(m, nil)
		for i := range m {
			for j := i; j < m; j++ {
				b.SetSym(i, j, a.At(src(i), src(j)))
			}
		}
		return b
	}
	eri := make([]float64, m*m*m*m)
	for i := range m {
		for j := range m {
			for k := range m {
				for l := range m {
					eri[((i*m+j)*m+k)*m+l] = w.eri[((src(i)*n+src(j))*n+src(k))*n+src(l)]
				}
			}
		}
	}
	in := SCFInput{S: grow(w.s), Hcore: grow(w.h), JK: &incoreJK{n: m, eri: eri}, ENuc: w.enuc, NAlpha: 5, NBeta: 5, Restricted: true,
		Options: SCFOptions{Orthogonalization: OrthSymmetric}}
	res, err := RunSCF(t.Context(), in)
	if err != nil {
		t.Fatal(err)
	}
	if res.Dropped != 1 || res.NMO != n || res.Orthogonalization != OrthCanonical {
		t.Errorf("dropped %d, NMO %d, orthogonalisation %v; want 1, %d, canonical (symmetric impossible)", res.Dropped, res.NMO, res.Orthogonalization, n)
	}
	if !scalar.EqualWithinAbs(res.Energy, ref.Energy, 1e-9) { // 1e-9: same space spanned, EnergyTol 1e-10
		t.Errorf("E = %.12f with duplicated function, want %.12f", res.Energy, ref.Energy)
	}
}

// With an impatient stall criterion and no DIIS, the hard problem runs
// through every stage in order and ends as a stalled, unconverged result.
func TestRunSCF_Fallback_ExhaustedIsStalled(t *testing.T) {
	if testing.Short() {
		t.Skip("uses the DZ case")
	}
	w := loadWorked(t, workedCases[1])
	in := w.input(true, SCFOptions{MaxIterations: 200, StallIterations: 2, DisableDIIS: true})
	in.JK = &incoreJK{n: w.n, eri: w.eri, scale: 3}
	res, err := RunSCF(t.Context(), in)
	var nc *NotConvergedError
	if !errors.Is(err, ErrNotConverged) || !errors.As(err, &nc) || nc.Status != StatusStalled {
		t.Fatalf("error = %v, want a stalled NotConvergedError", err)
	}
	if res.Converged || res.Status != StatusStalled || res.Restarts != 1 {
		t.Errorf("status %v, restarts %d; want stalled after 1 restart", res.Status, res.Restarts)
	}
	var stages []Stage
	for _, it := range res.History {
		if len(stages) == 0 || stages[len(stages)-1] != it.Stage {
			stages = append(stages, it.Stage)
		}
	}
	want := []Stage{StageNormal, StageDamped, StageShifted, StageRestarted}
	if len(stages) != len(want) {
		t.Fatalf("stages %v, want %v", stages, want)
	}
	for i := range want {
		if stages[i] != want[i] {
			t.Errorf("stages %v, want %v", stages, want)
		}
	}
}
