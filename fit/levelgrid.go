package fit

import (
	"context"
	"fmt"
	"math"
)

// The level grid of one well. Its extent comes from the levels wanted, not
// from how far the data reach: the classically allowed region at the top
// of the well (found by walking the level potential outward from its
// minimum) plus the tail that a state at that energy needs under the walls
// (WKB decay, [tailDecay]); its spacing from the shortest local de Broglie
// wavelength, at the bottom of the well for a state at the top. A table
// that runs on to 100 bohr therefore gives the same grid, and the same
// levels, as the same table cut at 10 bohr.
const (
	// pointsPerWavelength is the number of sinc-DVR points per shortest de
	// Broglie wavelength. The sinc DVR converges exponentially beyond two
	// (Colbert & Miller 1992); four keeps the error at the top of the well
	// below 1e-3 cm⁻¹ on the package's Morse, Kratzer and Pöschl–Teller
	// tests, and the grid check ([coarseFactor]) measures what is left.
	pointsPerWavelength = 4.0
	// coarseFactor is how much coarser the check grid is: a level that
	// moves between the two grids is not converged, and the move is its
	// grid uncertainty (an over-estimate for the finer grid, whose error
	// falls exponentially with the spacing).
	coarseFactor = 1.3
	// maxGridPoints bounds the dense eigenproblem: one value-only
	// diagonalisation of 600 points takes about 0.1 s here (measured with
	// gonum's EigenSym); levels that would need a longer grid lose their
	// tail and are caught by the end check.
	maxGridPoints = 600
	// interpSafety multiplies the Richardson estimate of the interpolation
	// error (see [wellGrid.interpScale]).
	interpSafety = 2.0
)

// wellGrid is the outcome of the level calculation of one well for one
// mass: the eigenvalues on the main grid and on the variants that measure
// the uncertainty.
type wellGrid struct {
	rmin, vmin float64 // minimum of the level potential (bohr, hartree)
	lo, hi     float64 // grid ends (bohr)
	n          int
	e          []float64 // eigenvalues (hartree, absolute), main grid
	top        float64   // energy up to which levels are determined by the data
	// Variants: continuation past the data, coarser and shorter grid,
	// thinned interpolant (with its own minimum).
	alt, short, coarse, thin, thin2 []float64
	vminThin, vminThin2             float64
	thinOK                          bool
	interpU                         []float64 // interpolation uncertainty of each level (hartree)
	extended                        bool      // the grid reaches past a data end
	// Numerov densities on the fine grid rf (spacing hf) for the
	// statistical error and ⟨1/r²⟩.
	rf  []float64
	vf  []float64
	mu  float64
	pot func(float64) float64
	lp  *levelPotential
}

// potentialMinimum returns the position and value of the lowest point of v
// on [a, b]: a scan of 400 samples, then golden-section search around the
// lowest sample (common practice; W. H. Press et al., Numerical Recipes,
// 3rd ed., §10.2).
func potentialMinimum(v func(float64) float64, a, b float64) (float64, float64) {
	const m = 400
	best, bi := math.Inf(1), 0
	for i := 0; i <= m; i++ {
		if y := v(a + (b-a)*float64(i)/m); y < best {
			best, bi = y, i
		}
	}
	lo := a + (b-a)*float64(max(bi-1, 0))/m
	hi := a + (b-a)*float64(min(bi+1, m))/m
	g := (math.Sqrt(5) - 1) / 2
	c, d := hi-g*(hi-lo), lo+g*(hi-lo)
	fc, fd := v(c), v(d)
	for range 100 {
		if hi-lo <= 1e-12*math.Max(1, math.Abs(lo)) {
			break
		}
		if fc < fd {
			hi, d, fd = d, c, fc
			c = hi - g*(hi-lo)
			fc = v(c)
		} else {
			lo, c, fc = c, d, fd
			d = lo + g*(hi-lo)
			fd = v(d)
		}
	}
	r := (lo + hi) / 2
	if y := v(r); y < best {
		return r, y
	}
	return a + (b-a)*float64(bi)/m, best
}

