package hf

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"runtime"

	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/hf/basis"
	"wellscan/runner/hf/integral"
)

// OrbitalsFile is the name of the converged-orbitals file a scan point
// leaves in its directory for its neighbours to start from.
const OrbitalsFile = "orbitals.bin"

// Backend runs scan points with the built-in engine. It implements
// runner.Backend and is safe for concurrent use: it holds only the
// immutable basis set and options.
type Backend struct {
	opts      Options
	useGuess  bool
	basisName string
	check     ColdCheck
	// limit, when set, makes every point a basis-set-limit calculation
	// (engine.basis_limit); its components run one after the other.
	limit *LimitRecipe
	spec  *planner.Spec // for relaxed scans (nil in backends built by hand)
	// coldRelax starts relaxed points from their rigid geometry and the
	// model Hessian even when a finished neighbour exists (benchmarks).
	coldRelax bool
}

// ColdCheck selects when a UHF point that started from a neighbour's
// orbitals is also run from cold guesses, keeping the lower state. A UHF
// continuation guess with equal α and β orbitals can never break spin
// symmetry (the α and β Fock matrices stay equal), so a scan that starts
// on the closed-shell side of a Coulson–Fischer point would otherwise
// carry the closed-shell solution on into the region where a broken-
// symmetry state lies lower.
type ColdCheck int

const (
	// ColdCheckBrokenSymmetry (the default) runs the atoms-spin guess at
	// every UHF point of a molecule with at least two open-shell-capable
	// atoms (one extra SCF per point), and every cold guess wherever the
	// continuation did not converge. A test of only spin-pure
	// continuations is not enough: on a 2-D water scan a continuation
	// chain carried a broken-symmetry state localised on the wrong bond
	// 0.29 Eh above the lowest state (runner/hf/statechange_test.go).
	ColdCheckBrokenSymmetry ColdCheck = iota
	// ColdCheckAlways runs every cold guess at every UHF point.
	ColdCheckAlways
	// ColdCheckNever trusts the continuation guess.
	ColdCheckNever
)

// WithColdCheck returns a copy of b with the given cold-check policy.
func (b *Backend) WithColdCheck(c ColdCheck) *Backend {
	nb := *b
	nb.check = c
	return &nb
}

// NewBackend builds the built-in backend from a validated spec whose
// engine kind is "builtin".
func NewBackend(spec *planner.Spec) (*Backend, error) {
	e := spec.Engine
	if e.Kind != "builtin" {
		return nil, fmt.Errorf("hf: engine kind is %q, not \"builtin\"", e.Kind)
	}
	method, err := ParseMethod(e.Method)
	if err != nil {
		return nil, fmt.Errorf("%s: engine.method: %w", spec.File(), err)
	}
	mol, err := spec.Molecule()
	if err != nil {
		return nil, err
	}
	if (method == CCSD || method == CCSDT) && mol.Multiplicity != 1 {
		return nil, fmt.Errorf("%s: engine.method = %q is implemented for closed shells (RHF reference) only, but the molecule has multiplicity %d", spec.File(), method, mol.Multiplicity)
	}
	if len(e.BasisLimit) > 0 {
		if spec.Relaxed() {
			return nil, fmt.Errorf("%s: engine.basis_limit: a relaxed scan needs gradients, and a basis-set limit has none here; use basis = … for the relaxed scan", spec.File())
		}
		return newLimitBackend(spec, method, mol)
	}
	name := e.Basis
	if name == "" {
		return nil, fmt.Errorf("%s: engine.basis: missing (for example basis = \"6-31G*\"; see 'wellscan basis list')", spec.File())
	}
	set, err := basis.Lookup(name)
	if err != nil {
		return nil, fmt.Errorf("%s: engine.basis: %w", spec.File(), err)
	}
	o := Options{Method: method, Basis: set}
	o.applyEngineSettings(e)
	// Check the basis covers the molecule before any point runs.
	if _, err := set.NumFunctions(mol, o.Convention); err != nil {
		return nil, fmt.Errorf("%s: engine.basis: %w", spec.File(), err)
	}
	if e.FrozenCore != nil && !*e.FrozenCore {
		o.FrozenCore = AllElectron
	}
	if method == RHF && mol.Multiplicity != 1 {
		return nil, fmt.Errorf("%s: engine.method = \"rhf\" needs a singlet, but the molecule has multiplicity %d; use \"uhf\"", spec.File(), mol.Multiplicity)
	}
	o.Memory = int64(e.MemoryMB) << 20 // 0: a share of the available memory per point (Compute)
	return &Backend{opts: o, useGuess: e.Guess != "fresh", basisName: set.Name(), spec: spec}, nil
}

