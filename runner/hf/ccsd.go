package hf

import (
	"context"
	"errors"
	"fmt"
	"math"
	"time"
	"wellscan/runner/hf/integral"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/gonum"
)

// Closed-shell coupled-cluster theory with single and double excitations
// (CCSD) on a canonical RHF determinant, and the perturbative triples
// correction (T) (triples.go).
//
// The amplitude equations are the spin-orbital CCSD equations of Stanton,
// Gauss, Watts and Bartlett, spin-integrated here for a closed shell. With
// spatial orbitals, t_i^a the singles and T_ij^ab = t_{iα jβ}^{aα bβ} the
// opposite-spin doubles (the same-spin doubles are T_ij^ab − T_ij^ba),
// Mulliken integrals (pq|rs), L(me,nf) = 2(me|nf) − (mf|ne), τ = T + t t
// and τ̃ = T + ½ t t, the intermediates are
//
//	F_me = Σ_nf t_nf L(me,nf)
//	F_ae = Σ_mf t_mf [2(mf|ae) − (me|af)] − Σ_mnf τ̃_mn^af L(me,nf)
//	F_mi = Σ_ne t_ne [2(mi|ne) − (me|ni)] + Σ_nef τ̃_in^ef L(me,nf)
//	F'_be = F_be − ½ Σ_m t_mb F_me,   F'_mj = F_mj + ½ Σ_e t_je F_me
//	W_mnij = (mi|nj) + Σ_e [t_je (mi|ne) + t_ie (me|nj)] + Σ_ef τ_ij^ef (me|nf)
//	W_mbej = (me|jb) + Σ_f t_jf (me|bf) − Σ_n t_nb (nj|me) − Σ_nf t_jf t_nb (me|nf)
//	         + ½ Σ_nf [L(me,nf) T_nj^fb − (me|nf) T_nj^bf]
//	W̃_mbje = (mj|be) + Σ_f t_jf (mf|be) − Σ_n t_nb (mj|ne) − Σ_nf (t_jf t_nb + ½ T_nj^bf)(mf|ne)
//
// (the Fock matrix of canonical orbitals is diagonal; its diagonal is in
// the denominators D_ia = ε_i − ε_a and D_ij^ab = ε_i + ε_j − ε_a − ε_b).
// The singles equation is
//
//	D_ia t_ia = Σ_e t_ie F_ae − Σ_m t_ma F_mi + Σ_me (2T_im^ae − T_im^ea) F_me
//	          + Σ_nf t_nf [2(nf|ai) − (ni|af)] + Σ_mef (2T_im^ef − T_im^fe)(mf|ae)
//	          − Σ_mne T_mn^ae [2(ne|mi) − (ni|me)]
//
// and the doubles equation D_ij^ab T_ij^ab = S_ij^ab + P_ij^ab + P_ji^ba with
//
//	S_ij^ab = (ia|jb) + Σ_mn τ_mn^ab W_mnij + Σ_ef τ_ij^ef (ae|bf)
//	P_ij^ab = Σ_e T_ij^ae F'_be − Σ_m T_im^ab F'_mj + Σ_e t_ie (ae|bj) − Σ_m t_ma (mi|bj)
//	        − Σ_m t_mb Σ_ef τ_ij^ef (mf|ae)
//	        + Σ_me [(2T_im^ae − T_im^ea) W_mbej − T_im^ae W̃_mbje − T_mj^ae W̃_mbie]
//	        − Σ_me [t_ie t_ma (me|bj) + t_je t_ma (mi|be)]
//
// (the whole τ·τ·(me|nf) ladder term is carried by W_mnij, so the
// particle–particle ladder needs only the bare (ae|bf)). The correlation
// energy is E = Σ_ijab [2(ia|jb) − (ib|ja)] (T_ij^ab + t_ia t_jb).
//
// Every term of cost o²v⁴, o³v³ or o²v³ is a gonum BLAS matrix product;
// the (vv|vv) integrals stay packed with their 8-fold symmetry and are
// unpacked one virtual a at a time for the ladder product. Amplitude
// updates are accelerated with DIIS (Pulay; Scuseria, Lee and Schaefer)
// on the change of the amplitudes.
//
// References:
//   - J. F. Stanton, J. Gauss, J. D. Watts and R. J. Bartlett, J. Chem. Phys. 94, 4334 (1991),
//     doi:10.1063/1.460620 (the spin-orbital equations and intermediates used above).
//   - G. E. Scuseria, C. L. Janssen and H. F. Schaefer III, J. Chem. Phys. 89, 7382 (1988),
//     doi:10.1063/1.455269 (closed-shell CCSD in matrix-product form).
//   - G. E. Scuseria, T. J. Lee and H. F. Schaefer III, Chem. Phys. Lett. 130, 236 (1986),
//     doi:10.1016/0009-2614(86)80461-4 (DIIS for coupled-cluster amplitudes).
//   - G. D. Purvis III and R. J. Bartlett, J. Chem. Phys. 76, 1910 (1982), doi:10.1063/1.443164 (CCSD).
//
// The citations are given from memory. The spin integration was done for
// this code and is checked against a published worked example (all four
// of its systems to 1e-9 Eh) and against full CI for two electrons.

// The coupled-cluster methods of the built-in engine.
const (
	// CCSD is coupled-cluster theory with single and double excitations on
	// a closed-shell RHF reference.
	CCSD Method = "ccsd"
	// CCSDT is CCSD plus the perturbative triples correction, CCSD(T).
	CCSDT Method = "ccsd(t)"
)

