package integral

import (
	"context"
	"fmt"
	"math"
	"sync"
	"sync/atomic"

	"gonum.org/v1/gonum/mat"
)

// Nuclear-coordinate derivatives of the two-electron integrals, contracted
// at once with the Hartree–Fock two-particle density.
//
// As for the one-electron integrals, ∂/∂A_x of a Gaussian on A is
// 2α·(the Gaussian with a_x + 1) − a_x·(the Gaussian with a_x − 1). The
// derivative quartets for the centres of the bra pair and of the first
// ket shell are therefore ordinary quartets over "shifted" shells — the
// same exponents, angular momentum l ± 1 and, for l + 1, coefficients
// multiplied by 2α — computed with the Head-Gordon–Pople code of eri.go on
// raw Cartesian components. The four positions of a quartet are grouped
// by atom; the costliest group follows from translational invariance
// (the contributions of the groups sum to zero), so quartets whose four
// shells sit on one atom contribute nothing and those over two atoms need
// the shifts of one group only. The two-particle density is built in
// the finished basis (spherical or scaled Cartesian) and transformed back
// to raw Cartesian components, so the derivative quartets never need the
// spherical transformation.
//
// Cost: shell quartets are screened by the Schwarz bound times the
// largest two-particle density they meet, primitive quartets inside them
// by their prefactor times the largest exponent weight times Σ|Γ|
// (derivWork.primCut); the recurrence is raised on a side only when that
// side has a position to differentiate (the skipped group is chosen to
// drop a whole side where it can); (ss|ss) and (ps|ss) quartets, about
// half of all primitive quartets in a valence basis, take closed forms
// (ssssGrad, psssGrad).
//
// References:
//   - S. Obara, A. Saika, J. Chem. Phys. 84, 3963 (1986),
//     doi:10.1063/1.450106 (derivatives by shifted angular momenta).
//   - M. Head-Gordon, J. A. Pople, J. Chem. Phys. 89, 5777 (1988),
//     doi:10.1063/1.455553.
//   - J. A. Pople, R. Krishnan, H. B. Schlegel, J. S. Binkley, Int. J.
//     Quantum Chem. Symp. 13, 225 (1979), doi:10.1002/qua.560160825
//     (from memory).

// TwoElectronGradient returns, for each of nAtoms atoms (Shell.Atom),
//
//	g[A] = ½ Σ_μνλσ Γ_μνλσ ∂(μν|λσ)/∂A,  Γ_μνλσ = D_μν D_λσ − Σ_s D^s_μλ D^s_νσ
//
// with D = D^α + D^β (hartree/bohr): the two-electron part of the RHF or
// UHF gradient for spin densities da and db (no factor 2; for RHF pass the
// α density twice). Shell quartets whose Schwarz bound times the largest
// two-particle density element they meet is below threshold (hartree; 0
// means 1e-12) are skipped. The work is spread over workers goroutines
// (≤ 0: runtime.NumCPU()) by bra shell pair, each with its own
// accumulator; the call returns when all have exited, with ctx.Err()
// wrapped if the context ended.
func TwoElectronGradient(ctx context.Context, shells []Shell, norm CartNorm, workers int, da, db *mat.SymDense, nAtoms int, threshold float64) ([][3]float64, error) {
	return twoElectronGradient(ctx, shells, norm, workers, da, db, nAtoms, threshold, false)
}

// primFraction is the primitive-quartet threshold of the two-electron
// gradient relative to the shell-quartet threshold.
const primFraction = 1e-2

