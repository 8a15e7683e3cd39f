package integral

import "math"

// Flat Cartesian index tables for all angular momenta 0..flatMaxL: the
// components of l occupy flat indices ncum(l−1) … ncum(l)−1 in shell
// order. They are read-only tables computed at package initialisation.
const flatMaxL = 2*MaxL + 1

type flatComp struct {
	n    [3]int // exponents
	l    int
	dir  int    // direction used to build this component from a lower one
	down [3]int // flat index of c − 1_i, or −1
	up   [3]int // flat index of c + 1_i, or −1 beyond flatMaxL
	sub  int    // index within its shell (cartIndex)
}

var flatTab = buildFlat()

// crossTab[i] lists, in increasing flat index, the components e with
// e_i > 0 together with e − 1_i and e_i, for the cross term of the
// electron-2 recurrence; crossStart[i][f] is the first list position
// with index ≥ f. Read-only tables computed at initialisation.
type crossEntry struct {
	e, down int32
	n       float64
}

var crossTab, crossStart = buildCross()

func buildCross() (tab [3][]crossEntry, start [3][]int32) {
	nf := len(flatTab)
	for i := range 3 {
		start[i] = make([]int32, nf+1)
		for f := range nf {
			start[i][f] = int32(len(tab[i]))
			if c := flatTab[f]; c.n[i] > 0 {
				tab[i] = append(tab[i], crossEntry{int32(f), int32(c.down[i]), float64(c.n[i])})
			}
		}
		start[i][nf] = int32(len(tab[i]))
	}
	return tab, start
}

func flatIndex(lx, ly, lz int) int {
	return ncum(lx+ly+lz-1) + cartIndex(lx, ly, lz)
}

func buildFlat() []flatComp {
	out := make([]flatComp, ncum(flatMaxL))
	for l := 0; l <= flatMaxL; l++ {
		for _, e := range cartExps(l) {
			fi := flatIndex(e[0], e[1], e[2])
			c := flatComp{n: e, l: l, dir: -1, sub: cartIndex(e[0], e[1], e[2])}
			for i := range 3 {
				c.down[i], c.up[i] = -1, -1
				if e[i] > 0 {
					d := e
					d[i]--
					c.down[i] = flatIndex(d[0], d[1], d[2])
					if c.dir < 0 {
						c.dir = i
					}
				}
				if l < flatMaxL {
					u := e
					u[i]++
					c.up[i] = flatIndex(u[0], u[1], u[2])
				}
			}
			out[fi] = c
		}
	}
	return out
}

// primPair is a screened primitive pair of a shell pair.
type primPair struct {
	p, inv2p float64
	a        float64 // exponent of the pair's first shell (the second is p − a)
	P, PA    [3]float64
	// U is √2 π^{5/4} c_a c_b exp(−μ|AB|²) / p; for a pair of shell
	// groups with member combinations (shellPair.cw) the coefficients
	// are left out of U and applied as the weights cw[c0:c1].
	U      float64
	c0, c1 int32
	// bound bounds the pair's contribution: one primitive quartet adds at
	// most bound(bra)·bound(ket) to any integral of the block
	// (setPrimBounds; +Inf when not computed).
	bound float64
}

// shellPair holds what the two-electron code needs for one pair of shells.
// The first shell has the higher angular momentum (HRR builds on it);
// fi/fj list the function indices of its output rows/columns.
type shellPair struct {
	s1, s2   int // shell (or shell group) indices in pair order
	l1, l2   int
	nc1, nc2 int         // members of the two shell groups (1 for single shells)
	g1, g2   *shellGroup // the groups, when either has several members
	// rng[2k], rng[2k+1] bound the Cartesian window of member combination
	// k (components of l_a … l_a+l_b, counted from the group's lowest
	// member's l) that its integrals need; nil with one combination.
	rng []int32
	// lmin1, lmin2 are the lowest angular momenta of the groups' members
	// (l1, l2 for single shells).
	lmin1, lmin2 int
	cw           []comboW   // member-combination weights of the primitive pairs (nil: folded into U)
	AB           [3]float64 // centre1 − centre2
	prims        []primPair
	same         bool // s1 == s2
	n1, n2       int  // output functions (all members of a group)
	fi, fj       []int
	schwarz      float64 // √max|(ab|ab)|
	// tail[j] is the sum of prims[j:].bound (prims sorted by bound,
	// largest first); nil when the bounds are not computed.
	tail     []float64
	sh1, sh2 *prepShell
}

