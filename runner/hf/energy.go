package hf

import (
	"context"
	"errors"
	"fmt"
	"math"
	"runtime"
	"strings"
	"time"

	"gonum.org/v1/gonum/mat"

	"wellscan/planner"
	"wellscan/runner/hf/basis"
	"wellscan/runner/hf/integral"
)

// Method names a built-in electronic-structure method.
type Method string

// The methods the built-in engine offers.
const (
	RHF Method = "rhf"
	UHF Method = "uhf"
)

// ParseMethod reads "rhf", "uhf" or "mp2" case-insensitively; "" means
// "choose by spin": RHF for a singlet, UHF otherwise.
func ParseMethod(s string) (Method, error) {
	switch m := Method(strings.ToLower(strings.TrimSpace(s))); m {
	case "", RHF, UHF, MP2, CCSD, CCSDT:
		return m, nil
	}
	return "", fmt.Errorf("hf: unknown method %q (expected rhf, uhf, mp2, ccsd or ccsd(t))", s)
}

// DefaultMemory is the in-core integral budget (bytes) used when the
// machine's available memory cannot be read (see MemoryBudget).
const DefaultMemory = 2 << 30

// Options configures [Energy]. The zero value (with Basis set) is RHF for
// singlets and UHF otherwise, the set's own d/f convention, in-core
// integrals when they fit in DefaultMemory and all CPUs.
type Options struct {
	Method     Method
	Basis      *basis.Set
	Convention basis.Convention
	// Norm selects the Cartesian normalisation; NormPerComponent unless a
	// published example asks for the axial convention.
	Norm integral.CartNorm
	// Workers is the number of goroutines for integrals and Fock builds
	// (≤ 0: runtime.NumCPU()).
	Workers int
	// Memory is the integral budget in bytes (0: MemoryBudget(), derived
	// from the machine's available memory; negative: always direct).
	// Integrals that fit are kept in core; when only part of them fits,
	// those among the first shells are kept and the rest recomputed at
	// each Fock build (Result.IntegralMode).
	Memory int64
	// DirectThreshold is the Schwarz×density screening threshold of
	// direct Fock builds (0: 1e-12).
	DirectThreshold float64
	// Guess, if non-nil, starts the SCF from these orbitals (for example a
	// neighbouring scan point's); they must span the same basis.
	Guess *Orbitals
	// GuessPrevious, with Guess, asks for an extrapolated start: the
	// densities of Guess (D_1) and of GuessPrevious (D_2, D_3, …: the
	// orbitals of earlier points on a line through this one, nearest
	// first, same basis) are combined with Lagrange weights,
	// D = Σ_i w_i D_i, w_i = Π_{j≠i} (x − x_j)/(x_i − x_j), so that the
	// density is extrapolated along the line to this point's position x
	// (linear with one previous point, quadratic with two). GuessPositions
	// holds x and then x_1, x_2, … (any unit); nil means a uniform grid
	// (x = 0, x_i = −i). The SCF starts from the Fock matrix of D
	// (SCFResult.Guess "extrapolated"). Previous orbitals in another
	// basis are ignored.
	GuessPrevious  []*Orbitals
	GuessPositions []float64
	// CheckGuesses, when the SCF starts from Guess, are cold guesses run
	// as well; a cold state is kept when it lies more than 1e-6 Eh lower
	// or the warm start did not converge (Result.Trials lists all runs).
	// With ColdIfUnconverged, a warm start that does not converge is
	// followed by the default cold guesses (or ColdGuesses).
	CheckGuesses      []GuessKind
	ColdIfUnconverged bool
	// ColdGuesses, when Guess is nil, lists the starting guesses to run;
	// the lowest converged energy is kept. Empty means the default set:
	// for RHF the single guess SCF.Guess, or GuessAtoms when SCF.Guess is
	// left at its zero value (measured to converge in fewer iterations than
	// the core guess; runner/hf/sad_test.go); for UHF SCF.Guess first, then
	// core, GWH, atoms, atoms-spin when at least two atoms have unpaired
	// electrons in their ground state, and core-twist for singlets (a UHF started cold can
	// settle on an excited or symmetric determinant: OH from the core
	// guess lies 0.155 Eh above the GWH solution in 6-31G, stretched N2
	// from core or GWH 0.52 Eh above the broken-symmetry state;
	// runner/hf/robust_test.go, runner/hf/sad_test.go).
	ColdGuesses []GuessKind
	SCF         SCFOptions

	// MP2 settings, used when Method is MP2.
	//
	// FrozenCore: the zero value freezes the atoms' noble-gas cores (the
	// default, see FrozenCoreOrbitals); AllElectron correlates everything.
	FrozenCore FrozenCore
	// MP2Reference is the determinant MP2 starts from: "" picks RHF for a
	// closed shell and UHF otherwise; UHF forces UMP2 on a closed shell.
	MP2Reference Method
	// MP2Memory is the transformation's memory budget in bytes (0:
	// DefaultMP2Memory), on top of the in-core integrals (Memory) that
	// MP2 reuses when the SCF kept them; with direct integrals each
	// batch of occupied orbitals recomputes them once.
	MP2Memory int64

	// CCMemory is the coupled-cluster budget in bytes (0:
	// DefaultCCMemory), used when Method is CCSD or CCSDT; FrozenCore
	// applies to them as to MP2.
	CCMemory int64
}