// twoElectronGradient is TwoElectronGradient with the choice of the
// shifted-class code: the one-pass recurrence, or separate quartets
// (separate, for tests).
func twoElectronGradient(ctx context.Context, shells []Shell, norm CartNorm, workers int, da, db *mat.SymDense, nAtoms int, threshold float64, separate bool) ([][3]float64, error) {
	if threshold < 0 || math.IsNaN(threshold) {
		return nil, fmt.Errorf("integral: two-electron gradient: threshold %v, want ≥ 0", threshold)
	}
	if threshold == 0 {
		threshold = 1e-12
	}
	n := NumFunctions(shells)
	for _, m := range []*mat.SymDense{da, db} {
		if m == nil || m.SymmetricDim() != n {
			return nil, fmt.Errorf("integral: two-electron gradient: densities must be %d×%d", n, n)
		}
	}
	for i, s := range shells {
		if s.Atom < 0 || s.Atom >= nAtoms {
			return nil, fmt.Errorf("integral: two-electron gradient: shell %d sits on atom %d, want 0..%d", i, s.Atom, nAtoms-1)
		}
	}
	workers = ResolveWorkers(workers)
	eb, err := newERIBasis(ctx, shells, norm, workers, groupNone)
	if err != nil {
		return nil, err
	}
	g := make([][3]float64, nAtoms)
	if n == 0 {
		return g, nil
	}
	dg := newDerivBasis(eb, shells)
	dg.separate = separate
	// A primitive quartet is dropped at a hundredth of the shell-quartet
	// threshold: the many dropped ones (a quarter of those in benzene/
	// 6-31G*, mostly tight core primitives on different atoms) then add
	// up to well below the threshold's own scale (measured in
	// TestTwoElectronGradient_PrimitiveScreening).
	dg.primThreshold = threshold * primFraction
	Da, Db := denseCopy(da, n), denseCopy(db, n)
	Dt := make([]float64, n*n)
	for i := range Dt {
		Dt[i] = Da[i] + Db[i]
	}
	// Largest |D| per shell block, total and per spin.
	ns := len(eb.ps)
	mt, msp := make([]float64, ns*ns), make([]float64, ns*ns)
	for a := range ns {
		for b := range ns {
			sa, sb := &eb.ps[a], &eb.ps[b]
			var x, y float64
			for i := sa.off; i < sa.off+sa.nfunc; i++ {
				for j := sb.off; j < sb.off+sb.nfunc; j++ {
					x = max(x, math.Abs(Dt[i*n+j]))
					y = max(y, math.Abs(Da[i*n+j]), math.Abs(Db[i*n+j]))
				}
			}
			mt[a*ns+b], msp[a*ns+b] = x, y
		}
	}
	var mu sync.Mutex
	var next atomic.Int64
	np := len(eb.pairs)
	next.Store(int64(np))
	var wg sync.WaitGroup
	for range min(workers, np) {
		wg.Go(func() {
			w := newDerivWork(eb.maxl)
			acc := make([][3]float64, nAtoms)
			for ctx.Err() == nil {
				t := int(next.Add(-1))
				if t < 0 {
					break
				}
				P := eb.order[len(eb.order)-1-t]
				bp := &eb.pairs[P]
				for Q := 0; Q <= P; Q++ {
					kp := &eb.pairs[Q]
					a, b, c, d := bp.s1, bp.s2, kp.s1, kp.s2
					A, B, C, D := dg.atom[a], dg.atom[b], dg.atom[c], dg.atom[d]
					if A == B && A == C && A == D {
						continue
					}
					bound := 4*mt[a*ns+b]*mt[c*ns+d] + 2*(msp[a*ns+c]*msp[b*ns+d]+msp[a*ns+d]*msp[b*ns+c])
					if bp.schwarz*kp.schwarz*bound < threshold {
						continue
					}
					f := 1.0
					if bp.same {
						f *= 0.5
					}
					if kp.same {
						f *= 0.5
					}
					if P == Q {
						f *= 0.5
					}
					gq := w.quartetGrad(dg, P, Q, f, n, Dt, Da, Db)
					for k, at := range [4]int{A, B, C, D} {
						for x := range 3 {
							acc[at][x] += gq[k][x]
						}
					}
				}
			}
			mu.Lock()
			for i := range acc {
				for x := range 3 {
					g[i][x] += acc[i][x]
				}
			}
			mu.Unlock()
		})
	}
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return nil, fmt.Errorf("integral: two-electron gradient: %w", err)
	}
	return g, nil
}

