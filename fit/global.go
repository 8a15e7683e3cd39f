package fit

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"
)

// MorseFit is a global fit of a Morse or extended Morse (EMO) potential
//
//	V(r) = E_min + D_e [1 − exp(−β(r)(r − r_e))]²,
//	β(r) = Σ_i β_i y_p(r)^i,   y_p = (r^p − r_e^p)/(r^p + r_e^p),
//
// with a single constant β_0 = a for the plain Morse form. Lengths in bohr,
// energies in hartree. Params names the fitted parameters in the order of
// Values and Stderr.
type MorseFit struct {
	Form        string    `json:"form"`
	EMin        float64   `json:"e_min_hartree"`
	De          float64   `json:"d_e_hartree"`
	Re          float64   `json:"r_e_bohr"`
	REAngstrom  float64   `json:"r_e_angstrom"`
	Beta        []float64 `json:"beta_per_bohr"`
	P           int       `json:"p,omitempty"`
	Params      []string  `json:"params"`
	Values      []float64 `json:"values"`
	Stderr      []float64 `json:"stderr"`
	RMSResidual float64   `json:"rms_residual_hartree"`
	Points      int       `json:"points"`
}

// Potential returns V(r) in hartree for r in bohr.
func (m *MorseFit) Potential(r float64) float64 {
	return morseEval(m.Values, m.P, r)
}

// ForceConstants returns the derivatives of the fitted potential at r_e,
// by central finite differences of the analytic form.
func (m *MorseFit) ForceConstants() ForceConstants {
	h := 1e-3 * m.Re
	v := func(k int) float64 { return m.Potential(m.Re + float64(k)*h) }
	return ForceConstants{
		X:  m.Re,
		F2: (-v(2) + 16*v(1) - 30*v(0) + 16*v(-1) - v(-2)) / (12 * h * h),
		F3: (-v(3) + 8*v(2) - 13*v(1) + 13*v(-1) - 8*v(-2) + v(-3)) / (8 * h * h * h),
		F4: (-v(3) + 12*v(2) - 39*v(1) + 56*v(0) - 39*v(-1) + 12*v(-2) - v(-3)) / (6 * h * h * h * h),
	}
}

// morseEval evaluates the model with parameters (E_min, D_e, r_e, β_0, …).
func morseEval(p []float64, pw int, r float64) float64 {
	emin, de, re := p[0], p[1], p[2]
	beta := p[3]
	if len(p) > 4 {
		y := (math.Pow(r, float64(pw)) - math.Pow(re, float64(pw))) / (math.Pow(r, float64(pw)) + math.Pow(re, float64(pw)))
		yk := 1.0
		beta = 0
		for _, b := range p[3:] {
			beta += b * yk
			yk *= y
		}
	}
	s := 1 - math.Exp(-beta*(r-re))
	return emin + de*s*s
}

// Morse fits the Morse potential V = E_min + D_e[1 − e^{−a(r−r_e)}]² to
// (r, e) (bohr, hartree) by nonlinear least squares: a quasi-Newton
// minimisation (gonum optimize, BFGS) from a start taken from the lowest
// points, polished by Gauss–Newton steps, with standard errors from
// s²(JᵀJ)⁻¹.
//
// References:
//   - P. M. Morse, "Diatomic molecules according to the wave mechanics. II.
//     Vibrational levels", Phys. Rev. 34, 57 (1929),
//     doi:10.1103/PhysRev.34.57.
func Morse(r, e []float64) (*MorseFit, error) {
	return fitMorseForm(context.Background(), r, e, 0)
}

// ExtendedMorse fits the extended Morse oscillator (EMO) with β(r) a
// polynomial of the given order (0–4) in the Šurkus variable y_3; order 0 is
// the plain Morse form.
//
// References:
//   - R. J. Le Roy, Y. Huang, C. Jary, "An accurate analytic potential
//     function for ground-state N2 from a direct-potential-fit analysis of
//     spectroscopic data", J. Chem. Phys. 125, 164310 (2006),
//     doi:10.1063/1.2354502.
func ExtendedMorse(r, e []float64, order int) (*MorseFit, error) {
	if order < 0 || order > 4 {
		return nil, fmt.Errorf("fit: extended Morse order %d; need 0–4", order)
	}
	return fitMorseForm(context.Background(), r, e, order)
}

// morseFit is [ExtendedMorse] with cancellation (order 0: [Morse]).
func morseFit(ctx context.Context, r, e []float64, order int) (*MorseFit, error) {
	return fitMorseForm(ctx, r, e, order)
}

