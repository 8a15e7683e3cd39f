package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"strings"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"wellscan/planner"
	"wellscan/runner/hf"
	"wellscan/runner/hf/basis"
)

type energyOptions struct {
	moleculeFlags
	method      string
	maxIter     int
	frozenCore  int
	allElectron bool
	guess       string
	alsoUnits   []string
	basisLimit  []string
	coreCorr    string
	memoryMB    int
}

func (o *energyOptions) AddFlags(fs *pflag.FlagSet) {
	o.moleculeFlags.AddFlags(fs)
	fs.StringVar(&o.method, "method", "", "rhf, uhf, mp2, ccsd or ccsd(t) (default: rhf for singlets, uhf otherwise; mp2 runs on rhf for singlets, uhf otherwise; ccsd and ccsd(t) need a closed shell and run on rhf)")
	fs.IntVar(&o.frozenCore, "frozen-core", -1, "mp2, ccsd, ccsd(t): number of lowest occupied orbitals per spin left uncorrelated (default: the atoms' noble-gas cores, e.g. 1 for O)")
	fs.BoolVar(&o.allElectron, "all-electron", false, "mp2, ccsd, ccsd(t): correlate all electrons (same as --frozen-core 0)")
	fs.StringSliceVar(&o.basisLimit, "basis-limit", nil, "instead of --basis: two correlation-consistent sets, smaller first (e.g. cc-pVTZ,cc-pVQZ), extrapolated to the basis-set limit (HF: Karton–Martin; correlation: X⁻³); needs mp2, ccsd or ccsd(t)")
	fs.StringVar(&o.coreCorr, "core-correction", "", "with --basis-limit: add all-electron minus frozen-core energy in this core–valence set (e.g. cc-pCVTZ)")
	fs.StringSliceVar(&o.alsoUnits, "also-units", nil, "also show the energy in these units (eV, kJ/mol, kcal/mol, cm-1) and, with au, the dipole in e·bohr")
	fs.IntVar(&o.maxIter, "max-iterations", 0, "SCF iteration cap (default 128)")
	fs.IntVar(&o.memoryMB, "memory", 0, "two-electron integral budget in MiB: integrals that fit are kept in memory, the rest recomputed at each iteration (default: half the available memory, at most 16 GiB)")
	fs.StringVar(&o.guess, "guess", "auto", "starting guess: auto (rhf: atoms; uhf: try core, gwh, atoms, atoms-spin and for singlets core-twist, keep the lowest), core, gwh, atoms, atoms-spin or core-twist")
}

