package report

import (
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"image/color"
	"io"
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"

	"wellscan/fit/forcefield"
	"wellscan/planner"
)

// FFSample is one done force-field displacement: its key, energy
// (hartree) and, when the engine reports it, the dipole (e·bohr, about the
// coordinate origin).
type FFSample struct {
	Key    string
	Energy float64
	Dipole *[3]float64
}

// FFGradientWarn is the largest Cartesian gradient component (hartree/bohr)
// at the reference below which no warning is printed: 4.5e-4 is the
// customary maximum-force criterion of a converged geometry optimisation
// (common practice).
const FFGradientWarn = 4.5e-4

// FFMode is one harmonic mode of one isotopologue.
type FFMode struct {
	Index             int      `json:"mode"`
	WavenumberCm1     float64  `json:"harmonic_cm1"` // negative: imaginary
	Imaginary         bool     `json:"imaginary,omitempty"`
	IntensityKmPerMol *float64 `json:"intensity_km_per_mol,omitempty"`
	ReducedMassAmu    float64  `json:"reduced_mass_amu"`
	ForceConstMdynA   float64  `json:"force_constant_mdyn_per_angstrom"`
	// Displacement is the normalised Cartesian displacement (3N).
	Displacement []float64 `json:"displacement"`
}

// FFBand is one anharmonic level.
type FFBand struct {
	Label          string   `json:"band"`
	Kind           string   `json:"kind"` // fundamental, overtone, combination
	HarmonicCm1    float64  `json:"harmonic_cm1"`
	Cm1            float64  `json:"vpt2_cm1"`
	DeperturbedCm1 float64  `json:"deperturbed_cm1"`
	Resonant       bool     `json:"fermi_resonance,omitempty"`
	Partners       []string `json:"resonance_partners,omitempty"`
	// IntensityKmPerMol is the double-harmonic intensity, fundamentals only.
	IntensityKmPerMol *float64 `json:"harmonic_intensity_km_per_mol,omitempty"`
	DeperturbedOnly   bool     `json:"deperturbed_only,omitempty"`
}

// FFIsotopologue is the result for one set of masses.
type FFIsotopologue struct {
	Name       string    `json:"name"`
	MassesAmu  []float64 `json:"masses_amu"`
	Modes      []FFMode  `json:"modes"`
	ZPECm1     float64   `json:"harmonic_zpe_cm1"`
	RotCm1     Cm1Triple `json:"rotational_constants_cm1"` // A, B, C; infinite (linear axis) written as null
	Anharmonic bool      `json:"anharmonic"`
	// AnharmonicWithheld says why a computed quartic force field gives no
	// VPT2 numbers (degenerate modes); empty otherwise.
	AnharmonicWithheld string       `json:"anharmonic_withheld,omitempty"`
	Bands              []FFBand     `json:"bands,omitempty"`
	X                  [][]float64  `json:"x_cm1,omitempty"`
	Resonances         []string     `json:"fermi_resonances,omitempty"`
	AlphaCm1           [][3]float64 `json:"alpha_cm1,omitempty"`
	B0Cm1              *Cm1Triple   `json:"b0_cm1,omitempty"`
	QuarticStep        float64      `json:"quartic_step_dimensionless,omitempty"`
	Warnings           []string     `json:"warnings,omitempty"`
}

// FFReport is the whole analysis of a force-field job.
type FFReport struct {
	Formula        string           `json:"formula"`
	Method         string           `json:"method"`
	Atoms          []string         `json:"atoms"`
	ReferenceBohr  [][3]float64     `json:"reference_geometry_bohr"`
	SymmetryOps    []string         `json:"symmetry_operations"`
	SymShiftBohr   float64          `json:"symmetrisation_shift_bohr"`
	HessianStep    float64          `json:"hessian_step_amu_half_bohr"`
	GradientMax    float64          `json:"max_gradient_hartree_per_bohr"`
	PointsUsed     int              `json:"displacements_used"`
	PointsComputed int              `json:"displacements_computed"`
	Intensities    bool             `json:"intensities"`
	Isotopologues  []FFIsotopologue `json:"isotopologues"`
	Warnings       []string         `json:"warnings,omitempty"`
}

// ErrFFIncomplete is returned while stage-1 displacements are missing.
var ErrFFIncomplete = errors.New("report: force field incomplete")

