package report

import (
	"errors"
	"fmt"
	"image/color"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/interp"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"

	"wellscan/fit"
	"wellscan/planner"
)

// Figure size and PNG resolution: 8 × 6.5 in at 150 dpi is 1200 × 975
// pixels, legible on a projector and in a paper column when scaled.
const (
	FigureWidth  = 8 * vg.Inch
	FigureHeight = 6.5 * vg.Inch
	PNGDPI       = 150
)

// PNGSize is the pixel size of the PNG written by [Figure.WritePNG].
func PNGSize() (w, h int) {
	return int(math.Round(float64(FigureWidth) / vg.Inch.Points() * PNGDPI)), int(math.Round(float64(FigureHeight) / vg.Inch.Points() * PNGDPI))
}

// Colours of the point states (a colour-blind-safe set: Okabe & Ito,
// "Color universal design", 2008, common practice in scientific figures).
var (
	colDone    = color.RGBA{0, 114, 178, 255}   // blue
	colFailed  = color.RGBA{213, 94, 0, 255}    // vermilion
	colPending = color.RGBA{153, 153, 153, 255} // grey
	colCurve   = color.RGBA{0, 0, 0, 255}
	colLevel   = color.RGBA{0, 158, 115, 255} // bluish green
	colMinimum = color.RGBA{204, 121, 167, 255}
)

// Figure is the rendered picture of a scan: two stacked panels for a 1-D
// scan (curve above, residuals below), one contour map for a 2-D scan.
type Figure struct {
	top, bottom *plot.Plot
	// CurveLabel names the fitted curve drawn (empty for a 2-D map).
	CurveLabel string
}

// NewFigure builds the figure of in.
func NewFigure(in Input) (*Figure, error) {
	if err := in.check(); err != nil {
		return nil, err
	}
	if len(in.Axes) == 2 {
		return newMap(in)
	}
	return newCurve(in)
}

// axisLabel is "name / unit" with the unit as a symbol.
func axisLabel(a Axis) string { return a.Name + " / " + unitSymbol(a.Unit) }

func unitSymbol(u string) string {
	switch u {
	case "angstrom":
		return "Å"
	case "degree":
		return "°"
	}
	return u
}

// toInternal converts a display value of a to bohr or radian, fromInternal
// back.
func toInternal(a Axis, x float64) float64 {
	switch {
	case a.IsLength() && a.Unit == "angstrom":
		return x * planner.AngstromInBohr
	case a.IsLength():
		return x
	}
	return x * math.Pi / 180
}

func fromInternal(a Axis, x float64) float64 {
	switch {
	case a.IsLength() && a.Unit == "angstrom":
		return x * planner.BohrInAngstrom
	case a.IsLength():
		return x
	}
	return x * 180 / math.Pi
}

// heading is the title with the molecule and method added, each only
// when the title does not already say it.
func heading(c Conditions) string {
	var add []string
	for _, s := range []string{c.Formula, methodLabel(c)} {
		if s != "" && !strings.Contains(c.Title, s) {
			add = append(add, s)
		}
	}
	if c.ScanKind != "" && !strings.Contains(c.Title, c.ScanKind) {
		add = append(add, c.ScanKind+" scan")
	}
	switch {
	case c.Title == "":
		return strings.Join(add, " · ")
	case len(add) == 0:
		return c.Title
	}
	return c.Title + " (" + strings.Join(add, " · ") + ")"
}

func methodLabel(c Conditions) string {
	switch {
	case c.Engine == "model":
		return "model potential"
	case c.Method != "" && c.Basis != "":
		return c.Method + "/" + c.Basis
	case c.Method != "":
		return c.Method
	}
	return c.Backend
}

// curveModel is the fitted curve of a 1-D scan: V(x) in hartree for x in
// display units, over [lo, hi].
type curveModel struct {
	label  string
	v      func(x float64) float64
	lo, hi float64
}