// derivBasis holds, for every shell pair of an eriBasis, the pairs over
// raw Cartesian and shifted shells the derivative quartets use.
type derivBasis struct {
	eb *eriBasis
	// separate computes shifted classes as separate quartets instead of
	// the one-pass recurrence (tests only).
	separate bool
	// primThreshold (hartree/bohr) screens primitive quartets inside a
	// shell quartet (see derivWork.primCut); 0 turns it off.
	primThreshold float64
	atom          []int       // atom of each shell
	raw           []shellPair // pair P over raw Cartesian components
	p1            []shellPair // first shell l+1, coefficients ×2α
	m1            []shellPair // first shell l−1 (unused when l = 0)
	p2            []shellPair // second shell l+1, coefficients ×2β
	m2            []shellPair // second shell l−1 (unused when l = 0)
	up            [][][3]int  // up[l][c][x]: index of component c + 1_x in shell l+1
	down          [][][3]int  // down[l][c][x]: index of c − 1_x in shell l−1 (−1 if none)
	power         [][][3]int  // power[l][c][x]: exponent of x in component c
}

func newDerivBasis(eb *eriBasis, shells []Shell) *derivBasis {
	ns := len(eb.ps)
	dg := &derivBasis{eb: eb, atom: make([]int, ns)}
	for i, s := range shells {
		dg.atom[i] = s.Atom
	}
	raw := make([]prepShell, ns)
	plus := make([]prepShell, ns)
	minus := make([]prepShell, ns)
	for i := range eb.ps {
		s := &eb.ps[i]
		raw[i] = prepShell{l: s.l, center: s.center, exps: s.exps, coefs: s.coefs, nfunc: s.ncart, ncart: s.ncart, off: s.off}
		pc := make([]float64, len(s.coefs))
		for k, c := range s.coefs {
			pc[k] = 2 * s.exps[k] * c
		}
		plus[i] = prepShell{l: s.l + 1, center: s.center, exps: s.exps, coefs: pc, nfunc: ncart(s.l + 1), ncart: ncart(s.l + 1)}
		if s.l > 0 {
			minus[i] = prepShell{l: s.l - 1, center: s.center, exps: s.exps, coefs: s.coefs, nfunc: ncart(s.l - 1), ncart: ncart(s.l - 1)}
		}
	}
	np := len(eb.pairs)
	dg.raw = make([]shellPair, np)
	dg.p1 = make([]shellPair, np)
	dg.m1 = make([]shellPair, np)
	dg.p2 = make([]shellPair, np)
	dg.m2 = make([]shellPair, np)
	for P := range eb.pairs {
		sp := &eb.pairs[P]
		a, b := sp.s1, sp.s2
		dg.raw[P] = rawPair(sp, &raw[a], &raw[b])
		dg.p1[P] = rawPair(sp, &plus[a], &raw[b])
		dg.p2[P] = rawPair(sp, &raw[a], &plus[b])
		if sp.l1 > 0 {
			dg.m1[P] = rawPair(sp, &minus[a], &raw[b])
		}
		if sp.l2 > 0 {
			dg.m2[P] = rawPair(sp, &raw[a], &minus[b])
		}
	}
	lmax := eb.maxl
	dg.up = make([][][3]int, lmax+1)
	dg.down = make([][][3]int, lmax+1)
	dg.power = make([][][3]int, lmax+1)
	for l := 0; l <= lmax; l++ {
		for _, e := range cartExps(l) {
			var u, d, p [3]int
			for x := range 3 {
				f := e
				f[x]++
				u[x] = cartIndex(f[0], f[1], f[2])
				d[x] = -1
				if e[x] > 0 {
					f[x] -= 2
					d[x] = cartIndex(f[0], f[1], f[2])
				}
				p[x] = e[x]
			}
			dg.up[l] = append(dg.up[l], u)
			dg.down[l] = append(dg.down[l], d)
			dg.power[l] = append(dg.power[l], p)
		}
	}
	return dg
}

