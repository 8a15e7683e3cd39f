package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strings"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"wellscan/parsers"
	"wellscan/planner"
	"wellscan/runner/hf"
	"wellscan/runner/hf/basis"
)

type energyOptions struct {
	basis        string
	basisFile    string
	convention   string
	method       string
	charge       int
	multiplicity int
	units        string
	json         bool
	workers      int
	maxIter      int
	frozenCore   int
	allElectron  bool
	guess        string
	memoryMB     int
}

func (o *energyOptions) AddFlags(fs *pflag.FlagSet) {
	fs.StringVar(&o.basis, "basis", "6-31G*", "basis set from the built-in library (see 'wellscan basis list'); case-insensitive")
	fs.StringVar(&o.basisFile, "basis-file", "", "read the basis set from this file (wellscan basis format) instead of the library")
	fs.StringVar(&o.convention, "convention", "as-set", "d/f functions: as-set, cartesian (6D/10F) or spherical (5D/7F)")
	fs.StringVar(&o.method, "method", "", "rhf, uhf or mp2 (default: rhf for singlets, uhf otherwise; mp2 runs on rhf for singlets, uhf otherwise)")
	fs.IntVar(&o.frozenCore, "frozen-core", -1, "mp2: number of lowest occupied orbitals per spin left uncorrelated (default: the atoms' noble-gas cores, e.g. 1 for O)")
	fs.BoolVar(&o.allElectron, "all-electron", false, "mp2: correlate all electrons (same as --frozen-core 0)")
	fs.IntVar(&o.charge, "charge", 0, "total charge of the molecule")
	fs.IntVar(&o.multiplicity, "multiplicity", 0, "spin multiplicity 2S+1 (default: the lowest consistent with the electron count)")
	fs.StringVar(&o.units, "units", "angstrom", "units of the XYZ coordinates: angstrom or bohr")
	fs.BoolVar(&o.json, "json", false, "print one JSON object instead of the table")
	fs.IntVar(&o.workers, "workers", 0, "goroutines for integrals and Fock builds (default: all CPUs)")
	fs.IntVar(&o.maxIter, "max-iterations", 0, "SCF iteration cap (default 128)")
	fs.IntVar(&o.memoryMB, "memory", 0, "two-electron integral budget in MiB: integrals that fit are kept in memory, the rest recomputed at each iteration (default: half the available memory, at most 16 GiB)")
	fs.StringVar(&o.guess, "guess", "auto", "starting guess: auto (rhf: atoms; uhf: try core, gwh, atoms, atoms-spin and for singlets core-mixed, keep the lowest), core, gwh, atoms, atoms-spin or core-mixed")
}

func newEnergyCommand(a *app) *cobra.Command {
	o := &energyOptions{}
	cmd := &cobra.Command{
		Use:   "energy FILE.xyz",
		Short: "Single-point Hartree–Fock or MP2 energy of one geometry with the built-in engine",
		Long: `Compute the RHF, UHF or MP2 energy of the molecule in an XYZ file with the
built-in engine. MP2 freezes the atoms' noble-gas cores by default (O 1s,
Si [Ne], …); --all-electron correlates every electron. Use "-" to read
the XYZ from standard input. The exit
status is 1 when the SCF does not converge (the last energy is still
printed, marked as not converged).`,
		Example: `  wellscan energy water.xyz --basis cc-pVDZ
  wellscan energy oh.xyz --basis 6-31G* --multiplicity 2 --json
  wellscan energy h2.xyz --units bohr --basis-file mybasis.txt
  wellscan energy water.xyz --basis cc-pVTZ --method mp2 --all-electron`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return runEnergy(cmd, a, o, args[0])
		},
	}
	o.AddFlags(cmd.Flags())
	return cmd
}

