package fit

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sort"
)

// TorsionOptions controls [Torsion].
type TorsionOptions struct {
	// Inertia returns the reduced moment of inertia of the internal
	// rotation (amu·bohr²) at torsion angle x (radian). Without it only
	// the mass-independent results are given.
	Inertia func(x float64) (float64, error)
	// EnergyNoise (hartree) below which energy differences are not
	// resolved; default 1e-7 as for [Curve].
	EnergyNoise float64
	// MaxOrder limits the Fourier order (0: as the data allow).
	MaxOrder int
}

// TorsionWell is one distinct minimum of a torsional potential, standing
// for every symmetry-equivalent minimum (same energy and curvature within
// their uncertainties).
type TorsionWell struct {
	Stationary
	// Positions (degree, in [0, period)) of the equivalent minima in one
	// period of the fit.
	Positions []float64 `json:"positions_degree"`
	// Multiplicity counts the equivalent minima in a full turn (360°).
	Multiplicity int `json:"multiplicity_per_turn"`
	// AboveGlobal is the well's depth above the global minimum (cm⁻¹).
	AboveGlobalCm1 float64 `json:"above_global_minimum_cm1"`
	// Inertia (amu·bohr²) of the internal rotation at the minimum, and the
	// harmonic torsional wavenumber √(V″/I) (cm⁻¹) with its standard error
	// from V″ (zero when no inertia was given).
	Inertia        float64 `json:"reduced_moment_amu_bohr2,omitempty"`
	HarmonicCm1    float64 `json:"harmonic_cm1,omitempty"`
	HarmonicStderr float64 `json:"harmonic_stderr_cm1,omitempty"`
}

// TorsionBarrier is one distinct maximum between minima.
type TorsionBarrier struct {
	Stationary
	Positions    []float64 `json:"positions_degree"`
	Multiplicity int       `json:"multiplicity_per_turn"`
	// Height above the global minimum, with its standard error.
	HeightCm1    float64 `json:"height_cm1"`
	HeightStderr float64 `json:"height_stderr_cm1"`
	HeightKJMol  float64 `json:"height_kj_per_mol"`
	HeightKcal   float64 `json:"height_kcal_per_mol"`
	// The minima on either side (degree) and the barrier's height above
	// each (cm⁻¹), seen from the first of its positions.
	LeftMinDegree  float64 `json:"left_minimum_degree"`
	LeftHeightCm1  float64 `json:"above_left_minimum_cm1"`
	RightMinDegree float64 `json:"right_minimum_degree"`
	RightHeightCm1 float64 `json:"above_right_minimum_cm1"`
}

// RotorResult is the hindered-rotor solution of a full-period torsion.
type RotorResult struct {
	// Inertia (amu·bohr²) used for the whole turn: its value at the global
	// minimum.
	Inertia float64 `json:"reduced_moment_amu_bohr2"`
	// Levels (cm⁻¹ above the global minimum of the fitted potential), the
	// lowest first, up to a little above the highest barrier.
	Levels []float64 `json:"levels_cm1"`
	ZPE    float64   `json:"zpe_cm1"`
	// WellsPerTurn is the number of equivalent global minima in 360°; the
	// levels then come in groups of that many (tunnelling multiplets)
	// while they lie well below the barriers.
	WellsPerTurn int `json:"wells_per_turn"`
	// Fundamental: the lowest level of the first excited multiplet above
	// the ground state (cm⁻¹); zero when the multiplets cannot be told
	// apart (then Note says why).
	Fundamental float64 `json:"fundamental_cm1,omitempty"`
	// Splitting is the tunnelling splitting of the ground multiplet
	// (highest minus lowest of its WellsPerTurn levels, cm⁻¹).
	Splitting float64 `json:"tunnelling_splitting_cm1"`
	Note      string  `json:"note,omitempty"`
}

// TorsionResult is the analysis of a full-period torsion scan.
type TorsionResult struct {
	Series   *FourierSeries   `json:"fourier"`
	Minima   []TorsionWell    `json:"minima"`
	Barriers []TorsionBarrier `json:"barriers"`
	Rotor    *RotorResult     `json:"rotor,omitempty"`
	Warnings []string         `json:"warnings"`
}

