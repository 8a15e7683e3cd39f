package integral

import "math"

// One-pass derivative quartets: the vertical recurrence runs once per
// primitive quartet up to one unit of angular momentum beyond the
// quartet's own on each electron, and is contracted five times — plainly
// and weighted by 2α, 2β, 2γ, 2δ (the exponents of the four shells). The
// horizontal recurrence then builds each shifted class (a±1 b|cd), (a b±1|cd),
// (ab|c±1 d), (ab|c d±1) from the matching contraction. This replaces up
// to eight separate quartet evaluations by one recurrence at L + 2.

// derivClasses holds the raw Cartesian blocks of the shifted classes of one
// quartet, indexed [position][0 plus, 1 minus]; nil when not computed.
type derivClasses [4][2][]float64

// quartetShifted computes, for the positions k with need[k], the classes
// with shell k raised (weighted by 2×its exponent) and lowered, over raw
// Cartesian components, into dst (scratch owned by dw).
func (dw *derivWork) quartetShifted(bp, kp *shellPair, need [4]bool) derivClasses {
	if bp.l1+bp.l2 < kp.l1+kp.l2 {
		// The electron-1 recurrence is the cheaper one: put the higher
		// pair in the bra, then transpose every block back,
		// [c][d][a][b] → [a][b][c][d] (positions 0↔2, 1↔3).
		sw := dw.quartetShiftedOrdered(kp, bp, [4]bool{need[2], need[3], need[0], need[1]})
		var out derivClasses
		for k := range 4 {
			ks := (k + 2) % 4
			for j := range 2 {
				src := sw[ks][j]
				if src == nil {
					continue
				}
				// Dimensions of the class in the original order.
				l := [4]int{bp.l1, bp.l2, kp.l1, kp.l2}
				if j == 0 {
					l[k]++
				} else {
					l[k]--
				}
				nab, ncd := ncart(l[0])*ncart(l[1]), ncart(l[2])*ncart(l[3])
				dst := dw.tcls[k][j][:nab*ncd]
				for cd := range ncd {
					row := src[cd*nab : (cd+1)*nab]
					for ab, v := range row {
						dst[ab*ncd+cd] = v
					}
				}
				out[k][j] = dst
			}
		}
		return out
	}
	return dw.quartetShiftedOrdered(bp, kp, need)
}

