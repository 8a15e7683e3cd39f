package report

import (
	"bytes"
	"fmt"
	"html/template"
	"io"
	"math"
	"sort"
	"strings"

	"wellscan/fit"
	"wellscan/planner"
)

// The summary is built once as a list of sections and rendered both as
// Markdown and as HTML, so the two never disagree.
type table struct {
	Head []string
	Rows [][]string
}

type section struct {
	Title  string
	Alert  bool // what could mislead: rendered loudly (the alarm box)
	Warn   bool // other warnings and failures: marked, at the top
	Paras  []string
	List   []string
	Tables []table
	Figure bool // the HTML embeds the SVG here
}

// valueErr formats v at d decimals with its standard error at the same
// decimals; an error too small to show at that precision is written as
// "< 1e-d", so the text does not depend on round-off.
func valueErr(v, se float64, d int) string {
	s := fmt.Sprintf("%.*f", d, v)
	if se <= 0 || math.IsNaN(se) {
		return s
	}
	if se < 0.5*math.Pow(10, -float64(d)) {
		return s + fmt.Sprintf(" ± <1e-%d", d)
	}
	return s + fmt.Sprintf(" ± %.*f", d, se)
}

func countStates(ps []Point) (map[string]int, []string) {
	n := map[string]int{}
	for _, p := range ps {
		n[p.State]++
	}
	var keys []string
	for k := range n {
		keys = append(keys, k)
	}
	sort.Slice(keys, func(i, j int) bool {
		if keys[i] == "done" || keys[j] == "done" {
			return keys[i] == "done"
		}
		return keys[i] < keys[j]
	})
	return n, keys
}

// warnings gathers every warning of the scan and the fit, most serious
// first: the scan's own (with their level), then the fit's and the
// report's notes as cautions and notes.
func (in Input) warnings() []Warning {
	var w []Warning
	w = append(w, in.Warnings...)
	if in.FitError != "" {
		w = append(w, Warning{"caution", "no fit: " + in.FitError})
	}
	if c := in.Curve; c != nil {
		for _, s := range c.Warnings {
			w = append(w, Warning{"caution", s})
		}
		for _, m := range c.Minima {
			for _, s := range m.Warnings {
				w = append(w, Warning{"caution", m.Label + ": " + s})
			}
		}
	}
	if s := in.Surface; s != nil {
		for _, x := range s.Warnings {
			w = append(w, Warning{"caution", x})
		}
	}
	if an := in.Analysis; an != nil {
		for _, x := range an.Warnings {
			w = append(w, Warning{"caution", x})
		}
	}
	for _, n := range in.Notes {
		w = append(w, Warning{"note", n})
	}
	rank := map[string]int{"serious": 0, "caution": 1, "note": 2}
	sort.SliceStable(w, func(i, j int) bool { return rank[w[i].Level] < rank[w[j].Level] })
	return w
}

