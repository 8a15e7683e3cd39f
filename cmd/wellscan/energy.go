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
	basisLimit   []string
	coreCorr     string
}

func (o *energyOptions) AddFlags(fs *pflag.FlagSet) {
	fs.StringVar(&o.basis, "basis", "6-31G*", "basis set from the built-in library (see 'wellscan basis list'); case-insensitive")
	fs.StringVar(&o.basisFile, "basis-file", "", "read the basis set from this file (wellscan basis format) instead of the library")
	fs.StringVar(&o.convention, "convention", "as-set", "d/f functions: as-set, cartesian (6D/10F) or spherical (5D/7F)")
	fs.StringVar(&o.method, "method", "", "rhf, uhf, mp2, ccsd or ccsd(t) (default: rhf for singlets, uhf otherwise; mp2 runs on rhf for singlets, uhf otherwise; ccsd and ccsd(t) need a closed shell and run on rhf)")
	fs.IntVar(&o.frozenCore, "frozen-core", -1, "mp2, ccsd, ccsd(t): number of lowest occupied orbitals per spin left uncorrelated (default: the atoms' noble-gas cores, e.g. 1 for O)")
	fs.BoolVar(&o.allElectron, "all-electron", false, "mp2, ccsd, ccsd(t): correlate all electrons (same as --frozen-core 0)")
	fs.StringSliceVar(&o.basisLimit, "basis-limit", nil, "instead of --basis: two correlation-consistent sets, smaller first (e.g. cc-pVTZ,cc-pVQZ), extrapolated to the basis-set limit (HF: Karton–Martin; correlation: X⁻³); needs mp2, ccsd or ccsd(t)")
	fs.StringVar(&o.coreCorr, "core-correction", "", "with --basis-limit: add all-electron minus frozen-core energy in this core–valence set (e.g. cc-pCVTZ)")
	fs.IntVar(&o.charge, "charge", 0, "total charge of the molecule")
	fs.IntVar(&o.multiplicity, "multiplicity", 0, "spin multiplicity 2S+1 (default: the lowest consistent with the electron count)")
	fs.StringVar(&o.units, "units", "angstrom", "units of the XYZ coordinates: angstrom or bohr")
	fs.BoolVar(&o.json, "json", false, "print one JSON object instead of the table")
	fs.IntVar(&o.workers, "workers", 0, "goroutines for integrals and Fock builds (default: all CPUs)")
	fs.IntVar(&o.maxIter, "max-iterations", 0, "SCF iteration cap (default 128)")
	fs.StringVar(&o.guess, "guess", "auto", "starting guess: auto (rhf: atoms; uhf: try core, gwh, atoms, atoms-spin and for singlets core-mixed, keep the lowest), core, gwh, atoms, atoms-spin or core-mixed")
}