// AnalyzeForceField turns the done displacements of a [forcefield] job
// into harmonic and (where stage 2 is done) VPT2 results for every
// isotopologue.
func AnalyzeForceField(spec *planner.Spec, samples []FFSample) (*FFReport, error) {
	ff := spec.ForceField()
	if ff == nil {
		return nil, fmt.Errorf("report: %s has no [forcefield]", spec.File())
	}
	var ps []planner.Sample
	byKey := map[string]FFSample{}
	for _, s := range samples {
		ps = append(ps, planner.Sample{Key: s.Key, Energy: s.Energy})
		byKey[s.Key] = s
	}
	plan, err := spec.PlanForceField(ps)
	if err != nil && plan == nil {
		return nil, err
	}
	if len(plan.Missing) > 0 {
		return nil, fmt.Errorf("%w: %d of the stage-1 displacements are not done (first: %s)", ErrFFIncomplete, len(plan.Missing), plan.Missing[0])
	}
	rep := &FFReport{Formula: ff.Ref.Formula(), HessianStep: ff.HessStep, SymShiftBohr: ff.SymShift, GradientMax: plan.GradientMax, PointsComputed: len(samples)}
	if err != nil {
		rep.Warnings = append(rep.Warnings, err.Error())
	}
	e := spec.Engine
	switch e.Kind {
	case "builtin":
		rep.Method = strings.ToUpper(e.Method) + "/" + e.Basis
	default:
		rep.Method = e.Kind
	}
	for _, op := range ff.Ops {
		rep.SymmetryOps = append(rep.SymmetryOps, op.Name)
	}
	pos := make([][3]float64, len(ff.Ref.Atoms))
	for a, at := range ff.Ref.Atoms {
		pos[a] = at.Pos
		rep.Atoms = append(rep.Atoms, at.Element.Symbol)
	}
	rep.ReferenceBohr = pos
	if plan.GradientMax > FFGradientWarn {
		rep.Warnings = append(rep.Warnings, fmt.Sprintf("the gradient at the reference is not small: max |∂E/∂x| = %.2e hartree/bohr (estimated from the ±1 steps; a converged minimum has < %.1e): harmonic and anharmonic numbers are those of a non-stationary point", plan.GradientMax, FFGradientWarn))
	}
	if ff.SymShift > 1e-6 {
		rep.Warnings = append(rep.Warnings, fmt.Sprintf("the reference geometry was symmetrised (%s): atoms moved by up to %.2e bohr", strings.Join(rep.SymmetryOps, ", "), ff.SymShift))
	}
	// Resolve a key through the symmetry mapping.
	all := map[string]planner.FFPoint{}
	for _, p := range plan.Hess {
		all[p.Key] = p
	}
	for _, md := range plan.Modes {
		for _, p := range md.Points {
			all[p.Key] = p
		}
	}
	lookup := func(key string) (float64, *[3]float64, error) {
		p, ok := all[key]
		if !ok {
			return 0, nil, fmt.Errorf("report: force field: no displacement %q in the plan", key)
		}
		src := key
		if p.Rep != "" {
			src = p.Rep
		}
		s, ok := byKey[src]
		if !ok {
			return 0, nil, fmt.Errorf("%w: displacement %s is not done", ErrFFIncomplete, src)
		}
		if s.Dipole == nil || p.Rep == "" {
			return s.Energy, s.Dipole, nil
		}
		op := ff.Ops[p.Op]
		q := float64(ff.Ref.Charge)
		var d [3]float64
		var rel [3]float64
		for k := range 3 {
			rel[k] = s.Dipole[k] - q*op.Com[k]
		}
		for k := range 3 {
			d[k] = q*op.Com[k] + op.R[k][0]*rel[0] + op.R[k][1]*rel[1] + op.R[k][2]*rel[2]
		}
		return s.Energy, &d, nil
	}
	used := map[string]bool{}
	// Cartesian Hessian from stage 1.
	parent := ff.Isos[0].Masses
	hc, err := forcefield.CartesianHessian(parent, ff.Basis, plan.HessianMW)
	if err != nil {
		return nil, err
	}
	// Dipole derivatives along the basis.
	rep.Intensities = true
	var pats [][]float64
	var dmu [][3]float64
	_, mu0, _ := lookup("hess.ref")
	for i, d := range ff.Basis {
		kp := fmt.Sprintf("hess.d%d=+1", i+1)
		km := fmt.Sprintf("hess.d%d=-1", i+1)
		used[kp], used[km] = true, true
		_, mp, err1 := lookup(kp)
		_, mm, err2 := lookup(km)
		if err := errors.Join(err1, err2); err != nil {
			return nil, err
		}
		if mp == nil || mm == nil || mu0 == nil {
			rep.Intensities = false
			break
		}
		p := make([]float64, len(d))
		for c := range d {
			p[c] = d[c] / math.Sqrt(parent[c/3])
		}
		var g [3]float64
		for k := range 3 {
			g[k] = (mp[k] - mm[k]) / (2 * ff.HessStep)
		}
		pats, dmu = append(pats, p), append(dmu, g)
	}
	var dmuCart [][3]float64
	if rep.Intensities {
		dmuCart, err = forcefield.CartesianDipoleDerivatives(pos, parent, float64(ff.Ref.Charge), *mu0, pats, dmu)
		if err != nil {
			return nil, err
		}
		if ff.Ref.Charge != 0 {
			rep.Warnings = append(rep.Warnings, "the molecule is charged: its dipole, and so the intensities, depend on the origin (taken as the coordinate origin)")
		}
	} else {
		rep.Warnings = append(rep.Warnings, "the engine reported no dipoles: no intensities")
	}
	for _, iso := range ff.Isos {
		h, err := forcefield.Analyze(pos, iso.Masses, hc)
		if err != nil {
			return nil, fmt.Errorf("report: force field, %s: %w", iso.Name, err)
		}
		fi := FFIsotopologue{Name: iso.Name, MassesAmu: iso.Masses, ZPECm1: h.ZPECm1, RotCm1: h.RotCm1}
		var inten []float64
		if rep.Intensities {
			inten, err = h.Intensities(dmuCart)
			if err != nil {
				return nil, err
			}
		}
		for i := range h.NVib() {
			m := FFMode{Index: i + 1, WavenumberCm1: h.WavenumbersCm1[i], Imaginary: h.Imaginary[i], ReducedMassAmu: h.ReducedMassAmu[i], ForceConstMdynA: h.ForceConstMdynPerA[i], Displacement: h.Displacement[i]}
			if inten != nil {
				v := inten[i]
				m.IntensityKmPerMol = &v
			}
			if h.Imaginary[i] {
				fi.Warnings = append(fi.Warnings, fmt.Sprintf("mode %d is imaginary (%.1fi cm⁻¹): the reference is not a minimum", i+1, -h.WavenumbersCm1[i]))
			}
			fi.Modes = append(fi.Modes, m)
		}
		for _, md := range plan.Modes {
			if md.Iso.Name != iso.Name {
				continue
			}
			an, err := ffAnharmonic(h, md, ff.QuarticStep, lookup, used)
			if err != nil {
				if errors.Is(err, ErrFFIncomplete) {
					fi.Warnings = append(fi.Warnings, "quartic force field not complete yet: "+err.Error())
					break
				}
				if errors.Is(err, forcefield.ErrDegenerate) {
					// The harmonic analysis stands; no anharmonic number
					// is given rather than a wrong one.
					fi.AnharmonicWithheld = strings.TrimPrefix(err.Error(), "forcefield: bad input (forcefield: degenerate modes): ")
					fi.Warnings = append(fi.Warnings, "VPT2 withheld: "+fi.AnharmonicWithheld)
					break
				}
				return nil, fmt.Errorf("report: force field, %s: %w", iso.Name, err)
			}
			fi.Anharmonic = true
			fi.QuarticStep = ff.QuarticStep
			fi.X = an.X
			fi.AlphaCm1 = an.AlphaCm1
			b0 := Cm1Triple(an.B0Cm1)
			fi.B0Cm1 = &b0
			fi.Warnings = append(fi.Warnings, an.Warnings...)
			for _, r := range an.Resonances {
				kind := fmt.Sprintf("ω%d ≈ ω%d + ω%d", r.A+1, r.B+1, r.C+1)
				if r.B == r.C {
					kind = fmt.Sprintf("ω%d ≈ 2ω%d", r.A+1, r.B+1)
				}
				fi.Resonances = append(fi.Resonances, fmt.Sprintf("%s (gap %.1f cm⁻¹, coupling %.2f cm⁻¹; deperturbed and diagonalised)", kind, r.GapCm1, r.CouplingCm1))
			}
			add := func(kind string, bs []forcefield.Band) {
				for _, b := range bs {
					fb := FFBand{Label: b.Label, Kind: kind, HarmonicCm1: b.HarmonicCm1, Cm1: b.Cm1, DeperturbedCm1: b.DeperturbedCm1, Resonant: b.Resonant, Partners: b.Partners, DeperturbedOnly: b.DeperturbedOnly}
					if kind == "fundamental" && inten != nil {
						for i, q := range b.Quanta {
							if q == 1 {
								v := inten[i]
								fb.IntensityKmPerMol = &v
							}
						}
					}
					fi.Bands = append(fi.Bands, fb)
				}
			}
			add("fundamental", an.Fundamentals)
			add("overtone", an.Overtones)
			add("combination", an.Combinations)
		}
		rep.Isotopologues = append(rep.Isotopologues, fi)
	}
	rep.PointsUsed = len(plan.Hess)
	for _, md := range plan.Modes {
		rep.PointsUsed += len(md.Points)
	}
	return rep, nil
}

