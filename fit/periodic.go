package fit

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
)

// FourierSeries is a truncated Fourier series of a periodic potential,
//
//	V(x) = A[0] + Σ_{n=1..Order} (A[n] cos(n·2πx/Period) + B[n] sin(n·2πx/Period)),
//
// with x in radian and V in hartree. Cov is the covariance of the
// coefficients in the order A[0], A[1], B[1], A[2], B[2], … (nil when the
// fit was exactly determined). A FourierSeries is a value; its methods do
// not modify it.
type FourierSeries struct {
	Period float64       `json:"period_radian"`
	Order  int           `json:"order"`
	A      []float64     `json:"cos_hartree"`
	B      []float64     `json:"sin_hartree"`
	Cov    *mat.SymDense `json:"-"`
	// RMSResidual (hartree) of the fit; LOOCV is the root mean square
	// leave-one-out residual (hartree) that chose the order.
	RMSResidual float64 `json:"rms_residual_hartree"`
	LOOCV       float64 `json:"loocv_rms_hartree"`
	Points      int     `json:"points"`
	pts         [][2]float64
}

// Eval returns the d-th derivative of V at x (hartree per radian^d).
func (f *FourierSeries) Eval(x float64, d int) float64 {
	v := 0.0
	if d == 0 {
		v = f.A[0]
	}
	w := 2 * math.Pi / f.Period
	for n := 1; n <= f.Order; n++ {
		k := float64(n) * w
		c, s := math.Cos(k*x), math.Sin(k*x)
		// d-th derivative of a cos(kx) + b sin(kx).
		a, b := f.A[n], f.B[n]
		for range d {
			a, b = k*b, -k*a
		}
		v += a*c + b*s
	}
	return v
}

// basis returns the design row of x: 1, cos, sin, cos 2, sin 2, ….
func (f *FourierSeries) basis(x float64, order int) []float64 {
	row := make([]float64, 2*order+1)
	row[0] = 1
	w := 2 * math.Pi / f.Period
	for n := 1; n <= order; n++ {
		row[2*n-1] = math.Cos(float64(n) * w * x)
		row[2*n] = math.Sin(float64(n) * w * x)
	}
	return row
}

// gradient is ∂V^(d)(x)/∂coefficient, in the Cov order.
func (f *FourierSeries) gradient(x float64, d int) []float64 {
	g := make([]float64, 2*f.Order+1)
	if d == 0 {
		g[0] = 1
	}
	w := 2 * math.Pi / f.Period
	for n := 1; n <= f.Order; n++ {
		k := float64(n) * w
		c, s := math.Cos(k*x), math.Sin(k*x)
		// derivative of cos: (a,b)=(1,0); of sin: (0,1), each d times.
		a1, b1 := 1.0, 0.0
		a2, b2 := 0.0, 1.0
		for range d {
			a1, b1 = k*b1, -k*a1
			a2, b2 = k*b2, -k*a2
		}
		g[2*n-1] = a1*c + b1*s
		g[2*n] = a2*c + b2*s
	}
	return g
}

// variance is the variance of a linear function of the coefficients with
// gradient g; 0 without a covariance.
func (f *FourierSeries) variance(g []float64) float64 {
	if f.Cov == nil {
		return 0
	}
	v := 0.0
	for i := range g {
		for j := range g {
			v += g[i] * f.Cov.At(i, j) * g[j]
		}
	}
	return math.Max(v, 0)
}

