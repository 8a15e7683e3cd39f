package hf

import (
	"context"
	"errors"
	"fmt"
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

// ParseMethod reads "rhf" or "uhf" case-insensitively; "" means "choose
// by spin": RHF for a singlet, UHF otherwise.
func ParseMethod(s string) (Method, error) {
	switch m := Method(strings.ToLower(strings.TrimSpace(s))); m {
	case "", RHF, UHF:
		return m, nil
	}
	return "", fmt.Errorf("hf: unknown method %q (expected rhf or uhf)", s)
}

// DefaultMemory is the default budget for in-core two-electron integrals
// (bytes). Above it Fock builds are integral-direct.
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
	// Memory is the in-core integral budget in bytes (0: DefaultMemory;
	// negative: always direct).
	Memory int64
	// DirectThreshold is the Schwarz×density screening threshold of
	// direct Fock builds (0: 1e-12).
	DirectThreshold float64
	// Guess, if non-nil, starts the SCF from these orbitals (for example a
	// neighbouring scan point's); they must span the same basis.
	Guess *Orbitals
	SCF   SCFOptions
}

// Result is a converged (or explicitly unconverged) Hartree–Fock
// calculation on one geometry.
type Result struct {
	*SCFResult
	Method         Method
	Basis          string
	Convention     string
	BasisFunctions int
	InCore         bool
	// Mulliken charges per atom (e) and the dipole moment about the
	// origin of the input coordinates (e·bohr).
	Mulliken []float64
	Dipole   [3]float64
	// Wall-clock time spent on integrals and on the SCF iterations.
	IntegralTime, SCFTime time.Duration
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
	if method == RHF && na != nb {
		return nil, fmt.Errorf("hf: rhf needs a closed-shell molecule, but multiplicity %d gives %d α and %d β electrons; use uhf", mol.Multiplicity, na, nb)
	}
	shells, err := opts.Basis.Shells(mol, opts.Convention)
	if err != nil {
		return nil, err
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
		budget = DefaultMemory
	}
	var jk JKBuilder
	inCore := budget > 0 && integral.InCoreBytes(nbf) <= budget
	if inCore {
		eri, err := integral.ComputeERI(ctx, shells, opts.Norm, workers)
		if err != nil {
			return nil, err
		}
		jk = eri
	} else {
		thr := opts.DirectThreshold
		if thr == 0 {
			thr = 1e-12
		}
		d, err := integral.NewDirect(shells, opts.Norm, workers, thr)
		if err != nil {
			return nil, err
		}
		jk = d
	}
	intTime := time.Since(start)

	in := SCFInput{S: s, Hcore: h, JK: jk, ENuc: mol.NuclearRepulsion(), NAlpha: na, NBeta: nb,
		Restricted: method == RHF, Options: opts.SCF}
	res := &Result{Method: method, Basis: opts.Basis.Name(), Convention: opts.Convention.String(),
		BasisFunctions: nbf, InCore: inCore, IntegralTime: intTime}
	if g := opts.Guess; g != nil {
		if g.NBasis != nbf {
			res.GuessRejected = fmt.Sprintf("guess orbitals span %d functions, this basis has %d", g.NBasis, nbf)
		} else {
			in.GuessOrbitals = g
		}
	}
	start = time.Now()
	scf, scfErr := RunSCF(ctx, in)
	res.SCFTime = time.Since(start)
	if scf == nil {
		return nil, scfErr
	}
	res.SCFResult = scf
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
	return res, scfErr
}
