package hf

import (
	"context"
	"errors"
	"fmt"
	"math"
	"runtime"
	"time"

	"gonum.org/v1/gonum/mat"

	"wellscan/planner"
	"wellscan/planner/geomopt"
	"wellscan/runner/hf/integral"
)

// GradientResult is an energy with its nuclear gradient.
type GradientResult struct {
	// Result is the calculation at the geometry itself (energy,
	// orbitals, convergence). For a finite-difference gradient it is the
	// undisplaced calculation.
	*Result
	// Gradient is ∂E/∂R per atom, in atom order, hartree/bohr. The force
	// on an atom is its negative.
	Gradient [][3]float64
	// Analytic is true for the analytic RHF/UHF gradient, false for
	// central differences of energies (MP2).
	Analytic bool
	// FDStep is the central-difference step in bohr (0 when Analytic).
	FDStep float64
	// Displacements is the number of extra energy calculations (0 when
	// Analytic).
	Displacements int
	// GradientTime is the wall time of the gradient proper, after the
	// energy (hartree/bohr: none; seconds).
	GradientTime time.Duration
}

// Gradient computes the energy of mol and its gradient with respect to the
// nuclear positions. RHF and UHF gradients are analytic: with the total
// density D, spin densities D^s and energy-weighted density
// W = Σ_s Σ_i^occ ε_i^s C_i^s C_i^sᵀ,
//
//	∂E/∂A = Σ D ∂h/∂A + ½ Σ Γ ∂(μν|λσ)/∂A − Σ W ∂S/∂A + ∂V_nn/∂A
//
// (Pople, Krishnan, Schlegel & Binkley, Int. J. Quantum Chem. Symp. 13,
// 225 (1979), doi:10.1002/qua.560160825; from memory), the two-electron
// part parallel like the Fock build (Options.Workers). MP2, CCSD and
// CCSD(T) — every method without an analytic gradient — are differentiated by central
// differences of energies ([GradientByDifferences] with
// geomopt.DefaultFDStep).
//
// An SCF that does not converge returns the partial result (nil
// Gradient) with an error wrapping ErrNotConverged: a gradient of an
// unconverged density would be wrong, so none is given.
func Gradient(ctx context.Context, mol planner.Molecule, opts Options) (*GradientResult, error) {
	if opts.Method == MP2 || opts.Method == CCSD || opts.Method == CCSDT {
		return GradientByDifferences(ctx, mol, opts, 0, 0)
	}
	res, err := Energy(ctx, mol, opts)
	if err != nil {
		if res != nil {
			return &GradientResult{Result: res}, err
		}
		return nil, err
	}
	gstart := time.Now()
	g, err := analyticGradient(ctx, mol, opts, res)
	if err != nil {
		return nil, err
	}
	return &GradientResult{Result: res, Gradient: g, Analytic: true, GradientTime: time.Since(gstart)}, nil
}

func analyticGradient(ctx context.Context, mol planner.Molecule, opts Options, res *Result) ([][3]float64, error) {
	shells, err := opts.Basis.Shells(mol, opts.Convention)
	if err != nil {
		return nil, err
	}
	nat := len(mol.Atoms)
	charges := make([]integral.PointCharge, nat)
	for i, a := range mol.Atoms {
		charges[i] = integral.PointCharge{Z: float64(a.Element.Z), Pos: a.Pos}
	}
	w, err := energyWeightedDensity(res.SCFResult)
	if err != nil {
		return nil, err
	}
	one, chg, err := integral.OneElectronGradient(shells, opts.Norm, charges, res.Density, w, nat)
	if err != nil {
		return nil, fmt.Errorf("hf: gradient: %w", err)
	}
	workers := opts.Workers
	if workers <= 0 {
		workers = runtime.NumCPU()
	}
	two, err := integral.TwoElectronGradient(ctx, shells, opts.Norm, workers, res.DensityAlpha, res.DensityBeta, nat, 0)
	if err != nil {
		return nil, fmt.Errorf("hf: gradient: %w", err)
	}
	g := NuclearRepulsionGradient(mol)
	for a := range g {
		for x := range 3 {
			g[a][x] += one[a][x] + chg[a][x] + two[a][x]
		}
	}
	return g, nil
}