// Result is a converged (or explicitly unconverged) Hartree–Fock
// calculation on one geometry.
type Result struct {
	*SCFResult
	// Energy is the final total energy of Method in hartree: the SCF
	// energy for rhf and uhf, the MP2 total (reference + correlation) for
	// mp2, the CCSD or CCSD(T) total for ccsd and ccsd(t) (when the
	// amplitude equations did not converge, Energy also returns an error
	// wrapping ErrCCNotConverged and this value is no result). A scan
	// that reads Result.Energy therefore gets the energies of
	// the method asked for. It shadows SCFResult.Energy, which always holds
	// the Hartree–Fock energy (reach it as r.SCFResult.Energy; for mp2 also
	// r.MP2.ReferenceEnergy). ElectronicEnergy, Mulliken and Dipole stay
	// Hartree–Fock quantities.
	Energy float64
	// MP2 holds the correlation energies when Method is MP2 and the SCF
	// converged; nil otherwise.
	MP2 *MP2Result
	// CC holds the coupled-cluster energies when Method is CCSD or CCSDT
	// and the SCF converged; nil otherwise. Energy is then CC.Total.
	CC *CCResult
	// Method is what was asked for (rhf, uhf, mp2, ccsd or ccsd(t)); Reference is the
	// SCF that ran (rhf or uhf).
	Method         Method
	Reference      Method
	Basis          string
	Convention     string
	BasisFunctions int
	InCore         bool
	// IntegralMode is how the two-electron integrals were handled
	// (ModeInCore, ModeSemiDirect or ModeDirect), IntegralBytes the memory
	// the kept integrals took and MemoryBudget the budget they were
	// chosen under (bytes).
	IntegralMode                string
	IntegralBytes, MemoryBudget int64
	// Mulliken charges per atom (e) and the dipole moment about the
	// origin of the input coordinates (e·bohr).
	Mulliken []float64
	Dipole   [3]float64
	// Wall-clock time spent on integrals and on the SCF iterations.
	IntegralTime, SCFTime time.Duration
	// GuessesTried is the number of cold-start guesses run (1 when the
	// SCF started from Options.Guess orbitals); Trials has one entry per
	// guess, in the order run. SCFResult.Guess is the one kept.
	GuessesTried int
	Trials       []GuessTrial
	// GuessNotes explains guesses that were skipped or changed (a
	// spin-polarised guess that fell back to the plain one, a basis too
	// small for an atom's configuration).
	GuessNotes []string
	// GuessRejected is set when Options.Guess could not be used (other
	// basis dimension) and the core guess was used instead.
	GuessRejected string
}