// ffAnharmonic evaluates the QFF of one isotopologue and runs VPT2.
func ffAnharmonic(h *forcefield.Harmonic, md planner.FFModes, step float64, lookup func(string) (float64, *[3]float64, error), used map[string]bool) (*forcefield.Anharmonic, error) {
	n := h.NVib()
	if len(md.L) != n {
		return nil, fmt.Errorf("planned %d modes, analysis has %d", len(md.L), n)
	}
	// The planned modes and the analysis' modes come from the same Hessian:
	// equal up to sign (and rounding).
	sign := make([]float64, n)
	for i := range n {
		d := 0.0
		for c := range md.L[i] {
			d += md.L[i][c] * h.L[i][c]
		}
		if math.Abs(math.Abs(d)-1) > 1e-6 {
			return nil, fmt.Errorf("mode %d: planned and analysed normal modes differ (overlap %.8f); was the spec changed after stage 1?", i+1, d)
		}
		sign[i] = math.Copysign(1, d)
	}
	keyOf := map[string]string{}
	for _, p := range md.Points {
		keyOf[fmt.Sprint(p.Steps)] = p.Key
	}
	steps := make([]float64, n)
	for i := range steps {
		steps[i] = step
	}
	q, err := forcefield.QFFFromEnergies(n, steps, func(d forcefield.Displacement) (float64, error) {
		key := "hess.ref"
		zero := true
		for _, s := range d.Steps {
			if s != 0 {
				zero = false
			}
		}
		if !zero {
			var ok bool
			key, ok = keyOf[fmt.Sprint(d.Steps)]
			if !ok {
				return 0, fmt.Errorf("no planned displacement with steps %v", d.Steps)
			}
		}
		used[key] = true
		e, _, err := lookup(key)
		return e, err
	})
	if err != nil {
		return nil, err
	}
	for i := range n {
		for j := range n {
			for k := range n {
				q.Cubic[i][j][k] *= sign[i] * sign[j] * sign[k]
			}
		}
	}
	return forcefield.VPT2(h, q, forcefield.VPT2Options{})
}

