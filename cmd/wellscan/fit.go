package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strings"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"wellscan/fit"
	"wellscan/parsers"
	"wellscan/planner"
)

// fitOptions are the flags of `wellscan fit`.
type fitOptions struct {
	table         string
	atoms         string
	isotopes      []string
	effectiveMass float64
	limit         float64
	window        float64
	noise         float64
	json          bool
}

func (o *fitOptions) AddFlags(fs *pflag.FlagSet) {
	fs.StringVar(&o.table, "table", "", "read the curve from a CSV/blank-separated table (header names the units, e.g. \"r [angstrom], energy [hartree]\")")
	fs.StringVar(&o.atoms, "atoms", "", "the two atoms of a diatomic, e.g. C,O (most abundant isotopes)")
	fs.StringArrayVar(&o.isotopes, "isotopes", nil, "an extra isotopologue, e.g. 13C,16O (repeat the flag for more)")
	fs.Float64Var(&o.effectiveMass, "effective-mass", 0, "effective mass 1/G of a polyatomic scan coordinate (amu; amu·bohr² for an angle)")
	fs.Float64Var(&o.limit, "limit-hartree", math.NaN(), "dissociation limit in hartree, for D_e and D_0")
	fs.Float64Var(&o.window, "window-hartree", 0, "energy window above the minimum for the local polynomial fit (default 0.02)")
	fs.Float64Var(&o.noise, "noise-hartree", 0, "expected noise of the energies (default 1e-7)")
	fs.BoolVar(&o.json, "json", false, "print the result as JSON")
}

func newFitCommand(a *app) *cobra.Command {
	o := &fitOptions{}
	cmd := &cobra.Command{
		Use:   "fit [DIR] [--table FILE --atoms A,B]",
		Short: "Spectroscopic constants, levels and uncertainties from a curve",
		Long: `fit turns a potential-energy curve into r_e, E_min, force constants,
ω_e, ω_e x_e, B_e, α_e, the zero-point energy, vibrational levels and,
where the curve reaches its limit, D_e and D_0, for every isotopologue,
with standard errors and warnings.

With --table the curve comes from a file: one coordinate column (Å, bohr,
degree or radian) and one energy column (hartree, eV, cm-1, kJ/mol,
kcal/mol), the units named in the header, e.g.

    # r in Å, E in hartree
    r [angstrom], energy [hartree], converged
    1.10, -112.7071, true

Optional columns "converged" (true/false or 1/0) and "weight".`,
		Example: `  wellscan fit co-stretch
  wellscan fit --table curve.csv --atoms C,O --isotopes 13C,16O --json`,
		Args: cobra.MaximumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			if err := o.validate(cmd.Flags()); err != nil {
				return err
			}
			if len(args) == 1 && o.table != "" {
				return usageError{errors.New("fit: give either a scan directory or --table, not both")}
			}
			if len(args) == 0 && o.table == "" {
				return usageError{errors.New("fit: nothing to fit: give a scan directory or --table FILE")}
			}
			if len(args) == 1 {
				if _, err := os.Stat(scanSpecPath(args[0])); err != nil {
					return fmt.Errorf("fit: %s is not a scan directory (no scan.toml); for energies computed elsewhere use --table FILE", args[0])
				}
				spec, err := planner.Load(scanSpecPath(args[0]))
				if err != nil {
					return err
				}
				if err := notForceField(spec, args[0], "fit"); err != nil {
					return err
				}
				res, err := fitScanDir(cmd.Context(), args[0], spec, o)
				if err != nil {
					return err
				}
				if o.json {
					enc := json.NewEncoder(a.stdout)
					enc.SetIndent("", "  ")
					return enc.Encode(res)
				}
				printScanFit(a.stdout, res)
				return nil
			}
			res, err := fitTable(cmd.Context(), o)
			if err != nil {
				return err
			}
			if o.json {
				enc := json.NewEncoder(a.stdout)
				enc.SetIndent("", "  ")
				return enc.Encode(res)
			}
			printFitTable(a.stdout, res)
			return nil
		},
	}
	o.AddFlags(cmd.Flags())
	return cmd
}

