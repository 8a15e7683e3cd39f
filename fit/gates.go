package fit

import (
	"fmt"
	"math"
)

// Sanity gates. Nothing that is impossible for a bound well (a negative
// zero-point energy or fundamental, ω_e x_e ≥ ω_e/2, a D_0 without a bound
// level, a minimum outside its points) is ever printed: the quantity is
// zeroed, named in Withheld with the reason, and the reason is added to the
// warnings.

// wellRejected says why the basin w of the sampled curve is no minimum, or
// "" when it is one: its lowest point must not be a data end (the energy
// still falls there), and it must be deeper than the noise on both sides.
func wellRejected(x, e []float64, w well, tol float64, kind Kind) string {
	n := len(x)
	switch {
	case w.min == n-1:
		return fmt.Sprintf("no minimum at the largest coordinate: the energy still falls at the last point (%s, E = %.8f E_h), so no minimum is bracketed there; extend the scan past it (a repulsive curve has none)", formatX(x[n-1], kind), e[n-1])
	case w.min == 0:
		return fmt.Sprintf("no minimum at the smallest coordinate: the energy still falls toward the first point (%s, E = %.8f E_h), so no minimum is bracketed there; extend the scan past it", formatX(x[0], kind), e[0])
	}
	depth := math.Min(e[w.lo], e[w.hi]) - e[w.min]
	if depth < tol {
		return fmt.Sprintf("a dip of %.3g cm⁻¹ near %s is within the energy noise (%.3g cm⁻¹, ten times the stated noise): not a minimum", depth*HartreeInCm1, formatX(x[w.min], kind), tol*HartreeInCm1)
	}
	return ""
}

// noMinimumNote describes a curve without any minimum.
func noMinimumNote(x, e []float64, kind Kind, noiseTol float64) string {
	n := len(x)
	lo, hi := e[0], e[0]
	for _, v := range e {
		lo, hi = math.Min(lo, v), math.Max(hi, v)
	}
	if hi-lo <= noiseTol {
		return fmt.Sprintf("the curve is flat: all %d energies lie within %.3g hartree of each other (the noise allowance is %.3g hartree), so there is no minimum to fit; check that the program's energy changes with the geometry", n, hi-lo, noiseTol)
	}
	rises, falls := 0, 0
	for i := 1; i < n; i++ {
		switch {
		case e[i] > e[i-1]:
			rises++
		case e[i] < e[i-1]:
			falls++
		}
	}
	what := "the energy"
	switch {
	case rises == 0 && falls > 0:
		what = "the energy falls monotonically"
	case falls == 0 && rises > 0:
		what = "the energy rises monotonically"
	}
	return fmt.Sprintf("no minimum inside the data: %s from %s (E = %.8f E_h) to %s (E = %.8f E_h) without a bracketed well deeper than the noise; no constants can be given (a repulsive curve, or a scan that stops short of the minimum)", what, formatX(x[0], kind), e[0], formatX(x[n-1], kind), e[n-1])
}

// minimumRejected says why the fitted minimum m of well w cannot be
// trusted, or "": its position must lie inside the fitted points and
// between the lowest point's neighbours, and E_min must not lie further
// below the lowest point than the fitted curvature and the uncertainty
// allow. A minimum between coarse samples lies legitimately below the
// lowest one by ½k(x_e − x_low)² (k the curvature); twice that plus three
// uncertainties and the noise is accepted, anything more is a polynomial
// extrapolating into the gap.
func minimumRejected(x, e []float64, w well, m *Minimum, info wellFit, opt Options) string {
	at := formatX(x[w.min], opt.Kind)
	if !info.inside || m.XE <= info.xlo || m.XE >= info.xhi {
		return fmt.Sprintf("the fitted minimum of the dip near %s lies at %s, outside the points it was fitted to (%s to %s): not determined; no constants given", at, formatX(m.XE, opt.Kind), formatX(info.xlo, opt.Kind), formatX(info.xhi, opt.Kind))
	}
	if m.XE < info.lowestNear[0] || m.XE > info.lowestNear[1] {
		return fmt.Sprintf("the fitted minimum of the dip near %s lies at %s, beyond the neighbours of the lowest point (%s to %s): not bracketed; no constants given", at, formatX(m.XE, opt.Kind), formatX(info.lowestNear[0], opt.Kind), formatX(info.lowestNear[1], opt.Kind))
	}
	k := m.K
	if opt.Kind == Angle {
		k = m.KAngle
	}
	d := m.XE - x[w.min]
	gap := e[w.min] - m.EMin
	allowed := k*d*d + 3*m.EMinUnc + 10*opt.EnergyNoise
	if gap > allowed {
		return fmt.Sprintf("the fitted E_min of the dip near %s (%.8f E_h) lies %.3g cm⁻¹ below every computed point, more than the curvature and the uncertainty allow (%.3g cm⁻¹): the polynomial extrapolates; no constants given", at, m.EMin, gap*HartreeInCm1, allowed*HartreeInCm1)
	}
	return ""
}