func (in Input) sections() []section {
	c := in.Conditions
	var out []section
	n, keys := countStates(in.Points)
	var counts []string
	for _, k := range keys {
		counts = append(counts, fmt.Sprintf("%d %s", n[k], k))
	}
	var failed []Point
	for _, p := range in.sortedPoints() {
		if p.State == "failed" {
			failed = append(failed, p)
		}
	}
	// At the top: the alarm box, for what could mislead only; then every
	// other warning and the failed points.
	var serious, other []string
	for _, w := range in.warnings() {
		if w.Level == "serious" {
			serious = append(serious, w.Text)
		} else {
			other = append(other, w.Level+": "+w.Text)
		}
	}
	if len(serious) > 0 {
		out = append(out, section{Title: "ATTENTION", Alert: true, List: serious, Paras: []string{
			"These results may be wrong without looking wrong; check them before using the numbers."}})
	}
	if len(other) > 0 {
		out = append(out, section{Title: fmt.Sprintf("Warnings (%d)", len(other)), Warn: true, List: other})
	}
	if len(failed) > 0 {
		t := table{Head: []string{"point", "attempts", "last error"}}
		for _, p := range failed {
			t.Rows = append(t.Rows, []string{p.Key, fmt.Sprint(p.Attempts), oneLine(p.Error)})
		}
		out = append(out, section{Title: fmt.Sprintf("Failed points (%d)", len(failed)), Warn: true, Tables: []table{t},
			Paras: []string{"These points have no energy and are not in the fit."}})
	}
	var coords []string
	for _, a := range in.Axes {
		coords = append(coords, fmt.Sprintf("%s (%s, %s)", a.Name, a.Kind, unitSymbol(a.Unit)))
	}
	isotopes := "the most abundant isotope of every atom"
	if len(c.Isotopes) > 0 {
		isotopes = strings.Join(c.Isotopes, "; ")
	}
	cond := table{Head: []string{"condition", "value"}, Rows: [][]string{
		{"molecule", fmt.Sprintf("%s, charge %d, multiplicity %d", c.Formula, c.Charge, c.Multiplicity)},
		{"isotopes", isotopes},
		{"method", methodLabel(c)},
		{"basis", orDash(c.Basis)},
	}}
	if c.FrozenCore != "" {
		cond.Rows = append(cond.Rows, []string{"frozen core", c.FrozenCore})
	}
	if c.SCF != "" {
		cond.Rows = append(cond.Rows, []string{"SCF convergence", c.SCF})
	}
	cond.Rows = append(cond.Rows,
		[]string{"backend", orDash(c.Backend)},
		[]string{"scan", orDash(c.ScanKind)},
		[]string{"scanned", strings.Join(coords, "; ")},
		[]string{"points", fmt.Sprintf("%d: %s", len(in.Points), strings.Join(counts, ", "))},
		[]string{"mass model", orDash(in.MassModel)},
		[]string{"program", "wellscan " + c.Version},
		[]string{"date", c.Date.UTC().Format("2006-01-02")})
	if c.Dir != "" {
		cond.Rows = append([][]string{{"scan directory", c.Dir}}, cond.Rows...)
	}
	sec := section{Title: "Conditions", Tables: []table{cond}}
	if len(c.Geometry) > 0 {
		g := table{Head: []string{"atom", "x / Å", "y / Å", "z / Å"}}
		for _, line := range c.Geometry {
			f := strings.Fields(line)
			if len(f) == 4 {
				g.Rows = append(g.Rows, f)
			}
		}
		sec.Tables = append(sec.Tables, g)
		sec.Paras = append(sec.Paras, "Reference geometry (the second table): the scan moves only the scanned coordinates away from it.")
	}
	if c.Engine == "model" {
		sec.Paras = append([]string{"The energies come from an analytic MODEL potential, not from an electronic-structure calculation."}, sec.Paras...)
	}
	out = append(out, sec)
	if in.HasEnergies() {
		out = append(out, section{Title: "Curve", Figure: true, Paras: []string{"Figure: curve.svg (also curve.png); the numbers behind it are in curve.csv and fit.json."}})
	} else {
		out = append(out, section{Title: "Curve", Paras: []string{"No figure and no fit: no point has an energy yet."}})
	}
	out = append(out, analysisSections(in)...)
	if cr := in.Curve; cr != nil {
		out = append(out, curveSections(in, cr)...)
	}
	if sr := in.Surface; sr != nil {
		out = append(out, surfaceSection(in, sr))
	}
	if s := spinSection(in); s != nil {
		out = append(out, *s)
	}
	return out
}

// spinSection is the ⟨S²⟩ table of a scan whose points carry ⟨S²⟩ (UHF
// references): the exact value S(S+1) of the multiplicity, the range over
// the done points, and the points that deviate by more than 0.1 (common
// practice for flagging spin contamination). nil when no point has ⟨S²⟩.
func spinSection(in Input) *section {
	var have []Point
	for _, p := range in.sortedPoints() {
		if p.SSquared != nil && p.Energy != nil {
			have = append(have, p)
		}
	}
	if len(have) == 0 {
		return nil
	}
	s := float64(in.Conditions.Multiplicity-1) / 2
	exact := s * (s + 1)
	lo, hi := have[0], have[0]
	var off []string
	for _, p := range have {
		if *p.SSquared < *lo.SSquared {
			lo = p
		}
		if *p.SSquared > *hi.SSquared {
			hi = p
		}
		if math.Abs(*p.SSquared-exact) > 0.1 {
			off = append(off, p.Key)
		}
	}
	t := table{Head: []string{"quantity", "value"}, Rows: [][]string{
		{"exact S(S+1) for multiplicity " + fmt.Sprint(in.Conditions.Multiplicity), fmt.Sprintf("%.4f", exact)},
		{"lowest ⟨S²⟩", fmt.Sprintf("%.4f at %s", *lo.SSquared, lo.Key)},
		{"highest ⟨S²⟩", fmt.Sprintf("%.4f at %s", *hi.SSquared, hi.Key)},
		{"points off by more than 0.1", fmt.Sprintf("%d of %d", len(off), len(have))},
	}}
	sec := section{Title: "Spin (⟨S²⟩ of the UHF reference)", Tables: []table{t},
		Paras: []string{"⟨S²⟩ of every point is in curve.csv. A value well above S(S+1) means spin contamination; a jump between neighbours, another electronic state."}}
	if len(off) > 0 {
		if len(off) > 12 {
			off = append(off[:12], fmt.Sprintf("… %d more", len(off)-12))
		}
		sec.List = []string{"off by more than 0.1: " + strings.Join(off, ", ")}
	}
	return &sec
}