// DefaultCCMemory is the default budget (bytes) of a coupled-cluster
// calculation: MO integrals, amplitudes, intermediates and the batch of
// half-transformed integrals. It comes on top of the SCF's in-core AO
// integrals (Options.Memory).
const DefaultCCMemory = 8 << 30

// ErrCCReference is wrapped by RunCCSD when the SCF result cannot serve
// as a coupled-cluster reference: not converged, orbitals missing, or not
// a closed-shell restricted determinant (open shells are not supported).
var ErrCCReference = errors.New("hf: ccsd: unusable reference")

// CCOptions configures [RunCCSD].
type CCOptions struct {
	// Frozen is the number of lowest occupied spatial orbitals left
	// uncorrelated (0: all electrons).
	Frozen int
	// Triples adds the (T) correction.
	Triples bool
	// Memory is the budget in bytes (0: DefaultCCMemory).
	Memory int64
	// Workers is the number of goroutines (≤ 0: runtime.NumCPU()).
	Workers int
	// MaxIterations caps the amplitude iterations (0: 100).
	MaxIterations int
	// EnergyTol (hartree, 0: 1e-10) and AmplitudeTol (largest change of
	// an amplitude, 0: 1e-8) are both required for convergence.
	EnergyTol, AmplitudeTol float64
	// DIIS is the number of amplitude vectors kept (0: 8; negative: off).
	DIIS int
}

// CCResult holds the coupled-cluster energies (hartree) of one geometry.
type CCResult struct {
	// ReferenceEnergy is the RHF total energy.
	ReferenceEnergy float64
	// Correlation is the CCSD correlation energy; Triples the (T)
	// correction (0 unless computed); Total = ReferenceEnergy +
	// Correlation + Triples.
	Correlation, Triples, Total float64
	// WithTriples says whether (T) was computed.
	WithTriples bool
	// MP2Correlation is the MP2 energy of the first-order amplitudes (a
	// by-product: the CCSD starting point).
	MP2Correlation float64
	// FrozenCore is the number of frozen spatial orbitals; FrozenCoreLabel
	// describes them ("O 1s"; "" when none).
	FrozenCore      int
	FrozenCoreLabel string
	// Correlated occupied and virtual spatial orbitals.
	Occupied, Virtual int
	// Iterations of the amplitude equations; Converged whether they met
	// both tolerances; Residual the largest amplitude change of the last
	// iteration.
	Iterations int
	Converged  bool
	Residual   float64
	// MaxT1, MaxT2 are the largest |t_ia| and |T_ij^ab| (diagnostics of
	// multireference character; T1 above ~0.05 is a warning sign).
	MaxT1, MaxT2 float64
	// Wall-clock times: integral transformation, CCSD iterations, (T).
	TransformTime, CCSDTime, TriplesTime, Time time.Duration
	// MemoryBytes is an upper estimate of the peak of the arrays RunCCSD
	// allocated (the half-transformed integrals counted as if still held).
	MemoryBytes int64
}

// ErrCCMemory is wrapped by RunCCSD when the calculation does not fit its
// memory budget; it is refused before anything large is allocated, and
// would be refused again on another try.
var ErrCCMemory = errors.New("hf: ccsd: memory budget too small")

// ErrCCNotConverged is wrapped by RunCCSD when the amplitude equations do
// not converge; the result is returned with Converged false.
var ErrCCNotConverged = errors.New("hf: ccsd: amplitude equations did not converge")

// ccInts are the MO integral blocks over o correlated occupied and v
// virtual orbitals (chemists' notation, row-major in the order written).
type ccInts struct {
	o, v  int
	ovov  []float64 // (ia|jb)
	oovv  []float64 // (ij|ab)
	oooo  []float64 // (ij|kl)
	ooov  []float64 // (ij|ka)
	ovvv  []float64 // (ia|bc)
	ovvvT []float64 // [m][b][c][a] = (mb|ac)
	mo    *moERI    // all blocks, packed; (vv|vv) is read from here unless vvvv is set
	// vvvv, when the budget allows, holds [(a b)][e][f] = (ae|bf) for
	// a ≥ b, pair index a(a+1)/2 + b; mo is then dropped.
	vvvv   []float64
	eo, ev []float64
}

// vvvvBytes is the size of ccInts.vvvv.
func vvvvBytes(v int) int64 {
	return 8 * int64(v) * int64(v+1) / 2 * int64(v) * int64(v)
}

// expandVVVV fills g.vvvv from the packed integrals and drops them.
func (g *ccInts) expandVVVV(ctx context.Context, workers int) error {
	v := g.v
	v2 := v * v
	g.vvvv = make([]float64, v*(v+1)/2*v2)
	err := integral.ParallelFor(ctx, workers, v, func() []float64 { return make([]float64, v*v2) }, func(V []float64, a int) error {
		g.vvvvRow(a, V)
		copy(g.vvvv[a*(a+1)/2*v2:(a*(a+1)/2+a+1)*v2], V[:(a+1)*v2])
		return nil
	})
	if err != nil {
		return fmt.Errorf("hf: ccsd: %w", err)
	}
	g.mo = nil
	return nil
}

