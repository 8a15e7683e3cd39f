package fit

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"
)

// Kind says what the scanned coordinate is.
type Kind int

const (
	// Distance is a bond length (or another length) in bohr.
	Distance Kind = iota
	// Angle is a bond angle or torsion in radian.
	Angle
)

func (k Kind) String() string {
	if k == Angle {
		return "angle"
	}
	return "distance"
}

// massUnit is the unit of the effective mass of a coordinate of this kind:
// for an angle it is a moment of inertia.
func (k Kind) massUnit() string {
	if k == Angle {
		return "amu·bohr²"
	}
	return "amu"
}

// MassSet is one isotopologue: either the two atomic masses of a diatomic
// (amu), or, for a one-dimensional scan of a polyatomic, the effective mass
// of the scanned coordinate (amu for a length, amu·bohr² for an angle; the
// scan's kinetic metric, computed by the caller from the geometry).
type MassSet struct {
	Name          string    `json:"name"`
	Masses        []float64 `json:"masses_amu,omitempty"`
	EffectiveMass float64   `json:"effective_mass,omitempty"`
}

// reduced returns the mass for the 1-D problem and whether the set
// describes a rotating diatomic.
func (m MassSet) reduced() (float64, bool, error) {
	if m.EffectiveMass != 0 {
		if !(m.EffectiveMass > 0) || math.IsInf(m.EffectiveMass, 0) {
			return 0, false, fmt.Errorf("fit: isotopologue %q: effective mass %g is not a positive finite number", m.Name, m.EffectiveMass)
		}
		return m.EffectiveMass, false, nil
	}
	if len(m.Masses) != 2 {
		return 0, false, fmt.Errorf("fit: isotopologue %q: need two atomic masses for a diatomic or an effective mass, got %d masses", m.Name, len(m.Masses))
	}
	a, b := m.Masses[0], m.Masses[1]
	if !(a > 0) || !(b > 0) || math.IsInf(a, 0) || math.IsInf(b, 0) {
		return 0, false, fmt.Errorf("fit: isotopologue %q: masses %g and %g amu must be positive and finite", m.Name, a, b)
	}
	return a * b / (a + b), true, nil
}

// Options controls [Curve]. The zero value is usable: a distance scan with
// mass-independent results only.
type Options struct {
	// Kind of the scanned coordinate (default Distance).
	Kind Kind
	// Isotopologues to analyse; the first is the principal one whose
	// constants appear at the top level of each minimum.
	Isotopologues []MassSet
	// Weights, optional, one per point: relative least-squares weights
	// (1/σ² up to a common factor).
	Weights []float64
	// Converged, optional, one per point. Points marked false are left out
	// unless IncludeUnconverged is set (then a warning says they were used).
	Converged          []bool
	IncludeUnconverged bool
	// WindowEnergy (hartree above the lowest sampled energy of the well)
	// selects the points of the local polynomial fit; default 0.02 E_h.
	// WindowPoints, when positive, instead takes that many points nearest
	// the minimum.
	WindowEnergy float64
	WindowPoints int
	// MinDegree and MaxDegree bound the polynomial degree chosen by
	// leave-one-out cross-validation (defaults 2 and 8; at most 8).
	MinDegree, MaxDegree int
	// EnergyNoise is the expected noise of the energies (hartree), used to
	// judge the fit residuals and to merge noise-level minima; default 1e-7.
	EnergyNoise float64
	// Asymptote, when given, is the dissociation limit (hartree) for D_e and
	// D_0. Without it the largest-r points are used if the curve has
	// flattened out there.
	Asymptote *float64
	// GridPoints for the level calculation (0: chosen from the well, at
	// most 600; the end, resolution and interpolation checks still run).
	GridPoints int
	// NoLevels skips the grid level calculation; NoGlobal skips the Morse
	// and extended Morse fits.
	NoLevels, NoGlobal bool
}

// Result is the analysis of one curve. It is plain data, safe to encode
// as JSON (no NaN or Inf values).
type Result struct {
	Kind          string    `json:"coordinate_kind"`
	PointsUsed    int       `json:"points_used"`
	Minima        []Minimum `json:"minima"`
	Morse         *MorseFit `json:"morse,omitempty"`
	ExtendedMorse *MorseFit `json:"extended_morse,omitempty"`
	Warnings      []string  `json:"warnings"`
	Isotopologues []MassSet `json:"isotopologue_masses,omitempty"`
}

