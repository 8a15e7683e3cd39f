package hf

import (
	"context"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// RunSCF solves the RHF or UHF equations for the given one-electron
// matrices and JK builder.
//
// The loop, for iteration k = 0, 1, …: build F(D_k) and the energy
// E[D_k]; form the orbital gradient e_k = F'D' − D'F' in the orthogonal
// basis; stop if |E_k − E_{k−1}| ≤ EnergyTol, max|e_k| ≤ ErrorTol and the
// RMS density change ≤ ErrorTol; otherwise extrapolate with DIIS, apply any
// level shift, diagonalise, occupy the lowest orbitals (aufbau) and damp
// if asked, giving D_{k+1}. On return the orbitals are the eigenvectors of
// the last (unshifted, unextrapolated) Fock matrix.
//
// If the iteration stops unconverged, RunSCF returns the full result (with
// Converged == false) and an error wrapping ErrNotConverged. Bad input and
// JK failures return a nil result and a descriptive error; cancellation
// returns ctx.Err() wrapped.
func RunSCF(ctx context.Context, in SCFInput) (res *SCFResult, err error) {
	// gonum reports dimension and index errors by panicking with a
	// mat.Error; turn one that slipped past validation (or came from the
	// JK builder) into an error. Any other panic is a bug and propagates.
	defer func() {
		if r := recover(); r != nil {
			e, ok := r.(mat.Error)
			if !ok {
				panic(r)
			}
			res, err = nil, fmt.Errorf("hf: scf: matrix operation failed: %v", e)
		}
	}()
	if err := in.validate(); err != nil {
		return nil, err
	}
	opts, err := in.Options.withDefaults()
	if err != nil {
		return nil, err
	}
	st, err := newSCFState(&in, opts)
	if err != nil {
		return nil, err
	}
	return st.run(ctx)
}

type scfState struct {
	in   *SCFInput
	opts SCFOptions

	n, m, ns int
	nocc     [2]int
	weight   float64 // 2 for RHF (D is the α density), 1 for UHF

	x, xts *mat.Dense // n×m and m×n = XᵀS
	orth   Orthogonalization
	drop   int

	d, dPrev []*mat.SymDense // AO spin densities
	tot      *mat.SymDense   // total density of the current iteration
	totPrev  *mat.SymDense
	j, k, f  []*mat.SymDense
	fo, do   []*mat.Dense // orthogonal-basis Fock and density, m×m
	eo       []*mat.Dense // orthogonal-basis error
	fuse     []*mat.Dense // matrix to diagonalise
	fsrc     []*mat.Dense // last diagonalised matrix before level shift
	hasSrc   bool
	cp       []*mat.Dense // orthogonal-basis eigenvectors, m×m
	c        []*mat.Dense // AO coefficients, n×m
	eps      [][]float64
	eig      *eigenSolver

	tmpNM      *mat.Dense
	tmpMN      *mat.Dense
	tmpMM      *mat.Dense
	tmpNN      *mat.Dense
	tmpNN2     *mat.Dense
	errAO      *mat.Dense
	diis       *diis
	errLen     int
	lumoReady  bool // the α LUMO column of st.c is a real orbital (for mixGuess)
	damping    float64
	levelShift float64
	jks        jkState // difference Fock builds (incremental.go)
}

func newSCFState(in *SCFInput, opts SCFOptions) (*scfState, error) {
	n := in.S.SymmetricDim()
	x, drop, orth, err := orthogonalizer(in.S, opts.LinDepThreshold, opts.Orthogonalization)
	if err != nil {
		return nil, err
	}
	_, m := x.Dims()
	st := &scfState{in: in, opts: opts, n: n, m: m, x: x, orth: orth, drop: drop}
	st.nocc = [2]int{in.NAlpha, in.NBeta}
	st.ns, st.weight = 2, 1
	if in.Restricted {
		st.ns, st.weight = 1, 2
	}
	if max(in.NAlpha, in.NBeta) > m {
		return nil, fmt.Errorf("hf: scf input: %d electrons of one spin but only %d orbitals (%d basis functions, %d dropped as linearly dependent)",
			max(in.NAlpha, in.NBeta), m, n, drop)
	}
	st.xts = mat.NewDense(m, n, nil)
	st.xts.Mul(x.T(), in.S)
	for range st.ns {
		st.d = append(st.d, mat.NewSymDense(n, nil))
		st.dPrev = append(st.dPrev, mat.NewSymDense(n, nil))
		st.j = append(st.j, mat.NewSymDense(n, nil))
		st.k = append(st.k, mat.NewSymDense(n, nil))
		st.f = append(st.f, mat.NewSymDense(n, nil))
		st.fo = append(st.fo, mat.NewDense(m, m, nil))
		st.do = append(st.do, mat.NewDense(m, m, nil))
		st.eo = append(st.eo, mat.NewDense(m, m, nil))
		st.fuse = append(st.fuse, mat.NewDense(m, m, nil))
		st.fsrc = append(st.fsrc, mat.NewDense(m, m, nil))
		st.cp = append(st.cp, mat.NewDense(m, m, nil))
		st.c = append(st.c, mat.NewDense(n, m, nil))
		st.eps = append(st.eps, make([]float64, m))
	}
	st.tot = mat.NewSymDense(n, nil)
	st.totPrev = mat.NewSymDense(n, nil)
	st.eig = newEigenSolver(m)
	st.tmpNM = mat.NewDense(n, m, nil)
	st.tmpMN = mat.NewDense(m, n, nil)
	st.tmpMM = mat.NewDense(m, m, nil)
	st.tmpNN = mat.NewDense(n, n, nil)
	st.tmpNN2 = mat.NewDense(n, n, nil)
	st.errLen = st.ns * m * m
	if opts.DIISError == DIISErrorAO {
		st.errLen = st.ns * n * n
		st.errAO = mat.NewDense(n, n, nil)
	}
	st.diis = newDIIS(opts.DIISSize, st.ns, m, st.errLen)
	st.damping, st.levelShift = opts.Damping, opts.LevelShift
	return st, nil
}

func (st *scfState) run(ctx context.Context) (*SCFResult, error) {
	opts := st.opts
	res := &SCFResult{
		NuclearRepulsion: st.in.ENuc, Restricted: st.in.Restricted,
		NAlpha: st.in.NAlpha, NBeta: st.in.NBeta,
		NBasis: st.n, NMO: st.m, Dropped: st.drop, Orthogonalization: st.orth,
	}
	guess := opts.Guess
	if st.in.GuessOrbitals != nil {
		guess = GuessFromOrbitals
	}
	res.Guess = guess
	if err := st.startGuess(guess); err != nil {
		return nil, err
	}
	res.History = make([]Iteration, 0, min(opts.MaxIterations, 256))

	stage := StageNormal
	stageStart, lastImprove, rises := 0, 0, 0
	refErr := math.Inf(1)
	prevE := 0.0
	status, reason := StatusMaxIterations, fmt.Sprintf("iteration limit %d reached", opts.MaxIterations)
	var last Iteration
	record := func(rec Iteration) {
		res.History = append(res.History, rec)
		if opts.OnIteration != nil {
			opts.OnIteration(rec)
		}
		last = rec
	}
	for it := 0; it < opts.MaxIterations; it++ {
		if err := ctx.Err(); err != nil {
			return nil, fmt.Errorf("hf: scf cancelled at iteration %d: %w", it, err)
		}
		energy, srcEnergy, err := st.buildFock(ctx)
		if err != nil {
			return nil, fmt.Errorf("hf: scf iteration %d: %w", it, err)
		}
		errMax := st.gradient()
		rec := Iteration{Index: it, Energy: energy, Stage: stage}
		if st.hasSrc {
			rec.EnergySourceFock = srcEnergy
		}
		if it > 0 {
			rec.DeltaE = energy - prevE
			rec.DensityChange = rmsDiff(st.tot, st.totPrev)
		}
		rec.Error = errMax
		if math.IsNaN(energy) || math.IsInf(energy, 0) || math.IsNaN(errMax) {
			return nil, fmt.Errorf("hf: scf iteration %d: energy %g, error %g: non-finite numbers (check the integrals)", it, energy, errMax)
		}
		prevE = energy
		st.totPrev.CopySym(st.tot)

		converged := it > 0 && math.Abs(rec.DeltaE) <= opts.EnergyTol && errMax <= opts.ErrorTol && rec.DensityChange <= opts.ErrorTol
		if converged {
			record(rec)
			status, reason = StatusConverged, fmt.Sprintf("|ΔE| %.1e ≤ %.1e Eh and error %.1e ≤ %.1e", math.Abs(rec.DeltaE), opts.EnergyTol, errMax, opts.ErrorTol)
			break
		}

		// Fall-back chain: watch for a stalled error or a rising energy.
		if errMax < 0.5*refErr {
			refErr, lastImprove = errMax, it
		}
		if it-stageStart >= 5 && rec.DeltaE > 1e-6 {
			rises++
		}
		restart := false
		if !opts.DisableFallback && (it-lastImprove >= opts.StallIterations || rises >= opts.MaxEnergyRises) {
			why := fmt.Sprintf("error not halved in %d iterations", it-lastImprove)
			if rises >= opts.MaxEnergyRises {
				why = fmt.Sprintf("energy rose %d times", rises)
			}
			if stage == StageRestarted {
				record(rec)
				status, reason = StatusStalled, "all fall-backs (damping, level shift, restart) tried; last stage: "+why
				break
			}
			stage++
			stageStart, lastImprove, rises, refErr = it, it, 0, math.Inf(1)
			st.diis.reset()
			switch stage {
			case StageDamped:
				st.damping, st.levelShift = opts.FallbackDamping, opts.LevelShift
			case StageShifted:
				st.damping, st.levelShift = opts.Damping, max(opts.LevelShift, opts.FallbackLevelShift)
			case StageRestarted:
				st.damping, st.levelShift = opts.Damping, max(opts.LevelShift, opts.FallbackLevelShift)
				restart = true
			}
		}

		if restart {
			res.Restarts++
			next := GuessCore
			if guess == GuessCore {
				next = GuessGWH
			}
			if err := st.startGuess(next); err != nil {
				return nil, err
			}
		} else {
			rec.DIISVectors = st.nextDensity()
			if err := st.diagonalize(); err != nil {
				return nil, fmt.Errorf("hf: scf iteration %d: %w", it, err)
			}
			st.occupy(true)
		}
		record(rec)
	}

	// Canonical orbitals of the last Fock matrix, without shift or damping.
	for s := range st.ns {
		st.fuse[s].Copy(st.fo[s])
	}
	if err := st.diagonalize(); err != nil {
		return nil, err
	}
	st.damping = 0
	st.occupy(false)
	st.fillResult(res, last)
	res.Status, res.Reason, res.Converged = status, reason, status == StatusConverged
	if !res.Converged {
		return res, &NotConvergedError{Status: status, Reason: reason, Iterations: res.Iterations, Energy: res.Energy, Gradient: last.Error}
	}
	return res, nil
}

// startGuess sets the densities for iteration 0 (or a restart).
func (st *scfState) startGuess(kind GuessKind) error {
	if kind == GuessFromOrbitals {
		if err := st.orbitalGuess(st.in.GuessOrbitals); err != nil {
			return err
		}
		st.hasSrc = false
		return nil
	}
	if kind == GuessAtoms || kind == GuessAtomsSpin || kind == GuessExtrapolated {
		dg := st.in.GuessDensity
		if st.ns == 1 {
			st.d[0].AddSym(dg.Alpha, dg.Beta)
			st.d[0].ScaleSym(0.5, st.d[0])
			st.tot.ScaleSym(2, st.d[0])
		} else {
			st.d[0].CopySym(dg.Alpha)
			st.d[1].CopySym(dg.Beta)
			st.tot.AddSym(st.d[0], st.d[1])
		}
		st.lumoReady = false
		st.hasSrc = false
		return nil
	}
	g := st.in.Hcore
	if kind == GuessGWH {
		g = gwhMatrix(st.in.S, st.in.Hcore)
	}
	st.tmpNM.Mul(g, st.x)
	for s := range st.ns {
		st.fuse[s].Mul(st.x.T(), st.tmpNM)
		st.fsrc[s].Copy(st.fuse[s])
	}
	if err := st.diagonalize(); err != nil {
		return fmt.Errorf("hf: scf guess: %w", err)
	}
	st.lumoReady = st.nocc[0] < st.m
	if kind == GuessCoreTwist && st.opts.GuessMixAngle == 0 {
		st.opts.GuessMixAngle = math.Pi / 4
		st.mixGuess()
		st.opts.GuessMixAngle = 0
	} else {
		st.mixGuess()
	}
	st.hasSrc = true
	st.occupy(false)
	return nil
}

// gwhMatrix is the generalised Wolfsberg–Helmholz guess matrix (K = 1.75).
func gwhMatrix(s, h *mat.SymDense) *mat.SymDense {
	n := s.SymmetricDim()
	g := mat.NewSymDense(n, nil)
	for i := range n {
		g.SetSym(i, i, h.At(i, i))
		for j := i + 1; j < n; j++ {
			g.SetSym(i, j, 0.875*s.At(i, j)*(h.At(i, i)+h.At(j, j)))
		}
	}
	return g
}

// mixGuess rotates the α HOMO and LUMO of the current orbitals (UHF only).
func (st *scfState) mixGuess() {
	th := st.opts.GuessMixAngle
	h := st.nocc[0] - 1
	if th == 0 || st.ns == 1 || h < 0 || !st.lumoReady {
		return
	}
	cs, sn := math.Cos(th), math.Sin(th)
	for _, c := range []*mat.Dense{st.cp[0], st.c[0]} {
		r, _ := c.Dims()
		for i := range r {
			a, b := c.At(i, h), c.At(i, h+1)
			c.Set(i, h, cs*a+sn*b)
			c.Set(i, h+1, -sn*a+cs*b)
		}
	}
}

// orbitalGuess builds the starting densities from given orbitals: the
// occupied columns are projected into the retained orthogonal space,
// C' = XᵀS C, and re-orthonormalised (Löwdin), C' ← C'(C'ᵀC')^{-1/2}.
// Without dropped functions this is C(CᵀSC)^{-1/2} in the new metric S.
func (st *scfState) orbitalGuess(o *Orbitals) error {
	if err := o.Validate(); err != nil {
		return fmt.Errorf("hf: scf guess: %w", err)
	}
	if o.NBasis != st.n {
		return fmt.Errorf("hf: scf guess: orbitals are over %d basis functions, the basis has %d", o.NBasis, st.n)
	}
	for s := range st.ns {
		src := o.CAlpha
		if s == 1 {
			src = o.Beta()
		}
		k := st.nocc[s]
		if s == 0 {
			st.lumoReady = st.ns == 2 && st.opts.GuessMixAngle != 0 && k+1 <= min(o.NMO(), st.m)
			if st.lumoReady {
				k++ // keep the LUMO too, to mix it in below
			}
		}
		if k > o.NMO() {
			return fmt.Errorf("hf: scf guess: %d occupied orbitals needed, the guess has %d", k, o.NMO())
		}
		st.c[s].Zero()
		st.cp[s].Zero()
		if k == 0 {
			continue
		}
		cp := mat.NewDense(st.m, k, nil)
		cp.Mul(st.xts, src.Slice(0, st.n, 0, k))
		var meta mat.SymDense
		meta.SymOuterK(1, cp.T())
		inv, err := invSqrtSym(&meta, 1e-6)
		if err != nil {
			return fmt.Errorf("hf: scf guess: occupied guess orbitals of spin %d are (nearly) linearly dependent in this basis: %w", s, err)
		}
		var on mat.Dense
		on.Mul(cp, inv)
		st.cp[s].Slice(0, st.m, 0, k).(*mat.Dense).Copy(&on)
		st.c[s].Mul(st.x, st.cp[s])
	}
	st.mixGuess()
	st.occupy(false)
	return nil
}

// buildFock builds the Fock matrices from st.d and returns the variational
// energy and the energy with the source (previously diagonalised) matrix.
func (st *scfState) buildFock(ctx context.Context) (energy, src float64, err error) {
	if err := st.jk(ctx); err != nil {
		return 0, 0, fmt.Errorf("jk build: %w", err)
	}
	h := st.in.Hcore
	ht := h.RawSymmetric()
	j0 := st.j[0].RawSymmetric()
	jscale, j1 := 2.0, j0 // RHF: F = H + 2J[D] − K[D]
	if st.ns == 2 {
		jscale, j1 = 1, st.j[1].RawSymmetric() // UHF: F^σ = H + J[Dα] + J[Dβ] − K[D^σ]
	}
	for s := range st.ns {
		fr, kr := st.f[s].RawSymmetric(), st.k[s].RawSymmetric()
		for i := range st.n {
			for j := i; j < st.n; j++ {
				jsum := j0.Data[i*j0.Stride+j]
				if st.ns == 2 {
					jsum += j1.Data[i*j1.Stride+j]
				}
				fr.Data[i*fr.Stride+j] = ht.Data[i*ht.Stride+j] + jscale*jsum - kr.Data[i*kr.Stride+j]
			}
		}
	}
	var e, es float64
	for s := range st.ns {
		dh := symTrace(st.d[s], h)
		e += dh + symTrace(st.d[s], st.f[s])
		es += dh
	}
	energy = st.in.ENuc + 0.5*st.weight*e
	// Orthogonal-basis Fock and density, then the source-matrix energy
	// ½Σ w [tr(DH) + tr(D'F̃')] (tr(D F̃) = tr(D'F̃') for D in the retained space).
	for s := range st.ns {
		st.tmpNM.Mul(st.f[s], st.x)
		st.fo[s].Mul(st.x.T(), st.tmpNM)
		st.tmpMN.Mul(st.xts, st.d[s])
		st.do[s].Mul(st.tmpMN, st.xts.T())
		es += denseDot(st.do[s], st.fsrc[s])
	}
	src = st.in.ENuc + 0.5*st.weight*es
	return energy, src, nil
}

// gradient forms the orthogonal-basis commutators and returns max |e|.
func (st *scfState) gradient() float64 {
	var mx float64
	for s := range st.ns {
		st.tmpMM.Mul(st.fo[s], st.do[s])
		mx = math.Max(mx, antisymInto(st.eo[s], st.tmpMM))
	}
	return mx
}

// nextDensity pushes the current Fock/error pair into DIIS and leaves the
// matrix to diagonalise in st.fuse (with level shift). It returns the
// number of vectors extrapolated.
func (st *scfState) nextDensity() int {
	used := 0
	if st.opts.DisableDIIS {
		for s := range st.ns {
			st.fuse[s].Copy(st.fo[s])
		}
	} else {
		st.diis.push(st.fo, func(dst []float64) {
			if st.opts.DIISError == DIISErrorAO {
				nn := st.n * st.n
				for s := range st.ns {
					st.tmpNN.Mul(st.f[s], st.d[s])
					st.tmpNN2.Mul(st.tmpNN, st.in.S)
					antisymInto(st.errAO, st.tmpNN2)
					flatten(dst[s*nn:(s+1)*nn], st.errAO)
				}
				return
			}
			mm := st.m * st.m
			for s := range st.ns {
				flatten(dst[s*mm:(s+1)*mm], st.eo[s])
			}
		})
		used = st.diis.extrapolate(st.fuse)
	}
	for s := range st.ns {
		st.fsrc[s].Copy(st.fuse[s])
	}
	st.hasSrc = true
	if b := st.levelShift; b > 0 {
		// F' + b(1 − D'): virtual space raised by b (Saunders & Hillier 1973).
		for s := range st.ns {
			rf, rd := st.fuse[s].RawMatrix(), st.do[s].RawMatrix()
			for i := range st.m {
				for j := range st.m {
					v := -b * rd.Data[i*rd.Stride+j]
					if i == j {
						v += b
					}
					rf.Data[i*rf.Stride+j] += v
				}
			}
		}
	}
	return used
}

// diagonalize diagonalises st.fuse into st.cp, st.eps and st.c = X C'.
func (st *scfState) diagonalize() error {
	for s := range st.ns {
		if err := st.eig.solve(st.fuse[s], st.eps[s], st.cp[s]); err != nil {
			return err
		}
		st.c[s].Mul(st.x, st.cp[s])
	}
	return nil
}

// occupy builds st.d from the lowest orbitals of st.c; with damp it mixes
// in the previous density with the current damping factor.
func (st *scfState) occupy(damp bool) {
	a := st.damping
	for s := range st.ns {
		if damp && a > 0 {
			st.dPrev[s].CopySym(st.d[s])
		}
		if k := st.nocc[s]; k > 0 {
			st.d[s].SymOuterK(1, st.c[s].Slice(0, st.n, 0, k))
		} else {
			st.d[s].Zero()
		}
		if damp && a > 0 {
			rd, rp := st.d[s].RawSymmetric(), st.dPrev[s].RawSymmetric()
			for i := range st.n {
				for j := i; j < st.n; j++ {
					p := i*rd.Stride + j
					rd.Data[p] = (1-a)*rd.Data[p] + a*rp.Data[i*rp.Stride+j]
				}
			}
		}
	}
	if st.ns == 1 {
		st.tot.ScaleSym(2, st.d[0])
	} else {
		st.tot.AddSym(st.d[0], st.d[1])
	}
}

func rmsDiff(a, b *mat.SymDense) float64 {
	ra, rb := a.RawSymmetric(), b.RawSymmetric()
	n := ra.N
	var sum float64
	for i := range n {
		for j := range n {
			ii, jj := min(i, j), max(i, j)
			d := ra.Data[ii*ra.Stride+jj] - rb.Data[ii*rb.Stride+jj]
			sum += d * d
		}
	}
	return math.Sqrt(sum / float64(n*n))
}

func (st *scfState) fillResult(res *SCFResult, last Iteration) {
	res.Iterations = len(res.History)
	res.Energy = last.Energy
	res.ElectronicEnergy = last.Energy - st.in.ENuc
	orb := &Orbitals{NBasis: st.n, Restricted: st.ns == 1}
	occ := func(k int) []float64 {
		o := make([]float64, st.m)
		for i := range k {
			o[i] = 1
		}
		return o
	}
	orb.CAlpha = mat.DenseCopyOf(st.c[0])
	orb.EnergiesAlpha = append([]float64(nil), st.eps[0]...)
	orb.OccAlpha = occ(st.nocc[0])
	res.DensityAlpha = mat.NewSymDense(st.n, nil)
	res.DensityAlpha.CopySym(st.d[0])
	res.DensityBeta = mat.NewSymDense(st.n, nil)
	if st.ns == 2 {
		orb.CBeta = mat.DenseCopyOf(st.c[1])
		orb.EnergiesBeta = append([]float64(nil), st.eps[1]...)
		orb.OccBeta = occ(st.nocc[1])
		res.DensityBeta.CopySym(st.d[1])
	} else {
		res.DensityBeta.CopySym(st.d[0])
	}
	res.Density = mat.NewSymDense(st.n, nil)
	res.Density.AddSym(res.DensityAlpha, res.DensityBeta)
	res.Orbitals = orb
	res.S2 = spinSquared(st.in.S, orb.CAlpha, orb.Beta(), st.nocc[0], st.nocc[1])
}

// spinSquared returns ⟨S²⟩ of the single determinant with na α orbitals
// (columns of ca) and nb β orbitals (columns of cb):
//
//	⟨S²⟩ = S_z(S_z + 1) + N_β − Σ_i^{N_α} Σ_j^{N_β} |⟨i_α|j_β⟩|²,  S_z = (N_α − N_β)/2.
//
// References: A. Szabo and N. S. Ostlund, Modern Quantum Chemistry (Dover,
// 1996), the UHF ⟨S²⟩ expression of §2.5 used again in §3.8 (equation
// number not checked; formula from memory).
func spinSquared(s *mat.SymDense, ca, cb *mat.Dense, na, nb int) float64 {
	sz := 0.5 * float64(na-nb)
	v := sz*(sz+1) + float64(nb)
	if na == 0 || nb == 0 {
		return v
	}
	n, _ := ca.Dims()
	var t, o mat.Dense
	t.Mul(s, cb.Slice(0, n, 0, nb))
	o.Mul(ca.Slice(0, n, 0, na).T(), &t)
	return v - denseDot(&o, &o)
}