// FitFourier fits a Fourier series of period p (radian) to the samples
// (x in radian, e in hartree) by least squares, choosing the order by
// leave-one-out cross-validation among the orders the data determine
// (2·order + 1 ≤ number of distinct points; an exactly determined series
// is taken only when nothing else is possible). maxOrder ≤ 0 means no
// limit beyond the data's.
//
// References: the leave-one-out residuals from the hat matrix, e_i/(1 −
// h_ii) (T. Hastie, R. Tibshirani, J. Friedman, The Elements of
// Statistical Learning, 2nd ed., Springer 2009, eq. 7.52).
func FitFourier(x, e []float64, p float64, maxOrder int) (*FourierSeries, error) {
	if len(x) != len(e) {
		return nil, fmt.Errorf("fit: %d coordinates but %d energies", len(x), len(e))
	}
	if !(p > 0) || math.IsInf(p, 0) {
		return nil, fmt.Errorf("fit: period %g is not a positive finite angle", p)
	}
	for i := range x {
		if math.IsNaN(x[i]) || math.IsInf(x[i], 0) || math.IsNaN(e[i]) || math.IsInf(e[i], 0) {
			return nil, fmt.Errorf("fit: point %d (x = %g, E = %g) is not finite", i, x[i], e[i])
		}
	}
	// Distinct positions modulo the period.
	pts := make([][2]float64, len(x))
	for i := range x {
		v := math.Mod(x[i], p)
		if v < 0 {
			v += p
		}
		pts[i] = [2]float64{v, e[i]}
	}
	sort.Slice(pts, func(a, b int) bool { return pts[a][0] < pts[b][0] })
	for i := 1; i < len(pts); i++ {
		if pts[i][0]-pts[i-1][0] < 1e-12 {
			return nil, fmt.Errorf("fit: two points at the same position %g rad (modulo the period)", pts[i][0])
		}
	}
	n := len(pts)
	if n < 3 {
		return nil, fmt.Errorf("fit: %d points cannot determine a periodic curve; at least 3 are needed", n)
	}
	top := (n - 2) / 2 // leaves at least one degree of freedom for the LOO residuals
	if top < 1 {
		top = (n - 1) / 2
	}
	if maxOrder > 0 {
		top = min(top, maxOrder)
	}
	var best *FourierSeries
	for order := 1; order <= top; order++ {
		f, err := fourierLSQ(pts, p, order)
		if err != nil {
			continue
		}
		if best == nil || f.LOOCV < best.LOOCV*(1-1e-6) {
			best = f
		}
	}
	if best == nil {
		return nil, errors.New("fit: no Fourier series could be fitted to the points")
	}
	return best, nil
}

// refit fits the same points with another order (for model-spread
// estimates); nil if that order is not determined.
func (f *FourierSeries) refit(order int) *FourierSeries {
	if order < 1 || 2*order+1 > len(f.pts) {
		return nil
	}
	g, err := fourierLSQ(f.pts, f.Period, order)
	if err != nil {
		return nil
	}
	return g
}

func fourierLSQ(pts [][2]float64, p float64, order int) (*FourierSeries, error) {
	n, m := len(pts), 2*order+1
	if n < m {
		return nil, fmt.Errorf("fit: %d points cannot determine %d Fourier coefficients", n, m)
	}
	f := &FourierSeries{Period: p, Order: order, Points: n, pts: pts}
	a := mat.NewDense(n, m, nil)
	b := mat.NewVecDense(n, nil)
	e0 := pts[0][1]
	for i, q := range pts {
		a.SetRow(i, f.basis(q[0], order))
		b.SetVec(i, q[1]-e0)
	}
	var qr mat.QR
	qr.Factorize(a)
	var c mat.VecDense
	if err := qr.SolveVecTo(&c, false, b); err != nil {
		return nil, fmt.Errorf("fit: Fourier least squares: %w", err)
	}
	// (AᵀA)⁻¹ for the covariance and the hat matrix.
	var ata mat.SymDense
	ata.SymOuterK(1, a.T())
	var chol mat.Cholesky
	if !chol.Factorize(&ata) {
		return nil, errors.New("fit: Fourier normal matrix is singular")
	}
	var inv mat.SymDense
	if err := chol.InverseTo(&inv); err != nil {
		return nil, fmt.Errorf("fit: Fourier normal matrix: %w", err)
	}
	rss, loo := 0.0, 0.0
	for i, q := range pts {
		row := a.RawRowView(i)
		pred := 0.0
		for j := range m {
			pred += row[j] * c.AtVec(j)
		}
		r := q[1] - e0 - pred
		rss += r * r
		h := 0.0
		for j := range m {
			for k := range m {
				h += row[j] * inv.At(j, k) * row[k]
			}
		}
		if 1-h < 1e-10 {
			loo = math.Inf(1)
		} else {
			loo += (r / (1 - h)) * (r / (1 - h))
		}
	}
	f.A = make([]float64, order+1)
	f.B = make([]float64, order+1)
	f.A[0] = c.AtVec(0) + e0
	for k := 1; k <= order; k++ {
		f.A[k], f.B[k] = c.AtVec(2*k-1), c.AtVec(2*k)
	}
	f.RMSResidual = math.Sqrt(rss / float64(n))
	f.LOOCV = math.Sqrt(loo / float64(n))
	if n > m {
		s2 := rss / float64(n-m)
		cov := mat.NewSymDense(m, nil)
		cov.ScaleSym(s2, &inv)
		f.Cov = cov
	}
	return f, nil
}