// primScreen drops primitive pairs whose Gaussian product prefactor
// exp(−μ|AB|²) is below it: their contributions are at least 1e-18
// relative to a normalised function (common practice).
const primScreen = 1e-18

func newShellPair(ps []prepShell, a, b int) shellPair {
	if ps[a].l < ps[b].l {
		a, b = b, a
	}
	sa, sb := &ps[a], &ps[b]
	sp := shellPair{s1: a, s2: b, l1: sa.l, l2: sb.l, same: a == b, nc1: 1, nc2: 1, n1: sa.nfunc, n2: sb.nfunc, sh1: sa, sh2: sb, lmin1: sa.l, lmin2: sb.l}
	for d := range 3 {
		sp.AB[d] = sa.center[d] - sb.center[d]
	}
	ab2 := sp.AB[0]*sp.AB[0] + sp.AB[1]*sp.AB[1] + sp.AB[2]*sp.AB[2]
	pref := math.Sqrt2 * math.Pow(math.Pi, 1.25)
	for i, alpha := range sa.exps {
		for j, beta := range sb.exps {
			p := alpha + beta
			k := math.Exp(-alpha * beta / p * ab2)
			if k < primScreen {
				continue
			}
			pp := primPair{p: p, inv2p: 0.5 / p, a: alpha, U: pref * sa.coefs[i] * sb.coefs[j] * k / p, bound: math.Inf(1)}
			for d := range 3 {
				pp.P[d] = (alpha*sa.center[d] + beta*sb.center[d]) / p
				pp.PA[d] = pp.P[d] - sa.center[d]
			}
			sp.prims = append(sp.prims, pp)
		}
	}
	sp.fi = make([]int, sa.nfunc)
	for i := range sp.fi {
		sp.fi[i] = sa.off + i
	}
	sp.fj = make([]int, sb.nfunc)
	for i := range sp.fj {
		sp.fj[i] = sb.off + i
	}
	return sp
}

// eriWork is the per-goroutine scratch of the two-electron code: nothing
// is allocated per quartet.
type eriWork struct {
	v      []float64 // VRR [m][f][e]
	c      []float64 // contracted [combination][f][e]
	t      []float64 // per bra primitive pair: [ket combination][f][e]
	h1, h2 []float64 // HRR ping-pong
	out    []float64 // final block (fast paths)
	gout   []float64 // final block of a group quartet
	fb     []float64 // Boys values
	base   []float64
	// cut is the primitive screening allowance of the next quartet: the
	// primitive quartets skipped change no integral of the block by more
	// than cut in total (see primsFor). 0 keeps every primitive quartet.
	cut float64
}

func newERIWork(maxl int) *eriWork { return newERIWorkGroups(maxl, 1, 1) }

// newERIWorkGroups is newERIWork for shell groups of up to maxm members
// (maxm² member combinations per pair) and blocks of up to maxBlock
// elements.
func newERIWorkGroups(maxl, maxm, maxBlock int) *eriWork {
	nE := ncum(2 * maxl)
	nc := ncart(maxl)
	h := max(nE*nc*nE, nE*nc*nc*nc, nc*nc*nc*nc, maxBlock)
	return &eriWork{
		v:    make([]float64, (4*maxl+1)*nE*nE),
		c:    make([]float64, maxm*maxm*maxm*maxm*nE*nE),
		t:    make([]float64, maxm*maxm*nE*nE),
		h1:   make([]float64, h),
		h2:   make([]float64, h),
		out:  make([]float64, nc*nc*nc*nc),
		gout: make([]float64, max(maxBlock, 1)),
		fb:   make([]float64, 4*maxl+1),
		base: make([]float64, 4*maxl+1),
	}
}