// newLimitBackend is NewBackend for engine.basis_limit: the recipe is
// checked and every basis set must cover the molecule before any point
// runs. Points start cold (an atoms guess per component): the orbitals
// of a neighbour exist in one basis only.
func newLimitBackend(spec *planner.Spec, method Method, mol planner.Molecule) (*Backend, error) {
	e := spec.Engine
	r := LimitRecipe{Method: method, Small: e.BasisLimit[0], Large: e.BasisLimit[1], Core: e.CoreCorrection}
	if e.FrozenCore != nil && !*e.FrozenCore {
		r.FrozenCore = AllElectron
	}
	key := "engine.basis_limit"
	for i, name := range []string{r.Small, r.Large, r.Core} {
		if name == "" {
			continue
		}
		if i == 2 {
			key = "engine.core_correction"
		}
		set, err := basis.Lookup(name)
		if err != nil {
			return nil, fmt.Errorf("%s: %s: %w", spec.File(), key, err)
		}
		if _, err := set.NumFunctions(mol, basis.ConventionAsSet); err != nil { // coverage does not depend on the convention
			return nil, fmt.Errorf("%s: %s: %w", spec.File(), key, err)
		}
	}
	if err := r.Validate(); err != nil {
		return nil, fmt.Errorf("%s: %s: %w", spec.File(), key, err)
	}
	o := Options{Method: method}
	o.applyEngineSettings(e)
	return &Backend{opts: o, basisName: r.String(), limit: &r}, nil
}

// computeLimit runs one basis-set-limit point. Its extras hold every
// component's energies (reference, correlation, (T)) and the limit's
// parts, so that they reach the store.
func (b *Backend) computeLimit(ctx context.Context, t runner.Task, opts Options) (runner.Outcome, error) {
	lr, err := ComputeLimit(ctx, t.Mol, *b.limit, opts)
	if err != nil {
		if ctx.Err() != nil {
			return runner.Outcome{}, ctx.Err()
		}
		switch {
		case errors.Is(err, ErrNotConverged):
			return runner.Outcome{Class: runner.ClassSCFNotConverged, Error: err.Error()}, nil
		case errors.Is(err, ErrCCNotConverged):
			return runner.Outcome{Class: runner.ClassCCNotConverged, Error: err.Error()}, nil
		case errors.Is(err, ErrCCMemory):
			return runner.Outcome{Class: runner.ClassMemoryBudget, Error: err.Error(), Permanent: true}, nil
		}
		return runner.Outcome{}, err
	}
	out := runner.Outcome{Energy: lr.Total, Converged: true, Extra: map[string]float64{
		"limit_hf_hartree":          lr.HF,
		"limit_correlation_hartree": lr.Correlation,
		"core_correction_hartree":   lr.CoreCorrection,
		"cardinal_small":            float64(lr.X),
		"cardinal_large":            float64(lr.Y),
	}}
	for _, c := range lr.Components {
		out.Extra[c.Name+"_reference_hartree"] = c.Reference
		out.Extra[c.Name+"_correlation_hartree"] = c.Correlation
		if b.limit.Method == CCSDT {
			out.Extra[c.Name+"_triples_hartree"] = c.Triples
		}
		out.Extra[c.Name+"_frozen_core_orbitals"] = float64(c.Frozen)
		out.Extra[c.Name+"_basis_functions"] = float64(c.BasisFunctions)
		out.Extra[c.Name+"_seconds"] = c.Time.Seconds()
		out.Iterations += c.Iterations
	}
	return out, nil
}

// Name implements runner.Backend.
func (b *Backend) Name() string { return "builtin" }

// UsesGuess implements runner.ContinuationBackend: the SCF starts from
// the nearest done neighbour's orbitals unless the spec says guess =
// "fresh".
func (b *Backend) UsesGuess() bool { return b.useGuess }