func fittedCurve(in Input, xs, es []float64) (curveModel, bool) {
	a := in.Axes[0]
	lo, hi := xs[0], xs[len(xs)-1]
	if an := in.Analysis; an != nil && an.Torsion != nil {
		fs := an.Torsion.Series
		// Drawn over the data only: the window the points cover.
		return curveModel{label: fmt.Sprintf("Fourier series, order %d (all points)", fs.Order),
			v: func(x float64) float64 { return fs.Eval(x*math.Pi/180, 0) }, lo: lo, hi: hi}, true
	}
	if c := in.Curve; c != nil {
		mf, name := c.ExtendedMorse, "extended Morse fit"
		if mf == nil {
			mf, name = c.Morse, "Morse fit"
		}
		if mf != nil && a.IsLength() {
			return curveModel{label: name + " (all points)", v: func(x float64) float64 { return mf.Potential(toInternal(a, x)) }, lo: lo, hi: hi}, true
		}
		if len(c.Minima) > 0 {
			m := lowestMinimum(c)
			k := m.K
			if !a.IsLength() {
				k = m.KAngle
			}
			xe := minimumX(a, m)
			v := func(x float64) float64 {
				d := toInternal(a, x) - xe
				return m.EMin + d*d*(k/2+d*(m.F3/6+d*m.F4/24))
			}
			// The Taylor series holds in the fit window only.
			wlo, whi := math.Inf(1), math.Inf(-1)
			for i, x := range xs {
				if es[i]-m.EMin <= m.WindowEnergy {
					wlo, whi = math.Min(wlo, x), math.Max(whi, x)
				}
			}
			if wlo < whi {
				return curveModel{label: fmt.Sprintf("local fit: quartic Taylor series at the minimum (window %.3g E_h)", m.WindowEnergy), v: v, lo: wlo, hi: whi}, true
			}
		}
	}
	if len(xs) >= 4 {
		var s interp.NotAKnotCubic
		if s.Fit(xs, es) == nil {
			return curveModel{label: "cubic spline through the points (no fit)", v: s.Predict, lo: lo, hi: hi}, false
		}
	}
	return curveModel{}, false
}

func lowestMinimum(c *fit.Result) fit.Minimum {
	m := c.Minima[0]
	for _, x := range c.Minima[1:] {
		if x.EMin < m.EMin {
			m = x
		}
	}
	return m
}

// minimumX is the position of a fitted minimum in internal units on the
// figure's axis: for an angle the displayed θ_e (a torsion unwrapped into
// the spec's window, a mirrored bend folded back), else x_e.
func minimumX(a Axis, m fit.Minimum) float64 {
	if !a.IsLength() && m.ThetaEDegree != 0 {
		return m.ThetaEDegree * math.Pi / 180
	}
	return m.XE
}