// maxGlobalPoints bounds the points of the global Morse fits in [Curve]:
// every evaluation of the nonlinear least-squares objective visits every
// point, so a 200,000-row table would make the fits alone take minutes.
// 2000 points fix four to seven parameters far beyond their statistical
// need; the fits only shape the level interpolant, which itself passes
// through every point.
const maxGlobalPoints = 2000

// thinForGlobal returns at most maxGlobalPoints of the sorted points,
// evenly spread in index, always keeping both ends and the lowest point
// with its neighbours.
func thinForGlobal(x, e []float64, low int) ([]float64, []float64) {
	n := len(x)
	if n <= maxGlobalPoints {
		return x, e
	}
	keep := make([]bool, n)
	for k := range maxGlobalPoints - 3 {
		keep[int(math.Round(float64(k)*float64(n-1)/float64(maxGlobalPoints-4)))] = true
	}
	for i := max(low-1, 0); i <= min(low+1, n-1); i++ {
		keep[i] = true
	}
	keep[n-1] = true
	var gx, ge []float64
	for i := range n {
		if keep[i] {
			gx, ge = append(gx, x[i]), append(ge, e[i])
		}
	}
	return gx, ge
}

func fitMorseForm(ctx context.Context, r, e []float64, order int) (*MorseFit, error) {
	if len(r) != len(e) {
		return nil, fmt.Errorf("fit: %d coordinates but %d energies", len(r), len(e))
	}
	np := 4 + order
	if len(r) < np+1 {
		return nil, fmt.Errorf("fit: %d points cannot determine a %d-parameter Morse form", len(r), np)
	}
	idx := make([]int, len(r))
	for i := range idx {
		idx[i] = i
		if math.IsNaN(r[i]) || math.IsInf(r[i], 0) || math.IsNaN(e[i]) || math.IsInf(e[i], 0) || r[i] <= 0 {
			return nil, fmt.Errorf("fit: point %d (r = %g bohr, E = %g E_h) is not a finite positive distance with a finite energy", i, r[i], e[i])
		}
	}
	sort.Slice(idx, func(a, b int) bool { return r[idx[a]] < r[idx[b]] })
	x := make([]float64, len(r))
	y := make([]float64, len(r))
	for k, i := range idx {
		x[k], y[k] = r[i], e[i]
	}
	im := 0
	for i := range y {
		if y[i] < y[im] {
			im = i
		}
	}
	if im == 0 || im == len(y)-1 {
		return nil, errors.New("fit: the lowest energy is at the end of the data; a Morse fit needs a bracketed minimum")
	}
	// Start: curvature from the three lowest points, D_e from the highest
	// point on the outer side (at least twice what is sampled, when the
	// curve still rises there).
	h1, h2 := x[im]-x[im-1], x[im+1]-x[im]
	k := 2 * (h1*y[im+1] - (h1+h2)*y[im] + h2*y[im-1]) / (h1 * h2 * (h1 + h2))
	if !(k > 0) {
		return nil, errors.New("fit: the three lowest points have no positive curvature")
	}
	outer := slices.Max(y[im:]) - y[im]
	de0 := outer
	if y[len(y)-1]-y[len(y)-2] > 1e-5 {
		de0 = 2 * outer
	}
	if !(de0 > 0) {
		de0 = 0.1
	}
	p0 := make([]float64, np)
	p0[0], p0[1], p0[2], p0[3] = y[im], de0, x[im], math.Sqrt(k/(2*de0))
	const pw = 3
	pwUsed := 0
	if order > 0 {
		pwUsed = pw
	}
	scale := slices.Max(y) - slices.Min(y)
	if !(scale > 0) {
		return nil, errors.New("fit: all energies are equal")
	}
	resid := func(p, out []float64) {
		for i := range x {
			out[i] = (morseEval(p, pwUsed, x[i]) - y[i]) / scale
		}
	}
	jacobian := func(p []float64, jac *mat.Dense) {
		rp := make([]float64, len(x))
		rm := make([]float64, len(x))
		q := slices.Clone(p)
		for j := range p {
			h := 1e-6 * math.Max(math.Abs(p[j]), 1e-3)
			q[j] = p[j] + h
			resid(q, rp)
			q[j] = p[j] - h
			resid(q, rm)
			q[j] = p[j]
			for i := range x {
				jac.Set(i, j, (rp[i]-rm[i])/(2*h))
			}
		}
	}
	buf := make([]float64, len(x))
	jac := mat.NewDense(len(x), np, nil)
	problem := optimize.Problem{
		Func: func(p []float64) float64 {
			if ctx.Err() != nil {
				return math.NaN()
			}
			resid(p, buf)
			s := 0.0
			for _, v := range buf {
				s += v * v
			}
			return s
		},
		Grad: func(g, p []float64) {
			resid(p, buf)
			jacobian(p, jac)
			for j := range g {
				g[j] = 0
				for i := range x {
					g[j] += 2 * jac.At(i, j) * buf[i]
				}
			}
		},
	}
	// Fit the plain Morse form first; the extended one starts from it with
	// zero higher β coefficients.
	start := p0[:4]
	if order > 0 {
		m0, err := fitMorseForm(ctx, r, e, 0)
		if err == nil {
			start = m0.Values
		}
		p0 = append(slices.Clone(start), make([]float64, order)...)
	}
	res, err := optimize.Minimize(problem, p0, &optimize.Settings{MajorIterations: 2000, GradientThreshold: 1e-14}, &optimize.BFGS{})
	p := p0
	if res != nil && err == nil {
		p = res.X
	} else if res != nil && res.F < problem.Func(p0) {
		p = res.X
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	p = gaussNewton(ctx, p, len(x), resid, jacobian)
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	resid(p, buf)
	ss := 0.0
	for _, v := range buf {
		ss += v * v
	}
	if math.IsNaN(ss) {
		return nil, errors.New("fit: the Morse fit diverged")
	}
	jacobian(p, jac)
	var jtj mat.SymDense
	jtj.SymOuterK(1, jac.T())
	var ch mat.Cholesky
	stderr := make([]float64, np)
	dof := len(x) - np
	s2 := ss * scale * scale / float64(dof)
	if ch.Factorize(&jtj) {
		var inv mat.SymDense
		if err := ch.InverseTo(&inv); err == nil {
			for j := range np {
				// J is of residuals divided by scale.
				stderr[j] = math.Sqrt(math.Max(inv.At(j, j)*s2/(scale*scale), 0))
			}
		}
	}
	p[1], p[3] = math.Abs(p[1]), math.Abs(p[3])
	mf := &MorseFit{
		Form: "morse", EMin: p[0], De: p[1], Re: p[2], REAngstrom: p[2] * BohrInAngstrom,
		Beta: slices.Clone(p[3:]), P: pwUsed,
		Params:      []string{"e_min_hartree", "d_e_hartree", "r_e_bohr", "beta0_per_bohr"},
		Values:      slices.Clone(p),
		Stderr:      stderr,
		RMSResidual: math.Sqrt(ss/float64(len(x))) * scale,
		Points:      len(x),
	}
	if order > 0 {
		mf.Form = fmt.Sprintf("extended Morse (EMO, p = %d, order %d)", pwUsed, order)
		for i := 1; i <= order; i++ {
			mf.Params = append(mf.Params, fmt.Sprintf("beta%d_per_bohr", i))
		}
	}
	for _, v := range append(slices.Clone(mf.Values), mf.Stderr...) {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, errors.New("fit: the Morse fit gave non-finite parameters")
		}
	}
	return mf, nil
}