// ---- output ----

// Cm1Triple is A, B, C in cm⁻¹; an infinite constant (the axis of a
// linear molecule) is written as JSON null.
type Cm1Triple [3]float64

// MarshalJSON writes null for infinite entries.
func (c Cm1Triple) MarshalJSON() ([]byte, error) {
	parts := make([]string, 3)
	for k, v := range c {
		if math.IsInf(v, 0) || math.IsNaN(v) {
			parts[k] = "null"
			continue
		}
		parts[k] = strconv.FormatFloat(v, 'g', -1, 64)
	}
	return []byte("[" + strings.Join(parts, ",") + "]"), nil
}

// UnmarshalJSON reads null as +Inf.
func (c *Cm1Triple) UnmarshalJSON(b []byte) error {
	var v [3]*float64
	if err := json.Unmarshal(b, &v); err != nil {
		return err
	}
	for k := range v {
		c[k] = math.Inf(1)
		if v[k] != nil {
			c[k] = *v[k]
		}
	}
	return nil
}

// WriteFFJSON writes the report as indented JSON.
func WriteFFJSON(w io.Writer, r *FFReport) error {
	b, err := json.MarshalIndent(r, "", "  ")
	if err != nil {
		return fmt.Errorf("report: force field JSON: %w", err)
	}
	_, err = w.Write(append(b, '\n'))
	return err
}

