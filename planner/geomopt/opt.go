package geomopt

import (
	"context"
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"wellscan/planner"
)

// Objective returns the energy (hartree) and gradient (hartree/bohr, per
// atom) of a geometry. It is called once per optimisation step, never
// concurrently.
type Objective func(ctx context.Context, mol planner.Molecule) (energy float64, grad [][3]float64, err error)

// Criteria are the convergence thresholds. Forces are the components of
// the internal-coordinate gradient with the constrained directions
// projected out (hartree/bohr for bonds and Cartesians, hartree/radian for
// bends and torsions); steps are the changes of the internal coordinates
// in the last step (bohr or radians). The zero value gives the defaults.
type Criteria struct {
	MaxForce     float64 // largest force component; default 4.5e-4
	RMSForce     float64 // root mean square force; default 3.0e-4
	MaxStep      float64 // largest coordinate change; default 1.8e-3
	EnergyChange float64 // |ΔE| of the last step, hartree; default 1e-6
}

// Default thresholds: the values practitioners use for routine
// optimisations (common practice).
const (
	DefaultMaxForce     = 4.5e-4
	DefaultRMSForce     = 3.0e-4
	DefaultMaxStep      = 1.8e-3
	DefaultEnergyChange = 1e-6
)

func (c Criteria) withDefaults() Criteria {
	if c.MaxForce <= 0 {
		c.MaxForce = DefaultMaxForce
	}
	if c.RMSForce <= 0 {
		c.RMSForce = DefaultRMSForce
	}
	if c.MaxStep <= 0 {
		c.MaxStep = DefaultMaxStep
	}
	if c.EnergyChange <= 0 {
		c.EnergyChange = DefaultEnergyChange
	}
	return c
}

// Tight returns c with every threshold divided by f (f > 1 tightens).
func (c Criteria) Tight(f float64) Criteria {
	c = c.withDefaults()
	return Criteria{c.MaxForce / f, c.RMSForce / f, c.MaxStep / f, c.EnergyChange / f}
}

// Constraint holds one internal coordinate at Value (bohr or radians),
// or, when Tie is set, keeps Prim − Tie at Value (0: the two equal, free
// otherwise; both of one kind).
type Constraint struct {
	Prim  Prim    `json:"prim"`
	Tie   *Prim   `json:"tie,omitempty"`
	Value float64 `json:"value"`
}

// Measure is the constrained quantity at x: q(Prim), or q(Prim) − q(Tie).
func (c Constraint) Measure(x []float64) float64 {
	v := c.Prim.Value(x)
	if c.Tie != nil {
		v = c.Prim.diff(v, c.Tie.Value(x))
	}
	return v
}

// Error is the deviation of the constrained quantity from Value at x
// (wrapped for torsions).
func (c Constraint) Error(x []float64) float64 { return c.Prim.diff(c.Measure(x), c.Value) }

// Options configures [Optimize]. The zero value gives the defaults.
type Options struct {
	Criteria Criteria
	// MaxSteps is the largest number of gradients, including the first
	// (default 100).
	MaxSteps int
	// Trust is the initial trust radius, the largest step length in
	// internal coordinates (default 0.3); MaxTrust bounds it (default 1).
	Trust, MaxTrust float64
	// Constraints are held exactly (to 1e-10 bohr or radians) at every
	// step. Their values must be those of the starting geometry or
	// reachable from it; the first step moves there.
	Constraints []Constraint
	// Start, when non-nil and built on the same coordinates, supplies
	// the starting Hessian (for example a finished neighbour's).
	Start *State
	// Resume continues an interrupted optimisation from its last
	// checkpoint without recomputing any gradient.
	Resume *State
	// OnStep, if non-nil, is called with the state after every gradient
	// (the checkpoint to store); an error stops the optimisation and is
	// returned.
	OnStep func(*State) error
}

// Frame is one gradient calculation of an optimisation.
type Frame struct {
	X        []float64 `json:"x_bohr"`
	Energy   float64   `json:"energy_hartree"`
	MaxForce float64   `json:"max_force"`
	RMSForce float64   `json:"rms_force"`
	MaxStep  float64   `json:"max_step"` // of the step that led here (0 for the first)
	Accepted bool      `json:"accepted"`
}