// Minimum is one well of the curve. For a distance coordinate the
// position is given in Å (r_e_*); for an angle in degrees (theta_e_*).
// Fields named *_stderr are one standard error from the least-squares
// covariance; *_spread is the largest change seen when the polynomial
// degree or the fit window is varied (model sensitivity). The embedded
// [Constants] belong to the principal isotopologue.
type Minimum struct {
	Label          string  `json:"label"`
	XE             float64 `json:"x_e"`
	XEStderr       float64 `json:"x_e_stderr"`
	XEUnit         string  `json:"x_e_unit"`
	REAngstrom     float64 `json:"r_e_angstrom,omitempty"`
	REStderrAng    float64 `json:"r_e_stderr_angstrom,omitempty"`
	RESpreadAng    float64 `json:"r_e_spread_angstrom,omitempty"`
	ThetaEDegree   float64 `json:"theta_e_degree,omitempty"`
	ThetaEStderr   float64 `json:"theta_e_stderr_degree,omitempty"`
	EMin           float64 `json:"e_min_hartree"`
	EMinStderr     float64 `json:"e_min_stderr_hartree"`
	K              float64 `json:"k_hartree_per_bohr2,omitempty"`
	KStderr        float64 `json:"k_stderr_hartree_per_bohr2,omitempty"`
	KSpread        float64 `json:"k_spread_hartree_per_bohr2,omitempty"`
	KAngle         float64 `json:"k_hartree_per_rad2,omitempty"`
	KAngleStderr   float64 `json:"k_stderr_hartree_per_rad2,omitempty"`
	KMdynPerAng    float64 `json:"k_mdyn_per_angstrom,omitempty"`
	KNPerM         float64 `json:"k_n_per_m,omitempty"`
	KThreePoint    float64 `json:"k_three_point,omitempty"`
	F3             float64 `json:"f3_atomic_units"`
	F4             float64 `json:"f4_atomic_units"`
	Degree         int     `json:"poly_degree"`
	WindowPoints   int     `json:"window_points"`
	WindowEnergy   float64 `json:"window_energy_hartree"`
	RMSResidual    float64 `json:"rms_residual_hartree"`
	LevelPotential string  `json:"level_potential,omitempty"`
	// LevelZero is the minimum of the level potential (hartree): the zero
	// of levels_cm1, which may differ from e_min_hartree of the local
	// polynomial by the interpolation error.
	LevelZero float64 `json:"levels_zero_hartree,omitempty"`
	// The *_uncertainty fields are the calibrated uncertainties printed
	// as ±: one standard error and the window/degree spread added in
	// quadrature (see the package doc). Absent (0) when the points cannot
	// give one; Warnings then say so.
	XEUnc     float64 `json:"x_e_uncertainty,omitempty"`
	REUncAng  float64 `json:"r_e_uncertainty_angstrom,omitempty"`
	ThetaEUnc float64 `json:"theta_e_uncertainty_degree,omitempty"`
	EMinUnc   float64 `json:"e_min_uncertainty_hartree,omitempty"`
	KUnc      float64 `json:"k_uncertainty_hartree_per_bohr2,omitempty"`
	KAngleUnc float64 `json:"k_uncertainty_hartree_per_rad2,omitempty"`
	// Withheld names each quantity of this minimum that failed a sanity
	// gate (by its JSON key) with the reason; the quantity itself is
	// zeroed and not printed.
	Withheld map[string]string `json:"withheld,omitempty"`
	Constants
	Isotopologues []Constants `json:"isotopologues"`
	Warnings      []string    `json:"warnings"`
}

// Constants are the mass-dependent results for one isotopologue, in cm⁻¹
// unless the key says otherwise. Rotational constants are given only for a
// diatomic; for a polyatomic the block is labelled one-dimensional along the
// scan. levels_cm1 are G(v) above the minimum from the grid calculation;
// levels_wall_shift_cm1 is, per level, how far it moves with the way the
// curve is continued past the data ends (two continuations that agree with
// the data, see the package doc), or when the grid loses a point at each
// end, whichever is larger: a measure of how much the level depends on where
// the data stop. Levels moving more than 1 cm⁻¹ are not listed.
type Constants struct {
	Name            string    `json:"name"`
	Mass            float64   `json:"mass_amu"`  // amu for a distance; for an angle amu·bohr² (see MassUnit)
	MassUnit        string    `json:"mass_unit"` // "amu" or, for an angle, "amu·bohr²"
	OneD            bool      `json:"one_dimensional_along_scan"`
	OmegaE          float64   `json:"omega_e_cm1"`
	OmegaEStderr    float64   `json:"omega_e_stderr_cm1"`
	OmegaESpread    float64   `json:"omega_e_spread_cm1"`
	OmegaExe        float64   `json:"omega_e_x_e_cm1"`
	OmegaExeStderr  float64   `json:"omega_e_x_e_stderr_cm1"`
	OmegaExeSpread  float64   `json:"omega_e_x_e_spread_cm1"`
	Be              float64   `json:"b_e_cm1,omitempty"`
	BeStderr        float64   `json:"b_e_stderr_cm1,omitempty"`
	AlphaE          float64   `json:"alpha_e_cm1,omitempty"`
	AlphaEStderr    float64   `json:"alpha_e_stderr_cm1,omitempty"`
	AlphaESpread    float64   `json:"alpha_e_spread_cm1,omitempty"`
	DbarE           float64   `json:"dbar_e_cm1,omitempty"`
	Y00             float64   `json:"y00_cm1"`
	ZPE             float64   `json:"zpe_cm1"`
	ZPEGrid         float64   `json:"zpe_grid_cm1,omitempty"`
	Levels          []float64 `json:"levels_cm1"`
	LevelsWallShift []float64 `json:"levels_wall_shift_cm1"`
	DeltaG          []float64 `json:"delta_g_cm1"`
	Fundamental     float64   `json:"fundamental_cm1"`
	FundamentalGrid bool      `json:"fundamental_from_grid"`
	Bv              []float64 `json:"b_v_cm1,omitempty"`
	AlphaEGrid      float64   `json:"alpha_e_grid_cm1,omitempty"`
	DeCm1           float64   `json:"d_e_cm1,omitempty"`
	D0Cm1           float64   `json:"d_0_cm1,omitempty"`
	DeEV            float64   `json:"d_e_ev,omitempty"`
	D0EV            float64   `json:"d_0_ev,omitempty"`
	// Calibrated uncertainties (printed as ±; absent when the points cannot
	// give one). levels_uncertainty_cm1 covers, per level, the grid, the
	// interpolation between the points, the continuation past the data and
	// the noise of the energies (see the package doc).
	OmegaEUnc         float64   `json:"omega_e_uncertainty_cm1,omitempty"`
	OmegaExeUnc       float64   `json:"omega_e_x_e_uncertainty_cm1,omitempty"`
	BeUnc             float64   `json:"b_e_uncertainty_cm1,omitempty"`
	AlphaEUnc         float64   `json:"alpha_e_uncertainty_cm1,omitempty"`
	ZPEUnc            float64   `json:"zpe_uncertainty_cm1,omitempty"`
	ZPEGridUnc        float64   `json:"zpe_grid_uncertainty_cm1,omitempty"`
	FundamentalUnc    float64   `json:"fundamental_uncertainty_cm1,omitempty"`
	DeUnc             float64   `json:"d_e_uncertainty_cm1,omitempty"`
	D0Unc             float64   `json:"d_0_uncertainty_cm1,omitempty"`
	LevelsUncertainty []float64 `json:"levels_uncertainty_cm1,omitempty"`
	// NoBoundLevel is set when the well reaches its dissociation limit but
	// holds no vibrational level.
	NoBoundLevel bool `json:"no_bound_level,omitempty"`
	// Withheld names each quantity of this isotopologue that failed a
	// sanity gate (by its JSON key) with the reason.
	Withheld         map[string]string `json:"withheld,omitempty"`
	e0Hartree        float64           // absolute energy of v = 0 (hartree), for D_0
	ConstantWarnings []string          `json:"-"`
}