// energyReport is the --json output of `wellscan energy`.
type energyReport struct {
	EnergyHartree           float64    `json:"energy_hartree"`
	ElectronicEnergyHartree float64    `json:"electronic_energy_hartree"`
	NuclearRepulsionHartree float64    `json:"nuclear_repulsion_hartree"`
	Converged               bool       `json:"converged"`
	Status                  string     `json:"status"`
	Iterations              int        `json:"iterations"`
	BasisFunctions          int        `json:"basis_functions"`
	DroppedFunctions        int        `json:"dropped_functions"`
	Method                  string     `json:"method"`
	Basis                   string     `json:"basis"`
	Convention              string     `json:"convention"`
	Charge                  int        `json:"charge"`
	Multiplicity            int        `json:"multiplicity"`
	SSquared                *float64   `json:"s_squared,omitempty"`
	OrbitalEnergiesAlpha    []float64  `json:"orbital_energies_alpha_hartree"`
	OrbitalEnergiesBeta     []float64  `json:"orbital_energies_beta_hartree,omitempty"`
	MullikenCharges         []float64  `json:"mulliken_charges"`
	DipoleAU                [3]float64 `json:"dipole_e_bohr"`
	DipoleDebye             float64    `json:"dipole_debye"`
	// MP2 only (energy_hartree is then the MP2 total).
	ReferenceMethod        string   `json:"reference_method,omitempty"`
	ReferenceEnergyHartree *float64 `json:"reference_energy_hartree,omitempty"`
	MP2CorrelationHartree  *float64 `json:"mp2_correlation_hartree,omitempty"`
	MP2SameSpinHartree     *float64 `json:"mp2_same_spin_hartree,omitempty"`
	MP2OppositeSpinHartree *float64 `json:"mp2_opposite_spin_hartree,omitempty"`
	MP2TotalHartree        *float64 `json:"mp2_total_hartree,omitempty"`
	FrozenCoreOrbitals     *int     `json:"frozen_core_orbitals,omitempty"`
	FrozenCore             string   `json:"frozen_core,omitempty"`
	// Guess is the starting guess whose SCF was kept; GuessTrials lists
	// every cold-start guess run (UHF tries several and keeps the lowest).
	// IntegralMode is how the two-electron integrals were handled
	// ("in-core", "semi-direct" or "direct"), with the memory the kept
	// ones took and the budget (MiB).
	IntegralMode      string          `json:"integral_mode"`
	IntegralMemoryMiB float64         `json:"integral_memory_mib"`
	MemoryBudgetMiB   float64         `json:"memory_budget_mib"`
	Guess             string          `json:"guess"`
	GuessTrials       []hf.GuessTrial `json:"guess_trials,omitempty"`
	GuessNotes        []string        `json:"guess_notes,omitempty"`
}

func runEnergy(cmd *cobra.Command, a *app, o *energyOptions, path string) error {
	unit, ok := planner.ParseLengthUnit(o.units)
	if !ok {
		return usageError{fmt.Errorf("--units: unknown unit %q (expected angstrom or bohr)", o.units)}
	}
	method, err := hf.ParseMethod(o.method)
	if err != nil {
		return usageError{fmt.Errorf("--method: %w", err)}
	}
	fc := hf.FrozenCoreAuto
	switch {
	case o.allElectron && o.frozenCore > 0:
		return usageError{fmt.Errorf("--all-electron and --frozen-core %d contradict each other", o.frozenCore)}
	case o.allElectron || o.frozenCore == 0:
		fc = hf.AllElectron
	case o.frozenCore > 0:
		fc = hf.FrozenCoreCount(o.frozenCore)
	case o.frozenCore < -1:
		return usageError{fmt.Errorf("--frozen-core: %d orbitals, expected a count ≥ 0", o.frozenCore)}
	}
	if method != hf.MP2 && (o.allElectron || o.frozenCore >= 0) {
		return usageError{errors.New("--all-electron and --frozen-core apply to --method mp2 only")}
	}
	conv, err := basis.ParseConvention(o.convention)
	if err != nil {
		return usageError{fmt.Errorf("--convention: %w", err)}
	}
	var cold []hf.GuessKind
	if g := strings.ToLower(strings.TrimSpace(o.guess)); g != "auto" {
		k, err := hf.ParseGuess(g)
		if err != nil {
			return usageError{fmt.Errorf("--guess: %w (or auto)", err)}
		}
		cold = []hf.GuessKind{k}
	}
	if o.memoryMB < 0 {
		return usageError{fmt.Errorf("--memory: %d MiB, expected a positive budget (or leave it out)", o.memoryMB)}
	}
	var r io.Reader = a.stdin
	if path != "-" {
		f, err := os.Open(path)
		if err != nil {
			return err
		}
		defer f.Close()
		r = f
	} else {
		path = "<stdin>"
	}
	frames, err := parsers.ReadXYZ(io.LimitReader(r, 64<<20), path)
	if err != nil {
		return err
	}
	mol, err := planner.MoleculeFromFrame(frames[0], unit, o.charge, o.multiplicity, path)
	if err != nil {
		return err
	}
	var set *basis.Set
	if o.basisFile != "" {
		set, err = basis.LoadFile(o.basisFile)
	} else {
		set, err = basis.Lookup(o.basis)
	}
	if err != nil {
		return err
	}
	res, err := hf.Energy(cmd.Context(), mol, hf.Options{Method: method, Basis: set, Convention: conv,
		Workers: o.workers, SCF: hf.SCFOptions{MaxIterations: o.maxIter}, FrozenCore: fc, ColdGuesses: cold,
		Memory: int64(o.memoryMB) << 20})
	if res == nil {
		return err
	}
	rep := newEnergyReport(res, mol)
	if o.json {
		enc := json.NewEncoder(a.stdout)
		enc.SetIndent("", "  ")
		if e := enc.Encode(rep); e != nil {
			return e
		}
	} else {
		printEnergy(a.stdout, rep, mol, res)
	}
	if errors.Is(err, hf.ErrNotConverged) {
		return fmt.Errorf("%w: %v", errNotConverged, err)
	}
	return err
}