// StateVersion is the version of the checkpoint layout.
const StateVersion = 1

// State is the complete state of an optimisation after a gradient: enough
// to continue it without recomputation. It is plain data (JSON).
type State struct {
	Version     int          `json:"version"`
	Prims       []Prim       `json:"prims"`
	Constraints []Constraint `json:"constraints,omitempty"`
	// X, Energy and Grad are the current (best accepted) point: bohr,
	// hartree, hartree/bohr (3 per atom).
	X      []float64 `json:"x_bohr"`
	Energy float64   `json:"energy_hartree"`
	Grad   []float64 `json:"grad_hartree_per_bohr"`
	// Hessian is the model Hessian over Prims, row-major.
	Hessian []float64 `json:"hessian"`
	Trust   float64   `json:"trust"`
	// LastStep and LastChange describe the last accepted step (max
	// coordinate change; energy change, hartree); LastStep is −1 before
	// the first.
	LastStep   float64 `json:"last_step"`
	LastChange float64 `json:"last_change"`
	Gradients  int     `json:"gradients"`
	Trajectory []Frame `json:"trajectory"`
	Converged  bool    `json:"converged"`
	// Done is set when the optimisation has ended (converged or not).
	Done   bool   `json:"done"`
	Reason string `json:"reason,omitempty"`
}

// Result is the outcome of [Optimize].
type Result struct {
	// Converged is false when the step limit was reached or the search
	// stalled; Mol and Energy are then the last point, not a minimum.
	Converged bool
	Reason    string
	Mol       planner.Molecule
	Energy    float64      // hartree
	Gradient  [][3]float64 // Cartesian, hartree/bohr
	// Forces are the converged quantities of the last point.
	MaxForce, RMSForce float64
	Gradients          int // gradients computed, in this call and before a resume
	State              *State
}

// ErrNotConverged is wrapped by the error Optimize returns with a result
// that did not meet the criteria.
var ErrNotConverged = errors.New("geomopt: optimisation not converged")