// quartetShiftedOrdered is quartetShifted without the reordering.
func (dw *derivWork) quartetShiftedOrdered(bp, kp *shellPair, need [4]bool) derivClasses {
	w := dw.w
	la, lb, lc, ld := bp.l1, bp.l2, kp.l1, kp.l2
	Lab, Lcd := la+lb, lc+ld
	// The recurrence goes one level beyond the pair on each side only
	// when a raised class of that side is needed: translational
	// invariance often drops both positions of one side (a quartet over
	// two atoms, (AA|BB)).
	braW, ketW := need[0] || need[1], need[2] || need[3]
	LabX, LcdX := Lab, Lcd
	if braW {
		LabX++
	}
	if ketW {
		LcdX++
	}
	L := LabX + LcdX
	nE, nF := ncum(LabX), ncum(LcdX)
	// Windows of the contractions: the plain one feeds the lowered
	// classes and, weighted per bra primitive, the raised bra classes
	// (l_e from la−1 to Lab+1, l_f up to Lcd); the ket-weighted ones feed
	// the raised ket classes (l_e from la to Lab, l_f up to Lcd+1).
	eLo, fLo := ncum(la-2), ncum(lc-2)
	eKet0, eKet1, fKet0 := ncum(la-1), ncum(Lab), ncum(lc-1)
	fPlain1 := ncum(Lcd)
	size := nE * nF
	for k := range dw.cw {
		c := dw.cw[k][:size]
		for i := range c {
			c[i] = 0
		}
	}
	S0, SC, SD := dw.s0[:size], dw.sc[:size], dw.sd[:size]
	V := w.v
	stM := nF * nE
	cut := dw.primCut
	for _, pa := range bp.prims {
		p := pa.p
		// The first ket primitive kept assigns S0, SC, SD; the others add.
		first := true
		wa := 2 * max(pa.a, p-pa.a, 0.5)
		for _, pc := range kp.prims {
			q := pc.p
			pq := p + q
			pref := pa.U * pc.U / math.Sqrt(pq)
			if cut > 0 && math.Abs(pref)*max(wa, 2*pc.a, 2*(q-pc.a)) < cut {
				continue // negligible primitive quartet (see derivWork.primCut)
			}
			rho := p * q / pq
			var PQ, WP, WQ [3]float64
			for d := range 3 {
				PQ[d] = pa.P[d] - pc.P[d]
				Wd := (p*pa.P[d] + q*pc.P[d]) / pq
				WP[d] = Wd - pa.P[d]
				WQ[d] = Wd - pc.P[d]
			}
			T := rho * (PQ[0]*PQ[0] + PQ[1]*PQ[1] + PQ[2]*PQ[2])
			boys(T, L, w.fb)
			for m := 0; m <= L; m++ {
				V[m*stM] = pref * w.fb[m]
			}
			i2p, rp := pa.inv2p, rho/p
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
			i2q, rq, i2pq := pc.inv2p, rho/q, 0.5/pq
			for f := 1; f < nF; f++ {
				fc := &flatTab[f]
				i := fc.dir
				f1 := fc.down[i]
				f2 := flatTab[f1].down[i]
				nfi := float64(fc.n[i] - 1)
				qci, wqi := pc.PA[i], WQ[i]
				mmax := LcdX - fc.l
				es := ncum(la - 1 - (LcdX - fc.l) - 1)
				// At the top ket level only the ket-raised classes read,
				// and they need l_e ≤ Lab.
				eTop := nE
				if ketW && fc.l == LcdX {
					eTop = eKet1
				}
				for m := 0; m <= mmax; m++ {
					o := m * stM
					dst := V[o+f*nE+es : o+f*nE+eTop]
					s0 := V[o+f1*nE+es : o+f1*nE+eTop]
					s1 := V[o+stM+f1*nE+es : o+stM+f1*nE+eTop]
					if f2 >= 0 {
						c := nfi * i2q
						t0 := V[o+f2*nE+es : o+f2*nE+eTop]
						t1 := V[o+stM+f2*nE+es : o+stM+f2*nE+eTop]
						for k := range dst {
							dst[k] = qci*s0[k] + wqi*s1[k] + c*(t0[k]-rq*t1[k])
						}
					} else {
						for k := range dst {
							dst[k] = qci*s0[k] + wqi*s1[k]
						}
					}
					s1f := V[o+stM+f1*nE : o+stM+f1*nE+nE]
					dstf := V[o+f*nE : o+f*nE+nE]
					for _, ce := range crossTab[i][crossStart[i][es]:crossStart[i][eTop]] {
						dstf[ce.e] += ce.n * i2pq * s1f[ce.down]
					}
				}
			}
			for f := fLo; f < fPlain1; f++ {
				src := V[f*nE+eLo : f*nE+nE]
				s0 := S0[f*nE+eLo : f*nE+nE]
				if first {
					copy(s0, src)
					continue
				}
				for k, v := range src {
					s0[k] += v
				}
			}
			if ketW {
				g2, d2 := 2*pc.a, 2*(pc.p-pc.a)
				for f := fKet0; f < nF; f++ {
					src := V[f*nE+eKet0 : f*nE+eKet1]
					o := f*nE + eKet0
					sc, sd := SC[o:o+len(src)], SD[o:o+len(src)]
					if first {
						for k, v := range src {
							sc[k] = g2 * v
							sd[k] = d2 * v
						}
						continue
					}
					for k, v := range src {
						sc[k] += g2 * v
						sd[k] += d2 * v
					}
				}
			}
			first = false
		}
		if first {
			continue // every ket primitive screened out
		}
		a2, b2 := 2*pa.a, 2*(pa.p-pa.a)
		C0, CA, CB, CC, CD := dw.cw[0], dw.cw[1], dw.cw[2], dw.cw[3], dw.cw[4]
		for f := fLo; f < fPlain1; f++ {
			if !braW {
				for e := eLo; e < nE; e++ {
					C0[f*nE+e] += S0[f*nE+e]
				}
				continue
			}
			for e := eLo; e < nE; e++ {
				o := f*nE + e
				v := S0[o]
				C0[o] += v
				CA[o] += a2 * v
				CB[o] += b2 * v
			}
		}
		if ketW {
			for f := fKet0; f < nF; f++ {
				for e := eKet0; e < eKet1; e++ {
					o := f*nE + e
					CC[o] += SC[o]
					CD[o] += SD[o]
				}
			}
		}
	}
	var out derivClasses
	type cls struct {
		src            int
		la, lb, lc, ld int
	}
	for k := range 4 {
		if !need[k] {
			continue
		}
		var plus, minus cls
		switch k {
		case 0:
			plus, minus = cls{1, la + 1, lb, lc, ld}, cls{0, la - 1, lb, lc, ld}
		case 1:
			plus, minus = cls{2, la, lb + 1, lc, ld}, cls{0, la, lb - 1, lc, ld}
		case 2:
			plus, minus = cls{3, la, lb, lc + 1, ld}, cls{0, la, lb, lc - 1, ld}
		case 3:
			plus, minus = cls{4, la, lb, lc, ld + 1}, cls{0, la, lb, lc, ld - 1}
		}
		for j, c := range []cls{plus, minus} {
			if c.la < 0 || c.lb < 0 || c.lc < 0 || c.ld < 0 {
				continue
			}
			// Copy the class's window [f ≥ lc'][e ≥ la'] into the
			// compact layout the horizontal recurrence reads.
			e0, e1 := ncum(c.la-1), ncum(c.la+c.lb)
			f0, f1 := ncum(c.lc-1), ncum(c.lc+c.ld)
			ner := e1 - e0
			win := dw.win[:(f1-f0)*ner]
			src := dw.cw[c.src]
			for f := f0; f < f1; f++ {
				copy(win[(f-f0)*ner:(f-f0+1)*ner], src[f*nE+e0:f*nE+e1])
			}
			blk := w.hrr(win, c.la, c.lb, c.lc, c.ld, bp.AB, kp.AB)
			dst := dw.cls[k][j][:len(blk)]
			copy(dst, blk)
			out[k][j] = dst
		}
	}
	return out
}