func newEnergyReport(res *hf.Result, mol planner.Molecule) energyReport {
	rep := energyReport{
		EnergyHartree: res.Energy, ElectronicEnergyHartree: res.ElectronicEnergy,
		NuclearRepulsionHartree: res.NuclearRepulsion, Converged: res.Converged, Status: res.Status.String(),
		Iterations: res.Iterations, BasisFunctions: res.BasisFunctions, DroppedFunctions: res.Dropped,
		Method: string(res.Method), Basis: res.Basis, Convention: res.Convention,
		Charge: mol.Charge, Multiplicity: mol.Multiplicity,
		MullikenCharges: res.Mulliken, DipoleAU: res.Dipole,
		DipoleDebye: math.Sqrt(res.Dipole[0]*res.Dipole[0]+res.Dipole[1]*res.Dipole[1]+res.Dipole[2]*res.Dipole[2]) * planner.BohrElectronInDebye,
		Guess:       res.SCFResult.Guess.String(), GuessNotes: res.GuessNotes,
		IntegralMode: res.IntegralMode, IntegralMemoryMiB: float64(res.IntegralBytes) / (1 << 20),
		MemoryBudgetMiB: float64(res.MemoryBudget) / (1 << 20),
	}
	if len(res.Trials) > 1 {
		rep.GuessTrials = res.Trials
	}
	if o := res.Orbitals; o != nil {
		rep.OrbitalEnergiesAlpha = o.EnergiesAlpha
		if !o.Restricted {
			rep.OrbitalEnergiesBeta = o.EnergiesBeta
		}
	}
	if m := res.MP2; m != nil {
		ref, corr, ss, os, tot, n := m.ReferenceEnergy, m.Correlation, m.SameSpin, m.OppositeSpin, m.Total, m.FrozenCore
		rep.ReferenceMethod, rep.ReferenceEnergyHartree = string(m.Reference), &ref
		rep.MP2CorrelationHartree, rep.MP2SameSpinHartree, rep.MP2OppositeSpinHartree, rep.MP2TotalHartree = &corr, &ss, &os, &tot
		rep.FrozenCoreOrbitals, rep.FrozenCore = &n, frozenCoreText(m)
	}
	if res.Reference == hf.UHF {
		s2 := res.S2
		rep.SSquared = &s2
	}
	return rep
}