func orDash(s string) string {
	if s == "" {
		return "—"
	}
	return s
}

func oneLine(s string) string { return strings.Join(strings.Fields(s), " ") }

func curveSections(in Input, cr *fit.Result) []section {
	a := in.Axes[0]
	var out []section
	for _, m := range cr.Minima {
		pos := table{Head: []string{"quantity", "value", "unit"}}
		if cr.Kind == "angle" {
			pos.Rows = append(pos.Rows, []string{a.Name + "_e", valueErr(m.ThetaEDegree, m.ThetaEUnc, 4), "°"},
				[]string{"k", valueErr(m.KAngle, m.KAngleUnc, 6), "E_h/rad²"})
		} else {
			pos.Rows = append(pos.Rows, []string{a.Name + "_e", valueErr(m.REAngstrom, m.REUncAng, 6), "Å"},
				[]string{a.Name + "_e", valueErr(m.XE, m.XEUnc, 6), "bohr"},
				[]string{"k", valueErr(m.K, m.KUnc, 6), "E_h/bohr²"},
				[]string{"k", fmt.Sprintf("%.2f", m.KNPerM), "N/m"})
		}
		pos.Rows = append(pos.Rows, []string{"E_min", valueErr(m.EMin, m.EMinUnc, 8), "E_h"},
			[]string{"local polynomial", fmt.Sprintf("degree %d, %d points within %.3g E_h, rms residual %.1e E_h", m.Degree, m.WindowPoints, m.WindowEnergy, m.RMSResidual), ""})
		sec := section{Title: "Minimum: " + m.Label, Tables: []table{pos}}
		if len(m.Isotopologues) > 0 {
			mu := "μ / amu"
			if !a.IsLength() {
				mu = "I / (amu·bohr²)" // effective moment of an angle (per rad²)
			}
			t := table{Head: []string{"isotopologue", mu, "ω_e / cm⁻¹", "ω_e x_e / cm⁻¹", "B_e / cm⁻¹", "α_e / cm⁻¹", "ZPE / cm⁻¹", "G(1)−G(0) / cm⁻¹", "D_e / eV", "D_0 / eV"}}
			var lv []string
			for _, k := range m.Isotopologues {
				name := k.Name
				if k.OneD {
					name += " (1-D along the scan)"
				}
				row := []string{name, fmt.Sprintf("%.6f", k.Mass), valueErr(k.OmegaE, k.OmegaEUnc, 3), withheldOr(k.Withheld, "omega_e_x_e_cm1", valueErr(k.OmegaExe, k.OmegaExeUnc, 4)),
					dashIfZero(k.Be, k.BeUnc, 6), withheldOr(k.Withheld, "alpha_e_cm1", dashIfZero(k.AlphaE, k.AlphaEUnc, 6)), withheldOr(k.Withheld, "zpe_cm1", valueErr(k.ZPE, k.ZPEUnc, 3)), withheldOr(k.Withheld, "fundamental_cm1", valueErr(k.Fundamental, k.FundamentalUnc, 3)),
					withheldOr(k.Withheld, "d_e_cm1", dashIfZero(k.DeEV, k.DeUnc/planner.HartreeInCm1*planner.HartreeInEV, 4)), withheldOr(k.Withheld, "d_0_cm1", dashIfZero(k.D0EV, k.D0Unc/planner.HartreeInCm1*planner.HartreeInEV, 4))}
				t.Rows = append(t.Rows, row)
				if len(k.Levels) > 0 {
					nv := min(len(k.Levels), 6)
					parts := make([]string, nv)
					for v := range nv {
						parts[v] = fmt.Sprintf("%.2f", k.Levels[v])
					}
					lv = append(lv, fmt.Sprintf("%s: G(v) / cm⁻¹ = %s (%d levels below the data's top)", name, strings.Join(parts, ", "), len(k.Levels)))
				}
			}
			sec.Tables = append(sec.Tables, t)
			sec.List = lv
			sec.Paras = append(sec.Paras, "Constants per isotopologue, ± the calibrated uncertainty (standard error and window/degree spread; see the fit documentation); "+
				"levels from a grid calculation on a spline through all points ("+orDash(m.LevelPotential)+").")
		}
		out = append(out, sec)
	}
	var g table
	g.Head = []string{"global fit", "r_e / Å", "D_e / eV", "points", "rms residual / cm⁻¹"}
	for _, mf := range []*fit.MorseFit{cr.Morse, cr.ExtendedMorse} {
		if mf == nil {
			continue
		}
		g.Rows = append(g.Rows, []string{mf.Form, fmt.Sprintf("%.6f", mf.REAngstrom), fmt.Sprintf("%.4f", mf.De*planner.HartreeInEV), fmt.Sprint(mf.Points), fmt.Sprintf("%.2f", mf.RMSResidual*planner.HartreeInCm1)})
	}
	if len(g.Rows) > 0 {
		out = append(out, section{Title: "Global fits", Tables: []table{g}, Paras: []string{
			"Fits of one analytic form to all points. Their D_e is an extrapolation unless the scan reaches the dissociation limit."}})
	}
	return out
}