// Stationary is a minimum or maximum of a periodic fit.
type Stationary struct {
	Kind string `json:"kind"` // "minimum" or "maximum"
	// XDegree is the position in degree, in [0, period); XStderr its
	// standard error (degree).
	XDegree float64 `json:"x_degree"`
	XStderr float64 `json:"x_stderr_degree"`
	// Energy (hartree) and its standard error.
	Energy       float64 `json:"energy_hartree"`
	EnergyStderr float64 `json:"energy_stderr_hartree"`
	// Curvature d²V/dx² (hartree/rad²) and its standard error.
	Curvature       float64 `json:"curvature_hartree_per_rad2"`
	CurvatureStderr float64 `json:"curvature_stderr_hartree_per_rad2"`
	x               float64
}

// Stationaries returns the minima and maxima of f over one period, in
// order of position: the roots of V′ found on a fine grid and polished by
// Newton's method, with standard errors propagated from the coefficient
// covariance to first order (dx = −δV′/V″ at the root).
func (f *FourierSeries) Stationaries() []Stationary {
	const grid = 2048
	var out []Stationary
	h := f.Period / grid
	prev := f.Eval(0, 1)
	for i := 1; i <= grid; i++ {
		x := float64(i) * h
		cur := f.Eval(x, 1)
		if (prev < 0) == (cur < 0) && cur != 0 {
			prev = cur
			continue
		}
		// Bisection then Newton inside [x−h, x].
		lo, hi := x-h, x
		for range 60 {
			mid := (lo + hi) / 2
			if (f.Eval(lo, 1) < 0) == (f.Eval(mid, 1) < 0) {
				lo = mid
			} else {
				hi = mid
			}
		}
		r := (lo + hi) / 2
		for range 5 {
			d2 := f.Eval(r, 2)
			if d2 == 0 {
				break
			}
			r -= f.Eval(r, 1) / d2
		}
		prev = cur
		r = math.Mod(r, f.Period)
		if r < 0 {
			r += f.Period
		}
		d2 := f.Eval(r, 2)
		if d2 == 0 {
			continue
		}
		s := Stationary{Kind: "minimum", x: r, XDegree: r * 180 / math.Pi, Energy: f.Eval(r, 0), Curvature: d2}
		if d2 < 0 {
			s.Kind = "maximum"
		}
		// First-order propagation: the root moves by −δV′/V″; the energy
		// at a stationary point moves by δV only; the curvature by δV″ +
		// V‴·dx.
		g1 := f.gradient(r, 1)
		g0 := f.gradient(r, 0)
		g2 := f.gradient(r, 2)
		d3 := f.Eval(r, 3)
		gx := make([]float64, len(g1))
		gk := make([]float64, len(g1))
		for i := range g1 {
			gx[i] = -g1[i] / d2
			gk[i] = g2[i] + d3*gx[i]
		}
		s.XStderr = math.Sqrt(f.variance(gx)) * 180 / math.Pi
		s.EnergyStderr = math.Sqrt(f.variance(g0))
		s.CurvatureStderr = math.Sqrt(f.variance(gk))
		dup := false
		for _, o := range out {
			if math.Abs(math.Remainder(o.x-r, f.Period)) < 1e-9 {
				dup = true
			}
		}
		if !dup {
			out = append(out, s)
		}
	}
	sort.Slice(out, func(a, b int) bool { return out[a].x < out[b].x })
	return out
}