// withhold zeroes *vals, records the reason under key and adds it to the
// warnings of c.
func (c *Constants) withhold(key, why string, vals ...*float64) {
	for _, v := range vals {
		*v = 0
	}
	if c.Withheld == nil {
		c.Withheld = map[string]string{}
	}
	if _, ok := c.Withheld[key]; ok {
		return
	}
	c.Withheld[key] = why
	c.ConstantWarnings = append(c.ConstantWarnings, key+" withheld: "+why)
}

// dissociation sets D_e and D_0 of c from the limit asym (hartree, with
// uncertainty asymUnc). D_0 needs a bound level: the grid's v = 0 when
// levels were computed, else the perturbative zero-point energy when it
// lies below D_e.
func dissociation(c *Constants, m *Minimum, asym, asymUnc float64) {
	de := (asym - m.EMin) * HartreeInCm1
	if !(de > 0) {
		c.withhold("d_e_cm1", fmt.Sprintf("the dissociation limit (%.8f E_h) does not lie above the minimum (E_min = %.8f E_h): D_e would be %.4g cm⁻¹", asym, m.EMin, de), &c.DeCm1, &c.DeEV, &c.DeUnc)
		c.withhold("d_0_cm1", "no D_e", &c.D0Cm1, &c.D0EV, &c.D0Unc)
		return
	}
	c.DeCm1 = de
	c.DeEV = de / HartreeInCm1 * HartreeInEV
	c.DeUnc = math.Hypot(m.EMinUnc, asymUnc) * HartreeInCm1
	switch {
	case len(c.Levels) > 0:
		c.D0Cm1 = (asym - c.e0Hartree) * HartreeInCm1
		c.D0Unc = math.Hypot(c.DeUnc, c.ZPEGridUnc)
	case c.NoBoundLevel:
		c.withhold("d_0_cm1", "no bound vibrational level: D_0 is not defined", &c.D0Cm1, &c.D0EV, &c.D0Unc)
		return
	case c.ZPEGrid == 0 && c.ZPE > 0 && c.ZPE < de && c.OmegaExe < c.OmegaE/2:
		c.D0Cm1 = de - c.ZPE
		c.D0Unc = math.Hypot(c.DeUnc, c.ZPEUnc)
	case c.ZPE >= de:
		c.NoBoundLevel = true
		c.withhold("d_0_cm1", fmt.Sprintf("no bound vibrational level: the zero-point energy (%.4g cm⁻¹) is not below D_e (%.4g cm⁻¹)", c.ZPE, de), &c.D0Cm1, &c.D0EV, &c.D0Unc)
		return
	default:
		c.withhold("d_0_cm1", "no vibrational level is determined by the data", &c.D0Cm1, &c.D0EV, &c.D0Unc)
		return
	}
	if !(c.D0Cm1 > 0) {
		c.NoBoundLevel = true
		c.withhold("d_0_cm1", fmt.Sprintf("no bound vibrational level: v = 0 lies %.4g cm⁻¹ above the dissociation limit", -c.D0Cm1), &c.D0Cm1, &c.D0EV, &c.D0Unc)
		return
	}
	c.D0EV = c.D0Cm1 / HartreeInCm1 * HartreeInEV
}

