package main

import (
	"context"
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/hf"
	"wellscan/runner/report"
)

type reportOptions struct {
	out    string
	date   string
	limit  float64
	window float64
}

func (o *reportOptions) AddFlags(fs *pflag.FlagSet) {
	fs.StringVar(&o.out, "out", "", "directory to write the report into (default DIR/report)")
	fs.StringVar(&o.date, "date", "", "date printed in the summary, YYYY-MM-DD (default today, UTC; set it for reproducible reports)")
	fs.Float64Var(&o.limit, "limit-hartree", math.NaN(), "dissociation limit in hartree, for D_e and D_0")
	fs.Float64Var(&o.window, "window-hartree", 0, "energy window above the minimum for the local polynomial fit (default 0.02)")
}

func newReportCommand(a *app) *cobra.Command {
	var o reportOptions
	cmd := &cobra.Command{
		Use:   "report DIR",
		Short: "Write tables, the fit, a figure and a summary of the scan in DIR",
		Long: `Write DIR/report/ (or --out):

  curve.csv      every point: coordinate in the spec's unit and in the other
                 unit (bohr/Å, or radian), energy in hartree and above the
                 fitted minimum in cm-1 and kJ/mol, state
  fit.json       the fit, as wellscan fit DIR --json prints it
  curve.svg/png  the curve with the points by state, the fitted curve, the
                 minimum, the vibrational levels and a residual panel (a
                 contour map for a 2-D scan)
  summary.md     one page: conditions, constants per isotopologue with
  summary.html   uncertainties, every warning and every failed point (the
                 HTML embeds the figure)

The report can be written while the scan is still running or after it
stopped part-way; what is missing is said loudly in the summary.`,
		Example: `  wellscan report myscan
  wellscan report myscan --out /tmp/talk --date 2026-12-01`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			date := time.Now().UTC()
			if o.date != "" {
				d, err := time.Parse("2006-01-02", o.date)
				if err != nil {
					return usageError{fmt.Errorf("report: --date %q: expected YYYY-MM-DD", o.date)}
				}
				date = d
			}
			dir := args[0]
			in, err := buildReportInput(cmd.Context(), dir, &fitOptions{limit: o.limit, window: o.window})
			if err != nil {
				return err
			}
			in.Conditions.Date = date
			out := o.out
			if out == "" {
				// Inside the scan: confined, never through a symbolic link.
				out = filepath.Join(dir, "report")
				fs, err := runner.OpenScanFS(dir)
				if err != nil {
					return err
				}
				defer fs.Close()
				if err := fs.MkdirAll("report"); err != nil {
					return err
				}
				if err := report.WriteTo(cmd.Context(), runner.ReportDest{FS: fs, Rel: "report"}, in); err != nil {
					return err
				}
			} else {
				dest, err := runner.OpenDirDest(out)
				if err != nil {
					return err
				}
				defer dest.FS.Close()
				if err := report.WriteTo(cmd.Context(), dest, in); err != nil {
					return err
				}
			}
			for _, f := range report.Files() {
				if !in.HasEnergies() && (f == "curve.svg" || f == "curve.png") {
					continue
				}
				fmt.Fprintln(a.stdout, filepath.Join(out, f))
			}
			if !in.HasEnergies() {
				fmt.Fprintln(a.stderr, "wellscan: report: no point has an energy, so there is no figure; the summary lists the failures")
			}
			return nil
		},
	}
	o.AddFlags(cmd.Flags())
	return cmd
}