// Energy runs a Hartree–Fock calculation on mol. An SCF that does not
// converge returns the result (Converged false) together with an error
// wrapping ErrNotConverged; every other error returns a nil result.
func Energy(ctx context.Context, mol planner.Molecule, opts Options) (*Result, error) {
	if opts.Basis == nil {
		return nil, errors.New("hf: no basis set given")
	}
	method := opts.Method
	if method == "" {
		method = RHF
		if mol.Multiplicity != 1 {
			method = UHF
		}
	}
	na, nb := mol.AlphaBeta()
	ref := method
	if method == MP2 {
		ref = opts.MP2Reference
		if ref == "" {
			ref = RHF
			if mol.Multiplicity != 1 {
				ref = UHF
			}
		}
		if ref != RHF && ref != UHF {
			return nil, fmt.Errorf("hf: mp2 reference %q (expected rhf or uhf)", ref)
		}
	} else if method == CCSD || method == CCSDT {
		if na != nb {
			return nil, fmt.Errorf("hf: %s: only closed-shell molecules (RHF reference) are supported, but multiplicity %d gives %d α and %d β electrons", method, mol.Multiplicity, na, nb)
		}
		ref = RHF
	} else if method != RHF && method != UHF {
		return nil, fmt.Errorf("hf: unknown method %q (expected rhf, uhf, mp2, ccsd or ccsd(t))", method)
	}
	if ref == RHF && na != nb {
		return nil, fmt.Errorf("hf: rhf needs a closed-shell molecule, but multiplicity %d gives %d α and %d β electrons; use uhf", mol.Multiplicity, na, nb)
	}
	shells, err := opts.Basis.Shells(mol, opts.Convention)
	if err != nil {
		return nil, err
	}
	if err := integral.Validate(shells); err != nil {
		return nil, fmt.Errorf("hf: basis %s: %w", opts.Basis.Name(), err)
	}
	workers := opts.Workers
	if workers <= 0 {
		workers = runtime.NumCPU()
	}
	start := time.Now()
	s := integral.Overlap(shells, opts.Norm)
	t := integral.Kinetic(shells, opts.Norm)
	charges := make([]integral.PointCharge, len(mol.Atoms))
	zs := make([]float64, len(mol.Atoms))
	pos := make([][3]float64, len(mol.Atoms))
	for i, a := range mol.Atoms {
		charges[i] = integral.PointCharge{Z: float64(a.Element.Z), Pos: a.Pos}
		zs[i], pos[i] = float64(a.Element.Z), a.Pos
	}
	v := integral.Nuclear(shells, opts.Norm, charges)
	h := mat.NewSymDense(s.SymmetricDim(), nil)
	h.AddSym(t, v)
	nbf := s.SymmetricDim()
	if nbf < na {
		return nil, fmt.Errorf("hf: basis %s gives %d functions for %d α electrons", opts.Basis.Name(), nbf, na)
	}
	budget := opts.Memory
	if budget == 0 {
		budget = MemoryBudget()
	}
	thr := opts.DirectThreshold
	if thr == 0 {
		thr = 1e-12
	}
	var jk JKBuilder
	plan := planIntegrals(shells, budget)
	switch plan.mode {
	case ModeInCore:
		eri, err := integral.ComputeERI(ctx, shells, opts.Norm, workers)
		if err != nil {
			return nil, err
		}
		plan.bytes = eri.Bytes()
		jk = eri
	case ModeSemiDirect:
		d, err := integral.NewDirectStored(ctx, shells, opts.Norm, workers, thr, budget)
		if err != nil {
			return nil, err
		}
		plan.bytes = d.StoredBytes()
		jk = d
	default:
		d, err := integral.NewDirect(shells, opts.Norm, workers, thr)
		if err != nil {
			return nil, err
		}
		jk = d
	}
	inCore := plan.mode == ModeInCore
	intTime := time.Since(start)

	in := SCFInput{S: s, Hcore: h, JK: jk, ENuc: mol.NuclearRepulsion(), NAlpha: na, NBeta: nb,
		Restricted: ref == RHF, Options: opts.SCF}
	res := &Result{Method: method, Reference: ref, Basis: opts.Basis.Name(), Convention: opts.Convention.String(),
		BasisFunctions: nbf, InCore: inCore, IntegralMode: plan.mode, IntegralBytes: plan.bytes, MemoryBudget: budget,
		IntegralTime: intTime}
	if g := opts.Guess; g != nil {
		if g.NBasis != nbf {
			res.GuessRejected = fmt.Sprintf("guess orbitals span %d functions, this basis has %d", g.NBasis, nbf)
		} else if hist := usableHistory(g, opts.GuessPrevious); len(hist) > 1 {
			d, err := extrapolatedDensity(hist, opts.GuessPositions, na, nb)
			if err != nil {
				res.GuessNotes = append(res.GuessNotes, fmt.Sprintf("extrapolation skipped: %v", err))
				in.GuessOrbitals = g
			} else {
				in.GuessDensity = d
				in.Options.Guess = GuessExtrapolated
			}
		} else {
			in.GuessOrbitals = g
		}
	}
	start = time.Now()
	scf, scfErr := runGuesses(ctx, mol, opts, &in, res)
	res.SCFTime = time.Since(start)
	if scf == nil {
		return nil, scfErr
	}
	res.SCFResult = scf
	res.Energy = scf.Energy
	atomOf := make([]int, 0, nbf)
	for _, sh := range shells {
		for range sh.NumFunctions() {
			atomOf = append(atomOf, sh.Atom)
		}
	}
	if q, err := Mulliken(scf, s, atomOf, zs); err == nil {
		res.Mulliken = q
	}
	if mu, err := DipoleMoment(scf, integral.Dipole(shells, opts.Norm, [3]float64{}), zs, pos, [3]float64{}); err == nil {
		res.Dipole = mu
	}
	correlated := method == MP2 || method == CCSD || method == CCSDT
	if !correlated || scfErr != nil {
		return res, scfErr
	}
	src, ok := jk.(PairBlockSource)
	if !ok {
		return nil, fmt.Errorf("hf: %s: integral builder %T gives no block access", method, jk)
	}
	frozen, label, err := frozenCore(mol, opts.FrozenCore, nb, method)
	if err != nil {
		return nil, err
	}
	if method != MP2 {
		cc, err := RunCCSD(ctx, scf, src, CCOptions{Frozen: frozen, Triples: method == CCSDT, Memory: opts.CCMemory, Workers: workers})
		if cc == nil {
			return nil, err
		}
		cc.FrozenCoreLabel = label
		res.CC = cc
		res.Energy = cc.Total
		return res, err
	}
	mp, err := RunMP2(ctx, scf, src, MP2Options{Frozen: frozen, Memory: opts.MP2Memory, Workers: workers})
	if err != nil {
		return nil, err
	}
	mp.FrozenCoreLabel = label
	res.MP2 = mp
	res.Energy = mp.Total
	return res, nil
}