// validate checks every flag value that can be judged before the data are
// read: numbers finite and of the right sign, isotopologues that match the
// atoms.
func (o *fitOptions) validate(fs *pflag.FlagSet) error {
	positive := func(name string, v float64, unit string) error {
		if fs.Changed(name) && (math.IsNaN(v) || math.IsInf(v, 0) || !(v > 0)) {
			return usageError{fmt.Errorf("fit: --%s %g: expected a positive finite number (%s)", name, v, unit)}
		}
		return nil
	}
	for _, f := range []struct {
		name, unit string
		v          float64
	}{{"window-hartree", "hartree", o.window}, {"noise-hartree", "hartree", o.noise}, {"effective-mass", "amu, or amu·bohr² for an angle", o.effectiveMass}} {
		if err := positive(f.name, f.v, f.unit); err != nil {
			return err
		}
	}
	if fs.Changed("limit-hartree") && (math.IsNaN(o.limit) || math.IsInf(o.limit, 0)) {
		return usageError{fmt.Errorf("fit: --limit-hartree %g: expected a finite energy in hartree", o.limit)}
	}
	if o.atoms != "" && len(o.isotopes) > 0 {
		want, err := elementsOf("--atoms", o.atoms)
		if err != nil {
			return err
		}
		for _, iso := range o.isotopes {
			got, err := elementsOf("--isotopes", iso)
			if err != nil {
				return err
			}
			if got != want {
				return usageError{fmt.Errorf("fit: --isotopes %s: the elements %s do not match --atoms %s (%s); an isotopologue changes only the mass numbers, e.g. 13C,16O for C,O", iso, got, o.atoms, want)}
			}
		}
	}
	return nil
}

// elementsOf returns the element symbols of a two-atom flag value ("C,O"
// or "13C,16O") as "C,O".
func elementsOf(flag, spec string) (string, error) {
	labels := strings.Split(spec, ",")
	if len(labels) != 2 {
		return "", usageError{fmt.Errorf("fit: %s %q: expected two atoms separated by a comma, e.g. C,O or 13C,16O", flag, spec)}
	}
	var syms []string
	for _, l := range labels {
		el, _, _, err := planner.ParseIsotope(l)
		if err != nil {
			return "", usageError{fmt.Errorf("fit: %s: %w", flag, err)}
		}
		syms = append(syms, el.Symbol)
	}
	return strings.Join(syms, ","), nil
}

// checkTable rejects values that no curve can have, naming the file and
// line: a distance that is not positive, two rows at the same coordinate,
// a negative weight, a converged flag other than 0 or 1, and a dissociation
// limit that lies below every energy of the table.
func checkTable(name string, tab *parsers.Table, xcol, ecol int, o *fitOptions) error {
	isLength := parsers.UnitKind(tab.Columns[xcol].Unit) == "length"
	seen := make(map[float64]int, len(tab.Rows))
	wcol, ccol := tab.Index("weight"), tab.Index("converged")
	lowest, lowLine := math.Inf(1), 0
	for i, row := range tab.Rows {
		line := tab.Lines[i]
		x := row[xcol]
		if isLength && !(x > 0) {
			return fmt.Errorf("fit: %s:%d: %s = %g %s is not a positive distance", name, line, tab.Columns[xcol].Name, x, tab.Columns[xcol].Unit)
		}
		if prev, dup := seen[x]; dup {
			return fmt.Errorf("fit: %s:%d: %s = %g repeats the coordinate of line %d; give each coordinate once", name, line, tab.Columns[xcol].Name, x, prev)
		}
		seen[x] = line
		if wcol >= 0 && !(row[wcol] >= 0) {
			return fmt.Errorf("fit: %s:%d: weight %g is negative; weights are relative 1/σ² values ≥ 0", name, line, row[wcol])
		}
		if ccol >= 0 && row[ccol] != 0 && row[ccol] != 1 {
			return fmt.Errorf("fit: %s:%d: converged = %g; expected true/false, yes/no or 1/0", name, line, row[ccol])
		}
		if e := toHartree(row[ecol], tab.Columns[ecol].Unit); e < lowest {
			lowest, lowLine = e, line
		}
	}
	if !math.IsNaN(o.limit) && o.limit <= lowest {
		return usageError{fmt.Errorf("fit: --limit-hartree %.10g lies at or below the lowest energy of %s (%.10g hartree, line %d): the dissociation limit must lie above the minimum, or D_e would be negative", o.limit, name, lowest, lowLine)}
	}
	return nil
}