// massInfo is an isotopologue resolved to its 1-D mass.
type massInfo struct {
	set      MassSet
	mu       float64
	diatomic bool
}

// Curve analyses a one-dimensional scan: r in bohr (radian for Kind ==
// Angle), e in hartree, in any order. For every well it fits a local
// polynomial, reports the minimum, the force constants and, for each
// isotopologue in opt, the spectroscopic constants and the vibrational
// levels on a grid through an interpolant of all points, continued past the
// data ends. Every constant carries a calibrated uncertainty, and sanity
// gates withhold (zero, name in Withheld, explain in Warnings) any
// quantity that is impossible or not determined by the data; a dip that
// is no minimum (at the data edge, within the noise, or whose fitted
// minimum lies outside its points) is not listed at all, and the result's
// Warnings say why. Problems with the data are reported in the Warnings of
// the result and of each minimum; an error is returned only for invalid
// input or when no point can be used.
//
// Time and memory are linear in the number of points (the interpolant is a
// banded spline; the global Morse fits use at most [maxGlobalPoints]
// points); ctx is checked between the steps and inside the long loops.
func Curve(ctx context.Context, r, e []float64, opt Options) (*Result, error) {
	if len(r) != len(e) {
		return nil, fmt.Errorf("fit: %d coordinates but %d energies", len(r), len(e))
	}
	if opt.Weights != nil && len(opt.Weights) != len(r) {
		return nil, fmt.Errorf("fit: %d weights for %d points", len(opt.Weights), len(r))
	}
	if opt.Converged != nil && len(opt.Converged) != len(r) {
		return nil, fmt.Errorf("fit: %d converged flags for %d points", len(opt.Converged), len(r))
	}
	if err := checkOptions(opt); err != nil {
		return nil, err
	}
	opt = withDefaults(opt)
	if opt.MinDegree < 2 || opt.MaxDegree > 8 || opt.MinDegree > opt.MaxDegree {
		return nil, fmt.Errorf("fit: polynomial degrees %d–%d: need 2 ≤ min ≤ max ≤ 8", opt.MinDegree, opt.MaxDegree)
	}
	var masses []massInfo
	for _, s := range opt.Isotopologues {
		mu, dia, err := s.reduced()
		if err != nil {
			return nil, err
		}
		if opt.Kind == Angle {
			dia = false
		}
		masses = append(masses, massInfo{set: s, mu: mu, diatomic: dia})
	}
	res := &Result{Kind: opt.Kind.String(), Isotopologues: opt.Isotopologues}

	// Clean, filter and sort the points.
	type pt struct {
		r, e, w float64
		conv    bool
	}
	pts := make([]pt, 0, len(r))
	skipped := 0
	for i := range r {
		if i%ctxEvery == 0 {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
		}
		if math.IsNaN(r[i]) || math.IsInf(r[i], 0) || math.IsNaN(e[i]) || math.IsInf(e[i], 0) {
			return nil, fmt.Errorf("fit: point %d (r = %g, E = %g) is not finite", i, r[i], e[i])
		}
		if opt.Kind == Distance && !(r[i] > 0) {
			return nil, fmt.Errorf("fit: point %d: distance r = %g bohr is not positive", i, r[i])
		}
		w := 1.0
		if opt.Weights != nil {
			w = opt.Weights[i]
			if !(w >= 0) || math.IsInf(w, 0) {
				return nil, fmt.Errorf("fit: weight %g of point %d is not a non-negative finite number", w, i)
			}
		}
		c := opt.Converged == nil || opt.Converged[i]
		if !c && !opt.IncludeUnconverged {
			skipped++
			continue
		}
		if w == 0 {
			continue
		}
		pts = append(pts, pt{r[i], e[i], w, c})
	}
	if skipped > 0 {
		res.Warnings = append(res.Warnings, fmt.Sprintf("%d unconverged point(s) left out of every fit", skipped))
	}
	slices.SortStableFunc(pts, func(a, b pt) int { return cmpFloat(a.r, b.r) })
	for i := 1; i < len(pts); i++ {
		if pts[i].r == pts[i-1].r {
			return nil, fmt.Errorf("fit: two points at the same coordinate %g", pts[i].r)
		}
	}
	if len(pts) < 3 {
		return nil, fmt.Errorf("fit: %d usable points; a minimum needs at least 3", len(pts))
	}
	res.PointsUsed = len(pts)
	xs := make([]float64, len(pts))
	es := make([]float64, len(pts))
	ws := make([]float64, len(pts))
	conv := make([]bool, len(pts))
	for i, p := range pts {
		xs[i], es[i], ws[i], conv[i] = p.r, p.e, p.w, p.conv
	}
	pts = nil

	noiseTol := 10 * opt.EnergyNoise
	all := findWells(es, noiseTol)
	// A minimum must be bracketed by the data and deeper than the noise.
	var wells []well
	for _, w := range all {
		if why := wellRejected(xs, es, w, noiseTol, opt.Kind); why != "" {
			res.Warnings = append(res.Warnings, why)
			continue
		}
		wells = append(wells, w)
	}
	if len(wells) == 0 {
		res.Warnings = append(res.Warnings, noMinimumNote(xs, es, opt.Kind, noiseTol))
	}
	// The global fits come first: the level grid uses the better of them as
	// the shape of the curve between and beyond the points.
	if !opt.NoGlobal && opt.Kind == Distance && len(wells) == 1 {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		gx, ge := thinForGlobal(xs, es, wells[0].min)
		if mf, err := morseFit(ctx, gx, ge, 0); err == nil {
			res.Morse = mf
		} else if ctx.Err() != nil {
			return nil, ctx.Err()
		} else {
			res.Warnings = append(res.Warnings, "Morse fit: "+err.Error())
		}
		if mf, err := morseFit(ctx, gx, ge, 2); err == nil {
			res.ExtendedMorse = mf
		} else if ctx.Err() != nil {
			return nil, ctx.Err()
		} else {
			res.Warnings = append(res.Warnings, "extended Morse fit: "+err.Error())
		}
		if len(gx) < len(xs) {
			res.Warnings = append(res.Warnings, fmt.Sprintf("the global Morse fits use %d of the %d points (evenly thinned; every point is in the local fits and the level interpolant)", len(gx), len(xs)))
		}
	}
	var lp *levelPotential
	lpOK := false
	if !opt.NoLevels && len(masses) > 0 && len(wells) > 0 {
		var err error
		lp, lpOK, err = newLevelPotential(ctx, xs, es, res.Morse, res.ExtendedMorse)
		if err != nil {
			return nil, err
		}
	}

	asym, asymNote, asymUnc := asymptote(xs, es, opt)
	for _, w := range wells {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		m, fitInfo, err := analyseWell(ctx, xs, es, ws, conv, w, masses, opt)
		if err != nil {
			res.Warnings = append(res.Warnings, fmt.Sprintf("dip near %s: %v; no constants", formatX(xs[w.min], opt.Kind), err))
			continue
		}
		if why := minimumRejected(xs, es, w, m, fitInfo, opt); why != "" {
			res.Warnings = append(res.Warnings, why)
			continue
		}
		m.Label = fmt.Sprintf("well %d", len(res.Minima)+1)
		sigma := math.Max(opt.EnergyNoise, fitInfo.sigma)
		if lpOK {
			m.LevelPotential = lp.label
			for k := range masses {
				if err := ctx.Err(); err != nil {
					return nil, err
				}
				c := &m.Isotopologues[k]
				if err := gridLevels(ctx, c, lp, xs, es, ws, w, m, masses[k], opt, sigma, asym); err != nil {
					return nil, err
				}
			}
			if m.LevelZero != 0 {
				if d := math.Abs(m.LevelZero - m.EMin); d > 2*m.EMinUnc && d*HartreeInCm1 > 0.01 {
					m.Warnings = append(m.Warnings, fmt.Sprintf("the level potential's minimum lies %.3g cm⁻¹ from the local fit's E_min (uncertainty %.2g cm⁻¹); the levels are measured from the former, the potential they are solved on", (m.LevelZero-m.EMin)*HartreeInCm1, m.EMinUnc*HartreeInCm1))
				}
			}
		}
		if asym != nil && opt.Kind == Distance {
			for k := range m.Isotopologues {
				dissociation(&m.Isotopologues[k], m, *asym, asymUnc)
			}
			if asymNote != "" {
				m.Warnings = append(m.Warnings, asymNote)
			}
		}
		for k := range m.Isotopologues {
			gateConstants(&m.Isotopologues[k], m, len(wells) == 1)
		}
		if len(m.Isotopologues) > 0 {
			m.Constants = m.Isotopologues[0]
			m.Warnings = append(m.Warnings, m.Isotopologues[0].ConstantWarnings...)
			for _, c := range m.Isotopologues[1:] {
				for _, s := range c.ConstantWarnings {
					m.Warnings = append(m.Warnings, c.Name+": "+s)
				}
			}
		}
		res.Minima = append(res.Minima, *m)
	}
	if asym != nil && opt.Kind == Distance {
		if note := humpAboveLimit(xs, es, *asym, asymUnc, noiseTol, res.Minima); note != "" {
			res.Warnings = append(res.Warnings, note)
		}
	}
	sanitize(res)
	return res, nil
}