// frozenCore resolves the frozen-core setting of a correlated method for
// mol with nb β electrons: the count of frozen spatial orbitals and its
// description.
func frozenCore(mol planner.Molecule, fc FrozenCore, nb int, method Method) (int, string, error) {
	switch {
	case fc == FrozenCoreAuto:
		frozen, label := FrozenCoreOrbitals(mol)
		if frozen > nb {
			label = fmt.Sprintf("%s, capped at %d: only %d β electrons", label, nb, nb)
			frozen = nb
		}
		return frozen, label, nil
	case fc > 0:
		if int(fc) > nb {
			return 0, "", fmt.Errorf("hf: %s: %d frozen orbitals requested, but there are only %d β electrons", method, int(fc), nb)
		}
		return int(fc), fmt.Sprintf("%d lowest, as requested", int(fc)), nil
	}
	return 0, "", nil
}

// GuessTrial is one cold-start SCF run by [Energy].
type GuessTrial struct {
	Guess      GuessKind `json:"guess"`
	Energy     float64   `json:"energy_hartree"`
	Converged  bool      `json:"converged"`
	Iterations int       `json:"iterations"`
	S2         float64   `json:"s_squared"`
	// Error is set when the run failed before producing a result.
	Error string `json:"error,omitempty"`
}

// referenceOf is the SCF that Energy runs for mol with opts (rhf or uhf;
// "" for an invalid method, which Energy reports).
func referenceOf(mol planner.Molecule, opts Options) Method {
	open := RHF
	if mol.Multiplicity != 1 {
		open = UHF
	}
	switch opts.Method {
	case "":
		return open
	case RHF, UHF:
		return opts.Method
	case MP2:
		if opts.MP2Reference == "" {
			return open
		}
		return opts.MP2Reference
	case CCSD, CCSDT:
		return RHF
	}
	return ""
}