func newCCInts(mo *moERI, o, v int, eo, ev []float64) *ccInts {
	g := &ccInts{o: o, v: v, mo: mo, eo: eo, ev: ev}
	g.ovov = make([]float64, o*v*o*v)
	g.oovv = make([]float64, o*o*v*v)
	g.oooo = make([]float64, o*o*o*o)
	g.ooov = make([]float64, o*o*o*v)
	g.ovvv = make([]float64, o*v*v*v)
	g.ovvvT = make([]float64, o*v*v*v)
	for i := range o {
		for a := range v {
			for j := range o {
				for b := range v {
					g.ovov[((i*v+a)*o+j)*v+b] = mo.at(i, o+a, j, o+b)
				}
			}
		}
		for j := range o {
			for a := range v {
				for b := range v {
					g.oovv[((i*o+j)*v+a)*v+b] = mo.at(i, j, o+a, o+b)
				}
			}
			for k := range o {
				for l := range o {
					g.oooo[((i*o+j)*o+k)*o+l] = mo.at(i, j, k, l)
				}
				for a := range v {
					g.ooov[((i*o+j)*o+k)*v+a] = mo.at(i, j, k, o+a)
				}
			}
		}
		for a := range v {
			for b := range v {
				for c := range v {
					x := mo.at(i, o+a, o+b, o+c)
					g.ovvv[((i*v+a)*v+b)*v+c] = x
					g.ovvvT[((i*v+a)*v+c)*v+b] = x
				}
			}
		}
	}
	return g
}

// vvvvRow writes V[b][e·v+f] = (ae|bf) for one virtual a.
func (g *ccInts) vvvvRow(a int, V []float64) {
	o, v := g.o, g.v
	d := g.mo.data
	for e := range v {
		AE := ppidx(o+a, o+e)
		for b := range v {
			row := V[b*v*v+e*v : b*v*v+e*v+v]
			for f := range v {
				BF := ppidx(o+b, o+f)
				if AE >= BF {
					row[f] = d[AE*(AE+1)/2+BF]
				} else {
					row[f] = d[BF*(BF+1)/2+AE]
				}
			}
		}
	}
}

var blasImpl gonum.Implementation

// gemm is C = alpha op(A) op(B) + beta C (row-major).
func gemm(tA, tB bool, m, n, k int, alpha float64, a []float64, lda int, b []float64, ldb int, beta float64, c []float64, ldc int) {
	if m == 0 || n == 0 {
		return
	}
	ta, tb := blas.NoTrans, blas.NoTrans
	if tA {
		ta = blas.Trans
	}
	if tB {
		tb = blas.Trans
	}
	if k == 0 {
		if beta != 1 {
			for i := range m {
				for j := range n {
					c[i*ldc+j] *= beta
				}
			}
		}
		return
	}
	blasImpl.Dgemm(ta, tb, m, n, k, alpha, a, lda, b, ldb, beta, c, ldc)
}

// ccsdSolver holds the amplitudes and work arrays of one CCSD run.
type ccsdSolver struct {
	g       *ccInts
	workers int
	t1, t2  []float64 // [i][a], [i][j][a][b]
}

// ccBytes estimates the memory of the CCSD arrays for o occupied and v
// virtual orbitals with d DIIS vectors and the given number of workers.
func ccBytes(o, v, d, workers int) int64 {
	o2v2 := int64(o) * int64(o) * int64(v) * int64(v)
	ov3 := int64(o) * int64(v) * int64(v) * int64(v)
	ov := int64(o) * int64(v)
	// integral blocks: ovov, oovv, 2 ovvv, oooo, ooov; amplitudes,
	// residual parts and ring/ladder intermediates (about 20 o²v²
	// arrays, 2 o v³ for the Z intermediate and (T)), DIIS vectors and
	// errors, per-worker (vv|vv) rows.
	n := 2*o2v2 + 2*ov3 + int64(o)*int64(o)*int64(o)*int64(o) + int64(o)*int64(o)*ov
	n += 20*o2v2 + ov3 + 2*int64(d)*(o2v2+ov) + int64(workers)*int64(v)*int64(v)*int64(v)
	return 8 * n
}

