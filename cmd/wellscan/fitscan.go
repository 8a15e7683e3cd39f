package main

import (
	"context"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"sort"
	"strings"

	"wellscan/fit"
	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/analysis"
)

// fitScanDir analyses the done points of the scan in dir
// (runner/analysis): a diatomic bond scan as a rotating diatomic, a
// full-period torsion by its Fourier series and hindered-rotor levels, any
// other 1-D scan with the kinetic metric of the scanned coordinate at each
// minimum (labelled 1-D along the scan), a 2-D scan by a surface fit and
// the GF problem.
func fitScanDir(ctx context.Context, dir string, spec *planner.Spec, o *fitOptions) (*analysis.Result, error) {
	ps, err := runner.ReadPoints(dir, spec)
	if err != nil {
		return nil, err
	}
	return analyseRecords(ctx, dir, spec, ps.Records, o)
}

// analyseRecords analyses the done points among recs (internal units, as
// the store keeps them).
func analyseRecords(ctx context.Context, dir string, spec *planner.Spec, recs []runner.PointRecord, o *fitOptions) (*analysis.Result, error) {
	var pts []analysis.Point
	skipped := map[string]int{}
	for _, r := range recs {
		if r.State != runner.Done || r.Energy == nil {
			skipped[string(r.State)]++
			continue
		}
		pts = append(pts, analysis.Point{Key: r.Key, Values: r.Values, Energy: *r.Energy})
	}
	if len(pts) < 3 {
		return nil, fmt.Errorf("fit: %s has %d done points; at least 3 are needed (run it first: wellscan run %s)", dir, len(pts), dir)
	}
	opt := analysis.Options{WindowEnergy: o.window, EnergyNoise: o.noise}
	if !math.IsNaN(o.limit) {
		l := o.limit
		opt.Limit = &l
	}
	if o.atoms != "" || len(o.isotopes) > 0 {
		sets, err := massSets(o, fit.Distance)
		if err != nil {
			return nil, err
		}
		opt.Isotopologues = sets
	}
	res, err := analysis.Analyse(ctx, spec, pts, opt)
	if err != nil {
		return nil, fmt.Errorf("fit: %s: %w", dir, err)
	}
	if len(skipped) > 0 {
		res.NotUsed = skipped
	}
	return res, nil
}

func printScanFit(w io.Writer, f *analysis.Result) {
	fmt.Fprintf(w, "fit of %d done points (%s)", f.Points, modelLabel(f.Model, f.ScanMode))
	for _, st := range sortedCounts(f.NotUsed) {
		fmt.Fprintf(w, " (%d %s not used)", f.NotUsed[st], st)
	}
	fmt.Fprintln(w)
	fmt.Fprintf(w, "kinetic model: %s\n", f.MassModel)
	for _, k := range f.Kinetic {
		fmt.Fprintf(w, "  at %s: %.6g %s\n", k.At, k.Value, k.Unit)
	}
	for _, wn := range f.Warnings {
		fmt.Fprintf(w, "WARNING: %s\n", wn)
	}
	if f.Torsion != nil {
		printTorsion(w, f)
	}
	if f.Curve != nil {
		printFitTable(w, f.Curve)
	}
	if len(f.Barriers) > 0 && f.Torsion == nil {
		printBarriers(w, f.Barriers)
	}
	if s := f.Surface; s != nil {
		for _, wn := range s.Warnings {
			fmt.Fprintf(w, "WARNING: %s\n", wn)
		}
		var at []string
		for k, v := range f.Stationary {
			at = append(at, fmt.Sprintf("%s = %.5f", k, v))
		}
		sort.Strings(at)
		fmt.Fprintf(w, "stationary point: %s  E = %.9f E_h  (degree-%d surface, %d points, rms residual %.2g E_h)\n",
			strings.Join(at, ", "), s.E, s.Degree, s.Points, s.RMSResidual)
		for i, nu := range s.Frequencies {
			fmt.Fprintf(w, "  harmonic mode %d: %.1f cm⁻¹ (2-D GF along the two scanned coordinates)\n", i+1, nu)
		}
	}
}

func modelLabel(m, mode string) string {
	switch m {
	case "diatomic":
		return "rotating diatomic"
	case "one-dimensional":
		return "1-D along the " + mode + " scan"
	case "torsion":
		return "full-period torsion: Fourier series and hindered rotor"
	case "torsion-partial":
		return "part of a torsion's period: local analysis"
	case "surface":
		return "2-D surface and GF analysis"
	}
	return m
}