func printEnergy(w io.Writer, rep energyReport, mol planner.Molecule, res *hf.Result) {
	if !rep.Converged {
		fmt.Fprintf(w, "!! SCF NOT CONVERGED after %d iterations (%s): the energy below is NOT a result !!\n\n", rep.Iterations, res.Reason)
	}
	fmt.Fprintf(w, "molecule        %s, charge %+d, multiplicity %d, %d electrons\n", mol.Formula(), mol.Charge, mol.Multiplicity, mol.Electrons())
	fmt.Fprintf(w, "method / basis  %s / %s (%d functions, d/f %s", strings.ToUpper(rep.Method), rep.Basis, rep.BasisFunctions, rep.Convention)
	if rep.DroppedFunctions > 0 {
		fmt.Fprintf(w, ", %d near-linear-dependent combinations dropped", rep.DroppedFunctions)
	}
	fmt.Fprintln(w, ")")
	fmt.Fprintf(w, "integrals       %s (%.1f MiB kept, budget %.0f MiB)\n", rep.IntegralMode, rep.IntegralMemoryMiB, rep.MemoryBudgetMiB)
	fmt.Fprintf(w, "SCF             %d iterations, %s, from the %s guess", rep.Iterations, map[bool]string{true: "converged", false: "NOT converged"}[rep.Converged], rep.Guess)
	if n := len(rep.GuessTrials); n > 1 {
		parts := make([]string, len(rep.GuessTrials))
		for i, tr := range rep.GuessTrials {
			switch {
			case tr.Error != "":
				parts[i] = tr.Guess.String() + " failed"
			case !tr.Converged:
				parts[i] = tr.Guess.String() + " not converged"
			default:
				parts[i] = fmt.Sprintf("%s %.8f", tr.Guess, tr.Energy)
			}
		}
		fmt.Fprintf(w, "\n                lowest of %d guesses tried (hartree): %s", n, strings.Join(parts, ", "))
	}
	fmt.Fprintln(w)
	for _, n := range rep.GuessNotes {
		fmt.Fprintf(w, "                note: %s\n", n)
	}
	fmt.Fprintln(w)
	if m := res.MP2; m != nil {
		fmt.Fprintf(w, "MP2             %s reference, %s; %d+%d occupied, %d+%d virtual orbitals (α+β) correlated\n\n",
			strings.ToUpper(string(m.Reference)), frozenCoreText(m), m.OccupiedAlpha, m.OccupiedBeta, m.VirtualAlpha, m.VirtualBeta)
		fmt.Fprintf(w, "total energy (MP2)    %20.12f hartree  (%.6f eV)\n", rep.EnergyHartree, rep.EnergyHartree*planner.HartreeInEV)
		fmt.Fprintf(w, "reference (%s)       %20.12f hartree\n", strings.ToUpper(string(m.Reference)), m.ReferenceEnergy)
		fmt.Fprintf(w, "MP2 correlation       %20.12f hartree\n", m.Correlation)
		fmt.Fprintf(w, "  same spin           %20.12f hartree\n", m.SameSpin)
		fmt.Fprintf(w, "  opposite spin       %20.12f hartree\n", m.OppositeSpin)
		fmt.Fprintf(w, "electronic energy (%s) %19.12f hartree\n", strings.ToUpper(string(m.Reference)), rep.ElectronicEnergyHartree)
	} else {
		fmt.Fprintf(w, "total energy          %20.12f hartree  (%.6f eV)\n", rep.EnergyHartree, rep.EnergyHartree*planner.HartreeInEV)
		fmt.Fprintf(w, "electronic energy     %20.12f hartree\n", rep.ElectronicEnergyHartree)
	}
	fmt.Fprintf(w, "nuclear repulsion     %20.12f hartree\n", rep.NuclearRepulsionHartree)
	if rep.SSquared != nil {
		s := float64(mol.Multiplicity-1) / 2
		fmt.Fprintf(w, "<S^2>                 %20.6f          (exact %.4f)\n", *rep.SSquared, s*(s+1))
	}
	dipole := "dipole moment        "
	if res.MP2 != nil {
		dipole = "dipole moment (" + strings.ToUpper(string(res.MP2.Reference)) + ")  "
	}
	fmt.Fprintf(w, "%s %20.6f debye    (x %.6f, y %.6f, z %.6f e·bohr)\n\n", dipole, rep.DipoleDebye, rep.DipoleAU[0], rep.DipoleAU[1], rep.DipoleAU[2])
	fmt.Fprintln(w, "atom  element  Mulliken charge (e)")
	for i, q := range rep.MullikenCharges {
		fmt.Fprintf(w, "%4d  %-7s  %+.6f\n", i+1, mol.Atoms[i].Element.Symbol, q)
	}
	if o := res.Orbitals; o != nil {
		printOrbitals(w, "orbital energies (hartree)", o.EnergiesAlpha, o.OccAlpha)
		if !o.Restricted {
			printOrbitals(w, "beta orbital energies (hartree)", o.EnergiesBeta, o.OccBeta)
		}
	}
}

// frozenCoreText states what MP2 left uncorrelated, e.g. "frozen core:
// 1 orbital (O 1s)" or "all electrons correlated".
func frozenCoreText(m *hf.MP2Result) string {
	if m.FrozenCore == 0 {
		return "all electrons correlated"
	}
	unit := "orbitals"
	if m.FrozenCore == 1 {
		unit = "orbital"
	}
	return fmt.Sprintf("frozen core: %d %s per spin (%s)", m.FrozenCore, unit, m.FrozenCoreLabel)
}

func printOrbitals(w io.Writer, title string, e, occ []float64) {
	fmt.Fprintf(w, "\n%s, occupied marked *:\n", title)
	lastOcc := -1
	for i, x := range occ {
		if x > 0 {
			lastOcc = i
		}
	}
	shown := 0
	for i, x := range e {
		if i > lastOcc+5 {
			fmt.Fprintf(w, "  … %d more virtual", len(e)-i)
			break
		}
		mark := " "
		if i < len(occ) && occ[i] > 0 {
			mark = "*"
		}
		fmt.Fprintf(w, " %s%12.6f", mark, x)
		shown++
		if shown%6 == 0 {
			fmt.Fprintln(w)
		}
	}
	fmt.Fprintln(w)
}