// quartet computes the finished block (ab|cd) for bra pair bp and ket
// pair kp, row-major [bp.n1][bp.n2][kp.n1][kp.n2], in chemists' notation.
// The returned slice is owned by w and valid until the next call.
//
// Algorithm: Head-Gordon–Pople. The Obara–Saika vertical recurrences
// (Obara & Saika 1986, eqs. 39 and the electron-transfer-free form with
// the cross term e_i/(2(p+q))) build [e0|f0]^(0) for la ≤ e ≤ la+lb and
// lc ≤ f ≤ lc+ld on every primitive quartet; after contraction the
// horizontal recurrence (a,b+1_i| = (a+1_i,b| + AB_i (a,b| (Head-Gordon &
// Pople 1988, eq. 18) is applied on the ket and then on the bra.
func (w *eriWork) quartet(bp, kp *shellPair) []float64 {
	la, lb, lc, ld := bp.l1, bp.l2, kp.l1, kp.l2
	Lab, Lcd := la+lb, lc+ld
	L := Lab + Lcd
	if Lab < Lcd {
		// The electron-1 recurrence is the cheaper one: put the higher
		// pair in the bra and transpose (ab|cd) = (cd|ab).
		blk := w.quartet(kp, bp)
		nab, ncd := bp.n1*bp.n2, kp.n1*kp.n2
		dst := w.h1
		if &blk[0] == &w.h1[0] {
			dst = w.h2
		}
		dst = dst[:nab*ncd]
		for cd := range ncd {
			row := blk[cd*nab : (cd+1)*nab]
			for ab, v := range row {
				dst[ab*ncd+cd] = v
			}
		}
		return dst
	}
	// The fast paths assume the higher angular momentum first in each
	// pair, as newShellPair orders them; the shifted pairs of the gradient
	// code may have it second and take the general path.
	grouped := bp.nc1*bp.nc2 > 1 || kp.nc1*kp.nc2 > 1
	switch ordered := bp.l1 >= bp.l2 && kp.l1 >= kp.l2 && !grouped; {
	case ordered && L == 0:
		return w.quartetSSSS(bp, kp)
	case ordered && L == 1:
		return w.quartetL1(bp, kp)
	case ordered && Lab == 1 && Lcd == 1:
		return w.quartetPSPS(bp, kp)
	}
	nE, nF := ncum(Lab), ncum(Lcd)
	if grouped {
		// Members of lower angular momentum need [e0|f0] from their own
		// l on: the recurrences run from the lowest member's.
		la, lc = bp.lmin1, kp.lmin1
	}
	e0, f0 := ncum(la-1), ncum(lc-1)
	nEr, nFr := nE-e0, nF-f0
	nEF := nEr * nFr
	nbc, nkc := bp.nc1*bp.nc2, kp.nc1*kp.nc2
	C := w.c[:nbc*nkc*nEF]
	clear(C)
	acc := C[:nEF] // ungrouped: primitive quartets go straight into C
	if grouped {
		acc = w.t[:nkc*nEF]
	}
	V := w.v
	stM := nF * nE // stride of m
	bud := w.budget(bp)
	for _, pa := range bp.prims {
		kps := kp.primsFor(pa.bound, bud)
		if len(kps) == 0 {
			break // sorted: no later bra primitive pair reaches the budget either
		}
		p := pa.p
		if grouped {
			clear(acc)
		}
		for _, pc := range kps {
			q := pc.p
			inv := 1 / (p + q)
			rho := p * q * inv
			// W − P = −q/(p+q) PQ, W − Q = p/(p+q) PQ
			wp, wq := -q*inv, p*inv
			var PQ, WP, WQ [3]float64
			for d := range 3 {
				PQ[d] = pa.P[d] - pc.P[d]
				WP[d] = wp * PQ[d]
				WQ[d] = wq * PQ[d]
			}
			T := rho * (PQ[0]*PQ[0] + PQ[1]*PQ[1] + PQ[2]*PQ[2])
			pref := pa.U * pc.U * math.Sqrt(inv)
			boys(T, L, w.fb)
			for m := 0; m <= L; m++ {
				V[m*stM] = pref * w.fb[m]
			}
			// Electron 1: [e0|00]^(m), m ≤ L − l_e.
			i2p, rp := pa.inv2p, q*inv
			for e := 1; e < nE; e++ {
				fc := &flatTab[e]
				i := fc.dir
				e1 := fc.down[i]
				e2 := flatTab[e1].down[i]
				ni := float64(fc.n[i] - 1)
				pai, wpi := pa.PA[i], WP[i]
				mmax := L - fc.l
				if e2 < 0 {
					for m := 0; m <= mmax; m++ {
						o := m * stM
						V[o+e] = pai*V[o+e1] + wpi*V[o+stM+e1]
					}
				} else {
					c := ni * i2p
					for m := 0; m <= mmax; m++ {
						o := m * stM
						V[o+e] = pai*V[o+e1] + wpi*V[o+stM+e1] + c*(V[o+e2]-rp*V[o+stM+e2])
					}
				}
			}
			// Electron 2: [e0|f0]^(m), m ≤ Lcd − l_f.
			i2q, rq, i2pq := pc.inv2p, p*inv, 0.5*inv
			for f := 1; f < nF; f++ {
				fc := &flatTab[f]
				i := fc.dir
				f1 := fc.down[i]
				f2 := flatTab[f1].down[i]
				nfi := float64(fc.n[i] - 1)
				qci, wqi := pc.PA[i], WQ[i]
				mmax := Lcd - fc.l
				// Only e ≥ la − (Lcd − l_f) can still reach the target.
				es := ncum(la - (Lcd - fc.l) - 1)
				for m := 0; m <= mmax; m++ {
					o := m * stM
					dst := V[o+f*nE+es : o+f*nE+nE]
					s0 := V[o+f1*nE+es : o+f1*nE+nE]
					s1 := V[o+stM+f1*nE+es : o+stM+f1*nE+nE]
					if f2 >= 0 {
						c := nfi * i2q
						t0 := V[o+f2*nE+es : o+f2*nE+nE]
						t1 := V[o+stM+f2*nE+es : o+stM+f2*nE+nE]
						for k := range dst {
							dst[k] = qci*s0[k] + wqi*s1[k] + c*(t0[k]-rq*t1[k])
						}
					} else {
						for k := range dst {
							dst[k] = qci*s0[k] + wqi*s1[k]
						}
					}
					// cross term e_i/(2(p+q)) [e−1_i 0|f−1_i 0]^(m+1)
					s1f := V[o+stM+f1*nE : o+stM+f1*nE+nE]
					dstf := V[o+f*nE : o+f*nE+nE]
					for _, ce := range crossTab[i][crossStart[i][es]:crossStart[i][nE]] {
						dstf[ce.e] += ce.n * i2pq * s1f[ce.down]
					}
				}
			}
			// Contract [e0|f0]^(0) over the ket primitives (into every
			// ket member combination the pair contributes to).
			if len(kp.cw) == 0 {
				for f := f0; f < nF; f++ {
					src := V[f*nE+e0 : f*nE+nE]
					dst := acc[(f-f0)*nEr : (f-f0+1)*nEr]
					for k, v := range src {
						dst[k] += v
					}
				}
				continue
			}
			for _, cw := range kp.cw[pc.c0:pc.c1] {
				// Only the f window of this ket member combination.
				tk := acc[int(cw.k)*nEF : int(cw.k+1)*nEF]
				for f := f0 + int(kp.rng[2*cw.k]); f < f0+int(kp.rng[2*cw.k+1]); f++ {
					src := V[f*nE+e0 : f*nE+nE]
					dst := tk[(f-f0)*nEr : (f-f0+1)*nEr]
					for k, v := range src {
						dst[k] += cw.w * v
					}
				}
			}
		}
		if !grouped {
			continue
		}
		// Contract over the bra primitives.
		if len(bp.cw) == 0 {
			for k, v := range acc {
				C[k] += v
			}
			continue
		}
		for _, cw := range bp.cw[pa.c0:pa.c1] {
			// Only the e window of this bra member combination, and
			// the f window of every ket one.
			dst := C[int(cw.k)*nkc*nEF : int(cw.k+1)*nkc*nEF]
			elo, ehi := int(bp.rng[2*cw.k]), int(bp.rng[2*cw.k+1])
			for kc := range nkc {
				flo, fhi := 0, nFr
				if len(kp.rng) > 0 {
					flo, fhi = int(kp.rng[2*kc]), int(kp.rng[2*kc+1])
				}
				for fr := flo; fr < fhi; fr++ {
					o := kc*nEF + fr*nEr
					d, a := dst[o+elo:o+ehi], acc[o+elo:o+ehi]
					for k, v := range a {
						d[k] += cw.w * v
					}
				}
			}
		}
	}
	if !grouped {
		return w.finish(w.hrr(C, la, lb, lc, ld, bp.AB, kp.AB), bp, kp)
	}
	return w.finishGroups(C, bp, kp)
}