// Optimize minimises the energy of mol over the nuclear positions with
// the constrained internal coordinates held, by rational-function
// (quasi-Newton) steps with a trust radius and BFGS updates in redundant
// internal coordinates (bonds, bends, torsions, and Cartesians when those
// do not span the molecule). Steps are mapped back to Cartesians
// iteratively, and the constraints are then imposed exactly by Newton
// iterations on the constrained coordinates alone.
//
// A result that did not converge is returned together with an error
// wrapping ErrNotConverged. Objective failures and cancellation return the
// result so far (nil before the first gradient) with the error.
//
// References:
//   - P. Pulay, G. Fogarasi, J. Chem. Phys. 96, 2856 (1992),
//     doi:10.1063/1.462844 (redundant internal coordinates).
//   - C. Peng, P. Y. Ayala, H. B. Schlegel, M. J. Frisch, J. Comput.
//     Chem. 17, 49 (1996) (projected constraints in redundant
//     internals; from memory).
//   - A. Banerjee, N. Adams, J. Simons, R. Shepard, J. Phys. Chem. 89, 52
//     (1985) (rational-function steps; from memory).
//   - R. Fletcher, Practical Methods of Optimization, 2nd ed. (Wiley
//     1987), ch. 3 (BFGS update) and ch. 5 (trust regions).
func Optimize(ctx context.Context, mol planner.Molecule, f Objective, opts Options) (*Result, error) {
	if len(mol.Atoms) < 2 {
		return nil, fmt.Errorf("geomopt: %d atom: a lone atom has no geometry to optimise (its energy: wellscan energy)", len(mol.Atoms))
	}
	crit := opts.Criteria.withDefaults()
	maxSteps := opts.MaxSteps
	if maxSteps <= 0 {
		maxSteps = 100
	}
	maxTrust := opts.MaxTrust
	if maxTrust <= 0 {
		maxTrust = 1
	}
	o := &optimizer{mol: mol, f: f, crit: crit}
	var st *State
	if r := opts.Resume; r != nil {
		if err := r.Check(len(mol.Atoms)); err != nil {
			return nil, err
		}
		st = r
	} else {
		prims := BuildPrims(mol)
		for _, c := range opts.Constraints {
			ps := []Prim{c.Prim}
			if c.Tie != nil {
				if c.Tie.Kind != c.Prim.Kind {
					return nil, fmt.Errorf("geomopt: cannot tie %s to %s: different kinds", c.Prim, *c.Tie)
				}
				ps = append(ps, *c.Tie)
			}
			for _, p := range ps {
				if err := p.validate(len(mol.Atoms)); err != nil {
					return nil, err
				}
				if findPrim(prims, p) < 0 {
					prims = append(prims, p)
				}
			}
		}
		st = &State{Version: StateVersion, Prims: prims, Constraints: opts.Constraints, LastStep: -1}
		st.Trust = opts.Trust
		if st.Trust <= 0 {
			st.Trust = 0.3
		}
		st.Hessian = modelHessian(prims)
		if s := opts.Start; s != nil && samePrims(s.Prims, prims) && len(s.Hessian) == len(prims)*len(prims) {
			st.Hessian = append([]float64(nil), s.Hessian...)
			st.Trust = max(st.Trust, s.Trust)
		}
		x := flatten(mol)
		x, err := o.impose(st, x)
		if err != nil {
			return nil, err
		}
		e, g, err := o.eval(ctx, x)
		if err != nil {
			return nil, err
		}
		st.X, st.Energy, st.Grad = x, e, g
		st.Gradients = 1
		fm, fr, err := o.forces(st)
		if err != nil {
			return nil, err
		}
		st.Trajectory = append(st.Trajectory, Frame{X: x, Energy: e, MaxForce: fm, RMSForce: fr, Accepted: true})
		if err := o.checkpoint(opts.OnStep, st); err != nil {
			return o.result(st), err
		}
	}
	for !st.Done {
		if err := ctx.Err(); err != nil {
			return o.result(st), fmt.Errorf("geomopt: cancelled after %d gradients: %w", st.Gradients, err)
		}
		last := st.Trajectory[len(st.Trajectory)-1]
		fm, fr := last.MaxForce, last.RMSForce
		if !last.Accepted {
			fm, fr, _ = o.forces(st)
		}
		forcesMet := fm <= crit.MaxForce && fr <= crit.RMSForce
		stepped := st.LastStep >= 0
		if forcesMet && (stepped && (st.LastStep <= crit.MaxStep || math.Abs(st.LastChange) <= crit.EnergyChange) ||
			(st.Gradients == 1 && fm <= crit.MaxForce/3 && fr <= crit.RMSForce/3)) {
			st.Done, st.Converged = true, true
			st.Reason = fmt.Sprintf("max force %.1e ≤ %.1e, rms force %.1e ≤ %.1e, last step %.1e, ΔE %.1e Eh", fm, crit.MaxForce, fr, crit.RMSForce, st.LastStep, st.LastChange)
			break
		}
		if st.Gradients >= maxSteps {
			st.Done = true
			st.Reason = fmt.Sprintf("step limit %d reached with max force %.1e (threshold %.1e) and rms force %.1e (threshold %.1e)", maxSteps, fm, crit.MaxForce, fr, crit.RMSForce)
			break
		}
		if err := o.step(ctx, st, maxTrust); err != nil {
			return o.result(st), err
		}
		if err := o.checkpoint(opts.OnStep, st); err != nil {
			return o.result(st), err
		}
	}
	if err := o.checkpoint(opts.OnStep, st); err != nil {
		return o.result(st), err
	}
	res := o.result(st)
	if !st.Converged {
		return res, fmt.Errorf("%w: %s", ErrNotConverged, st.Reason)
	}
	return res, nil
}

type optimizer struct {
	mol  planner.Molecule
	f    Objective
	crit Criteria
}

func (o *optimizer) checkpoint(fn func(*State) error, st *State) error {
	if fn == nil {
		return nil
	}
	if err := fn(st); err != nil {
		return fmt.Errorf("geomopt: checkpoint after %d gradients: %w", st.Gradients, err)
	}
	return nil
}

func (o *optimizer) result(st *State) *Result {
	if st == nil || st.X == nil {
		return nil
	}
	r := &Result{Converged: st.Converged, Reason: st.Reason, Mol: withPositions(o.mol, st.X), Energy: st.Energy,
		Gradients: st.Gradients, State: st}
	r.Gradient = make([][3]float64, len(o.mol.Atoms))
	for a := range r.Gradient {
		copy(r.Gradient[a][:], st.Grad[3*a:3*a+3])
	}
	for i := len(st.Trajectory) - 1; i >= 0; i-- {
		if st.Trajectory[i].Accepted {
			r.MaxForce, r.RMSForce = st.Trajectory[i].MaxForce, st.Trajectory[i].RMSForce
			break
		}
	}
	return r
}