func cmpFloat(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// checkOptions rejects settings that are not numbers of the right sign.
func checkOptions(o Options) error {
	bad := func(v float64) bool { return math.IsNaN(v) || math.IsInf(v, 0) || v < 0 }
	switch {
	case bad(o.WindowEnergy):
		return fmt.Errorf("fit: window energy %g hartree is not a non-negative finite number", o.WindowEnergy)
	case bad(o.EnergyNoise):
		return fmt.Errorf("fit: energy noise %g hartree is not a non-negative finite number", o.EnergyNoise)
	case o.WindowPoints < 0:
		return fmt.Errorf("fit: window of %d points is negative", o.WindowPoints)
	case o.GridPoints < 0 || o.GridPoints > 5000:
		return fmt.Errorf("fit: %d grid points; need 0 (automatic) or up to 5000", o.GridPoints)
	case o.Asymptote != nil && (math.IsNaN(*o.Asymptote) || math.IsInf(*o.Asymptote, 0)):
		return fmt.Errorf("fit: dissociation limit %g hartree is not a finite number", *o.Asymptote)
	}
	return nil
}

func withDefaults(o Options) Options {
	if o.WindowEnergy == 0 {
		o.WindowEnergy = 0.02
	}
	if o.MinDegree == 0 {
		o.MinDegree = 2
	}
	if o.MaxDegree == 0 {
		o.MaxDegree = 8
	}
	if o.EnergyNoise == 0 {
		o.EnergyNoise = 1e-7
	}
	return o
}

// well is a basin of the sampled curve: its lowest point and the indices
// of the maxima (or data ends) that bound it.
type well struct{ lo, min, hi int }

// findWells returns the basins of the sampled energies, merging minima
// separated by barriers lower than tol. The merge runs over a stack of
// basins from left to right (each minimum is pushed once and popped at
// most once), so it is linear in the number of points even for noisy data
// with thousands of local minima.
func findWells(e []float64, tol float64) []well {
	n := len(e)
	// A basin: its lowest point and the barrier in front of it (the
	// highest point between the previous basin's last raw minimum and its
	// own first one; +Inf for the first basin).
	type basin struct {
		min     int
		leftBar float64
	}
	var stack []basin
	prev := -1 // the last raw minimum seen
	top := 0   // index of the highest point since prev
	for i := range n {
		if prev >= 0 && e[i] > e[top] {
			top = i
		}
		left := i == 0 || e[i] < e[i-1]
		right := i == n-1 || e[i] < e[i+1]
		if i == 0 && n > 1 && !(e[0] < e[1]) {
			continue
		}
		if !(left && right) {
			continue
		}
		cur := basin{min: i, leftBar: math.Inf(1)}
		if prev >= 0 {
			cur.leftBar = e[top]
		}
		for len(stack) > 0 {
			last := stack[len(stack)-1]
			if cur.leftBar-math.Max(e[last.min], e[cur.min]) >= tol {
				break
			}
			// Merge: the basin keeps the lower minimum and takes over the
			// barrier in front of last.
			if e[last.min] <= e[cur.min] {
				cur.min = last.min
			}
			cur.leftBar = last.leftBar
			stack = stack[:len(stack)-1]
		}
		stack = append(stack, cur)
		prev, top = i, i
	}
	ws := make([]well, 0, len(stack))
	for k, b := range stack {
		w := well{lo: 0, min: b.min, hi: n - 1}
		if k > 0 {
			w.lo = argmax(e, stack[k-1].min, b.min)
		}
		if k+1 < len(stack) {
			w.hi = argmax(e, b.min, stack[k+1].min)
		}
		ws = append(ws, w)
	}
	return ws
}

func argmax(e []float64, a, b int) int {
	t := a
	for i := a; i <= b; i++ {
		if e[i] > e[t] {
			t = i
		}
	}
	return t
}

// asymptote returns the dissociation limit: the user's, or the energy of the
// largest-r point when the curve has flattened there (the last two points
// differ by less than 1e-5 E_h and the slope is below 1e-4 E_h/bohr —
// common practice for "reached the limit").
//
// The third result is the limit's uncertainty (hartree): 0 for the user's
// value, else the noise and the last step's change added in quadrature.
func asymptote(x, e []float64, opt Options) (*float64, string, float64) {
	if opt.Asymptote != nil {
		a := *opt.Asymptote
		return &a, "", 0
	}
	n := len(x)
	if opt.Kind != Distance || n < 4 {
		return nil, "", 0
	}
	d := e[n-1] - e[n-2]
	slope := d / (x[n-1] - x[n-2])
	if math.Abs(d) < 1e-5 && math.Abs(slope) < 1e-4 && e[n-1] > e[0]-1 {
		a := e[n-1]
		return &a, fmt.Sprintf("dissociation limit taken from the largest-r point (r = %.4f Å, E = %.8f E_h); give the asymptote explicitly if the curve has not flattened there", x[n-1]*BohrInAngstrom, a), math.Hypot(opt.EnergyNoise, d)
	}
	return nil, "", 0
}

func formatX(x float64, k Kind) string {
	if k == Angle {
		return fmt.Sprintf("%.3f°", x*180/math.Pi)
	}
	return fmt.Sprintf("%.5f Å", x*BohrInAngstrom)
}

// window selects the contiguous points of well w within the energy window
// (or the requested number of points nearest the minimum).
func window(x, e []float64, w well, opt Options, scale float64) []int {
	lo, hi := w.min, w.min
	if opt.WindowPoints > 0 {
		want := max(3, int(math.Round(float64(opt.WindowPoints)*scale)))
		for hi-lo+1 < want {
			canL, canR := lo > w.lo, hi < w.hi
			switch {
			case canL && canR:
				if math.Abs(x[lo-1]-x[w.min]) <= math.Abs(x[hi+1]-x[w.min]) {
					lo--
				} else {
					hi++
				}
			case canL:
				lo--
			case canR:
				hi++
			default:
				return seq(lo, hi)
			}
		}
		return seq(lo, hi)
	}
	lim := e[w.min] + opt.WindowEnergy*scale
	for lo > w.lo && e[lo-1] <= lim {
		lo--
	}
	for hi < w.hi && e[hi+1] <= lim {
		hi++
	}
	return seq(lo, hi)
}

func seq(a, b int) []int {
	s := make([]int, 0, b-a+1)
	for i := a; i <= b; i++ {
		s = append(s, i)
	}
	return s
}

// minPoints is the smallest window the local fit accepts: a quartic with
// two degrees of freedom left for the residuals.
const minPoints = 7

// localFit is one polynomial fit of one window and the quantities derived
// from it.
type localFit struct {
	idx    []int
	deg    int
	pf     polyFit
	xe     float64 // displacement of the minimum from the origin
	inside bool
	q      []float64
}

// Quantity layout of localFit.q: position, energy, f2, f3, f4, then per
// isotopologue ω, ωx, B_e, α_e, ZPE.
const (
	qX = iota
	qE
	qF2
	qF3
	qF4
	qIso
	perIso = 5
)

func fitWindow(x, e, w []float64, idx []int, origin float64, deg int, masses []massInfo) (localFit, error) {
	wx := make([]float64, len(idx))
	wy := make([]float64, len(idx))
	ww := make([]float64, len(idx))
	for k, i := range idx {
		wx[k], wy[k], ww[k] = x[i], e[i], w[i]
	}
	pf, err := fitPoly(wx, wy, ww, origin, deg)
	if err != nil {
		return localFit{}, err
	}
	lo, hi := wx[0]-origin, wx[len(wx)-1]-origin
	t, inside := minimumOf(pf.poly.Coef, 0, lo, hi)
	lf := localFit{idx: idx, deg: deg, pf: pf, xe: t, inside: inside}
	q, ok := quantities(pf.poly.Coef, origin, t, masses)
	if !ok {
		return localFit{}, fmt.Errorf("the degree-%d polynomial has no minimum with positive curvature", deg)
	}
	lf.q = q
	return lf, nil
}

// quantities derives the reported numbers from polynomial coefficients c
// about origin, starting Newton's search for the minimum at t0.
func quantities(c []float64, origin, t0 float64, masses []massInfo) ([]float64, bool) {
	t := t0
	for range 50 {
		d2 := polyDeriv(c, t, 2)
		if !(d2 > 0) {
			return nil, false
		}
		step := polyDeriv(c, t, 1) / d2
		t -= step
		if math.Abs(step) < 1e-14*math.Max(1, math.Abs(t)) {
			break
		}
	}
	fc := ForceConstants{X: origin + t, F2: polyDeriv(c, t, 2), F3: polyDeriv(c, t, 3), F4: polyDeriv(c, t, 4)}
	if !(fc.F2 > 0) {
		return nil, false
	}
	q := make([]float64, qIso+perIso*len(masses))
	q[qX], q[qE], q[qF2], q[qF3], q[qF4] = fc.X, polyDeriv(c, t, 0), fc.F2, fc.F3, fc.F4
	for k, m := range masses {
		a, err := AnharmonicConstants(fc, m.mu)
		if err != nil {
			return nil, false
		}
		o := qIso + perIso*k
		q[o], q[o+1], q[o+4] = a.Omega, a.OmegaX, a.ZPE
		if m.diatomic {
			rc, err := RotationalConstants(fc, m.mu)
			if err != nil {
				return nil, false
			}
			q[o+2], q[o+3] = rc.Be, rc.AlphaE
		}
	}
	return q, true
}

// stderrs propagates the coefficient covariance to the quantities with a
// finite-difference Jacobian (first-order error propagation, common
// practice).
func stderrs(lf localFit, masses []massInfo) []float64 {
	c := lf.pf.poly.Coef
	cov := lf.pf.poly.Cov
	p := len(c)
	nq := len(lf.q)
	jac := mat.NewDense(nq, p, nil)
	for k := range p {
		h := 1e-4 * math.Sqrt(math.Max(cov.At(k, k), 0))
		if h == 0 {
			continue
		}
		cp := slices.Clone(c)
		cm := slices.Clone(c)
		cp[k] += h
		cm[k] -= h
		qp, ok1 := quantities(cp, lf.pf.poly.Origin, lf.xe, masses)
		qm, ok2 := quantities(cm, lf.pf.poly.Origin, lf.xe, masses)
		if !ok1 || !ok2 {
			continue
		}
		for i := range nq {
			jac.Set(i, k, (qp[i]-qm[i])/(2*h))
		}
	}
	out := make([]float64, nq)
	for i := range nq {
		v := 0.0
		for a := range p {
			for b := range p {
				v += jac.At(i, a) * cov.At(a, b) * jac.At(i, b)
			}
		}
		out[i] = math.Sqrt(math.Max(v, 0))
	}
	return out
}

// wellFit is what the gates need to know about the chosen local fit.
type wellFit struct {
	sigma      float64 // residual standard deviation (hartree); 0 without degrees of freedom
	deg        int
	xlo, xhi   float64 // the fit window
	inside     bool    // the polynomial's minimum is inside the window
	noDOF      bool    // as many coefficients as points: no uncertainty
	unc        []float64
	lowestNear [2]float64 // the lowest point's neighbours (or itself at an end)
}

// analyseWell runs the local polynomial analysis of one well.
func analyseWell(ctx context.Context, x, e, w []float64, conv []bool, wl well, masses []massInfo, opt Options) (*Minimum, wellFit, error) {
	m := &Minimum{}
	// A shallow well bounded by a barrier, or by a data end where the
	// curve has flattened, is fitted in its lower half only: a window
	// reaching over the barrier would fit the curve beyond it.
	n := len(x)
	depth := math.Min(e[wl.lo], e[wl.hi]) - e[wl.min]
	flat := func(i, j int) bool { return math.Abs(e[i]-e[j]) < 0.01*depth }
	bounded := (e[wl.lo] <= e[wl.hi] && (wl.lo > 0 || flat(0, 1))) || (e[wl.hi] < e[wl.lo] && (wl.hi < n-1 || flat(n-1, n-2)))
	if bounded && opt.WindowPoints == 0 && opt.WindowEnergy > depth/2 {
		opt.WindowEnergy = depth / 2
		m.Warnings = append(m.Warnings, fmt.Sprintf("shallow well (%.4g cm⁻¹ deep): the fit window is its lower half (%.3g E_h)", depth*HartreeInCm1, depth/2))
	}
	idx := window(x, e, wl, opt, 1)
	if len(idx) < minPoints {
		// Widen to the nearest points: better a wider window than none, but
		// say so.
		o := opt
		o.WindowPoints = minPoints
		wide := window(x, e, wl, o, 1)
		m.Warnings = append(m.Warnings, fmt.Sprintf("only %d point(s) lie within %.4g E_h of the lowest point; the fit window was widened to the %d nearest points (%.4g E_h)", len(idx), opt.WindowEnergy, len(wide), maxE(e, wide)-e[wl.min]))
		idx = wide
	}
	if len(idx) < 3 {
		return nil, wellFit{}, fmt.Errorf("only %d point(s) in the well; a minimum needs 3", len(idx))
	}
	if len(idx) < minPoints {
		m.Warnings = append(m.Warnings, fmt.Sprintf("too few points: the well has only %d; constants beyond the harmonic ones are not determined", len(idx)))
	}
	origin := x[wl.min]
	// Degree by leave-one-out cross-validation.
	var best localFit
	bestCV := math.Inf(1)
	maxDeg := min(opt.MaxDegree, len(idx)-2)
	if maxDeg < opt.MinDegree {
		maxDeg = min(opt.MinDegree, len(idx)-1)
	}
	for d := opt.MinDegree; d <= maxDeg; d++ {
		lf, err := fitWindow(x, e, w, idx, origin, d, masses)
		if err != nil {
			continue
		}
		cv := lf.pf.loocv
		if len(idx) == d+1 {
			cv = math.Inf(1)
		}
		if best.q == nil || cv < bestCV*(1-1e-9) {
			best, bestCV = lf, cv
		}
	}
	if best.q == nil {
		return nil, wellFit{}, errors.New("no polynomial of degree 2–8 through the points near the lowest point has a minimum")
	}
	if err := ctx.Err(); err != nil {
		return nil, wellFit{}, err
	}
	se := stderrs(best, masses)
	// Sensitivity to the degree and to the window.
	spread := make([]float64, len(best.q))
	var alts []localFit
	for _, d := range []int{best.deg - 1, best.deg + 1} {
		if d >= 2 && d <= 8 && d+2 <= len(idx) {
			if lf, err := fitWindow(x, e, w, idx, origin, d, masses); err == nil {
				alts = append(alts, lf)
			}
		}
	}
	for _, s := range []float64{0.6, 1.6} {
		widx := window(x, e, wl, opt, s)
		if len(widx) == len(idx) || len(widx) < best.deg+2 {
			continue
		}
		if lf, err := fitWindow(x, e, w, widx, origin, best.deg, masses); err == nil {
			alts = append(alts, lf)
		}
	}
	for _, a := range alts {
		for i := range spread {
			spread[i] = math.Max(spread[i], math.Abs(a.q[i]-best.q[i]))
		}
	}
	// The calibrated uncertainty: the standard error and the model spread
	// in quadrature (see the package doc for the calibration).
	info := wellFit{deg: best.deg, xlo: x[best.idx[0]], xhi: x[best.idx[len(best.idx)-1]], inside: best.inside}
	info.lowestNear = [2]float64{x[max(wl.min-1, 0)], x[min(wl.min+1, len(x)-1)]}
	if best.pf.n > best.deg+1 {
		info.sigma = math.Sqrt(best.pf.s2 / (wsum(w, best.idx) / float64(len(best.idx))))
	} else {
		info.noDOF = true
	}
	unc := make([]float64, len(best.q))
	if !info.noDOF {
		for i := range unc {
			unc[i] = math.Hypot(se[i], spread[i])
		}
	} else {
		m.Warnings = append(m.Warnings, fmt.Sprintf("too few points for an uncertainty: %d points for the %d coefficients of a degree-%d polynomial; no ± is given", len(best.idx), best.deg+1, best.deg))
	}
	info.unc = unc

	q := best.q
	m.Degree = best.deg
	m.WindowPoints = len(best.idx)
	m.WindowEnergy = maxE(e, best.idx) - e[wl.min]
	m.RMSResidual = math.Sqrt(best.pf.rss / wsum(w, best.idx))
	m.XE, m.XEStderr, m.XEUnc = q[qX], se[qX], unc[qX]
	m.EMin, m.EMinStderr, m.EMinUnc = q[qE], se[qE], unc[qE]
	m.F3, m.F4 = q[qF3], q[qF4]
	if opt.Kind == Distance {
		m.XEUnit = "bohr"
		m.REAngstrom = q[qX] * BohrInAngstrom
		m.REStderrAng = se[qX] * BohrInAngstrom
		m.RESpreadAng = spread[qX] * BohrInAngstrom
		m.REUncAng = unc[qX] * BohrInAngstrom
		m.K, m.KStderr, m.KSpread, m.KUnc = q[qF2], se[qF2], spread[qF2], unc[qF2]
		m.KMdynPerAng = q[qF2] * HartreePerBohr2InMdynPerAngstrom
		m.KNPerM = q[qF2] * HartreePerBohr2InNPerM
	} else {
		m.XEUnit = "radian"
		m.ThetaEDegree = q[qX] * 180 / math.Pi
		m.ThetaEStderr = se[qX] * 180 / math.Pi
		m.ThetaEUnc = unc[qX] * 180 / math.Pi
		m.KAngle, m.KAngleStderr, m.KAngleUnc = q[qF2], se[qF2], unc[qF2]
	}
	m.KThreePoint = threePoint(x, e, wl)

	// Warnings about the data.
	xlo, xhi := x[best.idx[0]], x[best.idx[len(best.idx)-1]]
	switch {
	case wl.min == 0 || wl.min == len(x)-1:
		edge := "smallest"
		if wl.min != 0 {
			edge = "largest"
		}
		m.Warnings = append(m.Warnings, fmt.Sprintf("minimum at the edge of the data: the lowest energy is the %s sampled point (%s); extend the scan past it", edge, formatX(x[wl.min], opt.Kind)))
	case !best.inside || q[qX] <= xlo || q[qX] >= xhi:
		m.Warnings = append(m.Warnings, fmt.Sprintf("minimum outside the fitted points: x_e = %s but the window covers %s to %s", formatX(q[qX], opt.Kind), formatX(xlo, opt.Kind), formatX(xhi, opt.Kind)))
	case wl.min == best.idx[0] || wl.min == best.idx[len(best.idx)-1]:
		m.Warnings = append(m.Warnings, fmt.Sprintf("the lowest point %s is at the edge of the fit window; the minimum is poorly bracketed", formatX(x[wl.min], opt.Kind)))
	}
	if q[qX] < x[0] || q[qX] > x[len(x)-1] {
		m.Warnings = append(m.Warnings, fmt.Sprintf("minimum outside the data: x_e = %s but the sampled range is %s to %s", formatX(q[qX], opt.Kind), formatX(x[0], opt.Kind), formatX(x[len(x)-1], opt.Kind)))
	}
	if m.RMSResidual > 3*opt.EnergyNoise {
		m.Warnings = append(m.Warnings, fmt.Sprintf("fit residuals above the energy noise: rms residual %.3g E_h > 3 × noise %.3g E_h (noisy or unconverged energies, or a window too wide for degree %d)", m.RMSResidual, opt.EnergyNoise, best.deg))
	}
	nUnconv := 0
	for _, i := range best.idx {
		if !conv[i] {
			nUnconv++
		}
	}
	if nUnconv > 0 {
		m.Warnings = append(m.Warnings, fmt.Sprintf("%d unconverged point(s) used in the fit window", nUnconv))
	}
	if best.deg < 4 {
		m.Warnings = append(m.Warnings, fmt.Sprintf("the chosen polynomial has degree %d; f4 (and so ω_e x_e) is not determined by the data", best.deg))
	}

	for k, mi := range masses {
		o := qIso + perIso*k
		c := Constants{
			Name: mi.set.Name, Mass: mi.mu, MassUnit: opt.Kind.massUnit(), OneD: !mi.diatomic,
			OmegaE: q[o], OmegaEStderr: se[o], OmegaESpread: spread[o],
			OmegaExe: q[o+1], OmegaExeStderr: se[o+1], OmegaExeSpread: spread[o+1],
			ZPE:         q[o+4],
			Fundamental: q[o] - 2*q[o+1],
			OmegaEUnc:   unc[o], OmegaExeUnc: unc[o+1], ZPEUnc: unc[o+4],
			FundamentalUnc: math.Hypot(unc[o], 2*unc[o+1]),
		}
		a, _ := AnharmonicConstants(ForceConstants{X: q[qX], F2: q[qF2], F3: q[qF3], F4: q[qF4]}, mi.mu)
		c.Y00 = a.Y00
		if mi.diatomic {
			c.Be, c.BeStderr, c.BeUnc = q[o+2], se[o+2], unc[o+2]
			c.AlphaE, c.AlphaEStderr, c.AlphaESpread, c.AlphaEUnc = q[o+3], se[o+3], spread[o+3], unc[o+3]
			c.DbarE = 4 * c.Be * c.Be * c.Be / (c.OmegaE * c.OmegaE)
		}
		m.Isotopologues = append(m.Isotopologues, c)
	}
	return m, info, nil
}

func maxE(e []float64, idx []int) float64 {
	v := math.Inf(-1)
	for _, i := range idx {
		v = math.Max(v, e[i])
	}
	return v
}

func wsum(w []float64, idx []int) float64 {
	s := 0.0
	for _, i := range idx {
		s += w[i]
	}
	return s
}

// threePoint is the curvature from the lowest point and its two neighbours,
// the finite-difference second derivative on an uneven grid (common
// practice); 0 at the data edge.
func threePoint(x, e []float64, w well) float64 {
	i := w.min
	if i == 0 || i == len(x)-1 {
		return 0
	}
	h1, h2 := x[i]-x[i-1], x[i+1]-x[i]
	return 2 * (h1*e[i+1] - (h1+h2)*e[i] + h2*e[i-1]) / (h1 * h2 * (h1 + h2))
}

// edgeTol is the largest dependence of a level on where the data stop for
// which it is still reported: 1 cm⁻¹ (common practice for "spectroscopic
// accuracy"). The dependence is the larger of two shifts: between the model
// and the alternative continuation of the curve past the data ends (see
// [levelPotential.continuations]), and when the grid loses one point at
// each end (a box state feels the grid's own walls). On the sparse CO test
// scan the interpolation itself is uncertain by a few tenths of a cm⁻¹
// (observed), so a tighter cut at the edges would be cosmetic.
const edgeTol = 1 / HartreeInCm1

// tailDecay is the WKB decay, ∫κ dr with κ = √(2μ(V − E)), that the level
// grid covers past a data end at the energy of the top of the sampled well:
// e^{−2·12} ≈ 4e-11 of the probability density is left at the grid's end,
// so its hard wall moves no reported level measurably (WKB tunnelling
// estimate, common practice). Observed on the CO test scan: a grid ending
// where the tangent line had risen one well depth (∫κ ≈ 4) still shifted
// v = 3 by 0.7 cm⁻¹, though losing one grid point there moved it by only
// 0.1 cm⁻¹.
const tailDecay = 12

// sanitize replaces NaN and Inf, which JSON cannot carry, with 0, and nil
// warning lists with empty ones.
func sanitize(r *Result) {
	if r.Warnings == nil {
		r.Warnings = []string{}
	}
	for i := range r.Minima {
		m := &r.Minima[i]
		if m.Warnings == nil {
			m.Warnings = []string{}
		}
		if m.Isotopologues == nil {
			m.Isotopologues = []Constants{}
		}
		for _, p := range []*float64{&m.XE, &m.XEStderr, &m.REAngstrom, &m.REStderrAng, &m.RESpreadAng, &m.ThetaEDegree, &m.ThetaEStderr, &m.EMin, &m.EMinStderr, &m.K, &m.KStderr, &m.KSpread, &m.KAngle, &m.KAngleStderr, &m.KMdynPerAng, &m.KNPerM, &m.KThreePoint, &m.F3, &m.F4, &m.RMSResidual, &m.WindowEnergy, &m.LevelZero, &m.XEUnc, &m.REUncAng, &m.ThetaEUnc, &m.EMinUnc, &m.KUnc, &m.KAngleUnc} {
			fin(p)
		}
		sanitizeConstants(&m.Constants)
		for k := range m.Isotopologues {
			sanitizeConstants(&m.Isotopologues[k])
		}
	}
}

func sanitizeConstants(c *Constants) {
	for _, p := range []*float64{&c.OmegaE, &c.OmegaEStderr, &c.OmegaESpread, &c.OmegaExe, &c.OmegaExeStderr, &c.OmegaExeSpread, &c.Be, &c.BeStderr, &c.AlphaE, &c.AlphaEStderr, &c.AlphaESpread, &c.DbarE, &c.Y00, &c.ZPE, &c.ZPEGrid, &c.Fundamental, &c.AlphaEGrid, &c.DeCm1, &c.D0Cm1, &c.DeEV, &c.D0EV, &c.OmegaEUnc, &c.OmegaExeUnc, &c.BeUnc, &c.AlphaEUnc, &c.ZPEUnc, &c.ZPEGridUnc, &c.FundamentalUnc, &c.DeUnc, &c.D0Unc} {
		fin(p)
	}
	for _, s := range [][]float64{c.Levels, c.LevelsWallShift, c.LevelsUncertainty, c.DeltaG, c.Bv} {
		for i := range s {
			fin(&s[i])
		}
	}
	if c.Levels == nil {
		c.Levels = []float64{}
	}
	if c.DeltaG == nil {
		c.DeltaG = []float64{}
	}
}

func fin(p *float64) {
	if math.IsNaN(*p) || math.IsInf(*p, 0) {
		*p = 0
	}
}