// RunCCSD computes the CCSD (and, with opts.Triples, the (T)) energy of a
// converged closed-shell RHF result from AO integrals. The AO→MO
// transformation runs batched within opts.Memory; the whole calculation
// is refused with a clear error before anything large is allocated when
// its arrays do not fit. ctx is checked between steps and iterations.
// RunCCSD only reads scf and src. Amplitude equations that do not
// converge return the result (Converged false) and an error wrapping
// ErrCCNotConverged.
func RunCCSD(ctx context.Context, scf *SCFResult, src PairBlockSource, opts CCOptions) (*CCResult, error) {
	start := time.Now()
	if scf == nil || scf.Orbitals == nil {
		return nil, fmt.Errorf("%w: no orbitals", ErrCCReference)
	}
	if !scf.Converged {
		return nil, fmt.Errorf("%w: the SCF did not converge (%s)", ErrCCReference, scf.Status)
	}
	orb := scf.Orbitals
	if err := orb.Validate(); err != nil {
		return nil, fmt.Errorf("%w: %w", ErrCCReference, err)
	}
	if !orb.Restricted {
		return nil, fmt.Errorf("%w: only closed-shell RHF references are supported (this one is unrestricted)", ErrCCReference)
	}
	if src.NumFunctions() != orb.NBasis {
		return nil, fmt.Errorf("hf: ccsd: integrals span %d functions, orbitals %d", src.NumFunctions(), orb.NBasis)
	}
	if opts.Frozen < 0 {
		return nil, fmt.Errorf("hf: ccsd: negative frozen-core count %d", opts.Frozen)
	}
	sp, err := splitSpin(orb, false, opts.Frozen)
	if err != nil {
		return nil, fmt.Errorf("%w: %w", ErrCCReference, err)
	}
	budget := opts.Memory
	if budget == 0 {
		budget = DefaultCCMemory
	}
	maxIt := opts.MaxIterations
	if maxIt <= 0 {
		maxIt = 100
	}
	eTol, aTol := opts.EnergyTol, opts.AmplitudeTol
	if eTol <= 0 {
		eTol = 1e-10
	}
	if aTol <= 0 {
		aTol = 1e-8
	}
	ndiis := opts.DIIS
	if ndiis == 0 {
		ndiis = 8
	}
	workers := integral.ResolveWorkers(opts.Workers)
	o, v := sp.no, sp.nv
	m := o + v
	res := &CCResult{ReferenceEnergy: scf.Energy, FrozenCore: opts.Frozen, Occupied: o, Virtual: v, WithTriples: opts.Triples}
	need := moERIBytes(m) + ccBytes(o, v, max(ndiis, 0), workers)
	res.MemoryBytes = need
	if need > budget {
		return nil, fmt.Errorf("%w: %d correlated occupied and %d virtual orbitals need about %d MB, more than the budget of %d MB (raise the coupled-cluster memory budget, or use a smaller basis)", ErrCCMemory, o, v, need>>20, budget>>20)
	}
	if o == 0 || v == 0 {
		res.Converged = true
		res.Total = res.ReferenceEnergy
		res.Time = time.Since(start)
		return res, nil
	}
	n := orb.NBasis
	C := make([]float64, n*m)
	for mu := range n {
		copy(C[mu*m:mu*m+o], sp.Co[mu*o:(mu+1)*o])
		copy(C[mu*m+o:(mu+1)*m], sp.Cv[mu*v:(mu+1)*v])
	}
	mo, tt, tb, err := transformFull(ctx, src, C, m, workers, budget-ccBytes(o, v, max(ndiis, 0), workers))
	if err != nil {
		return nil, err
	}
	// The half-transformed batch is garbage from here on, but the
	// process may hold it until the collector returns it: count it.
	res.MemoryBytes = tb + ccBytes(o, v, max(ndiis, 0), workers)
	res.TransformTime = tt
	g := newCCInts(mo, o, v, sp.eo, sp.ev)
	// Keep the (vv|vv) rows unpacked when they fit next to everything
	// else (the packed integrals are dropped then): the ladder becomes one
	// matrix product over a ≥ b instead of an unpacking per iteration.
	if need+vvvvBytes(v) <= budget {
		if err := g.expandVVVV(ctx, workers); err != nil {
			return nil, err
		}
		res.MemoryBytes += vvvvBytes(v)
	}
	s := &ccsdSolver{g: g, workers: workers, t1: make([]float64, o*v), t2: make([]float64, o*o*v*v)}
	ccStart := time.Now()
	// First-order (MP2) amplitudes as the start.
	for i := range o {
		for j := range o {
			for a := range v {
				for b := range v {
					d := g.eo[i] + g.eo[j] - g.ev[a] - g.ev[b]
					if d >= 0 {
						return nil, fmt.Errorf("%w: orbital-energy denominator %g ≥ 0 (occupied %d, %d; virtual %d, %d): not an aufbau determinant", ErrCCReference, d, i+1, j+1, a+1, b+1)
					}
					s.t2[((i*o+j)*v+a)*v+b] = g.ovov[((i*v+a)*o+j)*v+b] / d
				}
			}
		}
	}
	res.MP2Correlation = s.energy()
	eOld := res.MP2Correlation
	var dd *ccDIIS
	if ndiis > 0 {
		dd = newCCDIIS(ndiis)
	}
	n1 := len(s.t1)
	vec := make([]float64, n1+len(s.t2))
	errv := make([]float64, len(vec))
	for it := 1; it <= maxIt; it++ {
		if err := ctx.Err(); err != nil {
			return nil, fmt.Errorf("hf: ccsd: cancelled: %w", err)
		}
		t1n, t2n, err := s.update(ctx)
		if err != nil {
			return nil, err
		}
		var dmax float64
		for x, val := range t1n {
			errv[x] = val - s.t1[x]
			dmax = max(dmax, math.Abs(errv[x]))
		}
		for x, val := range t2n {
			errv[n1+x] = val - s.t2[x]
			dmax = max(dmax, math.Abs(errv[n1+x]))
		}
		copy(vec, t1n)
		copy(vec[n1:], t2n)
		if dd != nil {
			dd.push(vec, errv)
			dd.extrapolate(vec)
		}
		copy(s.t1, vec[:n1])
		copy(s.t2, vec[n1:])
		e := s.energy()
		res.Iterations, res.Residual, res.Correlation = it, dmax, e
		if math.IsNaN(e) || math.IsInf(e, 0) {
			break
		}
		if math.Abs(e-eOld) < eTol && dmax < aTol {
			res.Converged = true
			break
		}
		eOld = e
	}
	res.CCSDTime = time.Since(ccStart)
	for _, x := range s.t1 {
		res.MaxT1 = max(res.MaxT1, math.Abs(x))
	}
	for _, x := range s.t2 {
		res.MaxT2 = max(res.MaxT2, math.Abs(x))
	}
	res.Total = res.ReferenceEnergy + res.Correlation
	if !res.Converged {
		res.Time = time.Since(start)
		return res, fmt.Errorf("%w after %d iterations (largest amplitude change %.2e, energy change above %.0e Eh or amplitude tolerance %.0e)", ErrCCNotConverged, res.Iterations, res.Residual, eTol, aTol)
	}
	if opts.Triples {
		tStart := time.Now()
		et, err := triples(ctx, g, s.t1, s.t2, workers)
		if err != nil {
			return nil, err
		}
		res.Triples = et
		res.TriplesTime = time.Since(tStart)
		res.Total += et
	}
	res.Time = time.Since(start)
	return res, nil
}

