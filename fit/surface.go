package fit

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
)

// SurfaceOptions controls [Surface2D].
type SurfaceOptions struct {
	// G is the 2×2 kinetic G matrix of the two coordinates, the inverse
	// of their kinetic metric (1/amu for lengths, 1/(amu·bohr²) for
	// angles, mixed for one of each). Zero means: report the Hessian only.
	G [2][2]float64
	// Degree of the total-degree polynomial surface: 2 (quadratic) or 4
	// (quartic, the default; it needs at least 16 points).
	Degree int
	// WindowEnergy keeps points up to this far (hartree) above the lowest;
	// default 0.02 E_h.
	WindowEnergy float64
}

// SurfaceResult is a local fit of a two-coordinate scan.
type SurfaceResult struct {
	X           float64       `json:"x"`
	Y           float64       `json:"y"`
	E           float64       `json:"e_min_hartree"`
	Hessian     [2][2]float64 `json:"hessian"`
	Degree      int           `json:"degree"`
	Points      int           `json:"points"`
	RMSResidual float64       `json:"rms_residual_hartree"`
	// WindowEnergy (hartree) is the window of points the fit used.
	WindowEnergy float64      `json:"window_energy_hartree"`
	Frequencies  []float64    `json:"harmonic_cm1,omitempty"`
	Modes        [][2]float64 `json:"modes,omitempty"`
	Warnings     []string     `json:"warnings"`
	coef         []float64    // in (dx, dy) about origin
	origin       [2]float64   // lowest sampled point
	powers       [][2]int     // exponent pairs of coef
}

