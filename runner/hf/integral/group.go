package integral

import (
	"fmt"
	"math"
	"slices"
)

// General contractions.
//
// A correlation-consistent set contracts one primitive set into several
// functions of the same angular momentum on the same atom (a general
// contraction); the basis library hands them over as consecutive shells,
// one per coefficient column (with the zero coefficients of a column left
// out). Computed as separate shells, every column pays for the primitive
// integrals again: for the carbon s functions of cc-pVDZ, three columns
// over nine primitives, an (ss|ss) block costs 3⁴ contracted quartets of
// up to 9⁴ primitive quartets each. The two-electron code therefore
// treats such a run of shells as one shell group: the recurrences run once
// per primitive quartet of the group quartet, and their result is
// contracted into every combination of member functions (the
// coefficients of each column, zero where a column lacks a primitive,
// are applied after the recurrence, skipping the zeros).

// SameContraction reports whether shell b continues the shell group that
// shell a starts: same centre and atom, and every exponent of b is one of
// a's. The members of a group share the primitive set of its first shell:
// the columns of a general contraction (same angular momentum), and shells
// of different angular momentum over the same exponents (the sp shells of
// the Pople sets). A run of shells in which every shell continues the
// first is one shell group.
func SameContraction(a, b Shell) bool {
	if a.Center != b.Center || a.Atom != b.Atom {
		return false
	}
	for _, x := range b.Exps {
		if !slices.Contains(a.Exps, x) {
			return false
		}
	}
	return true
}

// GroupStart reports, for every shell, whether it starts a shell group
// (is not a continuation of the general contraction of the shell group
// before it). Semi-direct builders split the basis only where a group
// starts (NewDirectFrom requires it).
func GroupStart(shells []Shell) []bool {
	out := make([]bool, len(shells))
	first := 0
	for i := range shells {
		if i == 0 || !SameContraction(shells[first], shells[i]) {
			out[i] = true
			first = i
		}
	}
	return out
}

// shellGroup is a run of shells that share one primitive set.
type shellGroup struct {
	rep   *prepShell // a member of the highest angular momentum
	first int        // index of the first member
	m     int        // number of members
	exps  []float64  // the first member's exponents
	coefs []float64  // [member][primitive]: prepShell coefficients, 0 where a member lacks the primitive
	nf    int        // output functions of all members
	off   int        // first function index of the group
	lmin  int        // lowest angular momentum of a member
	mem   []*prepShell
	moff  []int // first function of each member, relative to off
	ncart int   // Cartesian components of all members
}

// Grouping modes of buildGroups.
const (
	groupNone  = iota // every shell its own group
	groupSameL        // general contractions only (members of one angular momentum)
	groupAll          // every run SameContraction allows
)

// buildGroups groups the prepared shells.
func buildGroups(shells []Shell, ps []prepShell, mode int) []shellGroup {
	var gs []shellGroup
	starts := GroupStart(shells)
	for i := range ps {
		cont := !starts[i] && mode != groupNone
		if cont && mode == groupSameL && ps[i].l != gs[len(gs)-1].mem[0].l {
			cont = false
		}
		if cont {
			g := &gs[len(gs)-1]
			g.m++
			g.mem = append(g.mem, &ps[i])
			continue
		}
		gs = append(gs, shellGroup{first: i, m: 1, exps: ps[i].exps, off: ps[i].off, mem: []*prepShell{&ps[i]}})
	}
	for g := range gs {
		sg := &gs[g]
		sg.rep, sg.lmin = sg.mem[0], sg.mem[0].l
		for k, s := range sg.mem {
			sg.moff = append(sg.moff, sg.nf)
			sg.nf += s.nfunc
			sg.ncart += s.ncart
			if s.l > sg.rep.l {
				sg.rep = sg.mem[k]
			}
			sg.lmin = min(sg.lmin, s.l)
		}
		sg.coefs = make([]float64, sg.m*len(sg.exps))
		for k := range sg.m {
			s := &ps[sg.first+k]
			for i, a := range s.exps {
				j := slices.Index(sg.exps, a)
				if j < 0 {
					panic(fmt.Sprintf("integral: shell %d: exponent %v outside its group", sg.first+k, a))
				}
				sg.coefs[k*len(sg.exps)+j] += s.coefs[i]
			}
		}
	}
	return gs
}

// comboW is one non-zero weight of a primitive pair: combination k of
// member functions (first member × second members + second member) gets
// w times the primitive pair's integrals.
type comboW struct {
	k int32
	w float64
}