// Compute implements runner.Backend: one SCF at the point's geometry,
// started from the neighbour's orbitals when the runner found some. An SCF
// that does not converge is an Outcome with Converged false and class
// "scf-not-converged", not an error.
func (b *Backend) Compute(ctx context.Context, t runner.Task) (runner.Outcome, error) {
	opts := b.opts
	opts.Workers = max(1, t.Threads)
	if opts.Memory == 0 {
		// Points running side by side share the machine's memory.
		opts.Memory = max(MemoryBudget()/int64(max(1, runtime.NumCPU()/opts.Workers)), 1)
	}
	if b.limit != nil {
		return b.computeLimit(ctx, t, opts)
	}
	fromNeighbour := false
	if b.useGuess && t.GuessPath != "" {
		if g, err := readOrbitalsFile(t.GuessPath); err == nil {
			opts.Guess = g
			fromNeighbour = true
			// More done points on the line: extrapolate the density
			// along it (quadratic with three, linear with two).
			pos := []float64{t.LineAt}
			if len(t.GuessLine) > 1 {
				pos = append(pos, t.GuessLine[0].At)
			}
			for _, lp := range t.GuessLine[min(1, len(t.GuessLine)):] {
				if p, err := readOrbitalsFile(lp.Path); err == nil {
					opts.GuessPrevious = append(opts.GuessPrevious, p)
					pos = append(pos, lp.At)
				}
			}
			if len(opts.GuessPrevious) > 0 {
				opts.GuessPositions = pos
			}
		}
	}
	if opts.Guess != nil {
		b.coldCheck(t.Mol, &opts)
	}
	if b.spec != nil && b.spec.Relaxed() {
		return b.computeRelaxed(ctx, t, opts)
	}
	res, err := Energy(ctx, t.Mol, opts)
	if res == nil {
		if ctx.Err() != nil {
			return runner.Outcome{}, ctx.Err()
		}
		if errors.Is(err, ErrCCMemory) {
			return runner.Outcome{Class: runner.ClassMemoryBudget, Error: err.Error(), Permanent: true}, nil
		}
		return runner.Outcome{}, err
	}
	if err != nil && !errors.Is(err, ErrNotConverged) && !errors.Is(err, ErrCCNotConverged) {
		return runner.Outcome{}, err
	}
	iterations := 0 // every SCF run for this point, kept or not
	for _, tr := range res.Trials {
		iterations += tr.Iterations
	}
	checked, replaced := 0.0, false // cold guesses run besides the neighbour's, and whether one won
	if opts.Guess != nil && res.GuessRejected == "" {
		checked = float64(len(res.Trials) - 1)
		if g := res.SCFResult.Guess; g != GuessFromOrbitals && g != GuessExtrapolated {
			replaced = true
			fromNeighbour = false
		}
	}
	if res.GuessRejected != "" {
		fromNeighbour = false
	}
	out := runner.Outcome{
		Energy:     res.Energy,
		Converged:  res.Converged,
		Iterations: res.Iterations,
		Flags:      runner.PointFlags{FromNeighbour: fromNeighbour, GuessReplaced: replaced},
		Extra: map[string]float64{
			"electronic_energy_hartree": res.ElectronicEnergy,
			"nuclear_repulsion_hartree": res.NuclearRepulsion,
			"basis_functions":           float64(res.BasisFunctions),
			"cold_check_guesses":        checked,
			"scf_iterations_all_runs":   float64(iterations),
			// How the two-electron integrals were handled: 1 all in core,
			// 0 integral-direct, in between the share kept in core
			// (semi-direct); and the budget they were chosen under.
			"integrals_in_core":   inCoreShare(res),
			"integral_budget_mib": float64(res.MemoryBudget) / (1 << 20),
			"dipole_x_e_bohr":     res.Dipole[0],
			"dipole_y_e_bohr":     res.Dipole[1],
			"dipole_z_e_bohr":     res.Dipole[2],
		},
	}
	if m := res.MP2; m != nil {
		out.Extra["reference_energy_hartree"] = m.ReferenceEnergy
		out.Extra["mp2_correlation_hartree"] = m.Correlation
		out.Extra["mp2_same_spin_hartree"] = m.SameSpin
		out.Extra["mp2_opposite_spin_hartree"] = m.OppositeSpin
		out.Extra["frozen_core_orbitals"] = float64(m.FrozenCore)
	}
	if c := res.CC; c != nil {
		out.Extra["reference_energy_hartree"] = c.ReferenceEnergy
		out.Extra["ccsd_correlation_hartree"] = c.Correlation
		if c.WithTriples {
			out.Extra["triples_hartree"] = c.Triples
		}
		out.Extra["mp2_correlation_hartree"] = c.MP2Correlation
		out.Extra["frozen_core_orbitals"] = float64(c.FrozenCore)
		out.Extra["ccsd_iterations"] = float64(c.Iterations)
		out.Extra["max_t1"] = c.MaxT1
		if errors.Is(err, ErrCCNotConverged) {
			// The SCF converged (its orbitals are still written for the
			// neighbours) but the coupled-cluster energy is no result.
			out.Converged = false
			out.Class = runner.ClassCCNotConverged
			out.Error = err.Error()
		}
	}
	if res.Reference == UHF || res.Method == UHF {
		s2 := res.S2
		out.SSquared = &s2
	}
	if !res.Converged {
		out.Class = runner.ClassSCFNotConverged
		out.Error = res.Reason
		return out, nil
	}
	if out.Class != "" {
		if res.Orbitals != nil && t.Dir != "" {
			if _, err := writeOrbitalsFile(t.Dir, res.Orbitals); err == nil {
				out.Orbitals = OrbitalsFile // relative to t.Dir, as runner.Outcome asks
			}
		}
		return out, nil
	}
	if res.Orbitals != nil && t.Dir != "" {
		if _, err := writeOrbitalsFile(t.Dir, res.Orbitals); err == nil {
			// Relative to t.Dir, as runner.Outcome asks: t.Dir itself may
			// be relative to the working directory.
			out.Orbitals = OrbitalsFile
		}
	}
	return out, nil
}