// defaultRHFGuess is the RHF cold start when SCFOptions.Guess is zero.
const defaultRHFGuess = GuessAtoms

// coldGuesses is the list of guesses Energy runs from a cold start.
func coldGuesses(mol planner.Molecule, opts Options, restricted bool) []GuessKind {
	if len(opts.ColdGuesses) > 0 {
		return opts.ColdGuesses
	}
	first := opts.SCF.Guess
	if restricted {
		if first == GuessCore {
			first = defaultRHFGuess
		}
		return []GuessKind{first}
	}
	list := []GuessKind{first}
	cands := []GuessKind{GuessCore, GuessGWH, GuessAtoms}
	if OpenShellAtoms(mol) >= 2 {
		cands = append(cands, GuessAtomsSpin)
	}
	if mol.Multiplicity == 1 {
		cands = append(cands, GuessCoreTwist)
	}
	for _, g := range cands {
		if g != first {
			list = append(list, g)
		}
	}
	return list
}

// runGuesses runs the SCF from in.GuessOrbitals, or from every cold guess
// in turn, and returns the lowest converged result (the first guess's
// result when none converged).
func runGuesses(ctx context.Context, mol planner.Molecule, opts Options, in *SCFInput, res *Result) (*SCFResult, error) {
	if in.GuessOrbitals == nil && in.Options.Guess != GuessExtrapolated {
		return runCold(ctx, mol, opts, in, res, coldGuesses(mol, opts, in.Restricted))
	}
	r, err := runWarm(ctx, in, res)
	check := opts.CheckGuesses
	if (r == nil || !r.Converged) && opts.ColdIfUnconverged {
		check = coldGuesses(mol, opts, in.Restricted)
	}
	if len(check) == 0 || ctx.Err() != nil {
		return r, err
	}
	cold := *in
	cold.GuessOrbitals, cold.GuessDensity = nil, nil
	cr, cerr := runCold(ctx, mol, opts, &cold, res, check)
	// A cold state replaces the warm one only when clearly lower (1e-6
	// Eh: a hundred times the default SCF energy tolerance) or when the
	// warm start did not converge.
	if cr != nil && (r == nil || cr.Converged && (!r.Converged || cr.Energy < r.Energy-1e-6)) {
		return cr, cerr
	}
	return r, err
}

// runWarm runs the SCF from guess orbitals or an extrapolated density.
func runWarm(ctx context.Context, in *SCFInput, res *Result) (*SCFResult, error) {
	res.GuessesTried++
	r, err := RunSCF(ctx, *in)
	tr := GuessTrial{Guess: GuessFromOrbitals}
	if in.GuessOrbitals == nil {
		tr.Guess = GuessExtrapolated
	}
	if r != nil {
		tr.Energy, tr.Converged, tr.Iterations, tr.S2 = r.Energy, r.Converged, r.Iterations, r.S2
	} else if err != nil {
		tr.Error = err.Error()
	}
	res.Trials = append(res.Trials, tr)
	return r, err
}