// energy is the CCSD correlation energy of the current amplitudes.
func (s *ccsdSolver) energy() float64 {
	g := s.g
	o, v := g.o, g.v
	var e float64
	for i := range o {
		for j := range o {
			for a := range v {
				ta := s.t1[i*v+a]
				for b := range v {
					l := 2*g.ovov[((i*v+a)*o+j)*v+b] - g.ovov[((i*v+b)*o+j)*v+a]
					e += l * (s.t2[((i*o+j)*v+a)*v+b] + ta*s.t1[j*v+b])
				}
			}
		}
	}
	return e
}

// update returns the new amplitudes R/D from the current ones.
func (s *ccsdSolver) update(ctx context.Context) (t1n, t2n []float64, err error) {
	g := s.g
	o, v := g.o, g.v
	ov, o2, v2 := o*v, o*o, v*v
	t1, T := s.t1, s.t2
	at := func(i, j, a, b int) int { return ((i*o+j)*v+a)*v + b }
	ovovAt := func(i, a, j, b int) float64 { return g.ovov[((i*v+a)*o+j)*v+b] }

	tau := make([]float64, len(T))
	taut := make([]float64, len(T))
	for i := range o {
		for j := range o {
			for a := range v {
				for b := range v {
					x := t1[i*v+a] * t1[j*v+b]
					tau[at(i, j, a, b)] = T[at(i, j, a, b)] + x
					taut[at(i, j, a, b)] = T[at(i, j, a, b)] + 0.5*x
				}
			}
		}
	}
	// L(me,nf) = 2(me|nf) − (mf|ne) as an (ov)×(ov) matrix; Kx(me,nf) = (mf|ne).
	L := make([]float64, ov*ov)
	Kx := make([]float64, ov*ov)
	for m := range o {
		for e := range v {
			for n := range o {
				for f := range v {
					k := ovovAt(m, f, n, e)
					Kx[(m*v+e)*ov+n*v+f] = k
					L[(m*v+e)*ov+n*v+f] = 2*ovovAt(m, e, n, f) - k
				}
			}
		}
	}
	// F_me = Σ_nf L(me,nf) t_nf.
	Fme := make([]float64, ov)
	gemm(false, false, ov, 1, ov, 1, L, ov, t1, 1, 0, Fme, 1)
	// F_ae.
	Fae := make([]float64, v2)
	for m := range o {
		for f := range v {
			tmf := t1[m*v+f]
			if tmf == 0 {
				continue
			}
			for a := range v {
				for e := range v {
					Fae[a*v+e] += tmf * (2*g.ovvv[((m*v+f)*v+a)*v+e] - g.ovvv[((m*v+e)*v+a)*v+f])
				}
			}
		}
	}
	{
		// − Σ_(mnf) τ̃[m][n][a][f] L(me,nf): A[a][(m n f)], B[(m n f)][e].
		A := make([]float64, v*o2*v)
		B := make([]float64, o2*v*v)
		for m := range o {
			for n := range o {
				for a := range v {
					for f := range v {
						A[a*o2*v+(m*o+n)*v+f] = taut[at(m, n, a, f)]
					}
				}
				for f := range v {
					for e := range v {
						B[((m*o+n)*v+f)*v+e] = L[(m*v+e)*ov+n*v+f]
					}
				}
			}
		}
		gemm(false, false, v, v, o2*v, -1, A, o2*v, B, v, 1, Fae, v)
	}
	// F_mi.
	Fmi := make([]float64, o2)
	for m := range o {
		for i := range o {
			var x float64
			for n := range o {
				for e := range v {
					x += t1[n*v+e] * (2*g.ooov[((m*o+i)*o+n)*v+e] - g.ooov[((n*o+i)*o+m)*v+e])
				}
			}
			Fmi[m*o+i] = x
		}
	}
	{
		// + Σ_(nef) L(me,nf) τ̃[i][n][e][f]: Lm[m][(n e f)] × τ̃[i][(n e f)]ᵀ.
		Lm := make([]float64, o*o*v*v)
		for m := range o {
			for n := range o {
				for e := range v {
					for f := range v {
						Lm[((m*o+n)*v+e)*v+f] = L[(m*v+e)*ov+n*v+f]
					}
				}
			}
		}
		gemm(false, true, o, o, o*v2, 1, Lm, o*v2, taut, o*v2, 1, Fmi, o)
	}
	Fbe := make([]float64, v2) // F'_be
	for b := range v {
		for e := range v {
			x := Fae[b*v+e]
			for m := range o {
				x -= 0.5 * t1[m*v+b] * Fme[m*v+e]
			}
			Fbe[b*v+e] = x
		}
	}
	Fmj := make([]float64, o2) // F'_mj
	for m := range o {
		for j := range o {
			x := Fmi[m*o+j]
			for e := range v {
				x += 0.5 * t1[j*v+e] * Fme[m*v+e]
			}
			Fmj[m*o+j] = x
		}
	}

	// Singles.
	r1 := make([]float64, ov)
	gemm(false, true, o, v, v, 1, t1, v, Fae, v, 0, r1, v)  // Σ_e t_ie F_ae
	gemm(true, false, o, v, o, -1, Fmi, o, t1, v, 1, r1, v) // − Σ_m F_mi t_ma
	U := make([]float64, o2*v2)                             // U[(i a)][(m e)] = 2T_im^ae − T_im^ea
	Tx := make([]float64, o2*v2)                            // Tx[(i a)][(m e)] = T_im^ae
	Ty := make([]float64, o2*v2)                            // Ty[(j a)][(m e)] = T_jm^ea
	for i := range o {
		for m := range o {
			for a := range v {
				for e := range v {
					tae, tea := T[at(i, m, a, e)], T[at(i, m, e, a)]
					U[(i*v+a)*ov+m*v+e] = 2*tae - tea
					Tx[(i*v+a)*ov+m*v+e] = tae
					Ty[(i*v+a)*ov+m*v+e] = tea
				}
			}
		}
	}
	gemm(false, false, ov, 1, ov, 1, U, ov, Fme, 1, 1, r1, 1) // Σ_me U F_me
	for i := range o {
		for a := range v {
			var x float64
			for n := range o {
				for f := range v {
					x += t1[n*v+f] * (2*ovovAt(n, f, i, a) - g.oovv[((n*o+i)*v+a)*v+f])
				}
			}
			r1[i*v+a] += x
		}
	}
	{
		// Σ_(m f e) Ux[i][(m f e)] (mf|ae), Ux[i][m][f][e] = 2T_im^ef − T_im^fe.
		Ux := make([]float64, o*o*v2)
		for i := range o {
			for m := range o {
				for f := range v {
					for e := range v {
						Ux[((i*o+m)*v+f)*v+e] = 2*T[at(i, m, e, f)] - T[at(i, m, f, e)]
					}
				}
			}
		}
		gemm(false, false, o, v, o*v2, 1, Ux, o*v2, g.ovvvT, v, 1, r1, v)
		// − Σ_(m n e) T[m][n][a][e] K2[(m n e)][i], K2 = 2(mi|ne) − (ni|me).
		K2 := make([]float64, o*o*v*o)
		A := make([]float64, v*o*o*v) // A[a][(m n e)] = T_mn^ae
		for m := range o {
			for n := range o {
				for e := range v {
					for i := range o {
						K2[((m*o+n)*v+e)*o+i] = 2*g.ooov[((m*o+i)*o+n)*v+e] - g.ooov[((n*o+i)*o+m)*v+e]
					}
				}
				for a := range v {
					for e := range v {
						A[a*o2*v+(m*o+n)*v+e] = T[at(m, n, a, e)]
					}
				}
			}
		}
		r1a := make([]float64, v*o) // [a][i]
		gemm(false, false, v, o, o2*v, 1, A, o2*v, K2, o, 0, r1a, o)
		for i := range o {
			for a := range v {
				r1[i*v+a] -= r1a[a*o+i]
			}
		}
	}

	// Doubles: symmetric part S.
	S := make([]float64, len(T))
	for i := range o {
		for j := range o {
			for a := range v {
				for b := range v {
					S[at(i, j, a, b)] = ovovAt(i, a, j, b)
				}
			}
		}
	}
	Wmn := make([]float64, o2*o2) // [(m n)][(i j)]
	for m := range o {
		for n := range o {
			for i := range o {
				for j := range o {
					x := g.oooo[((m*o+i)*o+n)*o+j]
					for e := range v {
						x += t1[j*v+e]*g.ooov[((m*o+i)*o+n)*v+e] + t1[i*v+e]*g.ooov[((n*o+j)*o+m)*v+e]
					}
					Wmn[(m*o+n)*o2+i*o+j] = x
				}
			}
		}
	}
	{
		Vmn := make([]float64, o2*v2) // [(m n)][(e f)] = (me|nf)
		for m := range o {
			for n := range o {
				for e := range v {
					for f := range v {
						Vmn[(m*o+n)*v2+e*v+f] = ovovAt(m, e, n, f)
					}
				}
			}
		}
		gemm(false, true, o2, o2, v2, 1, Vmn, v2, tau, v2, 1, Wmn, o2)
	}
	gemm(true, false, o2, v2, o2, 1, Wmn, o2, tau, v2, 1, S, v2) // Σ_mn W_mnij τ_mn^ab
	// Particle–particle ladder S_ij^ab += Σ_ef τ_ij^ef (ae|bf). S_ij^ab =
	// S_ji^ba, so only a ≥ b is computed when the (vv|vv) rows are kept.
	if g.vvvv != nil {
		nab := v * (v + 1) / 2
		Y := make([]float64, o2*nab) // [(i j)][(a ≥ b)]
		gemm(false, true, o2, nab, v2, 1, tau, v2, g.vvvv, v2, 0, Y, nab)
		for i := range o {
			for j := range o {
				row := Y[(i*o+j)*nab : (i*o+j+1)*nab]
				for a := range v {
					for b := 0; b <= a; b++ {
						y := row[a*(a+1)/2+b]
						S[at(i, j, a, b)] += y
						if a != b {
							S[at(j, i, b, a)] += y
						}
					}
				}
			}
		}
	} else {
		err = integral.ParallelFor(ctx, s.workers, v, func() []float64 { return make([]float64, v*v2) }, func(V []float64, a int) error {
			g.vvvvRow(a, V)
			gemm(false, true, o2, v, v2, 1, tau, v2, V, v2, 1, S[a*v:], v2)
			return nil
		})
		if err != nil {
			return nil, nil, fmt.Errorf("hf: ccsd: %w", err)
		}
	}

	// Doubles: the part P that is symmetrised (P_ij^ab + P_ji^ba).
	P := make([]float64, len(T))
	gemm(false, true, o2*v, v, v, 1, T, v, Fbe, v, 0, P, v) // Σ_e T_ij^ae F'_be
	for i := range o {
		// − Σ_m F'_mj T_im^ab: [j][(ab)] −= F'ᵀ[j][m] T[i][m][(ab)].
		gemm(true, false, o, v2, o, -1, Fmj, o, T[i*o*v2:], v2, 1, P[i*o*v2:], v2)
	}
	{
		// Σ_e t_ie (ae|bj) = Σ_e (jb|ae) t_ie: Q[(b a)][i] per j.
		Q := make([]float64, v2*o)
		for j := range o {
			gemm(false, true, v2, o, v, 1, g.ovvv[j*v*v2:], v, t1, v, 0, Q, o)
			for i := range o {
				for a := range v {
					for b := range v {
						P[at(i, j, a, b)] += Q[(b*v+a)*o+i]
					}
				}
			}
		}
	}
	for i := range o {
		for j := range o {
			for a := range v {
				for b := range v {
					var x float64
					for m := range o {
						x += t1[m*v+a] * g.ooov[((m*o+i)*o+j)*v+b]
					}
					P[at(i, j, a, b)] -= x
				}
			}
		}
	}
	{
		// − Σ_m t_mb Z_ij^am, Z_ij^am = Σ_ef τ_ij^ef (mf|ae) = Σ_(fe) τ[j][i][(f e)] (mf|ae).
		Z := make([]float64, o*o2*v) // [m][(j i)][a]
		err = integral.ParallelFor(ctx, s.workers, o, func() struct{} { return struct{}{} }, func(_ struct{}, m int) error {
			gemm(false, false, o2, v, v2, 1, tau, v2, g.ovvvT[m*v*v2:], v, 0, Z[m*o2*v:], v)
			return nil
		})
		if err != nil {
			return nil, nil, fmt.Errorf("hf: ccsd: %w", err)
		}
		for i := range o {
			for j := range o {
				for a := range v {
					for m := range o {
						z := Z[(m*o2+j*o+i)*v+a]
						if z == 0 {
							continue
						}
						row := P[at(i, j, a, 0) : at(i, j, a, 0)+v]
						tm := t1[m*v : m*v+v]
						for b := range v {
							row[b] -= z * tm[b]
						}
					}
				}
			}
		}
	}
	// Ring terms.
	Wab := make([]float64, ov*ov) // [(m e)][(b j)]
	Wt := make([]float64, ov*ov)  // [(m e)][(b j)] = W̃_mbje
	{
		// (me|jb) + Σ_f (me|bf) t_jf.
		for m := range o {
			for e := range v {
				for j := range o {
					for b := range v {
						Wab[(m*v+e)*ov+b*o+j] = ovovAt(m, e, j, b)
					}
				}
			}
		}
		gemm(false, true, ov*v, o, v, 1, g.ovvv, v, t1, v, 1, Wab, o)
		// − Σ_n t_nb [(nj|me) + Σ_f (me|nf) t_jf].
		G := make([]float64, ov*o*o) // [(m e)][n][j]
		gemm(false, true, ov*o, o, v, 1, g.ovov, v, t1, v, 0, G, o)
		for m := range o {
			for e := range v {
				for n := range o {
					for j := range o {
						G[((m*v+e)*o+n)*o+j] += g.ooov[((n*o+j)*o+m)*v+e]
					}
				}
				gemm(true, false, v, o, o, -1, t1, v, G[(m*v+e)*o*o:], o, 1, Wab[(m*v+e)*ov:], o)
			}
		}
		// ½ Σ_nf [L(me,nf) T_nj^fb − (me|nf) T_nj^bf].
		A1 := make([]float64, ov*ov) // [(n f)][(b j)] = T_nj^fb
		B1 := make([]float64, ov*ov) // [(n f)][(b j)] = T_nj^bf
		Kd := make([]float64, ov*ov) // (me|nf)
		for n := range o {
			for f := range v {
				for b := range v {
					for j := range o {
						A1[(n*v+f)*ov+b*o+j] = T[at(n, j, f, b)]
						B1[(n*v+f)*ov+b*o+j] = T[at(n, j, b, f)]
					}
				}
			}
		}
		copy(Kd, g.ovov)
		gemm(false, false, ov, ov, ov, 0.5, L, ov, A1, ov, 1, Wab, ov)
		gemm(false, false, ov, ov, ov, -0.5, Kd, ov, B1, ov, 1, Wab, ov)

		// W̃: (mj|be) + Σ_f t_jf (mf|be).
		for m := range o {
			for e := range v {
				for j := range o {
					for b := range v {
						Wt[(m*v+e)*ov+b*o+j] = g.oovv[((m*o+j)*v+b)*v+e]
					}
				}
			}
		}
		Q := make([]float64, v2*o) // per m: [(b e)][j] = Σ_f (mf|be) t_jf
		for m := range o {
			gemm(true, true, v2, o, v, 1, g.ovvv[m*v*v2:], v2, t1, v, 0, Q, o)
			for b := range v {
				for e := range v {
					for j := range o {
						Wt[(m*v+e)*ov+b*o+j] += Q[(b*v+e)*o+j]
					}
				}
			}
		}
		// − Σ_n t_nb [(mj|ne) + Σ_f t_jf (mf|ne)]; (mf|ne) = (ne|mf).
		G2p := make([]float64, ov*o*o) // [n][e][m][j] = Σ_f (ne|mf) t_jf
		gemm(false, true, ov*o, o, v, 1, g.ovov, v, t1, v, 0, G2p, o)
		G2 := make([]float64, o*o) // per (m e): [n][j]
		for m := range o {
			for e := range v {
				for n := range o {
					for j := range o {
						G2[n*o+j] = g.ooov[((m*o+j)*o+n)*v+e] + G2p[((n*v+e)*o+m)*o+j]
					}
				}
				gemm(true, false, v, o, o, -1, t1, v, G2, o, 1, Wt[(m*v+e)*ov:], o)
			}
		}
		// − ½ Σ_nf (mf|ne) T_nj^bf.
		gemm(false, false, ov, ov, ov, -0.5, Kx, ov, B1, ov, 1, Wt, ov)
	}
	{
		R1 := make([]float64, ov*ov) // [(i a)][(b j)]
		gemm(false, false, ov, ov, ov, 1, U, ov, Wab, ov, 0, R1, ov)
		gemm(false, false, ov, ov, ov, -1, Tx, ov, Wt, ov, 1, R1, ov)
		R2 := make([]float64, ov*ov) // [(j a)][(b i)]
		gemm(false, false, ov, ov, ov, 1, Ty, ov, Wt, ov, 0, R2, ov)
		for i := range o {
			for j := range o {
				for a := range v {
					for b := range v {
						P[at(i, j, a, b)] += R1[(i*v+a)*ov+b*o+j] - R2[(j*v+a)*ov+b*o+i]
					}
				}
			}
		}
	}
	{
		// − Σ_me t_ie t_ma (me|bj) − Σ_me t_je t_ma (mi|be).
		P1 := make([]float64, o*o*ov) // [m][i][(j b)] = Σ_e t_ie (me|jb)
		for m := range o {
			gemm(false, false, o, ov, v, 1, t1, v, g.ovov[m*v*ov:], ov, 0, P1[m*o*ov:], ov)
		}
		P2 := make([]float64, o*o*v*o) // [(m i b)][j] = Σ_e (mi|be) t_je
		gemm(false, true, o*o*v, o, v, 1, g.oovv, v, t1, v, 0, P2, o)
		for i := range o {
			for j := range o {
				for a := range v {
					for b := range v {
						var x float64
						for m := range o {
							x += t1[m*v+a] * (P1[(m*o+i)*ov+j*v+b] + P2[((m*o+i)*v+b)*o+j])
						}
						P[at(i, j, a, b)] -= x
					}
				}
			}
		}
	}

	t1n = make([]float64, ov)
	for i := range o {
		for a := range v {
			t1n[i*v+a] = r1[i*v+a] / (g.eo[i] - g.ev[a])
		}
	}
	t2n = make([]float64, len(T))
	for i := range o {
		for j := range o {
			for a := range v {
				for b := range v {
					r := S[at(i, j, a, b)] + P[at(i, j, a, b)] + P[at(j, i, b, a)]
					t2n[at(i, j, a, b)] = r / (g.eo[i] + g.eo[j] - g.ev[a] - g.ev[b])
				}
			}
		}
	}
	return t1n, t2n, nil
}