// ssssGrad is quartetGrad's shortcut for a quartet of four s shells,
// whose only shifted classes are the raised ones with a p function on one
// centre: per primitive quartet, with V_m = U_P U_Q/√(p+q) F_m(T),
//
//	(p_i s|ss) = PA_i V_0 + WP_i V_1,  (s p_i|ss) = PB_i V_0 + WP_i V_1,
//	(ss|p_i s) = QC_i V_0 + WQ_i V_1,  (ss|s p_i) = QD_i V_0 + WQ_i V_1
//
// (the vertical recurrence of Obara & Saika, one step), weighted by twice
// the exponent of the raised primitive and multiplied by the quartet's
// two-particle density gam. Positions with need false are left zero.
func (dw *derivWork) ssssGrad(bp, kp *shellPair, gam float64, need [4]bool) (g [4][3]float64) {
	fb := dw.w.fb
	cut := dw.primCut
	for _, pa := range bp.prims {
		p := pa.p
		a2, b2 := 2*pa.a, 2*(p-pa.a)
		wa := max(a2, b2)
		var PB [3]float64
		for d := range 3 {
			PB[d] = pa.PA[d] + bp.AB[d]
		}
		for _, pc := range kp.prims {
			q := pc.p
			pq := p + q
			pref := pa.U * pc.U / math.Sqrt(pq)
			c2, d2 := 2*pc.a, 2*(q-pc.a)
			if cut > 0 && math.Abs(pref)*max(wa, c2, d2) < cut {
				continue // negligible primitive quartet (see derivWork.primCut)
			}
			rho := p * q / pq
			var PQ, WP, WQ [3]float64
			for d := range 3 {
				PQ[d] = pa.P[d] - pc.P[d]
				Wd := (p*pa.P[d] + q*pc.P[d]) / pq
				WP[d] = Wd - pa.P[d]
				WQ[d] = Wd - pc.P[d]
			}
			boys(rho*(PQ[0]*PQ[0]+PQ[1]*PQ[1]+PQ[2]*PQ[2]), 1, fb)
			v0, v1 := pref*fb[0], pref*fb[1]
			for d := range 3 {
				if need[0] {
					g[0][d] += a2 * (pa.PA[d]*v0 + WP[d]*v1)
				}
				if need[1] {
					g[1][d] += b2 * (PB[d]*v0 + WP[d]*v1)
				}
				if need[2] {
					g[2][d] += c2 * (pc.PA[d]*v0 + WQ[d]*v1)
				}
				if need[3] {
					g[3][d] += d2 * ((pc.PA[d]+kp.AB[d])*v0 + WQ[d]*v1)
				}
			}
		}
	}
	for k := range 4 {
		for d := range 3 {
			g[k][d] *= gam
		}
	}
	return g
}