// Torsion analyses a scan that covers a whole period p (radian) of a
// torsion (uncertainties: the larger of the least-squares standard error
// and the change when the Fourier order moves by one): a Fourier series fitted by least squares (order by
// cross-validation), every minimum and maximum it has, grouped into
// symmetry-equivalent classes, each distinct minimum's harmonic torsional
// wavenumber √(V″/I) with I from opt.Inertia at that minimum, the barriers
// with their heights above the global minimum and above the minima on
// either side, and the hindered-rotor levels ([RotorLevels]) with the
// zero-point energy, the fundamental and the ground-state tunnelling
// splitting.
//
// x are torsion angles in radian (any representative; they are reduced
// modulo p), e energies in hartree.
func Torsion(ctx context.Context, x, e []float64, p float64, opt TorsionOptions) (*TorsionResult, error) {
	if opt.EnergyNoise == 0 {
		opt.EnergyNoise = 1e-7
	}
	if !(opt.EnergyNoise > 0) {
		return nil, fmt.Errorf("fit: torsion: energy noise %g is not positive", opt.EnergyNoise)
	}
	fs, err := FitFourier(x, e, p, opt.MaxOrder)
	if err != nil {
		return nil, err
	}
	res := &TorsionResult{Series: fs}
	if fs.RMSResidual > 3*opt.EnergyNoise {
		res.Warnings = append(res.Warnings, fmt.Sprintf("Fourier fit residuals above the energy noise: rms %.3g E_h > 3 × %.3g E_h (order %d from %d points): add points or check for jumps", fs.RMSResidual, opt.EnergyNoise, fs.Order, fs.Points))
	}
	if fs.Cov == nil {
		res.Warnings = append(res.Warnings, fmt.Sprintf("the Fourier series (order %d) passes exactly through the %d points: no uncertainties; add points", fs.Order, fs.Points))
	}
	st := fs.Stationaries()
	// Model sensitivity: the same stationary points on the series one
	// order lower and higher, when cross-validation cannot tell that
	// series from the chosen one (leave-one-out error within 3× the
	// best, or within the noise). Each standard error below is raised to
	// the largest change seen, so that a truncated series is not reported
	// with the tiny statistical error of nearly exact energies.
	var alts [][]Stationary
	for _, o := range []int{fs.Order - 1, fs.Order + 1} {
		if g := fs.refit(o); g != nil && g.LOOCV <= math.Max(3*fs.LOOCV, opt.EnergyNoise) {
			alts = append(alts, g.Stationaries())
		}
	}
	for i := range st {
		for _, alt := range alts {
			best, bd := -1, math.Inf(1)
			for j, a := range alt {
				if a.Kind != st[i].Kind {
					continue
				}
				if d := math.Abs(math.Remainder(a.x-st[i].x, p)); d < bd {
					best, bd = j, d
				}
			}
			if best < 0 || bd > p/8 {
				continue
			}
			a := alt[best]
			st[i].XStderr = math.Max(st[i].XStderr, bd*180/math.Pi)
			st[i].EnergyStderr = math.Max(st[i].EnergyStderr, math.Abs(a.Energy-st[i].Energy))
			st[i].CurvatureStderr = math.Max(st[i].CurvatureStderr, math.Abs(a.Curvature-st[i].Curvature))
		}
	}
	var mins, maxs []Stationary
	for _, s := range st {
		if s.Kind == "minimum" {
			mins = append(mins, s)
		} else {
			maxs = append(maxs, s)
		}
	}
	if len(mins) == 0 {
		return nil, errors.New("fit: torsion: the fitted potential has no minimum")
	}
	turns := int(math.Round(2 * math.Pi / p))
	if turns < 1 {
		turns = 1
	}
	emin := math.Inf(1)
	iglob := 0
	for i, m := range mins {
		if m.Energy < emin {
			emin, iglob = m.Energy, i
		}
	}
	globalSE := mins[iglob].EnergyStderr
	tolE := func(a, b Stationary) float64 {
		return math.Max(3*math.Hypot(a.EnergyStderr, b.EnergyStderr), 10*opt.EnergyNoise)
	}
	same := func(a, b Stationary) bool {
		if math.Abs(a.Energy-b.Energy) > tolE(a, b) {
			return false
		}
		dk := math.Abs(a.Curvature - b.Curvature)
		return dk <= 0.02*math.Max(math.Abs(a.Curvature), math.Abs(b.Curvature))+3*math.Hypot(a.CurvatureStderr, b.CurvatureStderr)
	}
	classes := func(list []Stationary) [][]Stationary {
		var out [][]Stationary
		for _, s := range list {
			placed := false
			for i := range out {
				if same(out[i][0], s) {
					out[i] = append(out[i], s)
					placed = true
					break
				}
			}
			if !placed {
				out = append(out, []Stationary{s})
			}
		}
		return out
	}
	for _, cl := range classes(mins) {
		w := TorsionWell{Stationary: cl[0], Multiplicity: len(cl) * turns}
		for _, s := range cl {
			w.Positions = append(w.Positions, s.XDegree)
		}
		w.AboveGlobalCm1 = (w.Energy - emin) * HartreeInCm1
		if opt.Inertia != nil {
			in, err := opt.Inertia(w.x)
			if err != nil {
				res.Warnings = append(res.Warnings, fmt.Sprintf("moment of inertia at %.2f°: %v", w.XDegree, err))
			} else if in > 0 {
				w.Inertia = in
				w.HarmonicCm1 = math.Sqrt(w.Curvature/(in*AmuInElectronMass)) * HartreeInCm1
				if w.Curvature > 0 {
					w.HarmonicStderr = w.HarmonicCm1 * w.CurvatureStderr / (2 * w.Curvature)
				}
			}
		}
		res.Minima = append(res.Minima, w)
	}
	sort.SliceStable(res.Minima, func(a, b int) bool { return res.Minima[a].Energy < res.Minima[b].Energy })
	// Barriers: every maximum, with the minima on either side on the
	// circle.
	neighbour := func(x float64, dir int) Stationary {
		best := mins[0]
		bestD := math.Inf(1)
		for _, m := range mins {
			d := math.Mod(float64(dir)*(m.x-x)+2*p, p)
			if d > 0 && d < bestD {
				best, bestD = m, d
			}
		}
		return best
	}
	for _, cl := range classes(maxs) {
		b := TorsionBarrier{Stationary: cl[0], Multiplicity: len(cl) * turns}
		for _, s := range cl {
			b.Positions = append(b.Positions, s.XDegree)
		}
		h := (b.Energy - emin) * HartreeInCm1
		b.HeightCm1 = h
		b.HeightStderr = math.Hypot(b.EnergyStderr, globalSE) * HartreeInCm1
		b.HeightKJMol = h / HartreeInCm1 * HartreeInKJPerMol
		b.HeightKcal = h / HartreeInCm1 * HartreeInKcalPerMol
		l, r := neighbour(b.x, -1), neighbour(b.x, 1)
		b.LeftMinDegree, b.LeftHeightCm1 = l.XDegree, (b.Energy-l.Energy)*HartreeInCm1
		b.RightMinDegree, b.RightHeightCm1 = r.XDegree, (b.Energy-r.Energy)*HartreeInCm1
		res.Barriers = append(res.Barriers, b)
	}
	sort.SliceStable(res.Barriers, func(a, b int) bool { return res.Barriers[a].Energy < res.Barriers[b].Energy })

	if opt.Inertia == nil || res.Minima[0].Inertia == 0 {
		return res, nil
	}
	rot := &RotorResult{Inertia: res.Minima[0].Inertia, WellsPerTurn: res.Minima[0].Multiplicity}
	top := math.Inf(-1)
	for _, b := range res.Barriers {
		top = math.Max(top, b.HeightCm1)
	}
	// Enough levels to reach past the highest barrier: the harmonic
	// ladder of the global well gives the count per multiplet.
	perWell := 4
	if w := res.Minima[0].HarmonicCm1; w > 0 && !math.IsInf(top, -1) {
		perWell = int(top/w) + 4
	}
	n := min(perWell*rot.WellsPerTurn, 400)
	lv, err := RotorLevels(ctx, fs, rot.Inertia, n)
	if err != nil {
		if ctx.Err() != nil {
			return nil, ctx.Err()
		}
		res.Warnings = append(res.Warnings, "hindered-rotor levels: "+err.Error())
		return res, nil
	}
	// The fitted potential's own minimum is the zero.
	for _, v := range lv {
		c := (v - emin) * HartreeInCm1
		if !math.IsInf(top, -1) && c > 2*top+rot.levelsFloor() {
			break
		}
		rot.Levels = append(rot.Levels, c)
	}
	if len(rot.Levels) == 0 {
		res.Warnings = append(res.Warnings, "hindered-rotor levels: none found")
		return res, nil
	}
	rot.ZPE = rot.Levels[0]
	k := rot.WellsPerTurn
	if len(res.Minima) == 1 && len(rot.Levels) > k {
		rot.Splitting = rot.Levels[k-1] - rot.Levels[0]
		// The multiplets are distinct while the gap to the next one is
		// much larger than the splitting inside them.
		gap := rot.Levels[k] - rot.Levels[k-1]
		if gap > 10*rot.Splitting && (math.IsInf(top, -1) || rot.Levels[k] < top) {
			rot.Fundamental = rot.Levels[k] - rot.Levels[0]
		} else {
			rot.Note = "the first excited multiplet lies near or above the barrier (or overlaps the ground one): no fundamental is given; see the levels"
		}
	} else if len(res.Minima) > 1 {
		rot.Note = "the wells are not all equivalent: their levels interleave, so no fundamental or splitting is assigned; see the levels"
	}
	res.Rotor = rot
	return res, nil
}

// levelsFloor keeps a few levels above the barrier even when it is
// small: one free-rotor quantum.
func (r *RotorResult) levelsFloor() float64 {
	return 1 / (2 * r.Inertia * AmuInElectronMass) * HartreeInCm1 * 9
}