// fitTable reads o.table, converts it to atomic units and fits it.
func fitTable(ctx context.Context, o *fitOptions) (*fit.Result, error) {
	if err := planner.CheckRegular(o.table); err != nil {
		return nil, err
	}
	f, err := os.Open(o.table)
	if err != nil {
		return nil, fmt.Errorf("fit: %w", err)
	}
	defer f.Close()
	tab, err := parsers.ReadTable(f, o.table)
	if err != nil {
		return nil, err
	}
	xcol, ecol := -1, -1
	for j, c := range tab.Columns {
		switch parsers.UnitKind(c.Unit) {
		case "length", "angle":
			if xcol < 0 {
				xcol = j
			}
		case "energy":
			if ecol < 0 {
				ecol = j
			}
		}
	}
	if xcol < 0 || ecol < 0 {
		return nil, fmt.Errorf("fit: %s: need a coordinate column with a length or angle unit and an energy column with an energy unit in the header, got %s", o.table, describeColumns(tab.Columns))
	}
	if err := checkTable(o.table, tab, xcol, ecol, o); err != nil {
		return nil, err
	}
	opt := fit.Options{WindowEnergy: o.window, EnergyNoise: o.noise}
	if !math.IsNaN(o.limit) {
		l := o.limit
		opt.Asymptote = &l
	}
	x := tab.Values(xcol)
	e := tab.Values(ecol)
	unit := tab.Columns[xcol].Unit
	for i := range x {
		switch unit {
		case parsers.UnitAngstrom:
			x[i] *= planner.AngstromInBohr
		case parsers.UnitDegree:
			x[i] *= math.Pi / 180
		}
		e[i] = toHartree(e[i], tab.Columns[ecol].Unit)
	}
	if parsers.UnitKind(unit) == "angle" {
		opt.Kind = fit.Angle
	}
	if j := tab.Index("converged"); j >= 0 {
		opt.Converged = make([]bool, len(tab.Rows))
		for i, r := range tab.Rows {
			opt.Converged[i] = r[j] != 0
		}
	}
	if j := tab.Index("weight"); j >= 0 {
		opt.Weights = tab.Values(j)
	}
	sets, err := massSets(o, opt.Kind)
	if err != nil {
		return nil, err
	}
	opt.Isotopologues = sets
	res, err := fit.Curve(ctx, x, e, opt)
	if err != nil {
		return nil, fmt.Errorf("fit: %s: %w", o.table, err)
	}
	return res, nil
}

func toHartree(v float64, unit string) float64 {
	switch unit {
	case parsers.UnitEV:
		return v / planner.HartreeInEV
	case parsers.UnitCm1:
		return v / planner.HartreeInCm1
	case parsers.UnitKJPerMol:
		return v / planner.HartreeInKJPerMol
	case parsers.UnitKcalMol:
		return v / planner.HartreeInKcalPerMol
	}
	return v
}

// massSets turns --atoms, --isotopes and --effective-mass into fit mass
// sets (isotope masses from planner's AME2020 table).
func massSets(o *fitOptions, kind fit.Kind) ([]fit.MassSet, error) {
	if o.effectiveMass != 0 {
		if o.atoms != "" || len(o.isotopes) > 0 {
			return nil, usageError{errors.New("fit: --effective-mass describes a polyatomic coordinate; do not combine it with --atoms or --isotopes")}
		}
		return []fit.MassSet{{Name: "effective mass", EffectiveMass: o.effectiveMass}}, nil
	}
	if o.atoms == "" {
		if len(o.isotopes) > 0 {
			return nil, usageError{errors.New("fit: --isotopes needs --atoms")}
		}
		return nil, nil
	}
	if kind == fit.Angle {
		return nil, usageError{errors.New("fit: an angle scan needs --effective-mass (1/G of the coordinate), not --atoms")}
	}
	var sets []fit.MassSet
	for k, spec := range append([]string{o.atoms}, o.isotopes...) {
		labels := strings.Split(spec, ",")
		if len(labels) != 2 {
			flag := "--atoms"
			if k > 0 {
				flag = "--isotopes"
			}
			return nil, usageError{fmt.Errorf("fit: %s %q: expected two atoms separated by a comma, e.g. C,O or 13C,16O", flag, spec)}
		}
		s := fit.MassSet{}
		for _, l := range labels {
			el, a, m, err := planner.ParseIsotope(l)
			if err != nil {
				return nil, usageError{fmt.Errorf("fit: %w", err)}
			}
			s.Name += planner.IsotopeLabel(el.Symbol, a)
			s.Masses = append(s.Masses, m)
		}
		sets = append(sets, s)
	}
	return sets, nil
}

func describeColumns(cols []parsers.Column) string {
	var s []string
	for _, c := range cols {
		if c.Unit == "" {
			s = append(s, c.Name+" (no unit)")
		} else {
			s = append(s, c.Name+" ["+c.Unit+"]")
		}
	}
	return strings.Join(s, ", ")
}

// pm formats a value with its calibrated uncertainty in the value's
// precision, "n/a" when it was withheld, and says so when the points give
// no uncertainty (never ± 0).
func pm(v, u float64, prec int, withheld bool) string {
	if withheld {
		return "withheld"
	}
	s := fmt.Sprintf("%.*f", prec, v)
	switch {
	case !(u > 0):
		return s + " (no ±: too few points)"
	case u < 0.5*math.Pow(10, -float64(prec)):
		return s + fmt.Sprintf(" ± %.1e", u)
	}
	return s + fmt.Sprintf(" ± %.*f", prec, u)
}