// rawPair is sp with its shells replaced by s1 and s2 (in that order, no
// reordering by angular momentum), whose primitive products are
// recomputed from the shifted coefficients. The screened primitive set is
// the one of sp, so the derivative stays consistent with the integrals.
func rawPair(sp *shellPair, s1, s2 *prepShell) shellPair {
	out := shellPair{s1: sp.s1, s2: sp.s2, l1: s1.l, l2: s2.l, AB: sp.AB, same: sp.same, nc1: 1, nc2: 1,
		n1: s1.nfunc, n2: s2.nfunc, sh1: s1, sh2: s2, schwarz: sp.schwarz}
	pref := math.Sqrt2 * math.Pow(math.Pi, 1.25)
	ab2 := sp.AB[0]*sp.AB[0] + sp.AB[1]*sp.AB[1] + sp.AB[2]*sp.AB[2]
	out.prims = make([]primPair, 0, len(sp.prims))
	for i, alpha := range s1.exps {
		for j, beta := range s2.exps {
			p := alpha + beta
			k := math.Exp(-alpha * beta / p * ab2)
			if k < primScreen {
				continue
			}
			pp := primPair{p: p, inv2p: 0.5 / p, a: alpha, U: pref * s1.coefs[i] * s2.coefs[j] * k / p, bound: math.Inf(1)}
			for d := range 3 {
				pp.P[d] = (alpha*s1.center[d] + beta*s2.center[d]) / p
				pp.PA[d] = pp.P[d] - s1.center[d]
			}
			out.prims = append(out.prims, pp)
		}
	}
	return out
}

// derivWork is the per-goroutine scratch of TwoElectronGradient.
type derivWork struct {
	w            *eriWork
	gam, gc, tmp []float64
	bp1, bm1     []float64
	// One-pass scratch (deriv2vrr.go): five contractions, per-bra-primitive
	// sums, the class window and the class blocks.
	cw         [5][]float64
	s0, sc, sd []float64
	win        []float64
	cls        [4][2][]float64
	tcls       [4][2][]float64 // transposed classes
	// primCut screens primitive quartets: one whose prefactor times
	// the largest exponent weight is below primCut is skipped (set per
	// shell quartet from the threshold and its two-particle density; 0
	// keeps every primitive quartet).
	primCut float64
}

func newDerivWork(maxl int) *derivWork {
	nc, ncp := ncart(maxl), ncart(maxl+1)
	big := ncp * nc * nc * nc
	mk := func() []float64 { return make([]float64, big) }
	dw := &derivWork{w: newERIWork(maxl + 1), gam: mk(), gc: mk(), tmp: mk(), bp1: mk(), bm1: mk()}
	n := ncum(2*maxl+1) * ncum(2*maxl+1)
	for k := range dw.cw {
		dw.cw[k] = make([]float64, n)
	}
	dw.s0, dw.sc, dw.sd, dw.win = make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	for k := range dw.cls {
		for j := range 2 {
			dw.cls[k][j] = mk()
			dw.tcls[k][j] = mk()
		}
	}
	return dw
}