func newCurve(in Input) (*Figure, error) {
	a := in.Axes[0]
	ref, refWhat, ok := in.Reference()
	if !ok {
		return nil, errors.New("report: no point has an energy yet; nothing to draw")
	}
	ps := in.sortedPoints()
	if an := in.Analysis; an != nil && an.Torsion != nil && len(ps) > 0 {
		// A full period is drawn closed: the points at its start appear
		// again at its end (the same geometries).
		period := an.Torsion.Series.Period * 180 / math.Pi
		first := ps[0].Values[0]
		for _, p := range ps {
			if math.Abs(p.Values[0]-first) < 1e-9 {
				q := p
				q.Values = []float64{first + period}
				ps = append(ps, q)
			}
		}
	}
	var xs, es []float64
	for _, p := range ps {
		if p.Energy != nil {
			xs = append(xs, p.Values[0])
			es = append(es, *p.Energy)
		}
	}
	cm := func(e float64) float64 { return (e - ref) * planner.HartreeInCm1 }
	fonts, err := newFonts()
	if err != nil {
		return nil, err
	}
	top := plot.New()
	top.Title.Text = heading(in.Conditions)
	top.Y.Label.Text = "E − E_min / cm⁻¹"
	top.X.Label.Text = ""
	top.Add(plotter.NewGrid())
	top.Legend.Top = true
	top.Legend.Left = false
	bottom := plot.New()
	bottom.X.Label.Text = axisLabel(a)
	bottom.Y.Label.Text = "residual / cm⁻¹"
	bottom.Add(plotter.NewGrid())
	fig := &Figure{top: top, bottom: bottom}
	fonts.plot(top)
	fonts.plot(bottom)
	smallerLegend(top, bottom)

	model, fitted := fittedCurve(in, xs, es)
	ymax := 0.0
	for _, e := range es {
		ymax = math.Max(ymax, cm(e))
	}
	// The fitted curve.
	if model.v != nil {
		fig.CurveLabel = model.label
		const n = 400
		line := make(plotter.XYs, 0, n)
		for i := range n {
			x := model.lo + (model.hi-model.lo)*float64(i)/(n-1)
			y := cm(model.v(x))
			if y > 1.05*ymax+1 || y < -0.05*ymax-1 {
				continue // the Taylor series can turn steeply past the window
			}
			line = append(line, plotter.XY{X: x, Y: y})
		}
		if len(line) > 1 {
			l, err := plotter.NewLine(line)
			if err != nil {
				return nil, fmt.Errorf("report: curve: %w", err)
			}
			l.Color, l.Width = colCurve, vg.Points(1.2)
			top.Add(l)
			top.Legend.Add(model.label, l)
		}
	}
	// Hindered-rotor levels of a torsion: below the lowest barrier between
	// the turning points of the global well, above it across the period.
	if an := in.Analysis; an != nil && an.Torsion != nil && an.Torsion.Rotor != nil && model.v != nil && len(an.Torsion.Minima) > 0 {
		tr := an.Torsion
		lowBar := math.Inf(1)
		for _, b := range tr.Barriers {
			lowBar = math.Min(lowBar, b.HeightCm1)
		}
		xe := tr.Minima[0].XDegree
		emin := tr.Minima[0].Energy
		drawn := 0
		var last float64
		for _, g := range tr.Rotor.Levels {
			if drawn == 30 {
				break
			}
			if drawn > 0 && g-last < 0.004*(ymax+1) {
				continue // a tunnelling multiplet: one line at this scale
			}
			e := emin + g/planner.HartreeInCm1
			if cm(e) > 1.05*ymax {
				break // above the data: the legend lives there
			}
			l, r := model.lo, model.hi
			if g < lowBar {
				var lok, rok bool
				l, lok = turningPoint(model.v, e, model.lo, xe)
				r, rok = turningPoint(model.v, e, xe, model.hi)
				if !lok || !rok {
					continue
				}
			}
			line, err := plotter.NewLine(plotter.XYs{{X: l, Y: cm(e)}, {X: r, Y: cm(e)}})
			if err != nil {
				return nil, fmt.Errorf("report: levels: %w", err)
			}
			line.Color, line.Width = colLevel, vg.Points(0.8)
			top.Add(line)
			if drawn == 0 {
				top.Legend.Add(fmt.Sprintf("hindered-rotor levels (I = %.3g amu·bohr²)", tr.Rotor.Inertia), line)
			}
			last = g
			drawn++
		}
	}
	// Vibrational levels of the principal isotopologue, between their
	// classical turning points on the curve.
	if in.Curve != nil && len(in.Curve.Minima) > 0 && model.v != nil && (in.Analysis == nil || in.Analysis.Torsion == nil) {
		m := lowestMinimum(in.Curve)
		xe := fromInternal(a, minimumX(a, m))
		levels, what := m.Levels, "vibrational levels G(v) (grid), "+m.Name
		if len(levels) == 0 && m.OmegaE > 0 {
			// The grid levels were not trusted (the data stop too low);
			// the Dunham-type series still says where they lie.
			what = "vibrational levels G(v) from ωₑ, ωₑxₑ, " + m.Name
			for v := range 40 {
				h := float64(v) + 0.5
				levels = append(levels, m.OmegaE*h-m.OmegaExe*h*h)
			}
		}
		drawn := 0
		for v, g := range levels {
			if drawn == 40 {
				break
			}
			zero := m.EMin
			if len(m.Levels) > 0 && m.LevelZero != 0 {
				zero = m.LevelZero // grid levels count from their potential's minimum
			}
			e := zero + g/planner.HartreeInCm1
			l, lok := turningPoint(model.v, e, model.lo, xe)
			r, rok := turningPoint(model.v, e, xe, model.hi)
			if !lok || !rok {
				break
			}
			line, err := plotter.NewLine(plotter.XYs{{X: l, Y: cm(e)}, {X: r, Y: cm(e)}})
			if err != nil {
				return nil, fmt.Errorf("report: levels: %w", err)
			}
			line.Color, line.Width = colLevel, vg.Points(0.8)
			top.Add(line)
			if v == 0 {
				top.Legend.Add(what, line)
			}
			if v == 0 || (v+1)%5 == 0 {
				lab, err := plotter.NewLabels(plotter.XYLabels{XYs: plotter.XYs{{X: r, Y: cm(e)}}, Labels: []string{fmt.Sprintf(" v=%d", v)}})
				if err == nil {
					fonts.labels(lab)
					lab.TextStyle[0].Color = colLevel
					lab.TextStyle[0].Font.Size = vg.Points(7)
					lab.Offset = vg.Point{X: vg.Points(2), Y: vg.Points(-3)}
					top.Add(lab)
				}
			}
			drawn++
		}
	}
	// The points by state. Points without an energy are drawn on the
	// fitted curve, so that the gaps in the scan show where they are.
	type group struct {
		label string
		col   color.Color
		shape draw.GlyphDrawer
		xy    plotter.XYs
		res   plotter.XYs
	}
	groups := map[string]*group{}
	order := []string{}
	states := map[string]int{} // points per state, each geometry once
	for _, p := range in.Points {
		states[p.State]++
	}
	for _, p := range ps {
		g, seen := groups[p.State]
		if !seen {
			g = &group{col: colPending, shape: draw.RingGlyph{}}
			switch p.State {
			case "done":
				g.col, g.shape, g.label = colDone, draw.CircleGlyph{}, "computed points"
			case "failed":
				g.col, g.shape, g.label = colFailed, draw.CrossGlyph{}, "failed points (no energy; shown on the curve)"
			default:
				g.label = p.State + " points (not computed yet; shown on the curve)"
			}
			groups[p.State] = g
			order = append(order, p.State)
		}
		x := p.Values[0]
		switch {
		case p.Energy != nil:
			g.xy = append(g.xy, plotter.XY{X: x, Y: cm(*p.Energy)})
			if model.v != nil && fitted && x >= model.lo && x <= model.hi {
				g.res = append(g.res, plotter.XY{X: x, Y: cm(*p.Energy) - cm(model.v(x))})
			}
		case model.v != nil && x >= model.lo && x <= model.hi:
			g.xy = append(g.xy, plotter.XY{X: x, Y: cm(model.v(x))})
		default:
			g.xy = append(g.xy, plotter.XY{X: x, Y: 0})
		}
	}
	sort.SliceStable(order, func(i, j int) bool { return order[i] == "done" && order[j] != "done" })
	for _, st := range order {
		g := groups[st]
		s, err := plotter.NewScatter(g.xy)
		if err != nil {
			return nil, fmt.Errorf("report: points: %w", err)
		}
		s.GlyphStyle = draw.GlyphStyle{Color: g.col, Shape: g.shape, Radius: vg.Points(2.6)}
		if st != "done" {
			s.GlyphStyle.Radius = vg.Points(4.5) // a missing point must catch the eye
		}
		top.Add(s)
		top.Legend.Add(fmt.Sprintf("%s (%d)", g.label, states[st]), s)
		if len(g.res) > 0 {
			rs, err := plotter.NewScatter(g.res)
			if err != nil {
				return nil, fmt.Errorf("report: residuals: %w", err)
			}
			rs.GlyphStyle = s.GlyphStyle
			bottom.Add(rs)
		}
	}
	// The minima, and the barriers with their heights.
	if err := markTorsion(in, top, fonts, cm); err != nil {
		return nil, err
	}
	if in.Curve != nil && len(in.Curve.Minima) > 0 {
		for _, m := range in.Curve.Minima {
			xe := fromInternal(a, minimumX(a, m))
			s, err := plotter.NewScatter(plotter.XYs{{X: xe, Y: cm(m.EMin)}})
			if err != nil {
				return nil, fmt.Errorf("report: minimum: %w", err)
			}
			s.GlyphStyle = draw.GlyphStyle{Color: colMinimum, Shape: draw.RingGlyph{}, Radius: vg.Points(6)}
			top.Add(s)
			text := fmt.Sprintf("fitted minimum (%s): %s_e = %.5f %s", m.Label, a.Name, xe, unitSymbol(a.Unit))
			if m.OmegaE > 0 {
				text += fmt.Sprintf(", ωₑ = %.1f cm⁻¹", m.OmegaE)
			}
			top.Legend.Add(text, s)
		}
	} else if in.Analysis == nil || in.Analysis.Torsion == nil {
		top.Y.Label.Text = "E − E_ref / cm⁻¹ (" + refWhat + ")"
	}

	// Residual panel: a zero line and, when there is no fit, a note.
	lo, hi := xs[0], xs[len(xs)-1]
	for _, p := range ps {
		lo, hi = math.Min(lo, p.Values[0]), math.Max(hi, p.Values[0])
	}
	pad := 0.03 * (hi - lo)
	if err := markBarriers(in, top, fonts, cm, lo, hi); err != nil {
		return nil, err
	}
	zero, err := plotter.NewLine(plotter.XYs{{X: lo - pad, Y: 0}, {X: hi + pad, Y: 0}})
	if err != nil {
		return nil, fmt.Errorf("report: residuals: %w", err)
	}
	zero.Color, zero.Width = colCurve, vg.Points(0.6)
	bottom.Add(zero)
	switch {
	case !fitted:
		bottom.Title.Text = "no fitted curve: residuals not available"
	default:
		bottom.Title.Text = "residuals: point − " + model.label
	}
	bottom.Title.TextStyle.Font.Size = vg.Points(9)
	for _, p := range []*plot.Plot{top, bottom} {
		p.X.Min, p.X.Max = lo-pad, hi+pad
		p.X.Tick.Marker = preciseTicks{}
		if !a.IsLength() {
			p.X.Tick.Marker = angleTicks{}
		}
	}
	top.Y.Min = math.Min(top.Y.Min, -0.03*ymax)
	// Headroom for the legend above the data.
	top.Y.Max = math.Max(top.Y.Max, 1.32*ymax)
	if !(bottom.Y.Max > bottom.Y.Min) {
		bottom.Y.Min, bottom.Y.Max = -1, 1
	}
	return fig, nil
}

