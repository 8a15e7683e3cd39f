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

// fitTable reads o.table, converts it to atomic units and fits it.
func fitTable(ctx context.Context, o *fitOptions) (*fit.Result, error) {
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
			s.Name += fmt.Sprintf("%d%s", a, el.Symbol)
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

// printFitTable writes the human-readable summary of a fit: one block per
// well, one row per isotopologue, then the levels and every warning.
func printFitTable(w io.Writer, res *fit.Result) {
	for _, wn := range res.Warnings {
		fmt.Fprintf(w, "WARNING: %s\n", wn)
	}
	for _, m := range res.Minima {
		if res.Kind == "angle" {
			fmt.Fprintf(w, "%s: θ_e = %.4f ± %.1e°   E_min = %.9f E_h   k = %.6g E_h/rad²\n", m.Label, m.ThetaEDegree, m.ThetaEStderr, m.EMin, m.KAngle)
		} else {
			fmt.Fprintf(w, "%s: r_e = %.6f ± %.1e Å (window/degree spread %.1e)   E_min = %.9f E_h\n", m.Label, m.REAngstrom, m.REStderrAng, m.RESpreadAng, m.EMin)
			fmt.Fprintf(w, "  k = %.6g ± %.2g E_h/bohr² = %.4f mdyn/Å = %.1f N/m   (three-point %.6g)\n", m.K, m.KStderr, m.KMdynPerAng, m.KNPerM, m.KThreePoint)
		}
		fmt.Fprintf(w, "  local polynomial: degree %d, %d points within %.4g E_h, rms residual %.2g E_h\n", m.Degree, m.WindowPoints, m.WindowEnergy, m.RMSResidual)
		if len(m.Isotopologues) > 0 {
			fmt.Fprintf(w, "  %-14s %16s %12s %12s %12s %10s %12s\n", "isotopologue", "ω_e/cm⁻¹", "ω_e x_e", "B_e", "α_e", "ZPE", "fundamental")
		}
		for _, c := range m.Isotopologues {
			name := c.Name
			if c.OneD {
				name += " (1-D along the scan)"
			}
			be, ae := fmt.Sprintf("%12.6f", c.Be), fmt.Sprintf("%12.6f", c.AlphaE)
			if c.OneD {
				// Rotational constants belong to a rotating diatomic.
				be, ae = fmt.Sprintf("%12s", "—"), fmt.Sprintf("%12s", "—")
			}
			fmt.Fprintf(w, "  %-14s %9.3f±%-6.2g %12.4f %s %s %10.2f %12.3f\n", name, c.OmegaE, c.OmegaEStderr, c.OmegaExe, be, ae, c.ZPE, c.Fundamental)
			if len(c.Levels) > 0 {
				n := min(len(c.Levels), 8)
				parts := make([]string, n)
				for v := range n {
					parts[v] = fmt.Sprintf("%.2f", c.Levels[v])
				}
				more := ""
				if len(c.Levels) > n {
					more = fmt.Sprintf(" … (%d levels)", len(c.Levels))
				}
				fmt.Fprintf(w, "    G(v)/cm⁻¹: %s%s\n", strings.Join(parts, " "), more)
			}
			if c.DeCm1 != 0 {
				fmt.Fprintf(w, "    D_e = %.1f cm⁻¹ (%.4f eV), D_0 = %.1f cm⁻¹ (%.4f eV)\n", c.DeCm1, c.DeEV, c.D0Cm1, c.D0EV)
			}
		}
		for _, wn := range m.Warnings {
			fmt.Fprintf(w, "  WARNING: %s\n", wn)
		}
	}
}