// gaussNewton polishes a least-squares solution with damped Gauss–Newton
// (Levenberg–Marquardt) steps.
func gaussNewton(ctx context.Context, p []float64, n int, resid func(p, out []float64), jacobian func(p []float64, jac *mat.Dense)) []float64 {
	np := len(p)
	r := make([]float64, n)
	rt := make([]float64, n)
	jac := mat.NewDense(n, np, nil)
	ssq := func(v []float64) float64 {
		s := 0.0
		for _, x := range v {
			s += x * x
		}
		return s
	}
	p = slices.Clone(p)
	resid(p, r)
	cur := ssq(r)
	lambda := 1e-3
	for range 200 {
		if ctx.Err() != nil {
			return p
		}
		jacobian(p, jac)
		var jtj mat.Dense
		jtj.Mul(jac.T(), jac)
		g := mat.NewVecDense(np, nil)
		g.MulVec(jac.T(), mat.NewVecDense(n, r))
		improved := false
		for range 20 {
			a := mat.DenseCopyOf(&jtj)
			for j := range np {
				a.Set(j, j, a.At(j, j)*(1+lambda))
			}
			var step mat.VecDense
			if err := step.SolveVec(a, g); err != nil {
				lambda *= 10
				continue
			}
			trial := slices.Clone(p)
			for j := range np {
				trial[j] -= step.AtVec(j)
			}
			resid(trial, rt)
			if s := ssq(rt); s < cur {
				rel := (cur - s) / math.Max(cur, 1e-300)
				p, cur = trial, s
				copy(r, rt)
				lambda = math.Max(lambda/10, 1e-12)
				improved = true
				if rel < 1e-14 {
					return p
				}
				break
			}
			lambda *= 10
		}
		if !improved {
			break
		}
	}
	return p
}