// Surface2D fits a polynomial surface E(x, y) of total degree 2 or 4 by
// least squares to the points within the energy window of the lowest
// one, finds the stationary point by Newton's method, and returns the
// Hessian there and, when G is given, the harmonic wavenumbers from the GF
// eigenproblem |GF − λI| = 0, ω = √λ (Wilson, Decius & Cross 1955, ch. 4),
// solved in the symmetric form G^½ F G^½.
func Surface2D(x, y, e []float64, opt SurfaceOptions) (*SurfaceResult, error) {
	if len(x) != len(y) || len(x) != len(e) {
		return nil, fmt.Errorf("fit: surface: %d x, %d y and %d energies; all must match", len(x), len(y), len(e))
	}
	if opt.Degree == 0 {
		opt.Degree = 4
	}
	if opt.Degree != 2 && opt.Degree != 4 {
		return nil, fmt.Errorf("fit: surface: degree %d; use 2 or 4", opt.Degree)
	}
	if opt.WindowEnergy == 0 {
		opt.WindowEnergy = 0.02
	}
	if len(x) == 0 {
		return nil, errors.New("fit: surface: no points")
	}
	lo := 0
	for i := range e {
		if math.IsNaN(x[i]+y[i]+e[i]) || math.IsInf(x[i]+y[i]+e[i], 0) {
			return nil, fmt.Errorf("fit: surface: point %d is not finite", i)
		}
		if e[i] < e[lo] {
			lo = i
		}
	}
	var idx []int
	for i := range e {
		if e[i]-e[lo] <= opt.WindowEnergy {
			idx = append(idx, i)
		}
	}
	var pw [][2]int
	for d := 0; d <= opt.Degree; d++ {
		for i := d; i >= 0; i-- {
			pw = append(pw, [2]int{i, d - i})
		}
	}
	res := &SurfaceResult{Degree: opt.Degree, WindowEnergy: opt.WindowEnergy, origin: [2]float64{x[lo], y[lo]}, powers: pw}
	if len(idx) < len(pw)+1 {
		// Take the nearest points instead, and say so.
		all := make([]int, len(e))
		for i := range all {
			all[i] = i
		}
		sort.Slice(all, func(a, b int) bool { return e[all[a]] < e[all[b]] })
		want := min(len(e), len(pw)+3)
		if want < len(pw)+1 {
			return nil, fmt.Errorf("fit: surface: %d points cannot determine a degree-%d surface (%d terms)", len(e), opt.Degree, len(pw))
		}
		res.Warnings = append(res.Warnings, fmt.Sprintf("too few points: only %d lie within %.4g E_h of the lowest; the %d lowest points were used", len(idx), opt.WindowEnergy, want))
		idx = all[:want]
	}
	sx, sy := 0.0, 0.0
	for _, i := range idx {
		sx = math.Max(sx, math.Abs(x[i]-x[lo]))
		sy = math.Max(sy, math.Abs(y[i]-y[lo]))
	}
	if sx == 0 || sy == 0 {
		return nil, errors.New("fit: surface: the points near the minimum do not span both coordinates")
	}
	a := mat.NewDense(len(idx), len(pw), nil)
	b := mat.NewVecDense(len(idx), nil)
	for r, i := range idx {
		u, v := (x[i]-x[lo])/sx, (y[i]-y[lo])/sy
		for c, p := range pw {
			a.Set(r, c, math.Pow(u, float64(p[0]))*math.Pow(v, float64(p[1])))
		}
		b.SetVec(r, e[i])
	}
	var qr mat.QR
	qr.Factorize(a)
	var sol mat.VecDense
	if err := qr.SolveVecTo(&sol, false, b); err != nil {
		return nil, fmt.Errorf("fit: surface: the points do not determine a degree-%d surface: %w", opt.Degree, err)
	}
	res.coef = make([]float64, len(pw))
	for c, p := range pw {
		res.coef[c] = sol.AtVec(c) / (math.Pow(sx, float64(p[0])) * math.Pow(sy, float64(p[1])))
	}
	rss := 0.0
	for _, i := range idx {
		d := res.eval(x[i], y[i], 0, 0) - e[i]
		rss += d * d
	}
	res.Points = len(idx)
	res.RMSResidual = math.Sqrt(rss / float64(len(idx)))
	// Newton on the gradient.
	px, py := x[lo], y[lo]
	ok := false
	for range 100 {
		gx, gy := res.eval(px, py, 1, 0), res.eval(px, py, 0, 1)
		hxx, hxy, hyy := res.eval(px, py, 2, 0), res.eval(px, py, 1, 1), res.eval(px, py, 0, 2)
		det := hxx*hyy - hxy*hxy
		if det == 0 {
			break
		}
		dx := (hyy*gx - hxy*gy) / det
		dy := (hxx*gy - hxy*gx) / det
		px, py = px-dx, py-dy
		if math.Abs(dx) < 1e-13*math.Max(1, math.Abs(px)) && math.Abs(dy) < 1e-13*math.Max(1, math.Abs(py)) {
			ok = true
			break
		}
	}
	if !ok {
		return nil, errors.New("fit: surface: Newton's method found no stationary point of the fitted surface")
	}
	res.X, res.Y, res.E = px, py, res.eval(px, py, 0, 0)
	h := [2][2]float64{{res.eval(px, py, 2, 0), res.eval(px, py, 1, 1)}, {res.eval(px, py, 1, 1), res.eval(px, py, 0, 2)}}
	res.Hessian = h
	if math.Abs(px-x[lo]) > sx || math.Abs(py-y[lo]) > sy {
		res.Warnings = append(res.Warnings, fmt.Sprintf("stationary point (%.6g, %.6g) lies outside the fitted points", px, py))
	}
	det := h[0][0]*h[1][1] - h[0][1]*h[1][0]
	if det <= 0 || h[0][0] <= 0 {
		res.Warnings = append(res.Warnings, "the stationary point is not a minimum (the Hessian is not positive definite)")
	}
	if opt.G != ([2][2]float64{}) {
		w, modes, err := gfFrequencies(opt.G, h)
		if err != nil {
			return nil, err
		}
		res.Frequencies, res.Modes = w, modes
	}
	if res.Warnings == nil {
		res.Warnings = []string{}
	}
	return res, nil
}