// turningPoint finds x in [a, b] with v(x) = e by bisection, after
// scanning for a sign change (the curve need not be monotonic over the
// whole range).
func turningPoint(v func(float64) float64, e, a, b float64) (float64, bool) {
	const n = 200
	f := func(x float64) float64 { return v(x) - e }
	prevX, prevF := a, f(a)
	for i := 1; i <= n; i++ {
		x := a + (b-a)*float64(i)/n
		fx := f(x)
		if (prevF <= 0) != (fx <= 0) {
			lo, hi, flo := prevX, x, prevF
			for range 60 {
				mid := (lo + hi) / 2
				fm := f(mid)
				if (fm <= 0) == (flo <= 0) {
					lo, flo = mid, fm
				} else {
					hi = mid
				}
			}
			return (lo + hi) / 2, true
		}
		prevX, prevF = x, fx
	}
	return 0, false
}

// grid is the sampled surface of a 2-D scan on the distinct coordinate
// values, in cm⁻¹ above the reference; cells without a point take the
// value of the nearest computed point (in coordinates scaled to the grid
// extent).
type grid struct {
	xs, ys []float64
	z      [][]float64 // z[c][r]
}

func (g grid) Dims() (int, int)   { return len(g.xs), len(g.ys) }
func (g grid) Z(c, r int) float64 { return g.z[c][r] }
func (g grid) X(c int) float64    { return g.xs[c] }
func (g grid) Y(r int) float64    { return g.ys[r] }
func (g grid) Min() (m float64)   { return g.extreme(math.Min, math.Inf(1)) }
func (g grid) Max() (m float64)   { return g.extreme(math.Max, math.Inf(-1)) }
func (g grid) extreme(f func(a, b float64) float64, m float64) float64 {
	for _, col := range g.z {
		for _, v := range col {
			m = f(m, v)
		}
	}
	return m
}