// quartetGrad returns the contributions of shell quartet (P|Q) to the
// gradient on the centres of the shells P.s1, P.s2, Q.s1 and Q.s2, with
// the quartet weight f of jkBlock. The four positions are grouped by
// atom; the group whose shifted quartets would cost most is not computed
// but follows from translational invariance (the contributions sum to
// zero), so a quartet over two atoms costs one group's shifts.
func (dw *derivWork) quartetGrad(dg *derivBasis, P, Q int, f float64, n int, Dt, Da, Db []float64) (g [4][3]float64) {
	eb := dg.eb
	bp, kp := &eb.pairs[P], &eb.pairs[Q]
	n1, n2, n3, n4 := bp.n1, bp.n2, kp.n1, kp.n2
	// Two-particle density of the block in the finished basis, including
	// the factor ½ of the energy and the 8 permutational images:
	// Γ = f (4 D_ij D_kl − 2 Σ_s (D^s_ik D^s_jl + D^s_il D^s_jk)).
	gam := dw.gam[:n1*n2*n3*n4]
	f4, f2 := 4*f, 2*f
	for ii, i := range bp.fi {
		for jj, j := range bp.fj {
			dij := f4 * Dt[i*n+j]
			row := gam[(ii*n2+jj)*n3*n4 : (ii*n2+jj+1)*n3*n4]
			for kk, k := range kp.fi {
				aik, ajk, bik, bjk := Da[i*n+k], Da[j*n+k], Db[i*n+k], Db[j*n+k]
				for ll, l := range kp.fj {
					row[kk*n4+ll] = dij*Dt[k*n+l] - f2*(aik*Da[j*n+l]+ajk*Da[i*n+l]+bik*Db[j*n+l]+bjk*Db[i*n+l])
				}
			}
		}
	}
	// Back to raw Cartesian components, index by index.
	s := [4]*prepShell{bp.sh1, bp.sh2, kp.sh1, kp.sh2}
	dims := [4]int{n1, n2, n3, n4}
	src := gam
	for idx := range 4 {
		if !s[idx].transform {
			continue
		}
		outer, inner := 1, 1
		for k := range idx {
			outer *= dims[k]
		}
		for k := idx + 1; k < 4; k++ {
			inner *= dims[k]
		}
		dst := dw.gc
		if &src[0] == &dw.gc[0] {
			dst = dw.tmp
		}
		dims[idx] = s[idx].ncart
		dst = dst[:outer*dims[idx]*inner]
		backIndex(s[idx], outer, inner, src, dst)
		src = dst
	}
	gc := src
	// Primitive screening: a primitive quartet with prefactor U_P U_Q /
	// √(p+q) (its (ss|ss) value at T = 0, which bounds the Boys factors)
	// and exponent weights up to w changes this quartet's contribution by
	// about U_P U_Q/√(p+q) · w · Σ|Γ|; those below primThreshold are
	// dropped (density-weighted, like the shell-quartet screen).
	dw.primCut = 0
	if dg.primThreshold > 0 {
		var gsum float64
		for _, v := range gc {
			gsum += math.Abs(v)
		}
		if gsum > 0 {
			dw.primCut = dg.primThreshold / gsum
		}
	}
	na, nb, nc, nd := dims[0], dims[1], dims[2], dims[3]
	ls := [4]int{bp.l1, bp.l2, kp.l1, kp.l2}
	at := [4]int{dg.atom[bp.s1], dg.atom[bp.s2], dg.atom[kp.s1], dg.atom[kp.s2]}
	// Group positions by atom; cost of a position's shifts ~ components
	// of l+1 (common practice estimate).
	var groupCost [4]int
	group := [4]int{}
	for k := range 4 {
		group[k] = k
		for j := range k {
			if at[j] == at[k] {
				group[k] = group[j]
				break
			}
		}
		groupCost[group[k]] += ncart(ls[k] + 1)
	}
	skip := group[0]
	for k := range 4 {
		if group[k] == k && groupCost[k] > groupCost[skip] {
			skip = k
		}
	}
	// A group holding both shells of a pair is the better one to skip:
	// the one-pass recurrence then never raises that side at all.
	braG, ketG := group[0] == group[1], group[2] == group[3]
	switch {
	case braG && ketG:
		skip = group[0]
		if groupCost[group[2]] > groupCost[group[0]] {
			skip = group[2]
		}
	case braG:
		skip = group[0]
	case ketG:
		skip = group[2]
	}
	var need [4]bool
	for k := range 4 {
		need[k] = group[k] != skip
	}
	if !dg.separate && (ls == [4]int{} || ls == [4]int{1, 0, 0, 0} || ls == [4]int{0, 0, 1, 0}) {
		switch ls {
		case [4]int{}:
			g = dw.ssssGrad(bp, kp, gc[0], need)
		case [4]int{1, 0, 0, 0}:
			g = dw.psssGrad(bp, kp, gc[:3], need)
		default: // (ss|ps): the same with the electrons exchanged
			h := dw.psssGrad(kp, bp, gc[:3], [4]bool{need[2], need[3], need[0], need[1]})
			g = [4][3]float64{h[2], h[3], h[0], h[1]}
		}
		var total [3]float64
		for k := range 4 {
			for x := range 3 {
				total[x] += g[k][x]
			}
		}
		for x := range 3 {
			g[skip][x] = -total[x]
		}
		return g
	}
	var cl derivClasses
	if dg.separate {
		cl = dw.shiftedSeparately(dg, P, Q, need)
	} else {
		cl = dw.quartetShifted(bp, kp, need)
	}
	var total [3]float64
	for k := range 4 {
		if !need[k] {
			continue
		}
		var outer, inner int
		switch k {
		case 0:
			outer, inner = 1, nb*nc*nd
		case 1:
			outer, inner = na, nc*nd
		case 2:
			outer, inner = na*nb, nd
		case 3:
			outer, inner = na*nb*nc, 1
		}
		g[k] = contractShift(gc, cl[k][0], cl[k][1], outer, dims[k], inner, ls[k], dg)
		for x := range 3 {
			total[x] += g[k][x]
		}
	}
	for x := range 3 {
		g[skip][x] = -total[x]
	}
	return g
}

