package hf

import (
	"context"
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// JKBuilder builds Coulomb and exchange matrices for one or more symmetric densities:
// J[d]_μν = Σ_λσ (μν|λσ) D[d]_λσ,  K[d]_μν = Σ_λσ (μλ|νσ) D[d]_λσ.  j[d], k[d] are overwritten.
type JKBuilder interface {
	JK(ctx context.Context, dens []*mat.SymDense, j, k []*mat.SymDense) error
}

// ErrNotConverged is wrapped by the error RunSCF returns when the iteration
// stops without meeting the convergence criteria. The result returned with
// it is complete but has Converged == false. Use errors.Is to test for it,
// or errors.As with *[NotConvergedError] for the details.
var ErrNotConverged = errors.New("hf: scf not converged")

// NotConvergedError describes an SCF run that stopped unconverged.
type NotConvergedError struct {
	Status     Status
	Reason     string
	Iterations int
	Energy     float64 // last total energy, hartree
	Gradient   float64 // last orbital-gradient error (see Iteration.Error)
}

func (e *NotConvergedError) Error() string {
	return fmt.Sprintf("hf: scf not converged after %d iterations (%s): %s; last energy %.10f Eh, error %.2e",
		e.Iterations, e.Status, e.Reason, e.Energy, e.Gradient)
}

// Is reports whether target is ErrNotConverged.
func (e *NotConvergedError) Is(target error) bool { return target == ErrNotConverged }

// Orthogonalization selects how the orthogonalising matrix X (XᵀSX = 1) is built.
type Orthogonalization int

const (
	// OrthCanonical is X = U s^{-1/2} over the eigenvectors of S whose
	// eigenvalue is at least the linear-dependence threshold; the others
	// are dropped (Löwdin 1970).
	OrthCanonical Orthogonalization = iota
	// OrthSymmetric is X = S^{-1/2} = U s^{-1/2} Uᵀ. It is used only when
	// no eigenvector has to be dropped; otherwise RunSCF falls back to
	// OrthCanonical and says so in SCFResult.Orthogonalization.
	OrthSymmetric
)

func (o Orthogonalization) String() string {
	switch o {
	case OrthCanonical:
		return "canonical"
	case OrthSymmetric:
		return "symmetric"
	}
	return fmt.Sprintf("Orthogonalization(%d)", int(o))
}

// GuessKind selects the starting density when no orbitals are given.
type GuessKind int

const (
	// GuessCore diagonalises the core Hamiltonian H (the default).
	GuessCore GuessKind = iota
	// GuessGWH diagonalises the generalised Wolfsberg–Helmholz matrix
	// H_μν = ½K S_μν (H_μμ + H_νν), K = 1.75, H_μμ on the diagonal.
	//
	// References: M. Wolfsberg and L. Helmholz, J. Chem. Phys. 20, 837
	// (1952), doi:10.1063/1.1700580 (from memory).
	GuessGWH
	// GuessFromOrbitals is reported in SCFResult.Guess when the run started
	// from SCFInput.GuessOrbitals. It is not a valid Options.Guess.
	GuessFromOrbitals
	// GuessAtoms starts from the superposition of spherically averaged
	// atomic densities (SAD) given in SCFInput.GuessDensity (see
	// [AtomicGuess]): iteration 0 builds the Fock matrix of that density
	// and diagonalises it. Its iteration-0 energy is that of a
	// non-idempotent density and is not an upper bound.
	//
	// References: J. H. Van Lenthe, R. Zwaans, H. J. J. Van Dam and M. F.
	// Guest, J. Comput. Chem. 27, 926 (2006), doi:10.1002/jcc.20393 (from
	// memory), on starting from atomic densities.
	GuessAtoms
	// GuessAtomsSpin is GuessAtoms with spin-polarised atoms (each with its
	// ground-state unpaired electrons, signs chosen so the molecule's
	// N_α − N_β comes out): a broken-symmetry start for stretched bonds.
	GuessAtomsSpin
	// GuessExtrapolated is reported in SCFResult.Guess when the run
	// started from a density extrapolated from two neighbouring points
	// (Options.GuessPrevious); it uses SCFInput.GuessDensity.
	GuessExtrapolated
	// GuessCoreTwist is the core guess with the α HOMO and LUMO rotated
	// into each other by π/4 (or by GuessMixAngle when that is set), for
	// UHF: a start that breaks spin and spatial symmetry (it finds the
	// lowest state of stretched F2 in 6-31G, 0.38 mEh below the atoms-spin
	// state, which keeps the π degeneracy; runner/hf/sad_test.go).
	GuessCoreTwist
)

func (g GuessKind) String() string {
	switch g {
	case GuessCore:
		return "core"
	case GuessGWH:
		return "gwh"
	case GuessFromOrbitals:
		return "orbitals"
	case GuessAtoms:
		return "atoms"
	case GuessAtomsSpin:
		return "atoms-spin"
	case GuessExtrapolated:
		return "extrapolated"
	case GuessCoreTwist:
		return "core-twist"
	}
	return fmt.Sprintf("GuessKind(%d)", int(g))
}

// ParseGuess reads a cold-start guess name: core, gwh, atoms, atoms-spin
// or core-twist.
func ParseGuess(s string) (GuessKind, error) {
	for _, g := range []GuessKind{GuessCore, GuessGWH, GuessAtoms, GuessAtomsSpin, GuessCoreTwist} {
		if s == g.String() {
			return g, nil
		}
	}
	return 0, fmt.Errorf("hf: unknown guess %q (expected core, gwh, atoms, atoms-spin or core-twist)", s)
}

// MarshalText encodes the guess by name (for JSON records).
func (g GuessKind) MarshalText() ([]byte, error) { return []byte(g.String()), nil }

// Stage is the convergence aid in force during an iteration.
type Stage int

const (
	// StageNormal: DIIS (unless disabled) with the user's damping and level shift.
	StageNormal Stage = iota
	// StageDamped: DIIS restarted, density damping switched on.
	StageDamped
	// StageShifted: DIIS restarted, level shift switched on, no damping.
	StageShifted
	// StageRestarted: new starting guess, DIIS with level shift.
	StageRestarted
)

func (s Stage) String() string {
	switch s {
	case StageNormal:
		return "normal"
	case StageDamped:
		return "damped"
	case StageShifted:
		return "level-shifted"
	case StageRestarted:
		return "restarted"
	}
	return fmt.Sprintf("Stage(%d)", int(s))
}

// Status is the outcome of an SCF run.
type Status int

const (
	// StatusConverged: energy change and orbital-gradient error below their tolerances.
	StatusConverged Status = iota + 1
	// StatusMaxIterations: the iteration limit was reached.
	StatusMaxIterations
	// StatusStalled: every fall-back was tried and the error stopped decreasing.
	StatusStalled
)

func (s Status) String() string {
	switch s {
	case StatusConverged:
		return "converged"
	case StatusMaxIterations:
		return "iteration limit reached"
	case StatusStalled:
		return "stalled"
	}
	return fmt.Sprintf("Status(%d)", int(s))
}

// DIISError selects the space in which DIIS error vectors are formed.
type DIISError int

const (
	// DIISErrorOrthogonal uses e' = F'D' − D'F' = Xᵀ(FDS − SDF)X, Pulay's
	// (1982) commutator expressed in the orthogonal basis. The default.
	DIISErrorOrthogonal DIISError = iota
	// DIISErrorAO uses e = FDS − SDF in the AO basis, as Pulay (1982)
	// writes it. It weights the components differently (so the iterates
	// differ) and is what the published worked DIIS listing used.
	DIISErrorAO
)

// SCFOptions tunes RunSCF. The zero value gives the defaults documented on
// each field.
type SCFOptions struct {
	// EnergyTol is the largest |ΔE| between iterations at convergence
	// (hartree). Default 1e-10.
	EnergyTol float64
	// ErrorTol bounds both the orbital-gradient error (max |element| of
	// the orthogonal-basis commutator F'D' − D'F', over spins) and the RMS
	// change of the total density at convergence. Default 1e-8.
	ErrorTol float64
	// MaxIterations is the largest number of Fock builds. Default 128.
	MaxIterations int

	// DisableDIIS switches DIIS off (plain Roothaan iteration).
	DisableDIIS bool
	// DIISSize is the number of Fock/error pairs kept. Default 8.
	DIISSize int
	// DIISError selects the error vector (orthogonal basis by default).
	DIISError DIISError

	// Damping, in [0, 1), mixes this fraction of the previous density into
	// each new one from the first iteration on: D ← (1−a) D_new + a D_old
	// (simple density mixing; common practice).
	Damping float64
	// LevelShift (hartree, ≥ 0) raises the virtual orbitals from the first
	// iteration on (Saunders & Hillier 1973).
	LevelShift float64

	// DisableFallback keeps StageNormal for the whole run.
	DisableFallback bool
	// FallbackDamping is the damping factor of StageDamped. Default 0.5.
	FallbackDamping float64
	// FallbackLevelShift is the level shift of StageShifted and
	// StageRestarted (hartree). Default 0.5.
	FallbackLevelShift float64
	// StallIterations: a stage is abandoned when the error has not halved
	// for this many iterations. Default 15.
	StallIterations int
	// MaxEnergyRises: a stage is abandoned after this many energy rises
	// (ΔE > 1e-6 Eh) once it is five iterations old. Default 4.
	MaxEnergyRises int

	// LinDepThreshold drops eigenvectors of S with eigenvalue below it.
	// Default 1e-7.
	LinDepThreshold float64
	// Orthogonalization selects X; canonical by default.
	Orthogonalization Orthogonalization

	// Guess is the starting density when SCFInput.GuessOrbitals is nil.
	Guess GuessKind
	// GuessMixAngle (radians) rotates the α HOMO and LUMO of the starting
	// orbitals of the core and GWH guesses into each other (UHF only): HOMO' = cos θ HOMO + sin θ LUMO.
	// π/4 breaks the spatial symmetry fully, which lets a stretched bond
	// find the lower UHF solution. Zero disables it.
	GuessMixAngle float64

	// OnIteration, if non-nil, is called after every iteration with a copy
	// of its record. It must not retain anything but the value.
	OnIteration func(Iteration)
}

// SCFInput is everything RunSCF needs. RunSCF does not modify any of it.
type SCFInput struct {
	S     *mat.SymDense // overlap, n×n
	Hcore *mat.SymDense // core Hamiltonian T + V, n×n, hartree
	JK    JKBuilder
	ENuc  float64 // nuclear repulsion, hartree

	NAlpha, NBeta int
	// Restricted selects RHF (requires NAlpha == NBeta); otherwise UHF.
	Restricted bool

	// GuessOrbitals, if non-nil, starts from these orbitals (for example
	// the converged orbitals of a neighbouring geometry, same basis). They
	// are re-orthonormalised in the metric S (Löwdin) before use.
	GuessOrbitals *Orbitals
	// GuessDensity is the starting density of Options.Guess GuessAtoms,
	// GuessAtomsSpin and GuessExtrapolated (ignored otherwise, and when
	// GuessOrbitals is set).
	GuessDensity *SpinDensity

	Options SCFOptions
}

// Iteration is the record of one SCF iteration (one Fock build).
type Iteration struct {
	Index int
	// Energy is the total energy E_nuc + ½Σ D(H + F(D)) of the density D
	// that entered this iteration, hartree (variational).
	Energy float64
	// EnergySourceFock is E_nuc + ½Σ D(H + F̃), with F̃ the matrix that
	// was diagonalised to produce D (the guess matrix at iteration 0, the
	// previous, possibly extrapolated, Fock matrix afterwards). It is the
	// number plain-SCF tabulations traditionally print; it tends to Energy
	// but is not variational. Zero at iteration 0 when the guess came from
	// orbitals, and with damping it uses the damped density.
	EnergySourceFock float64
	// DeltaE is Energy minus the previous iteration's Energy (0 at first).
	DeltaE float64
	// Error is max |(F'D' − D'F')_ij| in the orthogonal basis, over spins.
	Error float64
	// DensityChange is the RMS over all n² elements of the change of the
	// total density since the previous iteration (0 at first).
	DensityChange float64
	// DIISVectors is the number of Fock matrices combined into the one
	// diagonalised after this iteration (0 or 1: no extrapolation).
	DIISVectors int
	Stage       Stage
}

// SCFResult is the outcome of RunSCF. All matrices are freshly allocated
// and owned by the caller.
type SCFResult struct {
	Converged bool
	Status    Status
	Reason    string // human-readable detail for the status

	Energy           float64 // total energy, hartree
	ElectronicEnergy float64 // Energy − NuclearRepulsion
	NuclearRepulsion float64

	Iterations int // number of Fock builds, len(History)
	History    []Iteration
	Restarts   int // restarts from another guess by the fall-back chain

	Restricted    bool
	NAlpha, NBeta int
	// Orbitals holds the canonical orbitals of the last Fock matrix
	// (coefficients, energies, occupations); write it with WriteOrbitals
	// to seed the next geometry.
	Orbitals *Orbitals
	// Densities built from Orbitals, without a factor 2; for RHF
	// DensityAlpha and DensityBeta are equal copies. Density = DensityAlpha
	// + DensityBeta. At convergence they differ from the density whose
	// energy is Energy by less than the convergence tolerances.
	DensityAlpha, DensityBeta, Density *mat.SymDense
	// S2 is ⟨S²⟩ of the determinant (0 for closed-shell RHF).
	S2 float64

	NBasis            int               // n
	NMO               int               // n − Dropped
	Dropped           int               // eigenvectors of S removed as linearly dependent
	Orthogonalization Orthogonalization // what was actually used
	Guess             GuessKind         // the initial guess used (before any restart)
}

func (o *SCFOptions) withDefaults() (SCFOptions, error) {
	r := *o
	if r.EnergyTol == 0 {
		r.EnergyTol = 1e-10
	}
	if r.ErrorTol == 0 {
		r.ErrorTol = 1e-8
	}
	if r.MaxIterations == 0 {
		r.MaxIterations = 128
	}
	if r.DIISSize == 0 {
		r.DIISSize = 8
	}
	if r.FallbackDamping == 0 {
		r.FallbackDamping = 0.5
	}
	if r.FallbackLevelShift == 0 {
		r.FallbackLevelShift = 0.5
	}
	if r.StallIterations == 0 {
		r.StallIterations = 15
	}
	if r.MaxEnergyRises == 0 {
		r.MaxEnergyRises = 4
	}
	if r.LinDepThreshold == 0 {
		r.LinDepThreshold = 1e-7
	}
	switch {
	case !(r.EnergyTol > 0) || !(r.ErrorTol > 0):
		return r, fmt.Errorf("hf: scf options: tolerances must be positive (energy %g, error %g)", r.EnergyTol, r.ErrorTol)
	case r.MaxIterations < 1:
		return r, fmt.Errorf("hf: scf options: MaxIterations %d, want ≥ 1", r.MaxIterations)
	case r.DIISSize < 2:
		return r, fmt.Errorf("hf: scf options: DIISSize %d, want ≥ 2", r.DIISSize)
	case !(r.Damping >= 0 && r.Damping < 1):
		return r, fmt.Errorf("hf: scf options: Damping %g, want 0 ≤ a < 1", r.Damping)
	case !(r.FallbackDamping > 0 && r.FallbackDamping < 1):
		return r, fmt.Errorf("hf: scf options: FallbackDamping %g, want 0 < a < 1", r.FallbackDamping)
	case !(r.LevelShift >= 0) || !(r.FallbackLevelShift > 0):
		return r, fmt.Errorf("hf: scf options: level shifts must be ≥ 0 (LevelShift %g, FallbackLevelShift %g)", r.LevelShift, r.FallbackLevelShift)
	case r.StallIterations < 2 || r.MaxEnergyRises < 1:
		return r, fmt.Errorf("hf: scf options: StallIterations %d (want ≥ 2), MaxEnergyRises %d (want ≥ 1)", r.StallIterations, r.MaxEnergyRises)
	case !(r.LinDepThreshold > 0):
		return r, fmt.Errorf("hf: scf options: LinDepThreshold %g, want > 0", r.LinDepThreshold)
	case r.Orthogonalization != OrthCanonical && r.Orthogonalization != OrthSymmetric:
		return r, fmt.Errorf("hf: scf options: unknown orthogonalisation %d", int(r.Orthogonalization))
	case r.Guess != GuessCore && r.Guess != GuessGWH && r.Guess != GuessAtoms && r.Guess != GuessAtomsSpin && r.Guess != GuessExtrapolated && r.Guess != GuessCoreTwist:
		return r, fmt.Errorf("hf: scf options: unknown guess %d", int(r.Guess))
	case r.DIISError != DIISErrorOrthogonal && r.DIISError != DIISErrorAO:
		return r, fmt.Errorf("hf: scf options: unknown DIIS error kind %d", int(r.DIISError))
	case math.IsNaN(r.GuessMixAngle) || math.IsInf(r.GuessMixAngle, 0):
		return r, fmt.Errorf("hf: scf options: GuessMixAngle %g is not finite", r.GuessMixAngle)
	}
	return r, nil
}

func (in *SCFInput) validate() error {
	if in.S == nil || in.Hcore == nil {
		return errors.New("hf: scf input: S and Hcore are required")
	}
	if in.JK == nil {
		return errors.New("hf: scf input: JK builder is required")
	}
	n := in.S.SymmetricDim()
	if n == 0 {
		return errors.New("hf: scf input: empty basis")
	}
	if h := in.Hcore.SymmetricDim(); h != n {
		return fmt.Errorf("hf: scf input: Hcore is %d×%d but S is %d×%d", h, h, n, n)
	}
	if in.NAlpha < 0 || in.NBeta < 0 || in.NAlpha+in.NBeta == 0 {
		return fmt.Errorf("hf: scf input: electron counts NAlpha %d, NBeta %d: want ≥ 0 and at least one electron", in.NAlpha, in.NBeta)
	}
	if in.Restricted && in.NAlpha != in.NBeta {
		return fmt.Errorf("hf: scf input: RHF needs NAlpha == NBeta, got %d and %d (use UHF for open shells)", in.NAlpha, in.NBeta)
	}
	if g := in.Options.Guess; in.GuessOrbitals == nil && (g == GuessAtoms || g == GuessAtomsSpin || g == GuessExtrapolated) {
		d := in.GuessDensity
		if d == nil || d.Alpha == nil || d.Beta == nil {
			return errNoDensity
		}
		if d.Alpha.SymmetricDim() != n || d.Beta.SymmetricDim() != n {
			return fmt.Errorf("hf: scf input: guess density is %d×%d but the basis has %d functions", d.Alpha.SymmetricDim(), d.Alpha.SymmetricDim(), n)
		}
	}
	if math.IsNaN(in.ENuc) || math.IsInf(in.ENuc, 0) {
		return fmt.Errorf("hf: scf input: nuclear repulsion %g is not finite", in.ENuc)
	}
	for _, m := range []struct {
		name string
		a    *mat.SymDense
	}{{"S", in.S}, {"Hcore", in.Hcore}} {
		for i := range n {
			for j := i; j < n; j++ {
				if v := m.a.At(i, j); math.IsNaN(v) || math.IsInf(v, 0) {
					return fmt.Errorf("hf: scf input: %s[%d][%d] = %g is not finite", m.name, i, j, v)
				}
			}
		}
	}
	return nil
}

// ElectronCounts splits nElectrons into α and β electrons for a spin
// multiplicity 2S+1 (1 singlet, 2 doublet, …), with N_α ≥ N_β.
func ElectronCounts(nElectrons, multiplicity int) (nAlpha, nBeta int, err error) {
	if nElectrons < 1 || multiplicity < 1 {
		return 0, 0, fmt.Errorf("hf: %d electrons with multiplicity %d: want ≥ 1 of each", nElectrons, multiplicity)
	}
	unpaired := multiplicity - 1
	if unpaired > nElectrons || (nElectrons-unpaired)%2 != 0 {
		return 0, 0, fmt.Errorf("hf: multiplicity %d is impossible with %d electrons", multiplicity, nElectrons)
	}
	nBeta = (nElectrons - unpaired) / 2
	return nBeta + unpaired, nBeta, nil
}

// MarshalText encodes the stage by name (for JSON records of iterations).
func (s Stage) MarshalText() ([]byte, error) { return []byte(s.String()), nil }

// UnmarshalText decodes a name written by MarshalText.
func (s *Stage) UnmarshalText(b []byte) error {
	for v := StageNormal; v <= StageRestarted; v++ {
		if v.String() == string(b) {
			*s = v
			return nil
		}
	}
	return fmt.Errorf("hf: unknown scf stage %q", b)
}

// MarshalText encodes the status by name.
func (s Status) MarshalText() ([]byte, error) { return []byte(s.String()), nil }

// UnmarshalText decodes a name written by MarshalText.
func (s *Status) UnmarshalText(b []byte) error {
	for v := StatusConverged; v <= StatusStalled; v++ {
		if v.String() == string(b) {
			*s = v
			return nil
		}
	}
	return fmt.Errorf("hf: unknown scf status %q", b)
}
