package integral

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// PointCharge is a fixed point charge Z (in units of e, positive for a
// nucleus) at Pos (bohr).
type PointCharge struct {
	Z   float64
	Pos [3]float64
}

// Overlap returns the overlap matrix S_μν = ⟨μ|ν⟩. It panics if the
// shells fail [Validate].
func Overlap(shells []Shell, norm CartNorm) *mat.SymDense {
	return oneBody(shells, norm, opOverlap, nil, [3]float64{})[0]
}

// Kinetic returns the kinetic-energy matrix T_μν = ⟨μ|−½∇²|ν⟩ (hartree).
// It panics if the shells fail [Validate].
func Kinetic(shells []Shell, norm CartNorm) *mat.SymDense {
	return oneBody(shells, norm, opKinetic, nil, [3]float64{})[0]
}

// Nuclear returns the attraction to the point charges,
// V_μν = −Σ_C Z_C ⟨μ|1/|r−R_C||ν⟩ (hartree). It panics if the shells fail
// [Validate].
func Nuclear(shells []Shell, norm CartNorm, charges []PointCharge) *mat.SymDense {
	return oneBody(shells, norm, opNuclear, charges, [3]float64{})[0]
}

// Dipole returns the position (first-moment) integrals about origin,
// ⟨μ|r_k − O_k|ν⟩ for k = x, y, z (bohr). The electronic dipole operator
// is minus these (the electron charge is −1). It panics if the shells fail
// [Validate].
func Dipole(shells []Shell, norm CartNorm, origin [3]float64) [3]*mat.SymDense {
	m := oneBody(shells, norm, opDipole, nil, origin)
	return [3]*mat.SymDense{m[0], m[1], m[2]}
}

type oneOp int

const (
	opOverlap oneOp = iota
	opKinetic
	opNuclear
	opDipole
)

// oneBody evaluates one-electron integrals by the McMurchie–Davidson
// scheme (Hermite expansion coefficients E^{ij}_t per Cartesian
// direction; Hermite Coulomb integrals R_tuv for the nuclear attraction).
func oneBody(shells []Shell, norm CartNorm, op oneOp, charges []PointCharge, origin [3]float64) []*mat.SymDense {
	ps := mustPrepare(shells, norm)
	n := NumFunctions(shells)
	nout := 1
	if op == opDipole {
		nout = 3
	}
	res := make([]*mat.SymDense, nout)
	for k := range res {
		res[k] = mat.NewSymDense(max(n, 1), nil)
	}
	if n == 0 {
		for k := range res {
			res[k] = &mat.SymDense{}
		}
		return res
	}
	maxl := 0
	for _, s := range ps {
		maxl = max(maxl, s.l)
	}
	ws := newOneWork(maxl)
	for a := range ps {
		for b := 0; b <= a; b++ {
			sa, sb := &ps[a], &ps[b]
			blocks := ws.shellPair(sa, sb, op, charges, origin)
			for k, blk := range blocks[:nout] {
				// blk: nfunc(a) × nfunc(b)
				for i := range sa.nfunc {
					for j := range sb.nfunc {
						ii, jj := sa.off+i, sb.off+j
						if a == b && jj > ii {
							continue
						}
						res[k].SetSym(ii, jj, blk[i*sb.nfunc+j])
					}
				}
			}
		}
	}
	return res
}

type oneWork struct {
	ex       [3][]float64 // E tables per direction
	r        []float64    // R_tuv^(n)
	f        []float64    // Boys values
	cart     [3][]float64
	tmp, fin [3][]float64
	maxl     int
}

func newOneWork(maxl int) *oneWork {
	w := &oneWork{maxl: maxl}
	ni, nj, nt := maxl+1, maxl+3, 2*maxl+4
	for d := range 3 {
		w.cart[d] = make([]float64, ncart(maxl)*ncart(maxl))
		w.tmp[d] = make([]float64, ncart(maxl)*ncart(maxl))
		w.fin[d] = make([]float64, ncart(maxl)*ncart(maxl))
	}
	for d := range 3 {
		w.ex[d] = make([]float64, ni*nj*nt)
	}
	L := 2 * maxl
	w.r = make([]float64, (L+1)*(L+1)*(L+1)*(L+1))
	w.f = make([]float64, L+1)
	return w
}