func (o *optimizer) eval(ctx context.Context, x []float64) (float64, []float64, error) {
	e, g, err := o.f(ctx, withPositions(o.mol, x))
	if err != nil {
		return 0, nil, err
	}
	if len(g) != len(o.mol.Atoms) {
		return 0, nil, fmt.Errorf("geomopt: objective returned %d gradient rows for %d atoms", len(g), len(o.mol.Atoms))
	}
	if math.IsNaN(e) || math.IsInf(e, 0) {
		return 0, nil, fmt.Errorf("geomopt: objective returned energy %v", e)
	}
	gf := make([]float64, 0, 3*len(g))
	for _, r := range g {
		gf = append(gf, r[:]...)
	}
	return e, gf, nil
}

// internals are the quantities of one geometry in internal coordinates.
type internals struct {
	q     []float64
	B     *mat.Dense
	Ginv  *mat.SymDense
	gq    []float64     // internal gradient G⁻ B g
	proj  *mat.SymDense // P′: projector on the free, non-redundant space
	gfree []float64     // P′ g_q
}

func (o *optimizer) internals(st *State, x, gx []float64) (*internals, error) {
	q, B := wilsonB(st.Prims, x)
	m := len(st.Prims)
	var G mat.SymDense
	G.SymOuterK(1, B)
	Ginv, _, err := pinvSym(&G, 1e-10)
	if err != nil {
		return nil, err
	}
	in := &internals{q: q, B: B, Ginv: Ginv}
	// P = G G⁻.
	var P mat.Dense
	P.Mul(&G, Ginv)
	proj := mat.NewSymDense(m, nil)
	for i := range m {
		for j := i; j < m; j++ {
			proj.SetSym(i, j, 0.5*(P.At(i, j)+P.At(j, i)))
		}
	}
	if cv := constraintVectors(st); cv != nil {
		// P′ = P − P C (Cᵀ P C)⁻¹ Cᵀ P, the columns of C the constrained
		// directions (a unit vector for a held coordinate, e_i − e_j for a
		// tie).
		_, k := cv.Dims()
		pc := mat.NewDense(m, k, nil)
		pc.Mul(proj, cv)
		var cpcD mat.Dense
		cpcD.Mul(cv.T(), pc)
		cpc := mat.NewSymDense(k, nil)
		for a := range k {
			for b := a; b < k; b++ {
				cpc.SetSym(a, b, 0.5*(cpcD.At(a, b)+cpcD.At(b, a)))
			}
		}
		inv, _, err := pinvSym(cpc, 1e-10)
		if err != nil {
			return nil, err
		}
		var t, corr mat.Dense
		t.Mul(pc, inv)
		corr.Mul(&t, pc.T())
		for i := range m {
			for j := i; j < m; j++ {
				proj.SetSym(i, j, proj.At(i, j)-0.5*(corr.At(i, j)+corr.At(j, i)))
			}
		}
	}
	in.proj = proj
	if gx != nil {
		bg := mat.NewVecDense(m, nil)
		bg.MulVec(B, mat.NewVecDense(len(gx), gx))
		gq := mat.NewVecDense(m, nil)
		gq.MulVec(Ginv, bg)
		in.gq = mat.Col(nil, 0, gq)
		gf := mat.NewVecDense(m, nil)
		gf.MulVec(proj, gq)
		in.gfree = mat.Col(nil, 0, gf)
	}
	return in, nil
}

// forces returns the max and rms components of the projected internal
// gradient at the current point.
func (o *optimizer) forces(st *State) (float64, float64, error) {
	in, err := o.internals(st, st.X, st.Grad)
	if err != nil {
		return 0, 0, err
	}
	return maxAbs(in.gfree), rms(in.gfree), nil
}