// smooth resamples the grid on n × n points by a tensor-product spline
// (not-a-knot cubic along each axis with at least 4 values, linear
// otherwise), so that the contours follow the surface rather than the
// grid's cells.
func (g grid) smooth(n int) grid {
	fx, fy := linspace(g.xs[0], g.xs[len(g.xs)-1], n), linspace(g.ys[0], g.ys[len(g.ys)-1], n)
	// Along x for every sampled row, then along y for every fine column.
	rows := make([][]float64, len(g.ys)) // rows[r][i] at fx[i]
	for r := range g.ys {
		z := make([]float64, len(g.xs))
		for c := range g.xs {
			z[c] = g.z[c][r]
		}
		rows[r] = resample(g.xs, z, fx)
	}
	out := grid{xs: fx, ys: fy, z: make([][]float64, n)}
	for i := range fx {
		z := make([]float64, len(g.ys))
		for r := range g.ys {
			z[r] = rows[r][i]
		}
		out.z[i] = resample(g.ys, z, fy)
	}
	return out
}

func linspace(a, b float64, n int) []float64 {
	v := make([]float64, n)
	for i := range v {
		v[i] = a + (b-a)*float64(i)/float64(n-1)
	}
	v[n-1] = b
	return v
}

// resample evaluates the curve through (x, y) at xs.
func resample(x, y, xs []float64) []float64 {
	var p interp.Predictor
	var s interp.NotAKnotCubic
	var l interp.PiecewiseLinear
	switch {
	case len(x) >= 4 && s.Fit(x, y) == nil:
		p = &s
	case l.Fit(x, y) == nil:
		p = &l
	default:
		return make([]float64, len(xs))
	}
	out := make([]float64, len(xs))
	for i, v := range xs {
		out[i] = p.Predict(v)
	}
	return out
}