// psssGrad is quartetGrad's shortcut for a quartet (p s|s s): one p shell
// first in the bra pair, three s shells. gam holds the two-particle
// density of the three p components (raw Cartesian x, y, z). With the
// vertical recurrence of Obara & Saika on V_m = U_P U_Q/√(p+q) F_m(T),
//
//	(p_i s|ss)^(m) = PA_i V_m + WP_i V_{m+1}
//	(d_ij s|ss)    = PA_j (p_i s|ss)^(0) + WP_j (p_i s|ss)^(1) + δ_ij/(2p) (V_0 − ρ/p V_1)
//	(p_i s|p_j s)  = QC_j (p_i s|ss)^(0) + WQ_j (p_i s|ss)^(1) + δ_ij/(2(p+q)) V_1
//
// and the horizontal steps (p_i p_j| = (d_ij s| + AB_j (p_i s|, (p s|s p_j) =
// (p s|p_j s) + CD_j (p s|ss), the gradient on the four centres is
//
//	g_A,x = Σ_i Γ_i [2α (d_ix s|ss)] − Γ_x (ss|ss)
//	g_B,x = Σ_i Γ_i [2β (p_i p_x|ss)]
//	g_C,x = Σ_i Γ_i [2γ (p_i s|p_x s)]
//	g_D,x = Σ_i Γ_i [2δ (p_i s|s p_x)]
//
// each bracket contracted over the primitive quartets with the weight
// shown. Positions with need false are left zero.
func (dw *derivWork) psssGrad(bp, kp *shellPair, gam []float64, need [4]bool) (g [4][3]float64) {
	fb := dw.w.fb
	cut := dw.primCut
	var dA, dB, xC, xD [3][3]float64 // weighted (d_ij s|ss) and (p_i s|p_j s)
	var pB, pD [3]float64            // weighted (p_i s|ss)
	var s0 float64                   // plain (ss|ss)
	for _, pa := range bp.prims {
		p := pa.p
		a2, b2 := 2*pa.a, 2*(p-pa.a)
		wa := max(a2, b2, 1)
		for _, pc := range kp.prims {
			q := pc.p
			pq := p + q
			pref := pa.U * pc.U / math.Sqrt(pq)
			c2, d2 := 2*pc.a, 2*(q-pc.a)
			if cut > 0 && math.Abs(pref)*max(wa, c2, d2) < cut {
				continue // negligible primitive quartet (see derivWork.primCut)
			}
			rho := p * q / pq
			var PQ, WP, WQ [3]float64
			for d := range 3 {
				PQ[d] = pa.P[d] - pc.P[d]
				Wd := (p*pa.P[d] + q*pc.P[d]) / pq
				WP[d] = Wd - pa.P[d]
				WQ[d] = Wd - pc.P[d]
			}
			boys(rho*(PQ[0]*PQ[0]+PQ[1]*PQ[1]+PQ[2]*PQ[2]), 2, fb)
			v0, v1, v2 := pref*fb[0], pref*fb[1], pref*fb[2]
			s0 += v0
			var p0, p1 [3]float64
			for i := range 3 {
				p0[i] = pa.PA[i]*v0 + WP[i]*v1
				p1[i] = pa.PA[i]*v1 + WP[i]*v2
			}
			dd := pa.inv2p * (v0 - rho/p*v1)
			dx := 0.5 / pq * v1
			for i := range 3 {
				pB[i] += b2 * p0[i]
				pD[i] += d2 * p0[i]
				for j := range 3 {
					d := pa.PA[j]*p0[i] + WP[j]*p1[i]
					x := pc.PA[j]*p0[i] + WQ[j]*p1[i]
					if i == j {
						d += dd
						x += dx
					}
					dA[i][j] += a2 * d
					dB[i][j] += b2 * d
					xC[i][j] += c2 * x
					xD[i][j] += d2 * x
				}
			}
		}
	}
	for x := range 3 {
		for i := range 3 {
			gi := gam[i]
			if need[0] {
				g[0][x] += gi * dA[i][x]
			}
			if need[1] {
				g[1][x] += gi * (dB[i][x] + bp.AB[x]*pB[i])
			}
			if need[2] {
				g[2][x] += gi * xC[i][x]
			}
			if need[3] {
				g[3][x] += gi * (xD[i][x] + kp.AB[x]*pD[i])
			}
		}
		if need[0] {
			g[0][x] -= gam[x] * s0
		}
	}
	return g
}