// walk goes from r0 in direction dir with step h until the potential has
// risen above top and the WKB integral ∫κ dr past the turning point,
// κ = √(2m(V − top)), has reached tailDecay; or until limit (a hard wall:
// an interior barrier or the smallest allowed distance), or maxLen from
// r0. It returns the end of the grid on that side and a shorter end (two
// thirds of the decay, or nine tenths of the way when no decay was
// reached) for the end check.
func walk(v func(float64) float64, r0 float64, dir int, top, m, h, limit, maxLen float64) (end, short float64) {
	sum := 0.0
	short = math.NaN()
	k := 0
	for {
		k++
		r := r0 + float64(dir*k)*h
		if float64(k)*h >= maxLen || (dir < 0 && r <= limit) || (dir > 0 && r >= limit) {
			if dir < 0 {
				r = math.Max(r, limit)
			} else {
				r = math.Min(r, limit)
			}
			end = r
			break
		}
		if y := v(r); y > top {
			sum += math.Sqrt(2*m*(y-top)) * h
		}
		if math.IsNaN(short) && sum >= tailDecay*2/3 {
			short = r
		}
		if sum >= tailDecay {
			end = r
			break
		}
	}
	if math.IsNaN(short) {
		short = r0 + 0.9*(end-r0)
	}
	return end, short
}