func distinctValues(v []float64, digits int) []float64 {
	seen := map[float64]bool{}
	var out []float64
	for _, x := range v {
		x = roundTo(x, digits)
		if !seen[x] {
			seen[x] = true
			out = append(out, x)
		}
	}
	sort.Float64s(out)
	return out
}

func roundTo(x float64, digits int) float64 {
	p := math.Pow(10, float64(digits))
	return math.Round(x*p) / p
}

func newMap(in Input) (*Figure, error) {
	ax, ay := in.Axes[0], in.Axes[1]
	ref, _, ok := in.Reference()
	if !ok {
		return nil, errors.New("report: no point has an energy yet; nothing to draw")
	}
	var px, py, pz []float64
	var failed plotter.XYs
	for _, p := range in.Points {
		if p.Energy == nil {
			failed = append(failed, plotter.XY{X: p.Values[0], Y: p.Values[1]})
			continue
		}
		px = append(px, p.Values[0])
		py = append(py, p.Values[1])
		pz = append(pz, (*p.Energy-ref)*planner.HartreeInCm1)
	}
	fonts, err := newFonts()
	if err != nil {
		return nil, err
	}
	p := plot.New()
	p.Title.Text = heading(in.Conditions)
	p.X.Label.Text = axisLabel(ax)
	p.Y.Label.Text = axisLabel(ay)
	fig := &Figure{top: p}
	fonts.plot(p)
	smallerLegend(p)
	if sr := in.Surface; sr != nil {
		if err := surfaceContours(p, in, sr, px, py, pz); err != nil {
			return nil, err
		}
	} else {
		g := grid{xs: distinctValues(px, ax.Digits), ys: distinctValues(py, ay.Digits)}
		if len(g.xs) >= 2 && len(g.ys) >= 2 {
			sx, sy := g.xs[len(g.xs)-1]-g.xs[0], g.ys[len(g.ys)-1]-g.ys[0]
			g.z = make([][]float64, len(g.xs))
			for c, x := range g.xs {
				g.z[c] = make([]float64, len(g.ys))
				for r, y := range g.ys {
					best, bd := 0.0, math.Inf(1)
					for k := range px {
						d := math.Hypot((px[k]-x)/sx, (py[k]-y)/sy)
						if d < bd {
							best, bd = pz[k], d
						}
					}
					g.z[c][r] = best
				}
			}
			g = g.smooth(60)
			zmax := g.Max()
			// Contours every 1/12 of the range, denser near the bottom:
			// the well is what the map is for.
			var levels []float64
			for i := 1; i <= 12; i++ {
				t := float64(i) / 12
				levels = append(levels, zmax*t*t)
			}
			c := plotter.NewContour(g, levels, palette.Heat(len(levels), 1))
			p.Add(c)
			p.Legend.Add(fmt.Sprintf("contours of the points (no surface fit), %.0f to %.0f cm⁻¹", levels[0], levels[len(levels)-1]))
		}
	}
	var pts plotter.XYs
	for k := range px {
		pts = append(pts, plotter.XY{X: px[k], Y: py[k]})
	}
	s, err := plotter.NewScatter(pts)
	if err != nil {
		return nil, fmt.Errorf("report: points: %w", err)
	}
	s.GlyphStyle = draw.GlyphStyle{Color: colDone, Shape: draw.CircleGlyph{}, Radius: vg.Points(1.8)}
	p.Add(s)
	p.Legend.Add(fmt.Sprintf("computed points (%d)", len(pts)), s)
	if len(failed) > 0 {
		f, err := plotter.NewScatter(failed)
		if err != nil {
			return nil, fmt.Errorf("report: points: %w", err)
		}
		f.GlyphStyle = draw.GlyphStyle{Color: colFailed, Shape: draw.CrossGlyph{}, Radius: vg.Points(3)}
		p.Add(f)
		p.Legend.Add(fmt.Sprintf("points without an energy (%d)", len(failed)), f)
	}
	if in.Surface == nil && len(pz) > 0 {
		k := 0
		for i := range pz {
			if pz[i] < pz[k] {
				k = i
			}
		}
		m, err := plotter.NewScatter(plotter.XYs{{X: px[k], Y: py[k]}})
		if err != nil {
			return nil, fmt.Errorf("report: minimum: %w", err)
		}
		m.GlyphStyle = draw.GlyphStyle{Color: colMinimum, Shape: draw.RingGlyph{}, Radius: vg.Points(6)}
		p.Add(m)
		p.Legend.Add(fmt.Sprintf("lowest computed point (no surface fit): %s = %.*f %s, %s = %.*f %s", ax.Name, ax.Digits, px[k], unitSymbol(ax.Unit), ay.Name, ay.Digits, py[k], unitSymbol(ay.Unit)), m)
	}
	if sr := in.Surface; sr != nil {
		m, err := plotter.NewScatter(plotter.XYs{{X: fromInternal(ax, sr.X), Y: fromInternal(ay, sr.Y)}})
		if err != nil {
			return nil, fmt.Errorf("report: minimum: %w", err)
		}
		m.GlyphStyle = draw.GlyphStyle{Color: colMinimum, Shape: draw.RingGlyph{}, Radius: vg.Points(6)}
		p.Add(m)
		p.Legend.Add(fmt.Sprintf("fitted stationary point (%s = %.4f %s, %s = %.4f %s)", ax.Name, fromInternal(ax, sr.X), unitSymbol(ax.Unit), ay.Name, fromInternal(ay, sr.Y), unitSymbol(ay.Unit)), m)
	}
	p.Legend.Top = true
	// Room around the grid, and above it for the legend.
	dx, dy := p.X.Max-p.X.Min, p.Y.Max-p.Y.Min
	p.X.Min, p.X.Max = p.X.Min-0.04*dx, p.X.Max+0.04*dx
	head := 0.22
	if in.Surface != nil {
		head = 0.45 // the contour levels are listed in the legend
	}
	p.Y.Min, p.Y.Max = p.Y.Min-0.04*dy, p.Y.Max+head*dy
	p.X.Tick.Marker, p.Y.Tick.Marker = preciseTicks{}, preciseTicks{}
	return fig, nil
}