// finishGroups applies the horizontal recurrence and the finishing step
// to every member combination of a group quartet, contracted in C as
// [bra combination][ket combination][f][e] over l_e from the bra group's
// lowest member and l_f from the ket group's, and assembles the block
// [bra functions][ket functions] with the functions of a group numbered
// member by member.
func (w *eriWork) finishGroups(C []float64, bp, kp *shellPair) []float64 {
	Lab, Lcd := bp.l1+bp.l2, kp.l1+kp.l2
	nE, nF := ncum(Lab), ncum(Lcd)
	e0, f0 := ncum(bp.lmin1-1), ncum(kp.lmin1-1)
	nEr := nE - e0
	nEF := nEr * (nF - f0)
	nkc := kp.nc1 * kp.nc2
	N2, N3, N4 := bp.n2, kp.n1, kp.n2
	out := w.gout[:bp.n1*N2*N3*N4]
	member := func(g *shellGroup, sh *prepShell, m int) (*prepShell, int) {
		if g == nil {
			return sh, 0
		}
		return g.mem[m], g.moff[m]
	}
	for bc := range bp.nc1 * bp.nc2 {
		A, oa := member(bp.g1, bp.sh1, bc/bp.nc2)
		B, ob := member(bp.g2, bp.sh2, bc%bp.nc2)
		for kc := range nkc {
			Cs, oc := member(kp.g1, kp.sh1, kc/kp.nc2)
			D, od := member(kp.g2, kp.sh2, kc%kp.nc2)
			la, lb, lc, ld := A.l, B.l, Cs.l, D.l
			src := C[(bc*nkc+kc)*nEF : (bc*nkc+kc+1)*nEF]
			// The member's window of [e0|f0], in the layout hrr reads.
			me0, mf0 := ncum(la-1), ncum(lc-1)
			mnE, mnF := ncum(la+lb), ncum(lc+ld)
			mnEr := mnE - me0
			sub := w.t[:mnEr*(mnF-mf0)]
			for f := mf0; f < mnF; f++ {
				copy(sub[(f-mf0)*mnEr:(f-mf0+1)*mnEr], src[(f-f0)*nEr+me0-e0:(f-f0)*nEr+mnE-e0])
			}
			// hrr must not read from h1/h2; sub is w.t.
			blk := w.finishShells(w.hrr(sub, la, lb, lc, ld, bp.AB, kp.AB), [4]*prepShell{A, B, Cs, D})
			f1, f2, f3, f4 := A.nfunc, B.nfunc, Cs.nfunc, D.nfunc
			for a := range f1 {
				for b := range f2 {
					row := out[((oa+a)*N2+ob+b)*N3*N4:]
					sb := blk[(a*f2+b)*f3*f4:]
					for c := range f3 {
						copy(row[(oc+c)*N4+od:(oc+c)*N4+od+f4], sb[c*f4:(c+1)*f4])
					}
				}
			}
		}
	}
	return out
}