// ccDIIS extrapolates amplitude vectors: it keeps the last size vectors
// x_k with their errors e_k (the change the update made) and returns
// Σ c_k x_k with Σ c_k = 1 minimising |Σ c_k e_k|² (Pulay's DIIS).
type ccDIIS struct {
	size int
	xs   [][]float64
	es   [][]float64
}

func newCCDIIS(size int) *ccDIIS { return &ccDIIS{size: size} }

func (d *ccDIIS) push(x, e []float64) {
	if len(d.xs) == d.size {
		x0, e0 := d.xs[0], d.es[0]
		d.xs, d.es = d.xs[1:], d.es[1:]
		copy(x0, x)
		copy(e0, e)
		d.xs, d.es = append(d.xs, x0), append(d.es, e0)
		return
	}
	d.xs = append(d.xs, append([]float64(nil), x...))
	d.es = append(d.es, append([]float64(nil), e...))
}

// extrapolate overwrites out with the DIIS combination (out unchanged
// with fewer than two vectors or an ill-conditioned system).
func (d *ccDIIS) extrapolate(out []float64) {
	coef := make([]float64, len(d.xs))
	for start := 0; len(d.xs)-start >= 2; start++ {
		if !pulayWeights(d.es[start:], coef) {
			continue
		}
		clear(out)
		for i, x := range d.xs[start:] {
			c := coef[i]
			for p, val := range x {
				out[p] += c * val
			}
		}
		return
	}
}