// RotorLevels solves the one-dimensional hindered-rotor Schrödinger
// equation
//
//	−(1/2I) d²ψ/dφ² + V(φ) ψ = E ψ,  ψ(φ + 2π) = ψ(φ),
//
// for the potential f (whose period divides 2π) and the reduced moment of
// inertia inertia (amu·bohr²), in the free-rotor basis 1, cos mφ, sin mφ
// (m = 1 … M). The kinetic operator is diagonal there (m²/2I); the
// potential's matrix elements are exact from a uniform quadrature grid
// (a trigonometric polynomial of degree below the number of grid points is
// integrated exactly by the trapezoidal rule). M grows until the levels
// asked for change by less than 1e-6 cm⁻¹. It returns the nLevels lowest
// energies in hartree (absolute, on the scale of f).
//
// References: K. S. Pitzer, W. D. Gwinn, J. Chem. Phys. 10, 428 (1942)
// (the free-rotor basis for hindered internal rotation); J. D. Lewis,
// T. B. Malloy, T. H. Chao, J. Laane, J. Mol. Struct. 12, 427 (1972).
func RotorLevels(ctx context.Context, f *FourierSeries, inertia float64, nLevels int) ([]float64, error) {
	if !(inertia > 0) || math.IsInf(inertia, 0) {
		return nil, fmt.Errorf("fit: rotor: moment of inertia %g amu·bohr² is not a positive finite number", inertia)
	}
	sigma := 2 * math.Pi / f.Period
	if math.Abs(sigma-math.Round(sigma)) > 1e-9 || math.Round(sigma) < 1 {
		return nil, fmt.Errorf("fit: rotor: the period %g rad does not divide 2π", f.Period)
	}
	if nLevels < 1 {
		return nil, nil
	}
	iAU := inertia * AmuInElectronMass
	// Start with enough free-rotor functions to span the potential's range
	// with room to spare, then grow.
	vmin, vmax := math.Inf(1), math.Inf(-1)
	for i := range 720 {
		v := f.Eval(float64(i)*2*math.Pi/720, 0)
		vmin, vmax = math.Min(vmin, v), math.Max(vmax, v)
	}
	m := int(math.Ceil(math.Sqrt(2*iAU*(vmax-vmin)))) + nLevels + 10
	var prev []float64
	for iter := 0; iter < 8; iter++ {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		lv, err := rotorLevelsM(f, iAU, m, int(math.Round(sigma)))
		if err != nil {
			return nil, err
		}
		if len(lv) > nLevels {
			lv = lv[:nLevels]
		}
		if prev != nil && len(prev) == len(lv) {
			worst := 0.0
			for i := range lv {
				worst = math.Max(worst, math.Abs(lv[i]-prev[i]))
			}
			if worst*HartreeInCm1 < 1e-6 {
				return lv, nil
			}
		}
		prev = lv
		m = m * 3 / 2
		if m > 2000 {
			break
		}
	}
	return prev, errors.New("fit: rotor levels did not converge with the size of the free-rotor basis")
}

func rotorLevelsM(f *FourierSeries, iAU float64, m, sigma int) ([]float64, error) {
	dim := 2*m + 1
	ng := 4*m + 2*sigma*f.Order + 16
	// Basis functions on the grid, orthonormal on [0, 2π).
	phi := make([]float64, ng)
	v := make([]float64, ng)
	for i := range ng {
		phi[i] = 2 * math.Pi * float64(i) / float64(ng)
		v[i] = f.Eval(phi[i], 0)
	}
	fn := func(k, i int) float64 {
		switch {
		case k == 0:
			return 1 / math.Sqrt(2*math.Pi)
		case k%2 == 1:
			return math.Cos(float64((k+1)/2)*phi[i]) / math.Sqrt(math.Pi)
		default:
			return math.Sin(float64(k/2)*phi[i]) / math.Sqrt(math.Pi)
		}
	}
	vals := mat.NewDense(dim, ng, nil)
	for k := range dim {
		for i := range ng {
			vals.Set(k, i, fn(k, i))
		}
	}
	w := 2 * math.Pi / float64(ng)
	h := mat.NewSymDense(dim, nil)
	for a := range dim {
		ra := vals.RawRowView(a)
		for b := a; b < dim; b++ {
			rb := vals.RawRowView(b)
			s := 0.0
			for i := range ng {
				s += ra[i] * v[i] * rb[i]
			}
			s *= w
			if a == b {
				mm := float64((a + 1) / 2)
				s += mm * mm / (2 * iAU)
			}
			h.SetSym(a, b, s)
		}
	}
	var es mat.EigenSym
	if !es.Factorize(h, false) {
		return nil, errors.New("fit: rotor Hamiltonian eigendecomposition failed")
	}
	return es.Values(nil), nil
}