// WriteFFCSV writes one row per isotopologue and band: harmonic modes as
// fundamentals, then overtones and combinations when the quartic force
// field is done.
func WriteFFCSV(w io.Writer, r *FFReport) error {
	cw := csv.NewWriter(w)
	_ = cw.Write([]string{"isotopologue", "band", "kind", "harmonic_cm1", "vpt2_cm1", "deperturbed_cm1", "intensity_km_per_mol", "fermi_resonance"})
	f := func(v float64) string { return strconv.FormatFloat(v, 'f', 2, 64) }
	for _, iso := range r.Isotopologues {
		if !iso.Anharmonic {
			for _, m := range iso.Modes {
				in := ""
				if m.IntensityKmPerMol != nil {
					in = f(*m.IntensityKmPerMol)
				}
				_ = cw.Write([]string{iso.Name, fmt.Sprintf("ν%d", m.Index), "fundamental", f(m.WavenumberCm1), "", "", in, ""})
			}
			continue
		}
		for _, b := range iso.Bands {
			in := ""
			if b.IntensityKmPerMol != nil {
				in = f(*b.IntensityKmPerMol)
			}
			_ = cw.Write([]string{iso.Name, b.Label, b.Kind, f(b.HarmonicCm1), f(b.Cm1), f(b.DeperturbedCm1), in, strings.Join(b.Partners, " ")})
		}
	}
	cw.Flush()
	return cw.Error()
}

// WriteFFMarkdown writes the tables people read: per isotopologue the
// harmonic modes with intensities, and the VPT2 bands.
func WriteFFMarkdown(w io.Writer, r *FFReport) error {
	var b strings.Builder
	fmt.Fprintf(&b, "# Force field of %s, %s\n\n", r.Formula, r.Method)
	fmt.Fprintf(&b, "Symmetry operations used: %s. Stage-1 step %.3g amu^½·bohr; %d displacements in the plan, %d computed.\n", strings.Join(r.SymmetryOps, ", "), r.HessianStep, r.PointsUsed, r.PointsComputed)
	fmt.Fprintf(&b, "Largest gradient component at the reference: %.2e hartree/bohr.\n\n", r.GradientMax)
	for _, wmsg := range r.Warnings {
		fmt.Fprintf(&b, "**Warning:** %s\n\n", wmsg)
	}
	for _, iso := range r.Isotopologues {
		fmt.Fprintf(&b, "## %s\n\nMasses (amu): %s. Harmonic zero-point energy %.2f cm⁻¹. Rotational constants A, B, C = %s cm⁻¹.\n\n", iso.Name, joinF(iso.MassesAmu, 6), iso.ZPECm1, joinF(iso.RotCm1[:], 5))
		for _, wmsg := range iso.Warnings {
			fmt.Fprintf(&b, "**Warning:** %s\n\n", wmsg)
		}
		b.WriteString("| mode | ω / cm⁻¹ | intensity / (km/mol) | reduced mass / amu | force constant / (mdyn/Å) |\n|---|---|---|---|---|\n")
		for _, m := range iso.Modes {
			w := fmt.Sprintf("%.2f", m.WavenumberCm1)
			if m.Imaginary {
				w = fmt.Sprintf("%.2fi", -m.WavenumberCm1)
			}
			in := "—"
			if m.IntensityKmPerMol != nil {
				in = fmt.Sprintf("%.2f", *m.IntensityKmPerMol)
			}
			fmt.Fprintf(&b, "| ν%d | %s | %s | %.4f | %.4f |\n", m.Index, w, in, m.ReducedMassAmu, m.ForceConstMdynA)
		}
		b.WriteString("\n")
		if iso.AnharmonicWithheld != "" {
			b.WriteString("Anharmonic (VPT2): withheld (see the warning above); the quartic points are kept in the store.\n\n")
			continue
		} else if !iso.Anharmonic {
			b.WriteString("Anharmonic (VPT2): not computed for this isotopologue (set quartic = true in its [[forcefield.isotopologue]] block).\n\n")
			continue
		}
		fmt.Fprintf(&b, "VPT2 (quartic step %.3g in dimensionless normal coordinates; modes numbered by increasing ω):\n\n", iso.QuarticStep)
		b.WriteString("| band | harmonic / cm⁻¹ | VPT2 / cm⁻¹ | intensity / (km/mol) | note |\n|---|---|---|---|---|\n")
		for _, band := range iso.Bands {
			in := ""
			if band.IntensityKmPerMol != nil {
				in = fmt.Sprintf("%.2f", *band.IntensityKmPerMol)
			}
			note := ""
			if band.Resonant {
				note = "Fermi resonance with " + strings.Join(band.Partners, ", ")
			}
			if band.DeperturbedOnly {
				note = "resonant with an unlisted level: deperturbed value"
			}
			fmt.Fprintf(&b, "| %s | %.2f | %.2f | %s | %s |\n", band.Label, band.HarmonicCm1, band.Cm1, in, note)
		}
		for _, res := range iso.Resonances {
			fmt.Fprintf(&b, "\nFermi resonance: %s\n", res)
		}
		b.WriteString("\nAnharmonicity constants x_ij / cm⁻¹:\n\n")
		for i, row := range iso.X {
			fmt.Fprintf(&b, "    x%d·: %s\n", i+1, joinF(row[:i+1], 3))
		}
		if iso.B0Cm1 != nil {
			fmt.Fprintf(&b, "\nVibrationally averaged rotational constants A0, B0, C0 = %s cm⁻¹\n", joinF(iso.B0Cm1[:], 5))
		}
		b.WriteString("\n")
	}
	_, err := io.WriteString(w, b.String())
	return err
}

