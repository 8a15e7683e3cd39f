package report

import (
	"fmt"
	"image/color"
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/palette/moreland"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"wellscan/fit"
	"wellscan/planner"
)

// colBarrier marks barrier tops (Okabe & Ito orange).
var colBarrier = color.RGBA{230, 159, 0, 255}

// markTorsion marks every minimum of a full-period torsion with a ring
// and a legend line giving its harmonic wavenumber and multiplicity.
func markTorsion(in Input, p *plot.Plot, f *fonts, cm func(float64) float64) error {
	an := in.Analysis
	if an == nil || an.Torsion == nil {
		return nil
	}
	for i, m := range an.Torsion.Minima {
		var xy plotter.XYs
		for _, x := range m.Positions {
			xy = append(xy, plotter.XY{X: x, Y: cm(m.Energy)})
		}
		s, err := plotter.NewScatter(xy)
		if err != nil {
			return fmt.Errorf("report: minima: %w", err)
		}
		s.GlyphStyle = draw.GlyphStyle{Color: colMinimum, Shape: draw.RingGlyph{}, Radius: vg.Points(6)}
		p.Add(s)
		text := fmt.Sprintf("minimum %d at %s°", i+1, joinDegrees(m.Positions))
		if m.Multiplicity > 1 {
			text += fmt.Sprintf(" (×%d per turn)", m.Multiplicity)
		}
		if m.HarmonicCm1 > 0 {
			text += fmt.Sprintf(", ω = %.1f cm⁻¹", m.HarmonicCm1)
		}
		p.Legend.Add(text, s)
	}
	return nil
}

// markBarriers marks the barrier tops of a 1-D scan with a triangle and
// writes their height next to them.
func markBarriers(in Input, p *plot.Plot, f *fonts, cm func(float64) float64, lo, hi float64) error {
	an := in.Analysis
	if an == nil || len(an.Barriers) == 0 {
		return nil
	}
	var xy plotter.XYs
	var labels []string
	for _, b := range an.Barriers {
		xs := []float64{b.X}
		if an.Torsion != nil {
			for _, tb := range an.Torsion.Barriers {
				if tb.XDegree == b.X {
					xs = append([]float64(nil), tb.Positions...)
				}
			}
			// The window of a full period shows a barrier at its start
			// at its end too.
			period := an.Torsion.Series.Period * 180 / math.Pi
			for _, x := range xs {
				if x+period <= hi+1e-9*period {
					xs = append(xs, x+period)
				}
			}
		}
		for i, x := range xs {
			xy = append(xy, plotter.XY{X: x, Y: cm(b.Energy)})
			l := ""
			if i == 0 { // one label per distinct barrier
				l = fmt.Sprintf("%.0f cm⁻¹ (%.2f kcal/mol)", b.HeightCm1, b.HeightKcal)
			}
			labels = append(labels, l)
		}
	}
	s, err := plotter.NewScatter(xy)
	if err != nil {
		return fmt.Errorf("report: barriers: %w", err)
	}
	s.GlyphStyle = draw.GlyphStyle{Color: colBarrier, Shape: draw.TriangleGlyph{}, Radius: vg.Points(5)}
	p.Add(s)
	p.Legend.Add("barrier tops (height above the global minimum)", s)
	lab, err := plotter.NewLabels(plotter.XYLabels{XYs: xy, Labels: labels})
	if err != nil {
		return fmt.Errorf("report: barriers: %w", err)
	}
	f.labels(lab)
	for i := range lab.TextStyle {
		lab.TextStyle[i].Color = color.RGBA{150, 100, 0, 255}
		lab.TextStyle[i].Font.Size = vg.Points(8)
		// Centred over the top, or kept inside the panel near its ends.
		switch t := (xy[i].X - lo) / (hi - lo); {
		case t < 0.15:
			lab.TextStyle[i].XAlign = 0
		case t > 0.85:
			lab.TextStyle[i].XAlign = -1
		default:
			lab.TextStyle[i].XAlign = -0.5
		}
	}
	lab.Offset = vg.Point{Y: vg.Points(7)}
	p.Add(lab)
	return nil
}

func joinDegrees(xs []float64) string {
	parts := make([]string, len(xs))
	for i, x := range xs {
		t := strconv.FormatFloat(x, 'f', 2, 64)
		t = strings.TrimRight(strings.TrimRight(t, "0"), ".")
		if t == "-0" {
			t = "0"
		}
		parts[i] = t
	}
	return strings.Join(parts, ", ")
}