// newGroupPair is newShellPair for shell groups a and b: the primitive
// pairs of the union primitive sets, each with the weights of the member
// combinations it contributes to (folded into U when both groups have one
// member).
func newGroupPair(gs []shellGroup, a, b int) shellPair {
	if gs[a].rep.l < gs[b].rep.l {
		a, b = b, a
	}
	ga, gb := &gs[a], &gs[b]
	sa, sb := ga.rep, gb.rep
	single := ga.m == 1 && gb.m == 1
	sp := shellPair{s1: a, s2: b, l1: sa.l, l2: sb.l, same: a == b, nc1: ga.m, nc2: gb.m,
		n1: ga.nf, n2: gb.nf, sh1: sa, sh2: sb, lmin1: ga.lmin, lmin2: gb.lmin}
	if !single {
		sp.g1, sp.g2 = ga, gb
		base := ncum(ga.lmin - 1)
		for _, A := range ga.mem {
			for _, B := range gb.mem {
				sp.rng = append(sp.rng, int32(ncum(A.l-1)-base), int32(ncum(A.l+B.l)-base))
			}
		}
	}
	for d := range 3 {
		sp.AB[d] = sa.center[d] - sb.center[d]
	}
	ab2 := sp.AB[0]*sp.AB[0] + sp.AB[1]*sp.AB[1] + sp.AB[2]*sp.AB[2]
	pref := math.Sqrt2 * math.Pow(math.Pi, 1.25)
	na, nb := len(ga.exps), len(gb.exps)
	for i, alpha := range ga.exps {
		for j, beta := range gb.exps {
			p := alpha + beta
			k := math.Exp(-alpha * beta / p * ab2)
			if k < primScreen {
				continue
			}
			pp := primPair{p: p, inv2p: 0.5 / p, a: alpha, U: pref * k / p, bound: math.Inf(1)}
			if single {
				pp.U *= ga.coefs[i] * gb.coefs[j]
				if pp.U == 0 {
					continue
				}
			} else {
				pp.c0 = int32(len(sp.cw))
				for ma := range ga.m {
					ca := ga.coefs[ma*na+i]
					if ca == 0 {
						continue
					}
					for mb := range gb.m {
						if cb := gb.coefs[mb*nb+j]; cb != 0 {
							sp.cw = append(sp.cw, comboW{k: int32(ma*gb.m + mb), w: ca * cb})
						}
					}
				}
				pp.c1 = int32(len(sp.cw))
				if pp.c1 == pp.c0 {
					continue
				}
			}
			for d := range 3 {
				pp.P[d] = (alpha*sa.center[d] + beta*sb.center[d]) / p
				pp.PA[d] = pp.P[d] - sa.center[d]
			}
			sp.prims = append(sp.prims, pp)
		}
	}
	sp.fi = make([]int, sp.n1)
	for i := range sp.fi {
		sp.fi[i] = ga.off + i
	}
	sp.fj = make([]int, sp.n2)
	for i := range sp.fj {
		sp.fj[i] = gb.off + i
	}
	return sp
}

// finishGain bounds how much the finishing step (component scales or the
// spherical transform) can enlarge a raw Cartesian value: the largest sum
// of absolute weights of one output function.
func finishGain(s *prepShell) float64 {
	if !s.transform {
		return 1
	}
	if !s.pure {
		return slices.Max(s.scale)
	}
	tab := c2sTables[s.l]
	var g float64
	for m := range s.nfunc {
		var r float64
		for _, w := range tab[m*s.ncart : (m+1)*s.ncart] {
			r += math.Abs(w)
		}
		g = max(g, r)
	}
	return g
}

// setPrimBounds gives every primitive pair of sp its Schwarz factor,
// √max|[ab|ab]| over the raw Cartesian components of that primitive pair
// alone, times its largest member-combination weight and the finishing
// gains of both shells, and sorts the primitive pairs by it, largest
// first. By the Schwarz inequality one primitive quartet then contributes
// at most bound(bra)·bound(ket) to any integral of the finished block,
// which is what quartet's primitive screening (eriWork.cut, primsFor)
// relies on.
func setPrimBounds(w *eriWork, sp *shellPair) {
	cut := w.cut
	w.cut = 0
	defer func() { w.cut = cut }()
	// diag is √max|[ab|ab]| of primitive pair pp over the raw Cartesian
	// components of shells A and B (the pair's centres and exponents).
	one := shellPair{s1: sp.s1, s2: sp.s2, AB: sp.AB, nc1: 1, nc2: 1, prims: make([]primPair, 1)}
	diag := func(pp *primPair, A, B *prepShell) float64 {
		rawA, rawB := *A, *B
		rawA.transform, rawB.transform = false, false
		one.l1, one.l2, one.lmin1, one.lmin2 = A.l, B.l, A.l, B.l
		one.n1, one.n2, one.sh1, one.sh2 = A.ncart, B.ncart, &rawA, &rawB
		one.prims[0] = *pp
		one.prims[0].c0, one.prims[0].c1 = 0, 0
		blk := w.quartet(&one, &one)
		n1, n2 := one.n1, one.n2
		var m float64
		for i := range n1 {
			for j := range n2 {
				m = max(m, math.Abs(blk[((i*n2+j)*n1+i)*n2+j]))
			}
		}
		return math.Sqrt(m)
	}
	for x := range sp.prims {
		pp := &sp.prims[x]
		if len(sp.cw) == 0 {
			pp.bound = diag(pp, sp.sh1, sp.sh2) * finishGain(sp.sh1) * finishGain(sp.sh2)
			continue
		}
		pp.bound = 0
		for _, c := range sp.cw[pp.c0:pp.c1] {
			A, B := sp.sh1, sp.sh2
			if sp.g1 != nil {
				A = sp.g1.mem[int(c.k)/sp.nc2]
			}
			if sp.g2 != nil {
				B = sp.g2.mem[int(c.k)%sp.nc2]
			}
			pp.bound = max(pp.bound, diag(pp, A, B)*math.Abs(c.w)*finishGain(A)*finishGain(B))
		}
	}
	slices.SortStableFunc(sp.prims, func(a, b primPair) int {
		switch {
		case a.bound > b.bound:
			return -1
		case a.bound < b.bound:
			return 1
		}
		return 0
	})
	sp.tail = make([]float64, len(sp.prims)+1)
	for j := len(sp.prims) - 1; j >= 0; j-- {
		sp.tail[j] = sp.tail[j+1] + sp.prims[j].bound
	}
}