// withheldOr returns "withheld" when the fit withheld the quantity key,
// else s.
func withheldOr(w map[string]string, key, s string) string {
	if _, ok := w[key]; ok {
		return "withheld"
	}
	return s
}

func dashIfZero(v, se float64, d int) string {
	if v == 0 {
		return "—"
	}
	return valueErr(v, se, d)
}

func surfaceSection(in Input, s *fit.SurfaceResult) section {
	ax, ay := in.Axes[0], in.Axes[1]
	t := table{Head: []string{"quantity", "value", "unit"}, Rows: [][]string{
		{ax.Name, fmt.Sprintf("%.*f", ax.Digits+2, fromInternal(ax, s.X)), unitSymbol(ax.Unit)},
		{ay.Name, fmt.Sprintf("%.*f", ay.Digits+2, fromInternal(ay, s.Y)), unitSymbol(ay.Unit)},
		{"E", fmt.Sprintf("%.8f", s.E), "E_h"},
		{"surface", fmt.Sprintf("degree %d, %d points, rms residual %.1e E_h", s.Degree, s.Points, s.RMSResidual), ""},
	}}
	for i, f := range s.Frequencies {
		t.Rows = append(t.Rows, []string{fmt.Sprintf("harmonic mode %d", i+1), fmt.Sprintf("%.1f", f), "cm⁻¹"})
	}
	return section{Title: "Stationary point of the surface", Tables: []table{t},
		Paras: []string{"Harmonic wavenumbers from the 2×2 GF problem along the two scanned coordinates."}}
}

func mdCell(s string) string { return strings.ReplaceAll(s, "|", `\|`) }

