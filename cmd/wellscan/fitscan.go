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
)

// scanFit is the analysis of a scan directory: a 1-D curve fit or a 2-D
// surface fit.
type scanFit struct {
	Curve   *fit.Result        `json:"curve,omitempty"`
	Surface *fit.SurfaceResult `json:"surface,omitempty"`
	Mass    string             `json:"mass_model"`
	Minima  []fit.Minimum      `json:"minima,omitempty"`
	Points  int                `json:"points_done"`
	Skipped map[string]int     `json:"points_not_used,omitempty"`
	Units   map[string]string  `json:"coordinate_units"`
	// Stationary is the 2-D stationary point in the spec's units (Å or
	// bohr, degrees), with the unit in the key, e.g. "r_angstrom".
	Stationary map[string]float64 `json:"stationary_point,omitempty"`
}

// fitScanDir fits the done points of the scan in dir. Masses come from the
// spec's molecule (its isotopes): a diatomic bond scan is analysed as a
// rotating diatomic; any other 1-D scan with the effective mass 1/G_qq of
// the scanned coordinate (Wilson's G matrix at the lowest point, with a
// tied coordinate taken as the mean of its members), labelled 1-D; a 2-D
// scan by a surface fit and the 2×2 GF problem.
func fitScanDir(ctx context.Context, dir string, spec *planner.Spec, o *fitOptions) (*scanFit, error) {
	snap, _, err := readStatus(dir, spec)
	if err != nil {
		return nil, err
	}
	coords := spec.Coordinates()
	out := &scanFit{Skipped: map[string]int{}, Units: map[string]string{}}
	var xs [][]float64
	var es []float64
	var lowest string
	for _, p := range snap.Points {
		if p.State != runner.Done || p.EnergyHartree == nil {
			out.Skipped[string(p.State)]++
			continue
		}
		v := make([]float64, len(coords))
		for i, c := range coords {
			x, ok := p.Coordinates[c.Name]
			if !ok {
				return nil, fmt.Errorf("fit: point %s has no value for coordinate %q", p.Key, c.Name)
			}
			v[i] = c.Internal(x, spec.Units())
		}
		if lowest == "" || *p.EnergyHartree < es[indexOfMin(es)] {
			lowest = p.Key
		}
		xs = append(xs, v)
		es = append(es, *p.EnergyHartree)
	}
	out.Points = len(es)
	for _, c := range coords {
		out.Units[c.Name] = c.UnitLabel(spec.Units()) + " at the edges; bohr or radian inside"
	}
	if len(es) < 3 {
		return nil, fmt.Errorf("fit: %s has %d done points; at least 3 are needed (run it first: wellscan run %s)", dir, len(es), dir)
	}
	p, err := spec.ParseKey(lowest)
	if err != nil {
		return nil, err
	}
	geo, err := spec.Geometry(p)
	if err != nil {
		return nil, err
	}
	pos := make([][3]float64, len(geo.Atoms))
	masses := make([]float64, len(geo.Atoms))
	for i, a := range geo.Atoms {
		pos[i], masses[i] = a.Pos, a.Mass
	}
	rows := make([][][3]float64, len(coords))
	for i, c := range coords {
		if rows[i], err = bRow(pos, c); err != nil {
			return nil, fmt.Errorf("fit: coordinate %s: %w", c.Name, err)
		}
	}
	if len(coords) == 2 {
		var g [2][2]float64
		for i := range 2 {
			for j := range 2 {
				if g[i][j], err = fit.GMatrixElement(pos, masses, rows[i], rows[j]); err != nil {
					return nil, err
				}
			}
		}
		x := make([]float64, len(es))
		y := make([]float64, len(es))
		for k := range es {
			x[k], y[k] = xs[k][0], xs[k][1]
		}
		out.Surface, err = fit.Surface2D(x, y, es, fit.SurfaceOptions{G: g, WindowEnergy: o.window})
		if err != nil {
			// A quartic needs five distinct values per coordinate; a
			// coarser grid still supports the quadratic surface.
			quartErr := err
			if out.Surface, err = fit.Surface2D(x, y, es, fit.SurfaceOptions{G: g, WindowEnergy: o.window, Degree: 2}); err == nil {
				out.Surface.Warnings = append(out.Surface.Warnings, fmt.Sprintf("quartic surface not determined by the grid (%v); QUADRATIC surface used: no anharmonic coupling, frequencies less reliable", quartErr))
			}
		}
		if out.Surface != nil {
			out.Stationary = map[string]float64{}
			for i, v := range []float64{out.Surface.X, out.Surface.Y} {
				c := coords[i]
				unit := "degree"
				if c.Kind == planner.KindDistance {
					unit = string(spec.Units())
				}
				out.Stationary[c.Name+"_"+unit] = c.Display(v, spec.Units())
			}
		}
		out.Mass = "2-D: Wilson G matrix of the two scanned coordinates at the lowest point (masses from the spec)"
		return out, err
	}
	opt := fit.Options{WindowEnergy: o.window, EnergyNoise: o.noise}
	if !math.IsNaN(o.limit) {
		l := o.limit
		opt.Asymptote = &l
	}
	c := coords[0]
	if c.Kind != planner.KindDistance {
		opt.Kind = fit.Angle
	}
	x := make([]float64, len(es))
	for k := range es {
		x[k] = xs[k][0]
	}
	order := make([]int, len(x))
	for i := range order {
		order[i] = i
	}
	sort.Slice(order, func(a, b int) bool { return x[order[a]] < x[order[b]] })
	xsorted, esorted := make([]float64, len(x)), make([]float64, len(x))
	for i, k := range order {
		xsorted[i], esorted[i] = x[k], es[k]
	}
	if len(geo.Atoms) == 2 && c.Kind == planner.KindDistance {
		sets, err := massSets(o, opt.Kind)
		if err != nil {
			return nil, err
		}
		if o.atoms == "" {
			name := fmt.Sprintf("%d%s%d%s", geo.Atoms[0].MassNumber, geo.Atoms[0].Element.Symbol, geo.Atoms[1].MassNumber, geo.Atoms[1].Element.Symbol)
			sets = append([]fit.MassSet{{Name: name, Masses: masses}}, sets...)
		}
		opt.Isotopologues = sets
		out.Mass = "diatomic: atomic masses from the spec (AME2020)"
	} else {
		g, err := fit.GElement(pos, masses, rows[0])
		if err != nil {
			return nil, err
		}
		opt.Isotopologues = []fit.MassSet{{Name: geo.Formula(), EffectiveMass: 1 / g}}
		out.Mass = fmt.Sprintf("1-D along the scan: effective mass 1/G = %.6g (amu%s) of coordinate %s from Wilson's G matrix at the lowest point", 1/g, map[bool]string{true: "", false: "·bohr²"}[c.Kind == planner.KindDistance], c.Name)
	}
	out.Curve, err = fit.Curve(ctx, xsorted, esorted, opt)
	if err != nil {
		return nil, err
	}
	out.Minima = out.Curve.Minima
	return out, nil
}