// preciseTicks places ticks as plot.DefaultTicks does but labels them with
// as many decimals as it takes to tell them apart (DefaultTicks may label
// 1.05 as "1.1").
type preciseTicks struct{}

func (preciseTicks) Ticks(lo, hi float64) []plot.Tick {
	ts := plot.DefaultTicks{}.Ticks(lo, hi)
	var major []int
	for i, t := range ts {
		if t.Label != "" {
			major = append(major, i)
		}
	}
	for d := 0; d <= 8; d++ {
		ok := true
		for _, i := range major {
			if math.Abs(roundTo(ts[i].Value, d)-ts[i].Value) > 1e-9*math.Max(1, math.Abs(hi-lo)) {
				ok = false
				break
			}
		}
		if ok || d == 8 {
			for _, i := range major {
				ts[i].Label = strconv.FormatFloat(ts[i].Value, 'f', d, 64)
			}
			break
		}
	}
	return ts
}

// smallerLegend sets the legend font size (the default 12 pt crowds the
// panel).
func smallerLegend(ps ...*plot.Plot) {
	for _, p := range ps {
		p.Legend.TextStyle.Font.Size = vg.Points(10)
	}
}

// draw renders the figure onto c: for a 1-D scan the curve takes the top
// 70 % and the residuals the rest, their data areas aligned left and
// right.
func (f *Figure) draw(c draw.Canvas) {
	if f.bottom == nil {
		f.top.Draw(c)
		return
	}
	h := c.Max.Y - c.Min.Y
	split := 0.3 * h
	topC := draw.Crop(c, 0, 0, split, 0)
	botC := draw.Crop(c, 0, 0, 0, -(h - split))
	dt, db := f.top.DataCanvas(topC), f.bottom.DataCanvas(botC)
	left := max(dt.Min.X-topC.Min.X, db.Min.X-botC.Min.X)
	right := max(topC.Max.X-dt.Max.X, botC.Max.X-db.Max.X)
	topC = draw.Crop(topC, left-(dt.Min.X-topC.Min.X), -(right - (topC.Max.X - dt.Max.X)), 0, 0)
	botC = draw.Crop(botC, left-(db.Min.X-botC.Min.X), -(right - (botC.Max.X - db.Max.X)), 0, 0)
	f.top.Draw(topC)
	f.bottom.Draw(botC)
}

// WriteSVG writes the figure as SVG.
func (f *Figure) WriteSVG(w io.Writer) error {
	// The fonts are embedded: a browser that substitutes its own wider
	// font lets the legend run off the figure.
	c := vgsvg.NewWith(vgsvg.UseWH(FigureWidth, FigureHeight), vgsvg.EmbedFonts(true))
	f.draw(draw.New(c))
	if _, err := c.WriteTo(w); err != nil {
		return fmt.Errorf("report: svg: %w", err)
	}
	return nil
}

// WritePNG writes the figure as PNG at [PNGDPI] on a white background.
func (f *Figure) WritePNG(w io.Writer) error {
	c := vgimg.NewWith(vgimg.UseWH(FigureWidth, FigureHeight), vgimg.UseDPI(PNGDPI), vgimg.UseBackgroundColor(color.White))
	f.draw(draw.New(c))
	if _, err := (vgimg.PngCanvas{Canvas: c}).WriteTo(w); err != nil {
		return fmt.Errorf("report: png: %w", err)
	}
	return nil
}