// solveWell runs the level calculation of well w for reduced mass mu
// (amu) up to energy top (hartree): the main grid and its variants.
func solveWell(ctx context.Context, lp *levelPotential, x, e []float64, w well, mu, top float64, kind Kind, gridPoints int) (*wellGrid, error) {
	n := len(x)
	model, alt := lp.continuations()
	a := x[max(w.min-1, w.lo)]
	b := x[min(w.min+1, w.hi)]
	rmin, vmin := potentialMinimum(model, a, b)
	g := &wellGrid{rmin: rmin, vmin: vmin, top: top, mu: mu, pot: model, lp: lp}
	depth := top - vmin
	if !(depth > 0) {
		return g, nil
	}
	m := mu * AmuInElectronMass
	kmax := math.Sqrt(2 * m * depth)
	dx := 2 * math.Pi / (pointsPerWavelength * kmax)
	// The grid must also resolve the well itself: a shallow, narrow well
	// has long wavelengths but a short width. Its length scale is
	// √(depth/k) (the half-width of the parabola with the well's
	// curvature k at the depth); eight points across it.
	hk := (b - a) / 4
	if kk := (model(rmin+hk) + model(rmin-hk) - 2*vmin) / (hk * hk); kk > 0 {
		dx = math.Min(dx, math.Sqrt(depth/kk)/8)
	}
	maxLen := float64(maxGridPoints-1) * dx
	leftLimit, rightLimit := x[w.lo], x[w.hi]
	if w.lo == 0 {
		leftLimit = math.Inf(-1)
		if kind == Distance {
			leftLimit = x[0] / 2
		}
	}
	if w.hi == n-1 {
		rightLimit = math.Inf(1)
	}
	step := dx / 4
	lo, loShort := walk(model, rmin, -1, top, m, step, leftLimit, maxLen/2)
	hi, hiShort := walk(model, rmin, 1, top, m, step, rightLimit, maxLen-(rmin-lo))
	g.lo, g.hi = lo, hi
	g.extended = lo < x[0] || hi > x[n-1]
	np := int(math.Ceil((hi-lo)/dx)) + 1
	np = min(max(np, 40), maxGridPoints)
	if gridPoints > 0 {
		np = gridPoints // the caller's choice (Options.GridPoints)
	}
	g.n = np
	var err error
	if g.e, err = levelValues(model, mu, lo, hi, np); err != nil {
		return nil, err
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	// The end check: the same grid points, cut shorter at both ends.
	dm := (hi - lo) / float64(np-1)
	i0 := max(int(math.Ceil((loShort-lo)/dm)), 1)
	i1 := min(int(math.Floor((hiShort-lo)/dm)), np-2)
	if i1-i0 < 20 {
		i0, i1 = 1, np-2
	}
	if g.short, err = levelValues(model, mu, lo+float64(i0)*dm, lo+float64(i1)*dm, i1-i0+1); err != nil {
		return nil, err
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	// The resolution check: the same ends, a coarser spacing.
	nc := max(int(math.Ceil((hi-lo)/(dx*coarseFactor)))+1, 30)
	if g.coarse, err = levelValues(model, mu, lo, hi, nc); err != nil {
		return nil, err
	}
	if g.extended {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		if g.alt, err = levelValues(alt, mu, lo, hi, np); err != nil {
			return nil, err
		}
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	th, ok, err := lp.thinned(ctx, e, w.min, 2)
	if err != nil {
		return nil, err
	}
	th2, ok2, err := lp.thinned(ctx, e, w.min, 4)
	if err != nil {
		return nil, err
	}
	if ok && ok2 {
		tm, _ := th.continuations()
		_, g.vminThin = potentialMinimum(tm, a, b)
		if g.thin, err = levelValues(tm, mu, lo, hi, np); err != nil {
			return nil, err
		}
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		tm2, _ := th2.continuations()
		_, g.vminThin2 = potentialMinimum(tm2, a, b)
		if g.thin2, err = levelValues(tm2, mu, lo, hi, np); err != nil {
			return nil, err
		}
		g.interpU = g.richardson()
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	lm, _ := lp.localVariant().continuations()
	_, vl := potentialMinimum(lm, a, b)
	loc, err := levelValues(lm, mu, lo, hi, np)
	if err != nil {
		return nil, err
	}
	g.thinOK = true
	// The larger of the Richardson estimate (when there are points enough
	// to thin twice) and twice the difference from the local-cubic
	// interpolant: two interpolants of the same order differ by about the
	// error of either; on the sparse Morse test the error reached 1.2 times
	// the difference (observed), hence two.
	for v := range loc {
		if v >= len(g.e) || !(g.e[v] < g.top) {
			break
		}
		d := interpSafety * math.Abs((loc[v]-vl)-(g.e[v]-g.vmin))
		if v < len(g.interpU) {
			g.interpU[v] = math.Max(g.interpU[v], d)
		} else {
			g.interpU = append(g.interpU, d)
		}
	}
	// A fine grid for the Numerov densities.
	nf := min(max(4*np, 2000), 20000)
	g.rf = make([]float64, nf)
	g.vf = make([]float64, nf)
	for i := range nf {
		g.rf[i] = lo + (hi-lo)*float64(i)/float64(nf-1)
		g.vf[i] = model(g.rf[i])
	}
	return g, nil
}

// richardson returns the interpolation uncertainty of each level below
// the top. With Δ1 = G(½) − G(1) (the interpolant through every other
// point against the one through all) and Δ2 = G(¼) − G(½), taken as root
// mean squares over the level and its two neighbours on each side (so a
// shift that happens to vanish at one level does not vanish its error),
// the observed rate ρ = Δ2/Δ1 gives the error of the full interpolant as
// Δ1/(ρ − 1) (Richardson extrapolation with the observed order; L. F.
// Richardson, Phil. Trans. R. Soc. A 210, 307 (1911)). ρ is clamped to
// [2, 16]: a cubic spline's error falls at most as h⁴ (16 for a halved
// step), and below 2 the thinned interpolants are not converging, so the
// full one is taken to be as wrong as the shift itself. The estimate is
// multiplied by interpSafety.
func (g *wellGrid) richardson() []float64 {
	n := 0
	for n < len(g.e) && n < len(g.thin) && n < len(g.thin2) && g.e[n] < g.top {
		n++
	}
	d1 := make([]float64, n)
	d2 := make([]float64, n)
	for v := range n {
		d1[v] = (g.thin[v] - g.vminThin) - (g.e[v] - g.vmin)
		d2[v] = (g.thin2[v] - g.vminThin2) - (g.thin[v] - g.vminThin)
	}
	u := make([]float64, n)
	for v := range n {
		var s1, s2 float64
		k := 0
		for j := max(v-2, 0); j <= min(v+2, n-1); j++ {
			s1 += d1[j] * d1[j]
			s2 += d2[j] * d2[j]
			k++
		}
		rho := 2.0
		if s1 > 0 {
			rho = min(max(math.Sqrt(s2/s1), 2), 16)
		}
		u[v] = interpSafety * math.Sqrt(s1/float64(k)) / (rho - 1)
	}
	return u
}

// density returns the normalised probability weights ρ_j (Σρ_j = 1) of the
// bound state at energy en on the fine grid, by Numerov integration from
// both ends matched at the outermost classical turning point (B. Numerov,
// Astron. Nachr. 230, 359 (1927); the matching as in any text, e.g.
// J. M. Thijssen, Computational Physics, 2nd ed., Cambridge 2007, §3.2.2).
// Only used for error propagation and ⟨1/r²⟩, where 1e-4 relative is
// ample.
func (g *wellGrid) density(en float64) []float64 {
	nf := len(g.rf)
	h := g.rf[1] - g.rf[0]
	m := g.mu * AmuInElectronMass
	f := make([]float64, nf)
	for i := range nf {
		f[i] = 1 + h*h*2*m*(en-g.vf[i])/12
	}
	// Matching point: the last classically allowed point.
	mt := nf / 2
	for i := nf - 2; i > 0; i-- {
		if g.vf[i] < en {
			mt = i
			break
		}
	}
	mt = min(max(mt, 2), nf-3)
	out := make([]float64, nf)
	out[0], out[1] = 0, 1e-30
	for i := 1; i < mt+1; i++ {
		out[i+1] = ((12-10*f[i])*out[i] - f[i-1]*out[i-1]) / f[i+1]
		if math.Abs(out[i+1]) > 1e150 {
			for k := 0; k <= i+1; k++ {
				out[k] *= 1e-150
			}
		}
	}
	in := make([]float64, nf)
	in[nf-1], in[nf-2] = 0, 1e-30
	for i := nf - 2; i > mt-1; i-- {
		in[i-1] = ((12-10*f[i])*in[i] - f[i+1]*in[i+1]) / f[i-1]
		if math.Abs(in[i-1]) > 1e150 {
			for k := i - 1; k < nf; k++ {
				in[k] *= 1e-150
			}
		}
	}
	scale := 0.0
	if in[mt] != 0 {
		scale = out[mt] / in[mt]
	}
	sum := 0.0
	for i := range nf {
		v := out[i]
		if i > mt {
			v = in[i] * scale
		}
		out[i] = v * v
		sum += out[i]
	}
	if !(sum > 0) || math.IsInf(sum, 0) {
		return nil
	}
	for i := range out {
		out[i] /= sum
	}
	return out
}

// decays reports whether a state at energy en has a WKB decay ∫κ dr of at
// least tailDecay/2 between its outermost classical turning points and
// each end of the grid.
func (g *wellGrid) decays(en float64) bool {
	m := g.mu * AmuInElectronMass
	h := g.rf[1] - g.rf[0]
	nf := len(g.rf)
	first, last := -1, -1
	for i := range nf {
		if g.vf[i] < en {
			if first < 0 {
				first = i
			}
			last = i
		}
	}
	if first < 0 {
		return false
	}
	tail := func(from, to, step int) bool {
		s := 0.0
		for i := from; i != to; i += step {
			if d := g.vf[i] - en; d > 0 {
				s += math.Sqrt(2*m*d) * h
			}
		}
		return s >= tailDecay/2
	}
	return tail(first, -1, -1) && tail(last, nf, 1)
}

// invR2 returns ⟨1/r²⟩ (bohr⁻²) for density rho.
func (g *wellGrid) invR2(rho []float64) float64 {
	s := 0.0
	for i, p := range rho {
		s += p / (g.rf[i] * g.rf[i])
	}
	return s
}

// quantity is a linear combination of levels: Σ c_v E_v − (Σ c_v) V_min
// (a term value or a difference of term values), for uncertainties.
type quantity map[int]float64

func (q quantity) eval(e []float64, vmin float64) float64 {
	s := 0.0
	for v, c := range q {
		if v >= len(e) {
			return math.NaN()
		}
		s += c * (e[v] - vmin)
	}
	return s
}

// uncertainty of a quantity (hartree): the end check and the
// continuation (systematic, end), the resolution check and the
// interpolation check, added, and
// the statistical error of the energies (sigma per point of unit weight,
// relative weights wts) in quadrature. end is returned separately: it
// decides whether a level is determined by the data at all.
func (g *wellGrid) uncertainty(q quantity, rhos map[int][]float64, sigma float64, wts []float64) (total, end, interp, stat float64) {
	base := q.eval(g.e, g.vmin)
	d := func(e []float64, vmin float64) float64 {
		if e == nil {
			return 0
		}
		v := q.eval(e, vmin)
		if math.IsNaN(v) {
			return math.Inf(1)
		}
		return math.Abs(v - base)
	}
	end = d(g.short, g.vmin) + d(g.alt, g.vmin)
	res := d(g.coarse, g.vmin)
	if g.thinOK {
		for v, c := range q {
			if v >= len(g.interpU) {
				interp = math.Inf(1)
				break
			}
			interp += math.Abs(c) * g.interpU[v]
		}
	}
	if sigma > 0 {
		w := make([]float64, len(g.rf)+1)
		r := make([]float64, len(g.rf)+1)
		copy(r, g.rf)
		csum := 0.0
		for v, c := range q {
			rho := rhos[v]
			if rho == nil {
				continue
			}
			for i, p := range rho {
				w[i] += c * p
			}
			csum += c
		}
		r[len(g.rf)] = g.rmin
		w[len(g.rf)] = -csum
		grad := g.lp.gradient(r, w)
		wm := 0.0
		for _, x := range wts {
			wm += x
		}
		wm /= float64(len(wts))
		s := 0.0
		for i, gi := range grad {
			s += gi * gi * wm / wts[i]
		}
		stat = sigma * math.Sqrt(s)
	}
	total = math.Hypot(stat, end+res+interp)
	return total, end, interp, stat
}

// gridLevels fills the level results of one isotopologue from the level
// calculation of well w. sigma is the energy noise (hartree) for the
// statistical part of the uncertainties, wts the points' relative weights,
// asym the dissociation limit when known.
func gridLevels(ctx context.Context, c *Constants, lp *levelPotential, x, e, wts []float64, w well, m *Minimum, mi massInfo, opt Options, sigma float64, asym *float64) error {
	top := math.Min(e[w.lo], e[w.hi])
	limitTop := false
	if asym != nil && *asym <= top {
		top, limitTop = *asym, true
	}
	g, err := solveWell(ctx, lp, x, e, w, mi.mu, top, opt.Kind, opt.GridPoints)
	if err != nil {
		if ctx.Err() != nil {
			return err
		}
		c.ConstantWarnings = append(c.ConstantWarnings, "grid levels: "+err.Error())
		return nil
	}
	depth := top - g.vmin
	m.LevelZero = g.vmin
	if !(depth > 0) {
		c.ConstantWarnings = append(c.ConstantWarnings, "no vibrational levels: the well does not rise on both sides within the data")
		return nil
	}
	// A level counts as bound only when it lies below the top and its
	// tail decays inside the grid on both sides (WKB ∫κ dr ≥ tailDecay/2
	// past the outermost turning points): a state of the grid's box just
	// below a flat limit does not.
	below := 0
	for below < len(g.e) && g.e[below] < top && g.decays(g.e[below]) {
		below++
	}
	if below == 0 {
		c.NoBoundLevel = true
		if limitTop || (w.hi == len(x)-1 && asym != nil) {
			c.ConstantWarnings = append(c.ConstantWarnings, fmt.Sprintf("no bound vibrational level: the well is %.4g cm⁻¹ deep below its dissociation limit, but v = 0 would lie %.4g cm⁻¹ above the minimum", depth*HartreeInCm1, (g.e[0]-g.vmin)*HartreeInCm1))
		} else {
			c.ConstantWarnings = append(c.ConstantWarnings, fmt.Sprintf("no vibrational level is determined by the data: the sampled well reaches only %.4g cm⁻¹ above the minimum, below v = 0 (%.4g cm⁻¹ on the grid); extend the scan", depth*HartreeInCm1, (g.e[0]-g.vmin)*HartreeInCm1))
		}
		return nil
	}
	// The zero of the levels, the interpolant's minimum, is itself
	// uncertain: through noisy points it dips below the smooth curve (the
	// lowest of several noisy values is biased low). Its distance from the
	// local polynomial's E_min measures that and is added to every term
	// value (not to differences of levels, where it cancels).
	zeroU := math.Abs(g.vmin - m.EMin)
	rhos := map[int][]float64{}
	var unc, ends []float64
	nb := 0
	for v := range below {
		if v%8 == 0 {
			if err := ctx.Err(); err != nil {
				return err
			}
		}
		rho := g.density(g.e[v])
		rhos[v] = rho
		tot, end, _, _ := g.uncertainty(quantity{v: 1}, rhos, sigma, wts)
		if !(end <= edgeTol) {
			ends = append(ends, end)
			break
		}
		unc = append(unc, math.Hypot(tot, zeroU))
		ends = append(ends, end)
		nb++
	}
	if nb == 0 {
		c.ConstantWarnings = append(c.ConstantWarnings, fmt.Sprintf("no vibrational level is determined by the data: the sampled well reaches %.4g cm⁻¹ above the minimum, and even v = 0 moves by %.3g cm⁻¹ with the way the curve is continued past the data or with the grid's ends; extend the scan", depth*HartreeInCm1, ends[0]*HartreeInCm1))
		return nil
	}
	if nb < below {
		c.ConstantWarnings = append(c.ConstantWarnings, fmt.Sprintf("level v = %d (%.1f cm⁻¹) and those above it move by more than %.3g cm⁻¹ with the way the curve is continued past the data or with the grid's ends (v = %d: %.3g cm⁻¹) and are omitted; extend the scan", nb, (g.e[nb]-g.vmin)*HartreeInCm1, edgeTol*HartreeInCm1, nb, ends[nb]*HartreeInCm1))
	}
	c.Levels = make([]float64, nb)
	c.LevelsWallShift = make([]float64, nb)
	c.LevelsUncertainty = make([]float64, nb)
	for v := range nb {
		c.Levels[v] = (g.e[v] - g.vmin) * HartreeInCm1
		c.LevelsWallShift[v] = ends[v] * HartreeInCm1
		c.LevelsUncertainty[v] = unc[v] * HartreeInCm1
		if mi.diatomic && rhos[v] != nil {
			c.Bv = append(c.Bv, BFromInvR2(g.invR2(rhos[v]), mi.mu))
		}
	}
	for v := 0; v+1 < nb; v++ {
		c.DeltaG = append(c.DeltaG, c.Levels[v+1]-c.Levels[v])
	}
	c.ZPEGrid = c.Levels[0]
	c.ZPEGridUnc = c.LevelsUncertainty[0]
	c.e0Hartree = g.e[0]
	if nb >= 2 {
		c.Fundamental = c.DeltaG[0]
		tot, _, _, _ := g.uncertainty(quantity{1: 1, 0: -1}, rhos, sigma, wts)
		c.FundamentalUnc = tot * HartreeInCm1
		c.FundamentalGrid = true
		if mi.diatomic && len(c.Bv) >= 2 {
			c.AlphaEGrid = c.Bv[0] - c.Bv[1]
		}
	} else {
		c.ConstantWarnings = append(c.ConstantWarnings, "only v = 0 lies within the sampled energies; the fundamental is the perturbative ω_e − 2ω_e x_e")
	}
	if !limitTop {
		c.ConstantWarnings = append(c.ConstantWarnings, fmt.Sprintf("levels above %.1f cm⁻¹ (the lowest edge of the sampled well) are not determined by the data: %d level(s) listed, higher ones omitted", depth*HartreeInCm1, nb))
	}
	return nil
}