// step takes one trust-radius RFO step from the current point, computes
// the gradient there, updates the Hessian and the trust radius, and
// accepts or rejects the point.
func (o *optimizer) step(ctx context.Context, st *State, maxTrust float64) error {
	in, err := o.internals(st, st.X, st.Grad)
	if err != nil {
		return err
	}
	m := len(st.Prims)
	H := mat.NewSymDense(m, append([]float64(nil), st.Hessian...))
	// H′ = P′HP′ + 1000(1 − P′): directions outside the free space are
	// made stiff so the step has no component there.
	var t, hp mat.Dense
	t.Mul(in.proj, H)
	hp.Mul(&t, in.proj)
	hfree := mat.NewSymDense(m, nil)
	for i := range m {
		for j := i; j < m; j++ {
			v := 0.5 * (hp.At(i, j) + hp.At(j, i))
			v -= 1000 * in.proj.At(i, j)
			if i == j {
				v += 1000
			}
			hfree.SetSym(i, j, v)
		}
	}
	dq, err := rfoStep(hfree, in.gfree)
	if err != nil {
		return err
	}
	dv := mat.NewVecDense(m, nil)
	dv.MulVec(in.proj, mat.NewVecDense(m, dq))
	dq = mat.Col(nil, 0, dv)
	if n := vecNorm(dq); n > st.Trust {
		for i := range dq {
			dq[i] *= st.Trust / n
		}
	}
	// Predicted change: gᵀΔq + ½ ΔqᵀHΔq (free space).
	hdq := mat.NewVecDense(m, nil)
	hdq.MulVec(hfree, mat.NewVecDense(m, dq))
	var pred float64
	for i := range dq {
		pred += in.gfree[i]*dq[i] + 0.5*dq[i]*hdq.AtVec(i)
	}
	x1, err := o.backTransform(st, in, dq)
	if err != nil {
		return err
	}
	x1, err = o.impose(st, x1)
	if err != nil {
		return err
	}
	e1, g1, err := o.eval(ctx, x1)
	if err != nil {
		return err
	}
	st.Gradients++
	in1, err := o.internals(st, x1, g1)
	if err != nil {
		return err
	}
	s := make([]float64, m)
	y := make([]float64, m)
	for i, p := range st.Prims {
		s[i] = p.diff(in1.q[i], in.q[i])
		y[i] = in1.gq[i] - in.gq[i]
	}
	bfgs(st.Hessian, s, y)
	de := e1 - st.Energy
	stepLen := vecNorm(s)
	ratio := de / pred
	switch {
	case pred >= 0 || ratio < 0.25:
		st.Trust = max(0.25*min(stepLen, st.Trust), 1e-3)
	case ratio > 0.75 && stepLen > 0.8*st.Trust:
		st.Trust = min(2*st.Trust, maxTrust)
	}
	// Reject a step that raised the energy by more than rounding noise;
	// its gradient still improved the Hessian.
	accept := de <= 1e-8 || math.Abs(de) < 1e-12
	fr := Frame{X: x1, Energy: e1, MaxForce: maxAbs(in1.gfree), RMSForce: rms(in1.gfree), MaxStep: maxAbs(s), Accepted: accept}
	st.Trajectory = append(st.Trajectory, fr)
	if accept {
		st.X, st.Energy, st.Grad = x1, e1, g1
		st.LastStep, st.LastChange = maxAbs(s), de
	}
	return nil
}

// bfgs updates h (row-major, m×m) in place: H + yyᵀ/(yᵀs) − Hs sᵀH/(sᵀHs),
// skipped when yᵀs ≤ 0 would make it indefinite.
func bfgs(h []float64, s, y []float64) {
	m := len(s)
	var ys float64
	for i := range s {
		ys += y[i] * s[i]
	}
	hs := make([]float64, m)
	for i := range m {
		for j := range m {
			hs[i] += h[i*m+j] * s[j]
		}
	}
	var shs float64
	for i := range s {
		shs += s[i] * hs[i]
	}
	if ys <= 1e-12 || shs <= 1e-12 {
		return
	}
	for i := range m {
		for j := range m {
			h[i*m+j] += y[i]*y[j]/ys - hs[i]*hs[j]/shs
		}
	}
}