// printTorsion renders the full-period torsion analysis.
func printTorsion(w io.Writer, f *analysis.Result) {
	t := f.Torsion
	fmt.Fprintf(w, "Fourier series: order %d, %d points, rms residual %.2g E_h (leave-one-out %.2g E_h)\n", t.Series.Order, t.Series.Points, t.Series.RMSResidual, t.Series.LOOCV)
	fmt.Fprintf(w, "  %-8s %-24s %7s %16s %18s %20s\n", "minimum", "at (degree)", "×/turn", "above global", "reduced moment", "harmonic")
	for i, m := range t.Minima {
		pos := make([]string, len(m.Positions))
		for k, p := range m.Positions {
			pos[k] = fmt.Sprintf("%.2f", p)
		}
		harm := "—"
		if m.HarmonicCm1 > 0 {
			harm = fmt.Sprintf("%.1f ± %.2g cm⁻¹", m.HarmonicCm1, m.HarmonicStderr)
		}
		mom := "—"
		if m.Inertia > 0 {
			mom = fmt.Sprintf("%.4g amu·bohr²", m.Inertia)
		}
		fmt.Fprintf(w, "  %-8s %-24s %7d %11.1f cm⁻¹ %18s %20s\n", fmt.Sprintf("well %d", i+1), strings.Join(pos, ", "), m.Multiplicity, m.AboveGlobalCm1, mom, harm)
	}
	printBarriers(w, f.Barriers)
	if r := t.Rotor; r != nil {
		fmt.Fprintf(w, "hindered rotor (reduced moment %.4g amu·bohr², %d equivalent wells per turn): ZPE %.2f cm⁻¹", r.Inertia, r.WellsPerTurn, r.ZPE)
		if r.Fundamental > 0 {
			fmt.Fprintf(w, ", fundamental %.2f cm⁻¹", r.Fundamental)
		}
		if r.WellsPerTurn > 1 && len(t.Minima) == 1 {
			fmt.Fprintf(w, ", ground tunnelling splitting %.3g cm⁻¹", r.Splitting)
		}
		fmt.Fprintln(w)
		n := min(len(r.Levels), 12)
		parts := make([]string, n)
		for v := range n {
			parts[v] = fmt.Sprintf("%.2f", r.Levels[v])
		}
		more := ""
		if len(r.Levels) > n {
			more = fmt.Sprintf(" … (%d levels)", len(r.Levels))
		}
		fmt.Fprintf(w, "  levels/cm⁻¹ above the minimum: %s%s\n", strings.Join(parts, " "), more)
		if r.Note != "" {
			fmt.Fprintf(w, "  note: %s\n", r.Note)
		}
	}
}

// printBarriers renders the barriers of a 1-D scan.
func printBarriers(w io.Writer, bs []analysis.Barrier) {
	for i, b := range bs {
		unit := "°"
		if b.Unit != "degree" {
			unit = " " + unitLabel(b.Unit)
		}
		fmt.Fprintf(w, "barrier %d at %.2f%s", i+1, b.X, unit)
		if b.Multiplicity > 1 {
			fmt.Fprintf(w, " (×%d per turn)", b.Multiplicity)
		}
		fmt.Fprintf(w, ": %.1f ± %.2g cm⁻¹ = %.3f kJ/mol = %.3f kcal/mol above the global minimum; %.1f cm⁻¹ above the minimum at %.2f, %.1f cm⁻¹ above the one at %.2f\n",
			b.HeightCm1, b.HeightStderr, b.HeightKJMol, b.HeightKcal, b.LeftHeightCm1, b.LeftMin, b.RightHeightCm1, b.RightMin)
	}
}

func unitLabel(u string) string {
	if u == string(planner.Angstrom) {
		return "Å"
	}
	return u
}

func scanSpecPath(dir string) string { return filepath.Join(dir, "scan.toml") }

// printEndFit prints the constants table at the end of run and demo. A
// fit that cannot be made is reported, never fatal: the scan itself is
// done.
//
// recs are the run's final records (runner.Summary.Points): the analysis
// reads nothing again.
func printEndFit(ctx context.Context, w io.Writer, dir string, spec *planner.Spec, recs []runner.PointRecord) {
	if ctx.Err() != nil {
		return
	}
	if spec.ForceField() != nil {
		printEndForceField(w, dir, spec)
		return
	}
	o := &fitOptions{limit: math.NaN()}
	res, err := analyseRecords(ctx, dir, spec, recs, o)
	fmt.Fprintln(w)
	if err != nil {
		fmt.Fprintf(w, "constants: not available (%v)\n", err)
		return
	}
	fmt.Fprintln(w, "== spectroscopic constants (wellscan fit "+dir+" --json for all numbers) ==")
	printScanFit(w, res)
	fmt.Fprintf(w, "\nfigures and tables: wellscan report %s\n", dir)
}