// coldCheck sets the cold guesses a UHF continuation point also runs
// (in the same Energy call, sharing the integrals).
func (b *Backend) coldCheck(mol planner.Molecule, opts *Options) {
	if b.check == ColdCheckNever || referenceOf(mol, *opts) != UHF {
		return
	}
	opts.ColdIfUnconverged = true
	switch {
	case b.check == ColdCheckAlways:
		cold := *opts
		cold.Guess = nil
		opts.CheckGuesses = coldGuesses(mol, cold, false)
	case OpenShellAtoms(mol) >= 2:
		opts.CheckGuesses = []GuessKind{GuessAtomsSpin}
	}
}

// inCoreShare is the memory a calculation kept its two-electron integrals
// in, as a share of what all unique integrals take (8 bytes each): 1 in
// core, 0 direct. Semi-direct builds keep the blocks that cost most to
// recompute, so their share of the recomputation saved is larger.
func inCoreShare(res *Result) float64 {
	switch res.IntegralMode {
	case ModeInCore:
		return 1
	case ModeSemiDirect:
		return min(1, float64(res.IntegralBytes)/float64(integral.InCoreBytes(res.BasisFunctions)))
	}
	return 0
}

func readOrbitalsFile(path string) (*Orbitals, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return ReadOrbitals(f)
}

// writeOrbitalsFile writes the orbitals into the point directory dir
// through the runner's confined writer (temporary file, fsync, rename; no
// symbolic link followed), so a neighbour never reads a half-written file.
func writeOrbitalsFile(dir string, o *Orbitals) (string, error) {
	var buf bytes.Buffer
	if err := WriteOrbitals(&buf, o); err != nil {
		return "", err
	}
	if err := runner.WriteScanFile(dir, OrbitalsFile, buf.Bytes()); err != nil {
		return "", err
	}
	return filepath.Join(dir, OrbitalsFile), nil
}

// applyEngineSettings copies the spec's convention, iteration cap and
// convergence threshold into o (one place for every backend kind).
func (o *Options) applyEngineSettings(e planner.EngineSpec) {
	if e.Cartesian != nil {
		o.Convention = basis.ConventionSpherical
		if *e.Cartesian {
			o.Convention = basis.ConventionCartesian
		}
	}
	o.SCF.MaxIterations = e.MaxIterations
	if e.Convergence != nil {
		o.SCF.EnergyTol = *e.Convergence
	}
}