// backTransform returns Cartesians whose internals are q + dq in the least
// squares sense, by the iteration x ← x + BᵀG⁻(q_target − q(x)).
func (o *optimizer) backTransform(st *State, in *internals, dq []float64) ([]float64, error) {
	m := len(st.Prims)
	target := make([]float64, m)
	for i := range target {
		target[i] = in.q[i] + dq[i]
	}
	x0 := flatten(o.mol)
	copy(x0, st.X)
	first := func() []float64 {
		// Linear step x + BᵀG⁻Δq.
		t := mat.NewVecDense(m, nil)
		t.MulVec(in.Ginv, mat.NewVecDense(m, dq))
		dx := mat.NewVecDense(len(x0), nil)
		dx.MulVec(in.B.T(), t)
		x := append([]float64(nil), x0...)
		for i := range x {
			x[i] += dx.AtVec(i)
		}
		return x
	}
	x := append([]float64(nil), x0...)
	prev := math.Inf(1)
	for it := 0; it < 50; it++ {
		cur, err := o.internals(st, x, nil)
		if err != nil {
			return nil, err
		}
		r := make([]float64, m)
		for i, p := range st.Prims {
			r[i] = p.diff(target[i], cur.q[i])
		}
		t := mat.NewVecDense(m, nil)
		t.MulVec(cur.Ginv, mat.NewVecDense(m, r))
		dx := mat.NewVecDense(len(x), nil)
		dx.MulVec(cur.B.T(), t)
		n := mat.Norm(dx, 2)
		if n > 2*prev && it > 0 {
			return first(), nil // diverging: keep the linear step
		}
		for i := range x {
			x[i] += dx.AtVec(i)
		}
		if n < 1e-10 {
			break
		}
		prev = n
	}
	return x, nil
}

// impose moves x so that every constrained coordinate takes its value, by
// Newton steps on those coordinates only with the smallest Cartesian
// change, x ← x + B_cᵀ(B_c B_cᵀ)⁻¹ (v − q_c(x)).
func (o *optimizer) impose(st *State, x []float64) ([]float64, error) {
	if len(st.Constraints) == 0 {
		return x, nil
	}
	x = append([]float64(nil), x...)
	k := len(st.Constraints)
	n := len(x)
	rows := func(x []float64) ([]float64, *mat.Dense) {
		r := make([]float64, k)
		B := mat.NewDense(k, n, nil)
		for i, c := range st.Constraints {
			r[i] = -c.Error(x)
			add := func(p Prim, s float64) {
				_, g := p.valueGrad(x, true)
				atoms := p.Atoms
				if p.Kind == PrimCart {
					atoms = atoms[:1]
				}
				for a, at := range atoms {
					for d := range 3 {
						B.Set(i, 3*at+d, B.At(i, 3*at+d)+s*g[a][d])
					}
				}
			}
			add(c.Prim, 1)
			if c.Tie != nil {
				add(*c.Tie, -1)
			}
		}
		return r, B
	}
	for it := 0; it < 100; it++ {
		r, B := rows(x)
		if maxAbs(r) < 1e-12 {
			return x, nil
		}
		var G mat.SymDense
		G.SymOuterK(1, B)
		Ginv, _, err := pinvSym(&G, 1e-12)
		if err != nil {
			return nil, err
		}
		t := mat.NewVecDense(k, nil)
		t.MulVec(Ginv, mat.NewVecDense(k, r))
		dx := mat.NewVecDense(n, nil)
		dx.MulVec(B.T(), t)
		for i := range x {
			x[i] += dx.AtVec(i)
		}
	}
	for _, c := range st.Constraints {
		if d := c.Error(x); math.Abs(d) > 1e-10 {
			what := c.Prim.String()
			if c.Tie != nil {
				what += " − " + c.Tie.String()
			}
			return nil, fmt.Errorf("geomopt: cannot hold %s at %.6g (off by %.2g): the constraints contradict each other", what, c.Value, d)
		}
	}
	return x, nil
}

// constraintVectors returns the constrained directions in the space of
// st.Prims as the columns of an m×k matrix (nil without constraints).
func constraintVectors(st *State) *mat.Dense {
	if len(st.Constraints) == 0 {
		return nil
	}
	m := len(st.Prims)
	cv := mat.NewDense(m, len(st.Constraints), nil)
	for a, c := range st.Constraints {
		if i := findPrim(st.Prims, c.Prim); i >= 0 {
			cv.Set(i, a, 1)
		}
		if c.Tie != nil {
			if j := findPrim(st.Prims, *c.Tie); j >= 0 {
				cv.Set(j, a, cv.At(j, a)-1)
			}
		}
	}
	return cv
}