// buildReportInput gathers what a report of the scan in dir shows: the
// spec's conditions, every point (read once, from the store or from
// status.json while a run holds the store: runner.ReadPoints) and the
// analysis of those same points. A fit that cannot be made is recorded in
// FitError, not returned: the report still shows the points. With o nil
// (export) nothing is fitted.
func buildReportInput(ctx context.Context, dir string, o *fitOptions) (report.Input, error) {
	var in report.Input
	var records []runner.PointRecord
	spec, err := planner.Load(scanSpecPath(dir))
	if err != nil {
		return in, err
	}
	if err := notForceField(spec, dir, "report/export"); err != nil {
		return in, err
	}
	mol, err := spec.Molecule()
	if err != nil {
		return in, err
	}
	abs, err := filepath.Abs(dir)
	if err != nil {
		abs = dir
	}
	in.Conditions = report.Conditions{Title: spec.Title, Dir: filepath.Base(abs), Formula: mol.Isotopologue(), Charge: mol.Charge, Multiplicity: mol.Multiplicity,
		Engine: spec.Engine.Kind, Basis: spec.Engine.BasisLabel(), Version: version}
	reportConditions(&in.Conditions, spec, mol)
	for _, c := range spec.Coordinates() {
		u := "degree"
		if c.Kind == planner.KindDistance {
			u = string(spec.Units())
		}
		in.Axes = append(in.Axes, report.Axis{Name: c.Name, Kind: c.Kind.String(), Unit: u, Digits: c.Digits})
	}
	backends := map[string]bool{}
	ps, err := runner.ReadPoints(dir, spec)
	if err != nil {
		if errors.Is(err, runner.ErrNoStore) {
			return in, fmt.Errorf("report: %s has not been run yet (wellscan run %s)", dir, dir)
		}
		return in, err
	}
	if snap := ps.Snapshot; snap != nil {
		in.Notes = append(in.Notes, fmt.Sprintf("the scan is still running (PID %d on %s): this report shows the snapshot of %s", snap.PID, snap.Host, snap.Updated.UTC().Format(time.RFC3339)))
	}
	for _, r := range ps.Records {
		p := report.Point{Key: r.Key, Values: spec.DisplayValues(planner.Point{Values: r.Values}),
			State: string(r.State), Energy: r.Energy, Attempts: r.Attempts, Error: r.LastError}
		addDiagnostics(&p, r, spec.Engine.Kind)
		in.Points = append(in.Points, p)
		if r.Backend != "" {
			backends[r.Backend] = true
		}
	}
	in.Warnings = reportWarnings(ps.Warnings)
	records = ps.Records
	var bs []string
	for b := range backends {
		bs = append(bs, b)
	}
	sort.Strings(bs)
	in.Conditions.Backend = strings.Join(bs, ", ")
	if in.Conditions.Backend == "" {
		in.Conditions.Backend = spec.Engine.Kind + " engine"
	}
	in.Conditions.Backend += ", queue " + orDefault(spec.Queue.Kind, "local")
	if o == nil {
		return in, nil // export: the points only, never a fit
	}
	res, err := analyseRecords(ctx, dir, spec, records, o)
	switch {
	case err != nil && ctx.Err() != nil:
		return in, ctx.Err()
	case err != nil:
		in.FitError = err.Error()
	default:
		in.Fit, in.Curve, in.Surface, in.MassModel, in.Analysis = res, res.Curve, res.Surface, res.MassModel, res
	}
	return in, nil
}

func orDefault(s, d string) string {
	if s == "" {
		return d
	}
	return s
}

// reportWarnings converts the scan's warnings for the report.
func reportWarnings(ws []runner.Warning) []report.Warning {
	out := make([]report.Warning, len(ws))
	for i, w := range ws {
		text := w.Text
		if w.Key != "" {
			text = w.Key + ": " + text
		}
		out[i] = report.Warning{Level: w.Severity.String(), Text: text}
	}
	return out
}

// addDiagnostics copies what the backend reported besides the energy
// into a report point: SCF iterations, ⟨S²⟩, the dipole's magnitude in
// debye and the MP2 parts.
func addDiagnostics(p *report.Point, r runner.PointRecord, engine string) {
	if r.Energy == nil {
		return
	}
	p.SSquared = r.SSquared
	if engine == "builtin" { // other engines have no SCF iterations to count
		p.Iterations = r.Iterations
	}
	x, okx := r.Extra["dipole_x_e_bohr"]
	y, oky := r.Extra["dipole_y_e_bohr"]
	z, okz := r.Extra["dipole_z_e_bohr"]
	if okx && oky && okz {
		d := planner.DipoleDebye([3]float64{x, y, z})
		p.DipoleDebye = &d
	}
	if c, ok := r.Extra["mp2_correlation_hartree"]; ok {
		p.MP2 = &report.MP2Parts{Reference: r.Extra["reference_energy_hartree"], Correlation: c,
			SameSpin: r.Extra["mp2_same_spin_hartree"], OppositeSpin: r.Extra["mp2_opposite_spin_hartree"]}
	}
}

// reportConditions fills in what the report's conditions say about the
// method: its label, rigid or relaxed, the reference geometry, the
// isotopes, the SCF convergence criteria and the frozen core.
func reportConditions(c *report.Conditions, spec *planner.Spec, mol planner.Molecule) {
	c.ScanKind = scanKind(spec)
	for _, a := range mol.Atoms {
		c.Geometry = append(c.Geometry, fmt.Sprintf("%s %.6f %.6f %.6f", a.Element.Symbol,
			a.Pos[0]*planner.BohrInAngstrom+0, a.Pos[1]*planner.BohrInAngstrom+0, a.Pos[2]*planner.BohrInAngstrom+0))
	}
	c.Isotopes = mol.Isotopes()
	e := spec.Engine
	if e.Kind != "builtin" {
		return
	}
	c.Method = specMethod(spec, mol)
	d := hf.DefaultSCFOptions()
	tol, iters := d.EnergyTol, d.MaxIterations
	if e.Convergence != nil {
		tol = *e.Convergence
	}
	if e.MaxIterations > 0 {
		iters = e.MaxIterations
	}
	c.SCF = fmt.Sprintf("energy change below %g Eh, orbital gradient and density change below %g, at most %d iterations", tol, d.ErrorTol, iters)
	if planner.IsCorrelated(e.Method) {
		c.FrozenCore = "yes: each atom's noble-gas core is not correlated (O 1s, Si [Ne], …)"
		if e.FrozenCore != nil && !*e.FrozenCore {
			c.FrozenCore = "no: every electron is correlated"
		}
	}
}