// budget is the share of w.cut of one bra primitive pair of bp.
func (w *eriWork) budget(bp *shellPair) float64 {
	if w.cut == 0 || len(bp.prims) == 0 {
		return 0
	}
	return w.cut / float64(len(bp.prims))
}

// primsFor returns the leading primitive pairs of the ket pair sp that a
// bra primitive pair of bound b must be combined with: the tail left out
// has b·Σ bound < bud, so the bra primitive's skipped contributions to any
// integral add up to less than bud (Schwarz inequality, setPrimBounds).
// Without bounds (sp.tail nil) or budget it returns them all.
func (sp *shellPair) primsFor(b, bud float64) []primPair {
	j := len(sp.prims)
	if bud == 0 || sp.tail == nil {
		return sp.prims
	}
	for j > 0 && b*sp.tail[j-1] < bud {
		j--
	}
	return sp.prims[:j]
}

// quartetSSSS is the fast path for four s shells.
func (w *eriWork) quartetSSSS(bp, kp *shellPair) []float64 {
	var sum float64
	bud := w.budget(bp)
	for _, pa := range bp.prims {
		p := pa.p
		for _, pc := range kp.primsFor(pa.bound, bud) {
			q := pc.p
			pq := p + q
			rho := p * q / pq
			dx, dy, dz := pa.P[0]-pc.P[0], pa.P[1]-pc.P[1], pa.P[2]-pc.P[2]
			sum += pa.U * pc.U / math.Sqrt(pq) * boys0(rho*(dx*dx+dy*dy+dz*dz))
		}
	}
	w.out[0] = sum
	return w.out[:1]
}