// contractShift returns Σ Γ[o][c][i] (plus[o][c+1_x][i] − c_x minus[o][c−1_x][i])
// for x = 0, 1, 2, where c runs over the ncomp components of angular
// momentum l and the shifted blocks have ncart(l±1) in that position.
func contractShift(gam, plus, minus []float64, outer, ncomp, inner, l int, dg *derivBasis) (g [3]float64) {
	npl := ncart(l + 1)
	nmi := 0
	if l > 0 {
		nmi = ncart(l - 1)
	}
	up, down, pw := dg.up[l], dg.down[l], dg.power[l]
	for o := range outer {
		for c := range ncomp {
			gr := gam[(o*ncomp+c)*inner : (o*ncomp+c+1)*inner]
			for x := range 3 {
				pr := plus[(o*npl+up[c][x])*inner : (o*npl+up[c][x]+1)*inner]
				var s float64
				for k, v := range gr {
					s += v * pr[k]
				}
				if dn := down[c][x]; dn >= 0 {
					mr := minus[(o*nmi+dn)*inner : (o*nmi+dn+1)*inner]
					var m float64
					for k, v := range gr {
						m += v * mr[k]
					}
					s -= float64(pw[c][x]) * m
				}
				g[x] += s
			}
		}
	}
	return g
}

// shiftedSeparately computes the shifted classes as separate quartets
// over shifted shells (the first implementation, kept as an independent
// check of the one-pass recurrence; derivBasis.separate selects it).
func (dw *derivWork) shiftedSeparately(dg *derivBasis, P, Q int, need [4]bool) derivClasses {
	w := dw.w
	rawP, rawQ := &dg.raw[P], &dg.raw[Q]
	bp, kp := &dg.eb.pairs[P], &dg.eb.pairs[Q]
	ls := [4]int{bp.l1, bp.l2, kp.l1, kp.l2}
	var out derivClasses
	keep := func(k, j int, blk []float64) {
		dst := dw.cls[k][j][:len(blk)]
		copy(dst, blk)
		out[k][j] = dst
	}
	for k := range 4 {
		if !need[k] {
			continue
		}
		switch k {
		case 0:
			keep(k, 0, w.quartet(&dg.p1[P], rawQ))
			if ls[k] > 0 {
				keep(k, 1, w.quartet(&dg.m1[P], rawQ))
			}
		case 1:
			keep(k, 0, w.quartet(&dg.p2[P], rawQ))
			if ls[k] > 0 {
				keep(k, 1, w.quartet(&dg.m2[P], rawQ))
			}
		case 2:
			keep(k, 0, w.quartet(rawP, &dg.p1[Q]))
			if ls[k] > 0 {
				keep(k, 1, w.quartet(rawP, &dg.m1[Q]))
			}
		case 3:
			keep(k, 0, w.quartet(rawP, &dg.p2[Q]))
			if ls[k] > 0 {
				keep(k, 1, w.quartet(rawP, &dg.m2[Q]))
			}
		}
	}
	return out
}