// hermiteE fills e[(i*nj+j)*nt+t] with the McMurchie–Davidson expansion
// coefficients E^{ij}_t of the 1-D Gaussian product, for i ≤ imax,
// j ≤ jmax:
//
//	E^{00}_0 = exp(−μ X_AB²)
//	E^{i+1,j}_t = E^{ij}_{t−1}/(2p) + X_PA E^{ij}_t + (t+1) E^{ij}_{t+1}
//	E^{i,j+1}_t = E^{ij}_{t−1}/(2p) + X_PB E^{ij}_t + (t+1) E^{ij}_{t+1}
//
// References: L. E. McMurchie and E. R. Davidson, J. Comput. Phys. 26,
// 218 (1978), doi:10.1016/0021-9991(78)90092-X; Helgaker, Jørgensen &
// Olsen, Molecular Electronic-Structure Theory (Wiley 2000), eq. 9.5.6.
func hermiteE(e []float64, imax, jmax int, p, xpa, xpb, k00 float64) (nj, nt int) {
	nj, nt = jmax+1, imax+jmax+1
	for k := range e[:(imax+1)*nj*nt] {
		e[k] = 0
	}
	at := func(i, j, t int) int { return (i*nj+j)*nt + t }
	i2p := 0.5 / p
	e[at(0, 0, 0)] = k00
	for j := 0; j < jmax; j++ {
		for t := 0; t <= j+1; t++ {
			v := xpb * e[at(0, j, t)]
			if t > 0 {
				v += i2p * e[at(0, j, t-1)]
			}
			if t+1 <= j {
				v += float64(t+1) * e[at(0, j, t+1)]
			}
			e[at(0, j+1, t)] = v
		}
	}
	for i := 0; i < imax; i++ {
		for j := 0; j <= jmax; j++ {
			for t := 0; t <= i+j+1; t++ {
				v := xpa * e[at(i, j, t)]
				if t > 0 {
					v += i2p * e[at(i, j, t-1)]
				}
				if t+1 <= i+j {
					v += float64(t+1) * e[at(i, j, t+1)]
				}
				e[at(i+1, j, t)] = v
			}
		}
	}
	return nj, nt
}

// hermiteR fills r[((n*d+t)*d+u)*d+v] (d = L+1) with the Hermite Coulomb
// integrals R^{(n)}_{tuv}(p, PC) for t+u+v ≤ L−n:
//
//	R^{(n)}_{000} = (−2p)^n F_n(p |PC|²)
//	R^{(n)}_{t+1,u,v} = t R^{(n+1)}_{t−1,u,v} + X_PC R^{(n+1)}_{tuv}
//
// (and likewise for u, v). Reference: Helgaker, Jørgensen & Olsen (2000),
// eqs. 9.9.18–9.9.20.
func hermiteR(r, f []float64, L int, p float64, pc [3]float64) {
	d := L + 1
	at := func(n, t, u, v int) int { return ((n*d+t)*d+u)*d + v }
	boys(p*(pc[0]*pc[0]+pc[1]*pc[1]+pc[2]*pc[2]), L, f)
	fac := 1.0
	for n := 0; n <= L; n++ {
		r[at(n, 0, 0, 0)] = fac * f[n]
		fac *= -2 * p
	}
	for n := L - 1; n >= 0; n-- {
		// build all t+u+v ≤ L−n at level n from level n+1
		for t := 0; t <= L-n; t++ {
			for u := 0; u <= L-n-t; u++ {
				for v := 0; v <= L-n-t-u; v++ {
					if t+u+v == 0 {
						continue
					}
					var val float64
					switch {
					case t > 0:
						val = pc[0] * r[at(n+1, t-1, u, v)]
						if t > 1 {
							val += float64(t-1) * r[at(n+1, t-2, u, v)]
						}
					case u > 0:
						val = pc[1] * r[at(n+1, t, u-1, v)]
						if u > 1 {
							val += float64(u-1) * r[at(n+1, t, u-2, v)]
						}
					default:
						val = pc[2] * r[at(n+1, t, u, v-1)]
						if v > 1 {
							val += float64(v-1) * r[at(n+1, t, u, v-2)]
						}
					}
					r[at(n, t, u, v)] = val
				}
			}
		}
	}
}