func newEnergyCommand(a *app) *cobra.Command {
	o := &energyOptions{}
	cmd := &cobra.Command{
		Use:   "energy FILE.xyz",
		Short: "Single-point Hartree–Fock, MP2, CCSD or CCSD(T) energy of one geometry with the built-in engine",
		Long: `Compute the RHF, UHF, MP2, CCSD or CCSD(T) energy of the molecule in an XYZ
file with the built-in engine.

  rhf, uhf    Hartree–Fock.
  mp2         second-order Møller–Plesset on RHF (closed shells) or UHF.
  ccsd        coupled cluster with single and double excitations, closed
              shells only (RHF reference; open shells are refused).
  ccsd(t)     CCSD plus the perturbative triples correction of
              Raghavachari, Trucks, Pople and Head-Gordon (1989); closed
              shells only. Cost grows as N⁷: CO in cc-pVQZ (110 functions)
              takes a few minutes on two cores.

The correlated methods freeze the atoms' noble-gas cores by default (O 1s,
Si [Ne], …); --all-electron correlates every electron. --basis-limit
TZ,QZ extrapolates to the basis-set limit from two correlation-consistent
sets (each a separate calculation), and --core-correction cc-pCVTZ adds
the core–valence correction. Use "-" to read the XYZ from standard input.
The exit status is 1 when the SCF or the coupled-cluster equations do not
converge (the last energy is still printed, marked as not converged).`,
		Example: `  wellscan energy water.xyz --basis cc-pVDZ
  wellscan energy oh.xyz --basis 6-31G* --multiplicity 2 --json
  wellscan energy h2.xyz --units bohr --basis-file mybasis.txt
  wellscan energy water.xyz --basis cc-pVTZ --method mp2 --all-electron
  wellscan energy co.xyz --basis cc-pVTZ --method "ccsd(t)"
  wellscan energy co.xyz --method "ccsd(t)" --basis-limit cc-pVTZ,cc-pVQZ --core-correction cc-pCVTZ`,
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
	// CCSD and CCSD(T) only (energy_hartree is then the CC total).
	CCSDCorrelationHartree *float64 `json:"ccsd_correlation_hartree,omitempty"`
	TriplesHartree         *float64 `json:"triples_hartree,omitempty"`
	CCIterations           *int     `json:"cc_iterations,omitempty"`
	CCConverged            *bool    `json:"cc_converged,omitempty"`
	MaxT1                  *float64 `json:"max_t1,omitempty"`
	// Guess is the starting guess whose SCF was kept; GuessTrials lists
	// every cold-start guess run (UHF tries several and keeps the lowest).
	Guess       string          `json:"guess"`
	GuessTrials []hf.GuessTrial `json:"guess_trials,omitempty"`
	GuessNotes  []string        `json:"guess_notes,omitempty"`
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
	correlated := method == hf.MP2 || method == hf.CCSD || method == hf.CCSDT
	if !correlated && (o.allElectron || o.frozenCore >= 0) {
		return usageError{errors.New("--all-electron and --frozen-core apply to the correlated methods (mp2, ccsd, ccsd(t)) only")}
	}
	if len(o.basisLimit) > 0 && len(o.basisLimit) != 2 {
		return usageError{fmt.Errorf("--basis-limit: %d sets given, expected two (smaller first, e.g. cc-pVTZ,cc-pVQZ)", len(o.basisLimit))}
	}
	if len(o.basisLimit) == 0 && o.coreCorr != "" {
		return usageError{errors.New("--core-correction applies to --basis-limit only")}
	}
	if len(o.basisLimit) == 2 && (cmd.Flags().Changed("basis") || o.basisFile != "") {
		return usageError{errors.New("--basis-limit replaces --basis and --basis-file; give one of them")}
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
	if len(o.basisLimit) == 2 {
		r := hf.LimitRecipe{Method: method, Small: o.basisLimit[0], Large: o.basisLimit[1], Core: o.coreCorr, FrozenCore: fc}
		if err := r.Validate(); err != nil {
			return usageError{err}
		}
		lr, err := hf.ComputeLimit(cmd.Context(), mol, r, hf.Options{Convention: conv, Workers: o.workers,
			SCF: hf.SCFOptions{MaxIterations: o.maxIter}, ColdGuesses: cold})
		if err != nil {
			return err
		}
		return printLimit(a.stdout, o.json, lr, mol)
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
		Workers: o.workers, SCF: hf.SCFOptions{MaxIterations: o.maxIter}, FrozenCore: fc, ColdGuesses: cold})
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
	if errors.Is(err, hf.ErrNotConverged) || errors.Is(err, hf.ErrCCNotConverged) {
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
	if c := res.CC; c != nil {
		ref, corr, n, it, conv, t1 := c.ReferenceEnergy, c.Correlation, c.FrozenCore, c.Iterations, c.Converged, c.MaxT1
		rep.ReferenceMethod, rep.ReferenceEnergyHartree = string(hf.RHF), &ref
		rep.CCSDCorrelationHartree, rep.CCIterations, rep.CCConverged, rep.MaxT1 = &corr, &it, &conv, &t1
		rep.FrozenCoreOrbitals, rep.FrozenCore = &n, frozenText(c.FrozenCore, c.FrozenCoreLabel)
		if c.WithTriples {
			tr := c.Triples
			rep.TriplesHartree = &tr
		}
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
	} else if c := res.CC; c != nil {
		name := "CCSD"
		if c.WithTriples {
			name = "CCSD(T)"
		}
		conv := fmt.Sprintf("converged in %d iterations", c.Iterations)
		if !c.Converged {
			conv = fmt.Sprintf("NOT converged after %d iterations (largest amplitude change %.1e): the energy below is NOT a result", c.Iterations, c.Residual)
		}
		fmt.Fprintf(w, "%-15s RHF reference, %s; %d occupied, %d virtual orbitals correlated; %s; largest |t1| %.4f\n\n",
			name, frozenText(c.FrozenCore, c.FrozenCoreLabel), c.Occupied, c.Virtual, conv, c.MaxT1)
		line := func(label string, v float64) { fmt.Fprintf(w, "%-24s %20.12f hartree\n", label, v) }
		fmt.Fprintf(w, "%-24s %20.12f hartree  (%.6f eV)\n", "total energy ("+name+")", rep.EnergyHartree, rep.EnergyHartree*planner.HartreeInEV)
		line("reference (RHF)", c.ReferenceEnergy)
		line("CCSD correlation", c.Correlation)
		if c.WithTriples {
			line("(T) correction", c.Triples)
		}
		line("electronic energy (RHF)", rep.ElectronicEnergyHartree)
		fmt.Fprintf(w, "%-24s %20.12f hartree\n", "nuclear repulsion", rep.NuclearRepulsionHartree)
	} else {
		fmt.Fprintf(w, "total energy          %20.12f hartree  (%.6f eV)\n", rep.EnergyHartree, rep.EnergyHartree*planner.HartreeInEV)
		fmt.Fprintf(w, "electronic energy     %20.12f hartree\n", rep.ElectronicEnergyHartree)
	}
	if res.CC == nil {
		fmt.Fprintf(w, "nuclear repulsion     %20.12f hartree\n", rep.NuclearRepulsionHartree)
	}
	if rep.SSquared != nil {
		s := float64(mol.Multiplicity-1) / 2
		fmt.Fprintf(w, "<S^2>                 %20.6f          (exact %.4f)\n", *rep.SSquared, s*(s+1))
	}
	dipole := "dipole moment        "
	if res.MP2 != nil {
		dipole = "dipole moment (" + strings.ToUpper(string(res.MP2.Reference)) + ")  "
	} else if res.CC != nil {
		dipole = "dipole moment (RHF)  "
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
	return frozenText(m.FrozenCore, m.FrozenCoreLabel)
}

// frozenText states what a correlated method left uncorrelated.
func frozenText(n int, label string) string {
	if n == 0 {
		return "all electrons correlated"
	}
	unit := "orbitals"
	if n == 1 {
		unit = "orbital"
	}
	return fmt.Sprintf("frozen core: %d %s per spin (%s)", n, unit, label)
}

// limitReport is the --json output of `wellscan energy --basis-limit`.
type limitReport struct {
	EnergyHartree           float64            `json:"energy_hartree"`
	Method                  string             `json:"method"`
	Recipe                  string             `json:"recipe"`
	Charge                  int                `json:"charge"`
	Multiplicity            int                `json:"multiplicity"`
	HFLimitHartree          float64            `json:"hf_limit_hartree"`
	CorrelationLimitHartree float64            `json:"correlation_limit_hartree"`
	CoreCorrectionHartree   float64            `json:"core_correction_hartree"`
	CardinalSmall           int                `json:"cardinal_small"`
	CardinalLarge           int                `json:"cardinal_large"`
	Components              []limitComponentJS `json:"components"`
}

type limitComponentJS struct {
	Name                   string  `json:"name"`
	Basis                  string  `json:"basis"`
	BasisFunctions         int     `json:"basis_functions"`
	FrozenCoreOrbitals     int     `json:"frozen_core_orbitals"`
	ReferenceEnergyHartree float64 `json:"reference_energy_hartree"`
	CorrelationHartree     float64 `json:"correlation_hartree"`
	TriplesHartree         float64 `json:"triples_hartree"`
	Seconds                float64 `json:"seconds"`
}

func printLimit(w io.Writer, asJSON bool, lr *hf.LimitResult, mol planner.Molecule) error {
	r := lr.Recipe
	if asJSON {
		rep := limitReport{EnergyHartree: lr.Total, Method: string(r.Method), Recipe: r.String(), Charge: mol.Charge, Multiplicity: mol.Multiplicity,
			HFLimitHartree: lr.HF, CorrelationLimitHartree: lr.Correlation, CoreCorrectionHartree: lr.CoreCorrection, CardinalSmall: lr.X, CardinalLarge: lr.Y}
		for _, c := range lr.Components {
			rep.Components = append(rep.Components, limitComponentJS{Name: c.Name, Basis: c.Basis, BasisFunctions: c.BasisFunctions, FrozenCoreOrbitals: c.Frozen,
				ReferenceEnergyHartree: c.Reference, CorrelationHartree: c.Correlation, TriplesHartree: c.Triples, Seconds: c.Time.Seconds()})
		}
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(rep)
	}
	fmt.Fprintf(w, "molecule        %s, charge %+d, multiplicity %d, %d electrons\n", mol.Formula(), mol.Charge, mol.Multiplicity, mol.Electrons())
	fmt.Fprintf(w, "recipe          %s\n\n", r)
	fmt.Fprintf(w, "%-12s %-12s %9s %6s %20s %20s %16s %9s\n", "component", "basis", "functions", "frozen", "reference/hartree", "correlation/hartree", "of which (T)", "time/s")
	for _, c := range lr.Components {
		fmt.Fprintf(w, "%-12s %-12s %9d %6d %20.10f %20.10f %16.10f %9.1f\n", c.Name, c.Basis, c.BasisFunctions, c.Frozen, c.Reference, c.Correlation, c.Triples, c.Time.Seconds())
	}
	fmt.Fprintln(w)
	fmt.Fprintf(w, "HF limit (X = %d, %d)        %20.12f hartree\n", lr.X, lr.Y, lr.HF)
	fmt.Fprintf(w, "correlation limit (X⁻³)     %20.12f hartree\n", lr.Correlation)
	if r.Core != "" {
		fmt.Fprintf(w, "core–valence correction     %20.12f hartree  (%s, all electrons − frozen core)\n", lr.CoreCorrection, r.Core)
	}
	fmt.Fprintf(w, "total energy (limit)        %20.12f hartree  (%.6f eV)\n", lr.Total, lr.Total*planner.HartreeInEV)
	return nil
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