// NuclearRepulsionGradient is ∂V_nn/∂A = −Σ_{B≠A} Z_A Z_B (R_A − R_B)/|R_A − R_B|³
// per atom, hartree/bohr.
func NuclearRepulsionGradient(mol planner.Molecule) [][3]float64 {
	g := make([][3]float64, len(mol.Atoms))
	for a, A := range mol.Atoms {
		for b, B := range mol.Atoms {
			if a == b {
				continue
			}
			var d [3]float64
			r2 := 0.0
			for x := range 3 {
				d[x] = A.Pos[x] - B.Pos[x]
				r2 += d[x] * d[x]
			}
			f := float64(A.Element.Z*B.Element.Z) / (r2 * math.Sqrt(r2))
			for x := range 3 {
				g[a][x] -= f * d[x]
			}
		}
	}
	return g
}

// energyWeightedDensity is W_μν = Σ_s Σ_i n_i^s ε_i^s C^s_μi C^s_νi
// (RHF: both spins from the α orbitals).
func energyWeightedDensity(r *SCFResult) (*mat.SymDense, error) {
	o := r.Orbitals
	if o == nil {
		return nil, errors.New("hf: gradient: the SCF result has no orbitals")
	}
	n := o.NBasis
	w := mat.NewSymDense(n, nil)
	add := func(c *mat.Dense, eps, occ []float64, f float64) {
		for i, oc := range occ {
			if oc == 0 {
				continue
			}
			col := mat.Col(nil, i, c)
			w.SymRankOne(w, f*oc*eps[i], mat.NewVecDense(n, col))
		}
	}
	if o.Restricted {
		add(o.CAlpha, o.EnergiesAlpha, o.OccAlpha, 2)
	} else {
		add(o.CAlpha, o.EnergiesAlpha, o.OccAlpha, 1)
		add(o.CBeta, o.EnergiesBeta, o.OccBeta, 1)
	}
	return w, nil
}

// GradientByDifferences computes the gradient of Energy (any method) by
// central differences of energies with step h (bohr; ≤ 0 means
// geomopt.DefaultFDStep). The 6N displacements are independent
// calculations, run parallel at a time (≤ 0: as many as Options.Workers,
// or the CPUs), each starting from the orbitals of the undisplaced
// geometry and using Options.Workers/parallel goroutines itself.
func GradientByDifferences(ctx context.Context, mol planner.Molecule, opts Options, h float64, parallel int) (*GradientResult, error) {
	if h <= 0 || math.IsNaN(h) {
		h = geomopt.DefaultFDStep
	}
	res, err := Energy(ctx, mol, opts)
	if err != nil {
		if res != nil {
			return &GradientResult{Result: res}, err
		}
		return nil, err
	}
	gstart := time.Now()
	workers := opts.Workers
	if workers <= 0 {
		workers = runtime.NumCPU()
	}
	if parallel <= 0 {
		parallel = workers
	}
	sub := opts
	sub.Workers = max(1, workers/parallel)
	sub.Guess = res.Orbitals
	sub.GuessPrevious, sub.GuessPositions, sub.CheckGuesses = nil, nil, nil
	x := flatten3(mol)
	f := func(ctx context.Context, y []float64) (float64, error) {
		m := mol.Clone()
		for a := range m.Atoms {
			copy(m.Atoms[a].Pos[:], y[3*a:3*a+3])
		}
		r, err := Energy(ctx, m, sub)
		if err != nil {
			return 0, err
		}
		return r.Energy, nil
	}
	gf, err := geomopt.CentralDifference(ctx, x, h, parallel, f)
	if err != nil {
		return nil, fmt.Errorf("hf: gradient by differences: %w", err)
	}
	g := make([][3]float64, len(mol.Atoms))
	for a := range g {
		copy(g[a][:], gf[3*a:3*a+3])
	}
	return &GradientResult{Result: res, Gradient: g, FDStep: h, Displacements: 2 * len(x), GradientTime: time.Since(gstart)}, nil
}

func flatten3(mol planner.Molecule) []float64 {
	x := make([]float64, 0, 3*len(mol.Atoms))
	for _, a := range mol.Atoms {
		x = append(x, a.Pos[:]...)
	}
	return x
}