// quartetL1 is the fast path for (ps|ss) and (ss|ps):
// [p_i 0|00] = PA_i θ⁰ + WP_i θ¹ and [00|p_i 0] = QC_i θ⁰ + WQ_i θ¹
// (Obara & Saika 1986).
func (w *eriWork) quartetL1(bp, kp *shellPair) []float64 {
	var s0, s1, s2 float64
	braP := bp.l1 == 1
	bud := w.budget(bp)
	for _, pa := range bp.prims {
		p := pa.p
		for _, pc := range kp.primsFor(pa.bound, bud) {
			q := pc.p
			inv := 1 / (p + q)
			rho := p * q * inv
			dx, dy, dz := pa.P[0]-pc.P[0], pa.P[1]-pc.P[1], pa.P[2]-pc.P[2]
			boys(rho*(dx*dx+dy*dy+dz*dz), 1, w.fb)
			pref := pa.U * pc.U * math.Sqrt(inv)
			t0, t1 := pref*w.fb[0], pref*w.fb[1]
			if braP {
				// W − P = −q/(p+q) (P − Q)
				g := -q * inv * t1
				s0 += pa.PA[0]*t0 + g*dx
				s1 += pa.PA[1]*t0 + g*dy
				s2 += pa.PA[2]*t0 + g*dz
			} else {
				// W − Q = p/(p+q) (P − Q)
				g := p * inv * t1
				s0 += pc.PA[0]*t0 + g*dx
				s1 += pc.PA[1]*t0 + g*dy
				s2 += pc.PA[2]*t0 + g*dz
			}
		}
	}
	w.out[0], w.out[1], w.out[2] = s0, s1, s2
	return w.out[:3]
}

// quartetPSPS is the fast path for (ps|ps):
// [p_i|s]^(m) = PA_i θ^m + WP_i θ^{m+1} and
// [p_i 0|p_k 0] = QC_k [p_i|s]⁰ + WQ_k [p_i|s]¹ + δ_ik/(2(p+q)) θ¹
// (Obara & Saika 1986).
func (w *eriWork) quartetPSPS(bp, kp *shellPair) []float64 {
	var acc [9]float64
	bud := w.budget(bp)
	for _, pa := range bp.prims {
		p := pa.p
		for _, pc := range kp.primsFor(pa.bound, bud) {
			q := pc.p
			inv := 1 / (p + q)
			rho := p * q * inv
			PQ := [3]float64{pa.P[0] - pc.P[0], pa.P[1] - pc.P[1], pa.P[2] - pc.P[2]}
			boys(rho*(PQ[0]*PQ[0]+PQ[1]*PQ[1]+PQ[2]*PQ[2]), 2, w.fb)
			pref := pa.U * pc.U * math.Sqrt(inv)
			t0, t1, t2 := pref*w.fb[0], pref*w.fb[1], pref*w.fb[2]
			// W − P = −q/(p+q) PQ, W − Q = p/(p+q) PQ
			wp, wq := -q*inv, p*inv
			var s0, s1 [3]float64
			for i := range 3 {
				wpi := wp * PQ[i]
				s0[i] = pa.PA[i]*t0 + wpi*t1
				s1[i] = pa.PA[i]*t1 + wpi*t2
			}
			cross := 0.5 * inv * t1
			for i := range 3 {
				for k := range 3 {
					v := pc.PA[k]*s0[i] + wq*PQ[k]*s1[i]
					if i == k {
						v += cross
					}
					acc[i*3+k] += v
				}
			}
		}
	}
	copy(w.out[:9], acc[:])
	return w.out[:9]
}

// finish applies component scales and spherical transforms to the
// Cartesian block cart, which lives in w.h1 or w.h2.
func (w *eriWork) finish(cart []float64, bp, kp *shellPair) []float64 {
	return w.finishShells(cart, [4]*prepShell{bp.sh1, bp.sh2, kp.sh1, kp.sh2})
}