func indexOfMin(e []float64) int {
	k := 0
	for i, v := range e {
		if v < e[k] {
			k = i
		}
	}
	return k
}

// bRow is the Wilson B-matrix row of a (possibly tied) coordinate: the
// mean of its members' rows, so that a tied coordinate q = r1 = r2 = …
// moves every member by δq.
func bRow(pos [][3]float64, c planner.Coordinate) ([][3]float64, error) {
	sum := make([][3]float64, len(pos))
	for _, m := range c.Members {
		var row [][3]float64
		var err error
		switch c.Kind {
		case planner.KindDistance:
			row, err = fit.BRowDistance(pos, [2]int{m[0], m[1]})
		case planner.KindAngle:
			row, err = fit.BRowAngle(pos, [3]int{m[0], m[1], m[2]})
		default:
			row, err = fit.BRowTorsion(pos, [4]int{m[0], m[1], m[2], m[3]})
		}
		if err != nil {
			return nil, err
		}
		for a := range row {
			for k := range 3 {
				sum[a][k] += row[a][k] / float64(len(c.Members))
			}
		}
	}
	return sum, nil
}

func printScanFit(w io.Writer, f *scanFit) {
	fmt.Fprintf(w, "fit of %d done points", f.Points)
	for st, n := range f.Skipped {
		fmt.Fprintf(w, " (%d %s not used)", n, st)
	}
	fmt.Fprintf(w, "\nmass model: %s\n", f.Mass)
	if f.Curve != nil {
		printFitTable(w, f.Curve)
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

func scanSpecPath(dir string) string { return filepath.Join(dir, "scan.toml") }

// printEndFit prints the constants table at the end of run and demo. A
// fit that cannot be made is reported, never fatal: the scan itself is
// done.
func printEndFit(ctx context.Context, w io.Writer, dir string, spec *planner.Spec) {
	if ctx.Err() != nil {
		return
	}
	if spec.ForceField() != nil {
		printEndForceField(w, dir, spec)
		return
	}
	o := &fitOptions{limit: math.NaN()}
	res, err := fitScanDir(ctx, dir, spec, o)
	fmt.Fprintln(w)
	if err != nil {
		fmt.Fprintf(w, "constants: not available (%v)\n", err)
		return
	}
	fmt.Fprintln(w, "== spectroscopic constants (wellscan fit "+dir+" --json for all numbers) ==")
	printScanFit(w, res)
	fmt.Fprintf(w, "\nfigures and tables: wellscan report %s\n", dir)
}