func newEnergyCommand(a *app) *cobra.Command {
	o := &energyOptions{}
	cmd := &cobra.Command{
		Use:   "energy FILE.xyz",
		Short: "Single-point Hartree–Fock, MP2, CCSD or CCSD(T) energy of one geometry with the built-in engine",
		Long: `Compute the RHF, UHF, MP2, CCSD or CCSD(T) energy of the molecule in an XYZ
file with the built-in engine. The file may be a standard XYZ file (atom
count and comment line first) or bare "element x y z" lines, as in a spec.
Use "-" to read the geometry from standard input.

  rhf, uhf    Hartree–Fock.
  mp2         second-order Møller–Plesset on RHF (closed shells) or UHF.
  ccsd        coupled cluster with single and double excitations, closed
              shells only (RHF reference; open shells are refused).
  ccsd(t)     CCSD plus the perturbative triples correction of
              Raghavachari, Trucks, Pople and Head-Gordon (1989); closed
              shells only. Cost grows as N⁷: CO in cc-pVQZ (110 functions)
              takes about 30 s on two idle cores.

The correlated methods freeze the atoms' noble-gas cores by default (O 1s,
Si [Ne], …); --all-electron correlates every electron. --basis-limit
TZ,QZ extrapolates to the basis-set limit from two correlation-consistent
sets (each a separate calculation), and --core-correction cc-pCVTZ adds
the core–valence correction.

Without --method: RHF for a singlet, UHF otherwise (as in a spec). Without
--multiplicity: Hund's rules for a lone atom (N is a quartet), the lowest
for the electron count for a molecule; the output says which.

The exit status is 1 when the SCF or the coupled-cluster equations do not
converge: no energy is shown then (the last iterate is in --json, with
"converged": false or "cc_converged": false).`,
		Example: `  wellscan energy water.xyz --basis cc-pVDZ
  wellscan energy water.xyz --basis cc-pVDZ --also-units eV,au
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
	EnergyHartree           float64 `json:"energy_hartree"`
	ElectronicEnergyHartree float64 `json:"electronic_energy_hartree"`
	NuclearRepulsionHartree float64 `json:"nuclear_repulsion_hartree"`
	Converged               bool    `json:"converged"`
	Status                  string  `json:"status"`
	Iterations              int     `json:"iterations"`
	BasisFunctions          int     `json:"basis_functions"`
	DroppedFunctions        int     `json:"dropped_functions"`
	Method                  string  `json:"method"`
	// Label is the method as wellscan labels it: "RHF", "MP2(fc)", …
	Label                string     `json:"method_label"`
	Basis                string     `json:"basis"`
	Convention           string     `json:"convention"`
	Charge               int        `json:"charge"`
	Multiplicity         int        `json:"multiplicity"`
	SSquared             *float64   `json:"s_squared,omitempty"`
	OrbitalEnergiesAlpha []float64  `json:"orbital_energies_alpha_hartree"`
	OrbitalEnergiesBeta  []float64  `json:"orbital_energies_beta_hartree,omitempty"`
	MullikenCharges      []float64  `json:"mulliken_charges"`
	DipoleAU             [3]float64 `json:"dipole_e_bohr"`
	DipoleDebye          float64    `json:"dipole_debye"`
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
	unit, conv, err := o.checkUnitsConvention()
	if err != nil {
		return err
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
	units, err := parseAlsoUnits(o.alsoUnits)
	if err != nil {
		return usageError{err}
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
	mol, err := o.readMolecule(a.stdin, path, unit)
	if err != nil {
		return err
	}
	if len(o.basisLimit) == 2 {
		r := hf.LimitRecipe{Method: method, Small: o.basisLimit[0], Large: o.basisLimit[1], Core: o.coreCorr, FrozenCore: fc}
		if err := r.Validate(); err != nil {
			return usageError{err}
		}
		lr, err := hf.ComputeLimit(cmd.Context(), mol, r, hf.Options{Convention: conv, Workers: o.workers,
			SCF: hf.SCFOptions{MaxIterations: o.maxIter}, ColdGuesses: cold, Memory: int64(o.memoryMB) << 20})
		if err != nil {
			return err
		}
		return printLimit(a.stdout, o.json, lr, mol)
	}
	set, err := o.basisSet()
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
		printEnergy(a.stdout, energyView{rep: rep, mol: mol, res: res, set: set, conv: conv,
			multGiven: o.multiplicity != 0, methodGiven: o.method != "", units: units})
	}
	if errors.Is(err, hf.ErrNotConverged) {
		// Said once, without the hf error's own "not converged" again.
		return fmt.Errorf("%w: the SCF stopped after %d iterations (%s); no energy is reported", errNotConverged, res.Iterations, res.Reason)
	}
	if errors.Is(err, hf.ErrCCNotConverged) {
		return fmt.Errorf("%w: the coupled-cluster equations stopped after %d iterations; no energy is reported", errNotConverged, res.CC.Iterations)
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
		DipoleDebye: planner.DipoleDebye(res.Dipole),
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
	frozen := (res.MP2 != nil && res.MP2.FrozenCore > 0) || (res.CC != nil && res.CC.FrozenCore > 0)
	rep.Label = methodName(rep.Method, mol.Multiplicity, frozen)
	if (res.Method == hf.MP2 && res.MP2 == nil) || ((res.Method == hf.CCSD || res.Method == hf.CCSDT) && res.CC == nil) { // the SCF did not converge: no correlation ran
		rep.Label = strings.TrimSuffix(rep.Label, "(full)")
	}
	return rep
}

// energyView is what the text output of `wellscan energy` shows.
type energyView struct {
	rep                    energyReport
	mol                    planner.Molecule
	res                    *hf.Result
	set                    *basis.Set
	conv                   basis.Convention
	multGiven, methodGiven bool
	units                  alsoUnits
}

// alsoUnits are the extra units of --also-units.
type alsoUnits struct {
	energy   []string // eV, kJ/mol, kcal/mol, cm-1, in the order asked
	dipoleAU bool
}

// energyUnits converts hartree to the units --also-units accepts.
var energyUnits = map[string]float64{"eV": planner.HartreeInEV, "kJ/mol": planner.HartreeInKJPerMol,
	"kcal/mol": planner.HartreeInKcalPerMol, "cm-1": planner.HartreeInCm1}

func parseAlsoUnits(list []string) (alsoUnits, error) {
	var u alsoUnits
	for _, s := range list {
		s = strings.TrimSpace(s)
		switch {
		case strings.EqualFold(s, "au") || strings.EqualFold(s, "a.u."):
			u.dipoleAU = true
			continue
		case strings.EqualFold(s, "cm⁻¹"):
			s = "cm-1"
		}
		found := false
		for k := range energyUnits {
			if strings.EqualFold(k, s) {
				u.energy, found = append(u.energy, k), true
			}
		}
		if !found {
			return u, fmt.Errorf("--also-units: unknown unit %q (expected eV, kJ/mol, kcal/mol, cm-1 or au)", s)
		}
	}
	return u, nil
}

// printEnergy writes the result of `wellscan energy` in wellscan's own
// layout: a heading with the formula and method, the one energy in
// hartree, then how it was obtained. A calculation that did not converge
// shows no energy (and no property of its unconverged density).
func printEnergy(w io.Writer, v energyView) {
	rep, mol, res := v.rep, v.mol, v.res
	label := rep.Label
	fmt.Fprintf(w, "%s · %s/%s · single point\n\n", mol.Isotopologue(), label, rep.Basis)
	if c := res.CC; c != nil && !c.Converged {
		fmt.Fprintf(w, "!! COUPLED-CLUSTER EQUATIONS NOT CONVERGED after %d iterations (largest amplitude change %.1e).\n", c.Iterations, c.Residual)
		fmt.Fprintf(w, "!! No energy is reported: the last amplitudes are not a result (--json has them, with \"cc_converged\": false).\n\n")
	} else if !rep.Converged {
		fmt.Fprintf(w, "!! SCF NOT CONVERGED after %d iterations (%s).\n", rep.Iterations, res.Reason)
		fmt.Fprintf(w, "!! No energy is reported: the last iterate is not a result (--json has it, with \"converged\": false).\n")
		fmt.Fprintf(w, "!! Try --max-iterations, another --guess, or check the geometry and multiplicity.\n\n")
	} else {
		fmt.Fprintf(w, "  %-12s %.12f Eh\n", "E("+label+")", rep.EnergyHartree)
		for _, u := range v.units.energy {
			fmt.Fprintf(w, "  %-12s %.6f %s\n", "", rep.EnergyHartree*energyUnits[u], u)
		}
		if m := res.MP2; m != nil {
			fmt.Fprintf(w, "  %-12s %s reference %.12f Eh, correlation %.12f Eh\n", "", strings.ToUpper(string(m.Reference)), m.ReferenceEnergy, m.Correlation)
			fmt.Fprintf(w, "  %-12s   correlation by spin pairs: same %.12f Eh, opposite %.12f Eh\n", "", m.SameSpin, m.OppositeSpin)
		}
		if c := res.CC; c != nil {
			if c.WithTriples {
				fmt.Fprintf(w, "  %-12s RHF reference %.12f Eh, CCSD correlation %.12f Eh, (T) %.12f Eh\n", "", c.ReferenceEnergy, c.Correlation, c.Triples)
			} else {
				fmt.Fprintf(w, "  %-12s RHF reference %.12f Eh, CCSD correlation %.12f Eh\n", "", c.ReferenceEnergy, c.Correlation)
			}
		}
		fmt.Fprintln(w)
	}
	method := "given"
	if !v.methodGiven {
		method = "default for multiplicity " + fmt.Sprint(mol.Multiplicity)
	}
	fmt.Fprintf(w, "  %-12s %s (%s)\n", "method", label, method)
	fmt.Fprintf(w, "  %-12s %s, %d electrons, charge %s, multiplicity %d%s\n", "molecule", plural(len(mol.Atoms), "atom"), mol.Electrons(), signed(mol.Charge), mol.Multiplicity, multiplicityNote(v.multGiven, mol))
	if iso := mol.Isotopes(); len(iso) > 0 {
		fmt.Fprintf(w, "  %-12s %s (masses do not change the energy)\n", "isotopes", strings.Join(iso, "; "))
	}
	fmt.Fprintf(w, "  %-12s %s: %d functions, %s", "basis", rep.Basis, rep.BasisFunctions, shellForms(v.set, mol, v.conv))
	if rep.DroppedFunctions > 0 {
		fmt.Fprintf(w, "; %d near-linear-dependent combinations dropped", rep.DroppedFunctions)
	}
	fmt.Fprintln(w)
	fmt.Fprintf(w, "  %-12s %s (%.1f MiB kept, budget %.0f MiB)\n", "integrals", rep.IntegralMode, rep.IntegralMemoryMiB, rep.MemoryBudgetMiB)
	state := "converged"
	if !rep.Converged {
		state = "NOT converged"
	}
	fmt.Fprintf(w, "  %-12s %s in %d iterations, started from the %s guess\n", "SCF", state, rep.Iterations, rep.Guess)
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
		fmt.Fprintf(w, "  %-12s kept the lowest of %d guesses tried (Eh): %s\n", "", n, strings.Join(parts, ", "))
	}
	for _, n := range rep.GuessNotes {
		fmt.Fprintf(w, "  %-12s note: %s\n", "", n)
	}
	if m := res.MP2; m != nil {
		fmt.Fprintf(w, "  %-12s %s; %d+%d occupied and %d+%d virtual orbitals (α+β) correlated\n", "MP2", frozenCoreText(m), m.OccupiedAlpha, m.OccupiedBeta, m.VirtualAlpha, m.VirtualBeta)
	}
	if c := res.CC; c != nil {
		name := "CCSD"
		if c.WithTriples {
			name = "CCSD(T)"
		}
		state := fmt.Sprintf("converged in %d iterations", c.Iterations)
		if !c.Converged {
			state = fmt.Sprintf("NOT converged in %d iterations", c.Iterations)
		}
		fmt.Fprintf(w, "  %-12s %s; %d occupied and %d virtual orbitals correlated; amplitudes %s; largest |t1| %.4f\n", name, frozenText(c.FrozenCore, c.FrozenCoreLabel), c.Occupied, c.Virtual, state, c.MaxT1)
	}
	if rep.SSquared != nil {
		s := float64(mol.Multiplicity-1) / 2
		fmt.Fprintf(w, "  %-12s %.6f (a pure multiplicity-%d state has %.4f)\n", "⟨S²⟩", *rep.SSquared, mol.Multiplicity, s*(s+1))
	}
	if !rep.Converged {
		return
	}
	of := ""
	if res.MP2 != nil {
		of = " of the " + strings.ToUpper(string(res.MP2.Reference)) + " density"
	} else if res.CC != nil {
		of = " of the RHF density"
	}
	d := rep.DipoleAU
	for i := range d {
		if math.Abs(d[i]) < 5e-7 { // no "-0.000000"
			d[i] = 0
		}
	}
	k := planner.BohrElectronInDebye
	fmt.Fprintf(w, "  %-12s %.6f D%s, components x %.6f, y %.6f, z %.6f D (about the origin of the input coordinates)\n", "dipole", rep.DipoleDebye, of, d[0]*k, d[1]*k, d[2]*k)
	if v.units.dipoleAU {
		fmt.Fprintf(w, "  %-12s %.6f e·bohr, components x %.6f, y %.6f, z %.6f e·bohr\n", "", rep.DipoleDebye/k, d[0], d[1], d[2])
	}
	fmt.Fprintln(w)
	fmt.Fprintln(w, "  atom  element  Mulliken charge / e")
	for i, q := range rep.MullikenCharges {
		fmt.Fprintf(w, "  %4d  %-7s  %+.6f\n", i+1, mol.Atoms[i].Element.Symbol, q)
	}
	if o := res.Orbitals; o != nil {
		printOrbitals(w, "orbital energies / Eh", o.EnergiesAlpha, o.OccAlpha)
		if !o.Restricted {
			printOrbitals(w, "β orbital energies / Eh", o.EnergiesBeta, o.OccBeta)
		}
	}
}

// shellForms says in words how the d and f shells of the molecule's
// elements became basis functions.
func shellForms(set *basis.Set, mol planner.Molecule, conv basis.Convention) string {
	if set == nil {
		return ""
	}
	high := false
	cart, sph := false, false
	seen := map[string]bool{}
	for _, a := range mol.Atoms {
		sym := a.Element.Symbol
		if seen[sym] {
			continue
		}
		seen[sym] = true
		cs, err := set.Contractions(sym)
		if err != nil {
			continue
		}
		for _, c := range cs {
			high = high || c.L >= 2
		}
		if ec, err := set.ElementConvention(sym); err == nil {
			cart = cart || ec == basis.ConventionCartesian
			sph = sph || ec == basis.ConventionSpherical
		}
	}
	forced := ""
	switch conv {
	case basis.ConventionCartesian:
		cart, sph, forced = true, false, ", forced by --convention"
	case basis.ConventionSpherical:
		cart, sph, forced = false, true, ", forced by --convention"
	}
	switch {
	case !high:
		return "no d or f shells"
	case cart && sph:
		return "d and f shells in the form the set gives each element (some Cartesian, some spherical)"
	case sph:
		return "d and f shells as real solid harmonics (2l+1 functions each)" + forced
	}
	return "d and f shells as Cartesian products (every x^a y^b z^c, 6 d and 10 f functions)" + forced
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

func printOrbitals(w io.Writer, title string, e, occ []float64) {
	fmt.Fprintf(w, "\n  %s (occupied marked *):\n ", title)
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
	label := methodName(string(r.Method), mol.Multiplicity, lr.Components[1].Frozen > 0)
	basisLabel := planner.EngineSpec{Kind: "builtin", BasisLimit: []string{r.Small, r.Large}, CoreCorrection: r.Core}.BasisLabel()
	fmt.Fprintf(w, "%s · %s/%s · single point\n\n", mol.Isotopologue(), label, basisLabel)
	fmt.Fprintf(w, "  %-12s %.12f Eh\n", "E("+label+")", lr.Total)
	fmt.Fprintf(w, "  %-12s HF limit %.12f Eh (X = %d, %d), correlation limit %.12f Eh", "", lr.HF, lr.X, lr.Y, lr.Correlation)
	if r.Core != "" {
		fmt.Fprintf(w, ", core–valence correction %.12f Eh", lr.CoreCorrection)
	}
	fmt.Fprintf(w, "\n\n  %-12s %s\n", "recipe", r)
	fmt.Fprintf(w, "  %-12s %s, %d electrons, charge %s, multiplicity %d\n\n", "molecule", plural(len(mol.Atoms), "atom"), mol.Electrons(), signed(mol.Charge), mol.Multiplicity)
	fmt.Fprintf(w, "  %-12s %-12s %9s %6s %20s %20s %16s %9s\n", "component", "basis", "functions", "frozen", "reference / Eh", "correlation / Eh", "of which (T)", "time / s")
	for _, c := range lr.Components {
		tr := c.Triples
		if math.Abs(tr) < 5e-11 { // no "-0.0000000000"
			tr = 0
		}
		fmt.Fprintf(w, "  %-12s %-12s %9d %6d %20.10f %20.10f %16.10f %9.1f\n", c.Name, c.Basis, c.BasisFunctions, c.Frozen, c.Reference, c.Correlation, tr, c.Time.Seconds())
	}
	return nil
}