// gateConstants withholds the constants of c that are impossible for a
// bound well. single says the curve has one well, for which the level
// spacing must shrink (ω_e x_e > 0) or grow (ω_e x_e < 0) steadily.
func gateConstants(c *Constants, m *Minimum, single bool) {
	// A polynomial of degree below 4 has no f4 (below 3 no f3): the
	// anharmonic constants would be zeros of the model, not results.
	if m.Degree < 4 {
		why := fmt.Sprintf("the local polynomial has degree %d: f4 is not determined by the points", m.Degree)
		c.withhold("omega_e_x_e_cm1", why, &c.OmegaExe, &c.OmegaExeStderr, &c.OmegaExeSpread, &c.OmegaExeUnc)
		c.withhold("zpe_cm1", "it needs ω_e x_e ("+why+")", &c.ZPE, &c.ZPEUnc, &c.Y00)
		if !c.FundamentalGrid {
			c.withhold("fundamental_cm1", "it needs ω_e x_e ("+why+")", &c.Fundamental, &c.FundamentalUnc)
		}
	}
	if m.Degree < 3 && !c.OneD {
		c.withhold("alpha_e_cm1", fmt.Sprintf("the local polynomial has degree %d: f3 is not determined by the points", m.Degree), &c.AlphaE, &c.AlphaEStderr, &c.AlphaESpread, &c.AlphaEUnc)
	}
	if c.NoBoundLevel {
		why := "no bound vibrational level"
		c.withhold("zpe_cm1", why, &c.ZPE, &c.ZPEUnc)
		if !c.FundamentalGrid {
			c.withhold("fundamental_cm1", why, &c.Fundamental, &c.FundamentalUnc)
		}
	}
	if _, gone := c.Withheld["omega_e_x_e_cm1"]; !gone && c.OmegaE > 0 && !(c.OmegaExe < c.OmegaE/2) {
		why := fmt.Sprintf("ω_e x_e = %.4g cm⁻¹ is not below ω_e/2 = %.4g cm⁻¹: the well is too shallow or too anharmonic for the perturbative series", c.OmegaExe, c.OmegaE/2)
		c.withhold("omega_e_x_e_cm1", why, &c.OmegaExe, &c.OmegaExeStderr, &c.OmegaExeSpread, &c.OmegaExeUnc)
		c.withhold("zpe_cm1", "it needs ω_e x_e ("+why+")", &c.ZPE, &c.ZPEUnc, &c.Y00)
		if !c.FundamentalGrid {
			c.withhold("fundamental_cm1", "it needs ω_e x_e ("+why+")", &c.Fundamental, &c.FundamentalUnc)
		}
	}
	if c.ZPE < 0 {
		c.withhold("zpe_cm1", fmt.Sprintf("the perturbative zero-point energy is negative (%.4g cm⁻¹)", c.ZPE), &c.ZPE, &c.ZPEUnc, &c.Y00)
	}
	if c.Fundamental < 0 {
		c.withhold("fundamental_cm1", fmt.Sprintf("the fundamental is negative (%.4g cm⁻¹)", c.Fundamental), &c.Fundamental, &c.FundamentalUnc)
	}
	if c.ZPEGrid < 0 {
		c.withhold("zpe_grid_cm1", fmt.Sprintf("v = 0 lies below the minimum of the potential (%.4g cm⁻¹)", c.ZPEGrid), &c.ZPEGrid, &c.ZPEGridUnc)
	}
	if !single || len(c.Levels) < 3 {
		return
	}
	sign := 0.0
	if _, gone := c.Withheld["omega_e_x_e_cm1"]; !gone && math.Abs(c.OmegaExe) > 2*c.OmegaExeUnc {
		sign = math.Copysign(1, c.OmegaExe)
	}
	if sign == 0 {
		return
	}
	u := func(v int) float64 {
		if v < len(c.LevelsUncertainty) {
			return c.LevelsUncertainty[v]
		}
		return 0
	}
	for v := 1; v+1 < len(c.Levels); v++ {
		d0 := c.Levels[v] - c.Levels[v-1]
		d1 := c.Levels[v+1] - c.Levels[v]
		// Allowed slack: the levels' own uncertainties, plus 0.01 cm⁻¹
		// for round-off.
		slack := 2*(u(v-1)+u(v)+u(v+1)) + 0.01
		if sign*(d1-d0) > slack {
			dir := "grows"
			if sign < 0 {
				dir = "shrinks"
			}
			why := fmt.Sprintf("the level spacing %s from ΔG = %.3f to %.3f cm⁻¹ at v = %d in a single well whose ω_e x_e = %.4g cm⁻¹ says the opposite: levels from v = %d up are withheld (an interpolation or grid artefact, or a shelf in the curve)", dir, d0, d1, v, c.OmegaExe, v+1)
			if c.Withheld == nil {
				c.Withheld = map[string]string{}
			}
			c.Withheld["levels_cm1"] = why
			c.ConstantWarnings = append(c.ConstantWarnings, "levels_cm1 withheld in part: "+why)
			c.Levels = c.Levels[:v+1]
			c.LevelsWallShift = c.LevelsWallShift[:min(v+1, len(c.LevelsWallShift))]
			c.LevelsUncertainty = c.LevelsUncertainty[:min(v+1, len(c.LevelsUncertainty))]
			c.DeltaG = c.DeltaG[:min(v, len(c.DeltaG))]
			if len(c.Bv) > v+1 {
				c.Bv = c.Bv[:v+1]
			}
			return
		}
	}
}

// humpAboveLimit flags a curve that rises above its own dissociation limit
// between its deepest minimum and the largest coordinate, then comes back
// down: the D_e relative to the limit is then not the barrier to
// dissociation.
func humpAboveLimit(x, e []float64, asym, asymUnc, tol float64, minima []Minimum) string {
	n := len(x)
	from := 0
	lowest := math.Inf(1)
	for _, m := range minima {
		if m.EMin < lowest {
			lowest = m.EMin
			for from < n-1 && x[from] < m.XE {
				from++
			}
		}
	}
	if len(minima) == 0 {
		for i := range n {
			if e[i] < e[from] {
				from = i
			}
		}
	}
	top := -1
	for i := from; i < n-1; i++ {
		if top < 0 || e[i] > e[top] {
			top = i
		}
	}
	if top < 0 || top == n-1 {
		return ""
	}
	over := e[top] - asym
	if over <= math.Max(tol, 3*asymUnc) || e[n-1] >= e[top] {
		return ""
	}
	return fmt.Sprintf("the curve rises %.4g cm⁻¹ above its own dissociation limit (%.8f E_h) at %s and comes back down: a hump at intermediate range (typical of a single-determinant method far from equilibrium, or of a change of electronic state); D_e and D_0 are measured from the limit, not from the hump", over*HartreeInCm1, asym, formatX(x[top], Distance))
}