// modelHessian is a diagonal starting Hessian: 0.5 Eh/bohr² for bonds,
// 0.2 Eh/rad² for bends, 0.1 Eh/rad² for torsions, 0.05 Eh/bohr² for
// Cartesians (common-practice magnitudes of valence force constants).
func modelHessian(prims []Prim) []float64 {
	m := len(prims)
	h := make([]float64, m*m)
	for i, p := range prims {
		v := 0.5
		switch p.Kind {
		case PrimAngle:
			v = 0.2
		case PrimTorsion:
			v = 0.1
		case PrimCart:
			v = 0.05
		}
		h[i*m+i] = v
	}
	return h
}

// canonical orders a coordinate's atoms so that equivalent definitions
// (a bond read backwards) compare equal.
func (p Prim) canonical() Prim {
	a := append([]int(nil), p.Atoms...)
	rev := func() {
		for i, j := 0, len(a)-1; i < j; i, j = i+1, j-1 {
			a[i], a[j] = a[j], a[i]
		}
	}
	switch p.Kind {
	case PrimBond, PrimAngle, PrimTorsion:
		if a[0] > a[len(a)-1] || (a[0] == a[len(a)-1] && len(a) == 4 && a[1] > a[2]) {
			rev()
		}
	}
	return Prim{Kind: p.Kind, Atoms: a}
}

func (p Prim) equal(q Prim) bool {
	a, b := p.canonical(), q.canonical()
	if a.Kind != b.Kind || len(a.Atoms) != len(b.Atoms) {
		return false
	}
	for i := range a.Atoms {
		if a.Atoms[i] != b.Atoms[i] {
			return false
		}
	}
	return true
}

func findPrim(prims []Prim, p Prim) int {
	for i, q := range prims {
		if q.equal(p) {
			return i
		}
	}
	return -1
}

func samePrims(a, b []Prim) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if !a[i].equal(b[i]) {
			return false
		}
	}
	return true
}

func (p Prim) validate(nat int) error {
	want := map[PrimKind]int{PrimBond: 2, PrimAngle: 3, PrimTorsion: 4, PrimCart: 2}[p.Kind]
	if want == 0 {
		return fmt.Errorf("geomopt: unknown coordinate kind %q", p.Kind)
	}
	if len(p.Atoms) != want {
		return fmt.Errorf("geomopt: %s needs %d indices, got %d", p.Kind, want, len(p.Atoms))
	}
	if p.Kind == PrimCart {
		if p.Atoms[0] < 0 || p.Atoms[0] >= nat || p.Atoms[1] < 0 || p.Atoms[1] > 2 {
			return fmt.Errorf("geomopt: %v out of range", p)
		}
		return nil
	}
	seen := map[int]bool{}
	for _, a := range p.Atoms {
		if a < 0 || a >= nat {
			return fmt.Errorf("geomopt: %s: atom %d outside 1..%d", p.Kind, a+1, nat)
		}
		if seen[a] {
			return fmt.Errorf("geomopt: %s: atom %d repeated", p.Kind, a+1)
		}
		seen[a] = true
	}
	return nil
}

// Check validates a checkpoint before resuming from it: version,
// dimensions for nat atoms, coordinates.
func (st *State) Check(nat int) error {
	switch {
	case st.Version != StateVersion:
		return fmt.Errorf("geomopt: checkpoint version %d, want %d", st.Version, StateVersion)
	case len(st.X) != 3*nat || len(st.Grad) != 3*nat:
		return fmt.Errorf("geomopt: checkpoint is for %d coordinates, the molecule has %d atoms", len(st.X), nat)
	case len(st.Hessian) != len(st.Prims)*len(st.Prims):
		return fmt.Errorf("geomopt: checkpoint Hessian has %d elements for %d coordinates", len(st.Hessian), len(st.Prims))
	case len(st.Trajectory) == 0:
		return errors.New("geomopt: checkpoint has no trajectory")
	}
	for _, p := range st.Prims {
		if err := p.validate(nat); err != nil {
			return fmt.Errorf("geomopt: checkpoint: %w", err)
		}
	}
	return nil
}