// gfFrequencies solves the 2×2 GF problem; negative eigenvalues (a saddle)
// are reported as negative wavenumbers (common practice: "imaginary").
func gfFrequencies(g, f [2][2]float64) ([]float64, [][2]float64, error) {
	gs := mat.NewSymDense(2, []float64{g[0][0], g[0][1], g[1][0], g[1][1]})
	if g[0][1] != g[1][0] {
		return nil, nil, errors.New("fit: surface: the G matrix is not symmetric")
	}
	var ge mat.EigenSym
	if !ge.Factorize(gs, true) {
		return nil, nil, errors.New("fit: surface: cannot diagonalise G")
	}
	gv := ge.Values(nil)
	if gv[0] <= 0 {
		return nil, nil, errors.New("fit: surface: the G matrix is not positive definite")
	}
	var gu mat.Dense
	ge.VectorsTo(&gu)
	// G^½ = U diag(√g) Uᵀ.
	half := mat.NewDense(2, 2, nil)
	for i := range 2 {
		for j := range 2 {
			s := 0.0
			for k := range 2 {
				s += gu.At(i, k) * math.Sqrt(gv[k]) * gu.At(j, k)
			}
			half.Set(i, j, s)
		}
	}
	fm := mat.NewDense(2, 2, []float64{f[0][0], f[0][1], f[1][0], f[1][1]})
	var t1, t2 mat.Dense
	t1.Mul(half, fm)
	t2.Mul(&t1, half)
	sym := mat.NewSymDense(2, []float64{t2.At(0, 0), (t2.At(0, 1) + t2.At(1, 0)) / 2, (t2.At(0, 1) + t2.At(1, 0)) / 2, t2.At(1, 1)})
	var e mat.EigenSym
	if !e.Factorize(sym, true) {
		return nil, nil, errors.New("fit: surface: cannot diagonalise G^½FG^½")
	}
	lam := e.Values(nil)
	var vec mat.Dense
	e.VectorsTo(&vec)
	w := make([]float64, 2)
	modes := make([][2]float64, 2)
	for k := range 2 {
		// λ in E_h/(m_e·bohr²) after converting G from 1/amu to 1/m_e.
		l := lam[k] / AmuInElectronMass
		w[k] = math.Copysign(math.Sqrt(math.Abs(l)), l) * HartreeInCm1
		// Mode in the internal coordinates: L = G^½ c.
		c := [2]float64{vec.At(0, k), vec.At(1, k)}
		modes[k] = [2]float64{half.At(0, 0)*c[0] + half.At(0, 1)*c[1], half.At(1, 0)*c[0] + half.At(1, 1)*c[1]}
	}
	return w, modes, nil
}

// eval returns the (i, j)-th partial derivative ∂^{i+j}E/∂x^i∂y^j of the
// fitted surface.
func (s *SurfaceResult) eval(x, y float64, i, j int) float64 {
	u, v := x-s.origin[0], y-s.origin[1]
	sum := 0.0
	for c, p := range s.powers {
		if p[0] < i || p[1] < j {
			continue
		}
		fx := 1.0
		for k := 0; k < i; k++ {
			fx *= float64(p[0] - k)
		}
		fy := 1.0
		for k := 0; k < j; k++ {
			fy *= float64(p[1] - k)
		}
		sum += s.coef[c] * fx * fy * math.Pow(u, float64(p[0]-i)) * math.Pow(v, float64(p[1]-j))
	}
	return sum
}

// Energy returns the fitted surface at (x, y).
func (s *SurfaceResult) Energy(x, y float64) float64 { return s.eval(x, y, 0, 0) }

// SetKinetic solves the GF problem again with the kinetic G matrix g
// (the inverse of the kinetic metric, in 1/amu per unit², see
// [SurfaceOptions.G]) evaluated at the fitted stationary point, replacing
// Frequencies and Modes. Callers that know the metric only once the
// stationary point is found (it moves with the geometry) use it after
// [Surface2D].
func (s *SurfaceResult) SetKinetic(g [2][2]float64) error {
	w, modes, err := gfFrequencies(g, s.Hessian)
	if err != nil {
		return err
	}
	s.Frequencies, s.Modes = w, modes
	return nil
}