func joinF(v []float64, prec int) string {
	var s []string
	for _, x := range v {
		if math.IsInf(x, 0) {
			s = append(s, "∞")
			continue
		}
		s = append(s, strconv.FormatFloat(x, 'f', prec, 64))
	}
	return strings.Join(s, ", ")
}

// FFFigure is the stick spectrum: one panel per isotopologue, harmonic
// sticks (light) and VPT2 fundamentals, overtones and combination bands
// (dark, overtones and combinations without intensities drawn short and
// dashed), heights in km/mol.
type FFFigure struct {
	plots []*plot.Plot
}

var (
	colHarmonic = color.RGBA{153, 153, 153, 255}
	colVPT2     = color.RGBA{0, 114, 178, 255}
	colOver     = color.RGBA{213, 94, 0, 255}
)

// NewFFFigure draws the stick spectrum of r.
func NewFFFigure(r *FFReport) (*FFFigure, error) {
	if len(r.Isotopologues) == 0 {
		return nil, errors.New("report: force field has no isotopologue")
	}
	fonts, err := newFonts()
	if err != nil {
		return nil, err
	}
	f := &FFFigure{}
	for _, iso := range r.Isotopologues {
		p := plot.New()
		fonts.plot(p)
		name := r.Formula
		if iso.Name != "parent" {
			name = iso.Name + " (isotopologue of " + r.Formula + ")"
		}
		p.Title.Text = fmt.Sprintf("%s, %s: stick spectrum", name, r.Method)
		p.X.Label.Text = "wavenumber / cm⁻¹"
		p.Y.Label.Text = "intensity / (km/mol)"
		if !r.Intensities {
			p.Y.Label.Text = "(no intensities: unit sticks)"
		}
		top := 0.0
		height := func(in *float64) float64 {
			if in == nil {
				return 1
			}
			return *in
		}
		// Degenerate modes (within 0.5 cm⁻¹, the rule VPT2 uses) are one
		// band: one stick with their summed intensity.
		type band struct{ x, y float64 }
		var harm []band
		for _, m := range iso.Modes {
			if m.Imaginary {
				continue
			}
			y := height(m.IntensityKmPerMol)
			if n := len(harm); n > 0 && math.Abs(harm[n-1].x-m.WavenumberCm1) < 0.5 {
				harm[n-1].y += y
				continue
			}
			harm = append(harm, band{m.WavenumberCm1, y})
		}
		for _, b := range harm {
			top = math.Max(top, b.y)
		}
		if top == 0 {
			top = 1
		}
		stick := func(x, y float64, c color.Color, dashed bool, width vg.Length) error {
			l, err := plotter.NewLine(plotter.XYs{{X: x, Y: 0}, {X: x, Y: y}})
			if err != nil {
				return err
			}
			l.Color = c
			l.Width = width
			if dashed {
				l.Dashes = []vg.Length{vg.Points(3), vg.Points(2)}
			}
			p.Add(l)
			return nil
		}
		xmax := 0.0
		for _, b := range harm {
			if err := stick(b.x, b.y, colHarmonic, false, vg.Points(4)); err != nil {
				return nil, err
			}
			xmax = math.Max(xmax, b.x)
		}
		legend := func(name string, c color.Color, dashed bool) {
			l, _ := plotter.NewLine(plotter.XYs{{X: 0, Y: 0}})
			l.Color = c
			l.Width = vg.Points(2)
			if dashed {
				l.Dashes = []vg.Length{vg.Points(3), vg.Points(2)}
			}
			p.Legend.Add(name, l)
		}
		legend("harmonic", colHarmonic, false)
		if iso.Anharmonic {
			for _, b := range iso.Bands {
				xmax = math.Max(xmax, b.Cm1)
				if b.Kind == "fundamental" {
					if err := stick(b.Cm1, height(b.IntensityKmPerMol), colVPT2, false, vg.Points(1.5)); err != nil {
						return nil, err
					}
					continue
				}
				if err := stick(b.Cm1, 0.08*top, colOver, true, vg.Points(1.2)); err != nil {
					return nil, err
				}
			}
			legend("VPT2 fundamentals", colVPT2, false)
			legend("VPT2 overtones and combinations (position only)", colOver, true)
		}
		p.X.Min, p.X.Max = 0, 100*math.Ceil(xmax*1.05/100)
		p.X.Tick.Marker = wavenumberTicks{}
		// headroom above the tallest stick for the legend (top right)
		p.Y.Min, p.Y.Max = 0, top*1.45
		p.Legend.Top = true
		f.plots = append(f.plots, p)
	}
	return f, nil
}