// runCold runs the SCF from every guess in list and returns the lowest
// converged result (the first guess's result when none converged).
func runCold(ctx context.Context, mol planner.Molecule, opts Options, in *SCFInput, res *Result, list []GuessKind) (*SCFResult, error) {
	var sad *AtomicGuess
	var best *SCFResult
	var bestErr, firstErr error
	for i, g := range list {
		if ctx.Err() != nil {
			break
		}
		run := *in
		run.Options.Guess = g
		if g == GuessAtoms || g == GuessAtomsSpin {
			if sad == nil {
				sad = NewAtomicGuess(opts.Basis, opts.Convention, opts.Norm)
			}
			d, err := sad.Density(ctx, mol, g == GuessAtomsSpin)
			if err != nil {
				res.GuessNotes = append(res.GuessNotes, fmt.Sprintf("%s guess skipped: %v", g, err))
				res.Trials = append(res.Trials, GuessTrial{Guess: g, Error: err.Error()})
				if len(list) == 1 && len(opts.ColdGuesses) == 0 {
					// The default RHF guess could not be built (a user basis
					// too small for an atom's configuration): use the core
					// guess rather than fail.
					res.GuessNotes = append(res.GuessNotes, "the core guess was used instead")
					return runCold(ctx, mol, opts, in, res, []GuessKind{GuessCore})
				}
				if len(list) == 1 {
					return nil, err
				}
				continue
			}
			if d.Note != "" {
				if len(list) > 1 {
					// The plain superposition is (or will be) run anyway.
					res.GuessNotes = append(res.GuessNotes, fmt.Sprintf("%s guess skipped: %s", g, d.Note))
					continue
				}
				res.GuessNotes = append(res.GuessNotes, fmt.Sprintf("%s guess: %s; the plain atoms guess was used", g, d.Note))
			}
			run.GuessDensity = d
		}
		r, err := RunSCF(ctx, run)
		res.GuessesTried++
		tr := GuessTrial{Guess: g}
		if r != nil {
			tr.Energy, tr.Converged, tr.Iterations, tr.S2 = r.Energy, r.Converged, r.Iterations, r.S2
		} else if err != nil {
			tr.Error = err.Error()
		}
		res.Trials = append(res.Trials, tr)
		if i == 0 {
			firstErr = err
		}
		if r == nil {
			if ctx.Err() != nil {
				return nil, err
			}
			continue
		}
		// Keep the lowest converged state; an earlier guess wins ties
		// (1e-9 Eh is ten times the default energy tolerance).
		switch {
		case best == nil:
			best, bestErr = r, err
		case r.Converged && (!best.Converged || r.Energy < best.Energy-1e-9):
			best, bestErr = r, err
		}
	}
	if best == nil {
		if firstErr == nil {
			firstErr = errors.New("hf: no starting guess could be run")
			if err := ctx.Err(); err != nil {
				firstErr = fmt.Errorf("hf: scf cancelled: %w", err)
			}
		}
		return nil, firstErr
	}
	return best, bestErr
}

// usableHistory is Guess followed by the previous orbitals up to the
// first one in another basis (or nil).
func usableHistory(g *Orbitals, prev []*Orbitals) []*Orbitals {
	h := []*Orbitals{g}
	for _, p := range prev {
		if p == nil || p.NBasis != g.NBasis {
			break
		}
		h = append(h, p)
	}
	return h
}

// extrapolatedDensity combines the occupied-orbital densities (the lowest
// na α and nb β columns) of hist with Lagrange weights for the position
// pos[0] from pos[1:] (uniform grid when pos is nil).
func extrapolatedDensity(hist []*Orbitals, pos []float64, na, nb int) (*SpinDensity, error) {
	k := len(hist)
	if pos == nil {
		pos = make([]float64, k+1)
		for i := range pos {
			pos[i] = -float64(i)
		}
	}
	if len(pos) < k+1 {
		return nil, fmt.Errorf("%d positions for %d sets of orbitals and the new point", len(pos), k)
	}
	x := pos[0]
	w := make([]float64, k)
	for i := range k {
		w[i] = 1
		for j := range k {
			if j == i {
				continue
			}
			d := pos[i+1] - pos[j+1]
			if d == 0 || math.IsNaN(d) {
				return nil, fmt.Errorf("positions %g and %g coincide", pos[i+1], pos[j+1])
			}
			w[i] *= (x - pos[j+1]) / d
		}
		if math.IsNaN(w[i]) || math.IsInf(w[i], 0) {
			return nil, fmt.Errorf("extrapolation weight %g is not finite", w[i])
		}
	}
	for _, o := range hist {
		if err := o.Validate(); err != nil {
			return nil, err
		}
		if o.NMO() < max(na, nb) {
			return nil, fmt.Errorf("orbitals have %d columns, %d electrons of one spin", o.NMO(), max(na, nb))
		}
	}
	n := hist[0].NBasis
	out := &SpinDensity{Alpha: mat.NewSymDense(n, nil), Beta: mat.NewSymDense(n, nil)}
	var d mat.SymDense
	for i, o := range hist {
		for s, occ := range []int{na, nb} {
			if occ == 0 {
				continue
			}
			c, dst := o.CAlpha, out.Alpha
			if s == 1 {
				c, dst = o.Beta(), out.Beta
			}
			d.Reset()
			d.SymOuterK(w[i], c.Slice(0, n, 0, occ))
			dst.AddSym(dst, &d)
		}
	}
	return out, nil
}