// angleTicks puts major ticks of an angle axis (degrees) at multiples of
// a step that divides the circle (1, 2, 5, 10, 15, 20, 30, 45, 60, 90, 120
// or 180°), the largest giving at least six ticks, with minor ticks between.
type angleTicks struct{}

func (angleTicks) Ticks(lo, hi float64) []plot.Tick {
	steps := []float64{180, 120, 90, 60, 45, 30, 20, 15, 10, 5, 2, 1, 0.5, 0.2, 0.1}
	step := steps[len(steps)-1]
	for _, s := range steps {
		if (math.Floor(hi/s)-math.Ceil(lo/s))+1 >= 6 {
			step = s
			break
		}
	}
	minor := step / 3
	if int(step)%2 == 0 || step < 1 {
		minor = step / 2
	}
	var ts []plot.Tick
	for x := math.Ceil(lo/minor) * minor; x <= hi+1e-9*step; x += minor {
		t := plot.Tick{Value: x}
		if r := math.Remainder(x, step); math.Abs(r) < 1e-9*step {
			v := math.Round(x/step) * step
			if v == 0 {
				v = 0 // no "-0"
			}
			t.Label = strconv.FormatFloat(v, 'f', -1, 64)
		}
		ts = append(ts, t)
	}
	return ts
}

// surfaceContours draws the fitted surface of a 2-D scan as labelled
// contours over the region its fit used (the points within its energy
// window), where it describes the data; the grid points outside are shown
// as points only.
func surfaceContours(p *plot.Plot, in Input, sr *fit.SurfaceResult, px, py, pz []float64) error {
	ax, ay := in.Axes[0], in.Axes[1]
	window := 0.02 * planner.HartreeInCm1
	if sr.WindowEnergy > 0 {
		window = sr.WindowEnergy * planner.HartreeInCm1
	}
	zmin := math.Inf(1)
	for _, z := range pz {
		zmin = math.Min(zmin, z)
	}
	xlo, xhi, ylo, yhi := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for k := range px {
		if pz[k]-zmin <= window {
			xlo, xhi = math.Min(xlo, px[k]), math.Max(xhi, px[k])
			ylo, yhi = math.Min(ylo, py[k]), math.Max(yhi, py[k])
		}
	}
	if !(xhi > xlo && yhi > ylo) {
		return nil
	}
	const n = 80
	g := grid{xs: linspace(xlo, xhi, n), ys: linspace(ylo, yhi, n)}
	g.z = make([][]float64, n)
	top := 0.0
	for c, x := range g.xs {
		g.z[c] = make([]float64, n)
		for r, y := range g.ys {
			z := (sr.Energy(toInternal(ax, x), toInternal(ay, y)) - sr.E) * planner.HartreeInCm1
			g.z[c][r] = z
			top = math.Max(top, z)
		}
	}
	top = math.Min(top, window)
	// Round levels: 1, 2, 5 × 10^k up to the top of the window.
	var levels []float64
	for k := -1; k <= 6; k++ {
		for _, m := range []float64{1, 2, 5} {
			v := m * math.Pow(10, float64(k))
			if v <= top && v >= top/200 {
				levels = append(levels, v)
			}
		}
	}
	if len(levels) == 0 {
		return nil
	}
	// Blue (low) to red (high), a perceptually even diverging map
	// (K. Moreland, "Diverging color maps for scientific visualization",
	// ISVC 2009).
	cmap := moreland.SmoothBlueRed()
	cmap.SetMin(0)
	cmap.SetMax(1)
	pal := cmap.Palette(len(levels))
	cols := pal.Colors()
	for i, lv := range levels {
		// One contour plotter per level: the colour of each is then
		// exactly the one its legend line shows.
		c := plotter.NewContour(g, []float64{lv}, onePalette{cols[i]})
		c.LineStyles[0].Width = vg.Points(1.4)
		p.Add(c)
	}
	for i := len(levels) - 1; i >= 0; i-- {
		l, err := plotter.NewLine(plotter.XYs{{X: 0, Y: 0}, {X: 1, Y: 0}})
		if err != nil {
			return fmt.Errorf("report: contours: %w", err)
		}
		l.Color, l.Width = cols[i], vg.Points(2.5)
		p.Legend.Add(fmt.Sprintf("fitted surface, E − E_min = %g cm⁻¹", levels[i]), l)
	}
	return nil
}

// onePalette is a palette of a single colour.
type onePalette struct{ c color.Color }

func (p onePalette) Colors() []color.Color { return []color.Color{p.c} }