// wavenumberTicks labels every 500, 1000 or 2000 cm⁻¹ (whole numbers),
// with unlabelled minor ticks at a fifth of that.
type wavenumberTicks struct{}

func (wavenumberTicks) Ticks(lo, hi float64) []plot.Tick {
	step := 500.0
	switch {
	case hi-lo > 8000:
		step = 2000
	case hi-lo > 4000:
		step = 1000
	}
	var ts []plot.Tick
	for x := math.Ceil(lo/(step/5)) * step / 5; x <= hi+1e-9; x += step / 5 {
		t := plot.Tick{Value: x}
		if math.Abs(math.Mod(x, step)) < 1e-9 {
			t.Label = strconv.FormatFloat(x, 'f', 0, 64)
		}
		ts = append(ts, t)
	}
	return ts
}

func (f *FFFigure) draw(c draw.Canvas) {
	rows := len(f.plots)
	tiles := draw.Tiles{Rows: rows, Cols: 1, PadX: vg.Millimeter, PadY: 3 * vg.Millimeter, PadTop: 2 * vg.Millimeter, PadBottom: 2 * vg.Millimeter, PadLeft: 2 * vg.Millimeter, PadRight: 4 * vg.Millimeter}
	for i, p := range f.plots {
		p.Draw(tiles.At(c, 0, i))
	}
}

func (f *FFFigure) height() vg.Length {
	return vg.Length(math.Max(1, float64(len(f.plots)))) * 3.2 * vg.Inch
}

// WritePNG writes the figure as PNG at [PNGDPI].
func (f *FFFigure) WritePNG(w io.Writer) error {
	c := vgimg.PngCanvas{Canvas: vgimg.NewWith(vgimg.UseWH(FigureWidth, f.height()), vgimg.UseDPI(PNGDPI))}
	f.draw(draw.New(c))
	if _, err := c.WriteTo(w); err != nil {
		return fmt.Errorf("report: force-field PNG: %w", err)
	}
	return nil
}

// WriteSVG writes the figure as SVG.
func (f *FFFigure) WriteSVG(w io.Writer) error {
	c := vgsvg.New(FigureWidth, f.height())
	f.draw(draw.New(c))
	if _, err := c.WriteTo(w); err != nil {
		return fmt.Errorf("report: force-field SVG: %w", err)
	}
	return nil
}