// finishShells is finish for the shells s of the four positions.
func (w *eriWork) finishShells(cart []float64, s [4]*prepShell) []float64 {
	if !s[0].transform && !s[1].transform && !s[2].transform && !s[3].transform {
		return cart
	}
	dims := [4]int{s[0].ncart, s[1].ncart, s[2].ncart, s[3].ncart}
	src := cart
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
		dst := w.h1
		if &src[0] == &w.h1[0] {
			dst = w.h2
		}
		dims[idx] = s[idx].nfunc
		dst = dst[:outer*dims[idx]*inner]
		finishIndex(s[idx], outer, inner, src, dst)
		src = dst
	}
	return src
}

// hrr applies the horizontal recurrence (a,b+1_i| = (a+1_i,b| + AB_i (a,b|
// (Head-Gordon & Pople 1988, eq. 18) on the ket, then on the bra, to the
// contracted [e0|f0] in C, laid out [f − ncum(lc−1)][e − ncum(la−1)] for
// la ≤ l_e ≤ la+lb and lc ≤ l_f ≤ lc+ld (C must not be w.h1 or w.h2). It
// returns the raw Cartesian block [a][b][c][d] in w.h1 or w.h2.
func (w *eriWork) hrr(C []float64, la, lb, lc, ld int, abB, abK [3]float64) []float64 {
	Lab, Lcd := la+lb, lc+ld
	nE := ncum(Lab)
	e0, f0 := ncum(la-1), ncum(lc-1)
	nEr := nE - e0
	na, nb, nc, nd := ncart(la), ncart(lb), ncart(lc), ncart(ld)
	// Ket HRR on C[f][e] (inner index e over nEr): build (e|c d) levels.
	cur := C
	for k := 0; k < ld; k++ {
		// current: [cIdx over levels lc..Lcd−k][d comp of level k][e]
		// next:    [cIdx over levels lc..Lcd−k−1][d comp of level k+1][e]
		nCur := ncart(k)
		nNext := ncart(k + 1)
		nCnext := ncum(Lcd-k-1) - f0
		dst := w.h1
		if &cur[0] == &w.h1[0] {
			dst = w.h2
		}
		dst = dst[:nCnext*nNext*nEr]
		for dn := range nNext {
			dflat := ncum(k) + dn
			dc := &flatTab[dflat]
			i := dc.dir
			dprev := flatTab[dc.down[i]].sub
			abi := abK[i]
			for ci := range nCnext {
				cflat := f0 + ci
				cup := flatTab[cflat].up[i] - f0
				out := dst[(ci*nNext+dn)*nEr : (ci*nNext+dn+1)*nEr]
				s0 := cur[(cup*nCur+dprev)*nEr : (cup*nCur+dprev+1)*nEr]
				s1 := cur[(ci*nCur+dprev)*nEr : (ci*nCur+dprev+1)*nEr]
				for e := range out {
					out[e] = s0[e] + abi*s1[e]
				}
			}
		}
		cur = dst
	}
	// cur is [c (nc)][d (nd)][e (nEr)]. Transpose to [e][cd].
	ncd := nc * nd
	tr := w.h1
	if &cur[0] == &w.h1[0] {
		tr = w.h2
	}
	tr = tr[:nEr*ncd]
	for cd := range ncd {
		src := cur[cd*nEr : (cd+1)*nEr]
		for e, v := range src {
			tr[e*ncd+cd] = v
		}
	}
	cur = tr
	// Bra HRR on [a flat][b comp][cd].
	for k := 0; k < lb; k++ {
		nCur := ncart(k)
		nNext := ncart(k + 1)
		nAnext := ncum(Lab-k-1) - e0
		dst := w.h1
		if &cur[0] == &w.h1[0] {
			dst = w.h2
		}
		dst = dst[:nAnext*nNext*ncd]
		for bn := range nNext {
			bflat := ncum(k) + bn
			bc := &flatTab[bflat]
			i := bc.dir
			bprev := flatTab[bc.down[i]].sub
			abi := abB[i]
			for ai := range nAnext {
				aup := flatTab[e0+ai].up[i] - e0
				out := dst[(ai*nNext+bn)*ncd : (ai*nNext+bn+1)*ncd]
				s0 := cur[(aup*nCur+bprev)*ncd : (aup*nCur+bprev+1)*ncd]
				s1 := cur[(ai*nCur+bprev)*ncd : (ai*nCur+bprev+1)*ncd]
				for x := range out {
					out[x] = s0[x] + abi*s1[x]
				}
			}
		}
		cur = dst
	}
	return cur[:na*nb*nc*nd]
}