// printFitTable writes the human-readable summary of a fit: one block per
// well, one block per isotopologue, then the levels and every warning.
// Every number carries the calibrated uncertainty of the JSON's
// *_uncertainty fields; a withheld quantity is printed as "withheld" and
// its reason is among the warnings.
func printFitTable(w io.Writer, res *fit.Result) {
	for _, wn := range res.Warnings {
		fmt.Fprintf(w, "WARNING: %s\n", wn)
	}
	if len(res.Minima) == 0 {
		fmt.Fprintln(w, "no minimum: no constants (see the warnings above)")
	}
	for _, m := range res.Minima {
		if res.Kind == "angle" {
			fmt.Fprintf(w, "%s: θ_e = %s°   E_min = %s E_h   k = %s E_h/rad²\n", m.Label, pm(m.ThetaEDegree, m.ThetaEUnc, 4, false), pm(m.EMin, m.EMinUnc, 9, false), pm(m.KAngle, m.KAngleUnc, 6, false))
		} else {
			fmt.Fprintf(w, "%s: r_e = %s Å   E_min = %s E_h\n", m.Label, pm(m.REAngstrom, m.REUncAng, 6, false), pm(m.EMin, m.EMinUnc, 9, false))
			fmt.Fprintf(w, "  k = %s E_h/bohr² = %.4f mdyn/Å = %.1f N/m   (three-point %.6g)\n", pm(m.K, m.KUnc, 6, false), m.KMdynPerAng, m.KNPerM, m.KThreePoint)
		}
		fmt.Fprintf(w, "  local polynomial: degree %d, %d points within %.4g E_h, rms residual %.2g E_h\n", m.Degree, m.WindowPoints, m.WindowEnergy, m.RMSResidual)
		for _, c := range m.Isotopologues {
			name := c.Name
			if c.OneD {
				name += " (1-D along the scan)"
			}
			gone := func(key string) bool { _, ok := c.Withheld[key]; return ok }
			fmt.Fprintf(w, "  %s, μ = %.6f %s (cm⁻¹):\n", name, c.Mass, c.MassUnit)
			fmt.Fprintf(w, "    ω_e = %s   ω_e x_e = %s\n", pm(c.OmegaE, c.OmegaEUnc, 3, false), pm(c.OmegaExe, c.OmegaExeUnc, 4, gone("omega_e_x_e_cm1")))
			if !c.OneD {
				fmt.Fprintf(w, "    B_e = %s   α_e = %s\n", pm(c.Be, c.BeUnc, 6, false), pm(c.AlphaE, c.AlphaEUnc, 6, gone("alpha_e_cm1")))
			}
			fund := "perturbative"
			if c.FundamentalGrid {
				fund = "grid"
			}
			fmt.Fprintf(w, "    ZPE = %s (perturbative)", pm(c.ZPE, c.ZPEUnc, 2, gone("zpe_cm1")))
			if len(c.Levels) > 0 {
				fmt.Fprintf(w, ", G(0) = %s (grid)", pm(c.ZPEGrid, c.ZPEGridUnc, 2, gone("zpe_grid_cm1")))
			}
			fmt.Fprintf(w, "   fundamental = %s (%s)\n", pm(c.Fundamental, c.FundamentalUnc, 3, gone("fundamental_cm1")), fund)
			if len(c.Levels) > 0 {
				n := min(len(c.Levels), 8)
				parts := make([]string, n)
				for v := range n {
					u := 0.0
					if v < len(c.LevelsUncertainty) {
						u = c.LevelsUncertainty[v]
					}
					parts[v] = pm(c.Levels[v], u, 2, false)
				}
				more := ""
				if len(c.Levels) > n {
					more = fmt.Sprintf(" … (%d levels; all in --json)", len(c.Levels))
				}
				fmt.Fprintf(w, "    G(v), from the potential's minimum: %s%s\n", strings.Join(parts, ", "), more)
			} else if c.NoBoundLevel {
				fmt.Fprintln(w, "    no bound vibrational level")
			}
			if c.DeCm1 != 0 || gone("d_e_cm1") {
				ev := func(v float64, key string) string {
					if gone(key) {
						return ""
					}
					return fmt.Sprintf(" (%.4f eV)", v)
				}
				fmt.Fprintf(w, "    D_e = %s%s   D_0 = %s%s\n", pm(c.DeCm1, c.DeUnc, 1, gone("d_e_cm1")), ev(c.DeEV, "d_e_cm1"), pm(c.D0Cm1, c.D0Unc, 1, gone("d_0_cm1")), ev(c.D0EV, "d_0_cm1"))
			}
		}
		for _, wn := range m.Warnings {
			fmt.Fprintf(w, "  WARNING: %s\n", wn)
		}
	}
}