// WriteMarkdown writes summary.md.
func WriteMarkdown(w io.Writer, in Input) error {
	in = in.cleaned()
	var b bytes.Buffer
	title := in.Conditions.Title
	if title == "" {
		title = in.Conditions.Formula + " scan"
	}
	fmt.Fprintf(&b, "# Scan report: %s\n\n", title)
	for _, s := range in.sections() {
		h := s.Title
		if s.Alert {
			h = "⚠ " + strings.ToUpper(h)
		}
		fmt.Fprintf(&b, "## %s\n\n", h)
		for _, p := range s.Paras {
			if s.Alert {
				p = "**" + p + "**"
			}
			fmt.Fprintf(&b, "%s\n\n", p)
		}
		if s.Figure {
			b.WriteString("![potential-energy curve](curve.svg)\n\n")
		}
		for _, t := range s.Tables {
			b.WriteString("|")
			for _, h := range t.Head {
				b.WriteString(" " + mdCell(h) + " |")
			}
			b.WriteString("\n|")
			for range t.Head {
				b.WriteString("---|")
			}
			b.WriteString("\n")
			for _, r := range t.Rows {
				b.WriteString("|")
				for _, c := range r {
					b.WriteString(" " + mdCell(c) + " |")
				}
				b.WriteString("\n")
			}
			b.WriteString("\n")
		}
		for _, l := range s.List {
			fmt.Fprintf(&b, "- %s\n", l)
		}
		if len(s.List) > 0 {
			b.WriteString("\n")
		}
	}
	if _, err := w.Write(b.Bytes()); err != nil {
		return fmt.Errorf("report: summary.md: %w", err)
	}
	return nil
}

var htmlPage = template.Must(template.New("summary").Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<title>Scan report: {{.Title}}</title>
<style>
body { font-family: "DejaVu Sans", "Liberation Sans", sans-serif; max-width: 1100px; margin: 2em auto; color: #222; line-height: 1.4; }
h1 { border-bottom: 3px solid #0072b2; padding-bottom: .2em; }
h2 { color: #0072b2; margin-top: 1.6em; }
section.alert { border: 3px solid #d55e00; background: #fff3ec; padding: .2em 1em 1em; }
section.alert h2 { color: #d55e00; }
section.warn { border-left: 8px solid #e69f00; background: #fff8e6; padding: .2em 1em .6em; }
table { border-collapse: collapse; margin: .6em 0; }
th, td { border: 1px solid #bbb; padding: .25em .6em; text-align: left; font-variant-numeric: tabular-nums; }
th { background: #eef4f9; }
figure { margin: 0; }
figure svg { width: 100%; height: auto; }
</style>
</head>
<body>
<h1>Scan report: {{.Title}}</h1>
{{range .Sections}}<section{{if .Alert}} class="alert"{{else if .Warn}} class="warn"{{end}}>
<h2>{{if .Alert}}⚠ {{end}}{{.Title}}</h2>
{{range .Paras}}<p>{{if call $.Bold .}}<strong>{{.}}</strong>{{else}}{{.}}{{end}}</p>
{{end}}{{if .Figure}}<figure id="curve">{{$.SVG}}</figure>
{{end}}{{range .Tables}}<table>
{{if call $.HasHead .Head}}<tr>{{range .Head}}<th>{{.}}</th>{{end}}</tr>{{end}}
{{range .Rows}}<tr>{{range .}}<td>{{.}}</td>{{end}}</tr>
{{end}}</table>
{{end}}{{if .List}}<ul>
{{range .List}}<li>{{.}}</li>
{{end}}</ul>
{{end}}</section>
{{end}}</body>
</html>
`))

// WriteHTML writes summary.html with the figure (SVG, as written by
// [Figure.WriteSVG]) embedded inline.
func WriteHTML(w io.Writer, in Input, svg []byte) error {
	in = in.cleaned()
	// The XML declaration and doctype are not allowed inside HTML.
	s := string(svg)
	if i := strings.Index(s, "<svg"); i >= 0 {
		s = s[i:]
	}
	title := in.Conditions.Title
	if title == "" {
		title = in.Conditions.Formula + " scan"
	}
	secs := in.sections()
	alert := map[string]bool{}
	for _, sec := range secs {
		if sec.Alert {
			for _, p := range sec.Paras {
				alert[p] = true
			}
		}
	}
	data := struct {
		Title    string
		Sections []section
		SVG      template.HTML
		Bold     func(string) bool
		HasHead  func([]string) bool
	}{title, secs, template.HTML(s), func(p string) bool { return alert[p] }, func(h []string) bool { return strings.Join(h, "") != "" }} // #nosec: the SVG is our own output
	if err := htmlPage.Execute(w, data); err != nil {
		return fmt.Errorf("report: summary.html: %w", err)
	}
	return nil
}

// modeWord is "relaxed" or "rigid".
func modeWord(mode string) string {
	if mode == "relaxed" {
		return "relaxed"
	}
	return "rigid"
}