// shellPair returns the finished blocks (nfunc(a) × nfunc(b), row-major)
// for op; for opDipole all three, otherwise only the first is meaningful.
func (w *oneWork) shellPair(sa, sb *prepShell, op oneOp, charges []PointCharge, origin [3]float64) [3][]float64 {
	la, lb := sa.l, sb.l
	na, nb := sa.ncart, sb.ncart
	nres := 1
	if op == opDipole {
		nres = 3
	}
	for k := range nres {
		c := w.cart[k][:na*nb]
		for i := range c {
			c[i] = 0
		}
	}
	ea, eb := cartExps(la), cartExps(lb)
	jextra := 0
	if op == opKinetic {
		jextra = 2
	} else if op == opDipole {
		jextra = 1
	}
	var ab [3]float64
	for d := range 3 {
		ab[d] = sa.center[d] - sb.center[d]
	}
	ab2 := ab[0]*ab[0] + ab[1]*ab[1] + ab[2]*ab[2]
	for ka, alpha := range sa.exps {
		for kb, beta := range sb.exps {
			p := alpha + beta
			mu := alpha * beta / p
			cc := sa.coefs[ka] * sb.coefs[kb]
			var P [3]float64
			var nj, nt int
			for d := range 3 {
				P[d] = (alpha*sa.center[d] + beta*sb.center[d]) / p
				// Put the exp(−μ AB²) factor into x only.
				k00 := 1.0
				if d == 0 {
					k00 = math.Exp(-mu * ab2)
				}
				nj, nt = hermiteE(w.ex[d], la, lb+jextra, p, P[d]-sa.center[d], P[d]-sb.center[d], k00)
			}
			E := func(d, i, j, t int) float64 { return w.ex[d][(i*nj+j)*nt+t] }
			sq := math.Sqrt(math.Pi / p)
			switch op {
			case opOverlap, opKinetic, opDipole:
				// 1-D overlaps S_ij = E^{ij}_0 √(π/p).
				s1 := func(d, i, j int) float64 {
					if j < 0 {
						return 0
					}
					return E(d, i, j, 0) * sq
				}
				for ia, ca := range ea {
					for ib, cb := range eb {
						sx := s1(0, ca[0], cb[0])
						sy := s1(1, ca[1], cb[1])
						sz := s1(2, ca[2], cb[2])
						idx := ia*nb + ib
						switch op {
						case opOverlap:
							w.cart[0][idx] += cc * sx * sy * sz
						case opKinetic:
							// ⟨i|−½ d²/dx²|j⟩ with d²/dx² x^j e^{−βx²} =
							// j(j−1)x^{j−2} − 2β(2j+1)x^j + 4β²x^{j+2}
							// (common practice).
							t1 := func(d, i, j int) float64 {
								return -0.5 * (float64(j*(j-1))*s1(d, i, j-2) - 2*beta*float64(2*j+1)*s1(d, i, j) + 4*beta*beta*s1(d, i, j+2))
							}
							tx := t1(0, ca[0], cb[0])
							ty := t1(1, ca[1], cb[1])
							tz := t1(2, ca[2], cb[2])
							w.cart[0][idx] += cc * (tx*sy*sz + sx*ty*sz + sx*sy*tz)
						case opDipole:
							// x − O_x = (x − B_x) + (B_x − O_x)
							m1 := func(d, i, j int) float64 {
								return s1(d, i, j+1) + (sb.center[d]-origin[d])*s1(d, i, j)
							}
							w.cart[0][idx] += cc * m1(0, ca[0], cb[0]) * sy * sz
							w.cart[1][idx] += cc * sx * m1(1, ca[1], cb[1]) * sz
							w.cart[2][idx] += cc * sx * sy * m1(2, ca[2], cb[2])
						}
					}
				}
			case opNuclear:
				L := la + lb
				d := L + 1
				for _, ch := range charges {
					pc := [3]float64{P[0] - ch.Pos[0], P[1] - ch.Pos[1], P[2] - ch.Pos[2]}
					hermiteR(w.r, w.f, L, p, pc)
					pre := -ch.Z * 2 * math.Pi / p * cc
					for ia, ca := range ea {
						for ib, cb := range eb {
							var sum float64
							for t := 0; t <= ca[0]+cb[0]; t++ {
								et := E(0, ca[0], cb[0], t)
								for u := 0; u <= ca[1]+cb[1]; u++ {
									eu := et * E(1, ca[1], cb[1], u)
									for v := 0; v <= ca[2]+cb[2]; v++ {
										sum += eu * E(2, ca[2], cb[2], v) * w.r[(t*d+u)*d+v]
									}
								}
							}
							w.cart[0][ia*nb+ib] += pre * sum
						}
					}
				}
			}
		}
	}
	var out [3][]float64
	for k := range nres {
		// transform index a (outer 1, inner nb), then index b.
		tmp := w.tmp[k][:sa.nfunc*nb]
		finishIndex(sa, 1, nb, w.cart[k][:na*nb], tmp)
		fin := w.fin[k][:sa.nfunc*sb.nfunc]
		finishIndex(sb, sa.nfunc, 1, tmp, fin)
		out[k] = fin
	}
	return out
}
