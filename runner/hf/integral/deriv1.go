package integral

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Nuclear-coordinate derivatives of the one-electron integrals, contracted
// at once with densities (the only form a gradient needs).
//
// The derivative of a Cartesian Gaussian with respect to its own centre is
// a combination of Gaussians of one higher and one lower angular momentum
// with the same exponent:
//
//	∂/∂A_x x_A^i e^{−α x_A²} = 2α x_A^{i+1} e^{−α x_A²} − i x_A^{i−1} e^{−α x_A²}
//
// (x_A = x − A_x; common practice, e.g. Helgaker, Jørgensen & Olsen,
// Molecular Electronic-Structure Theory, Wiley 2000, §9.3), so every
// derivative integral is an ordinary integral over shifted angular
// momenta, evaluated here with the same McMurchie–Davidson expansion as
// the integrals themselves. Overlap and kinetic integrals depend only on
// A − B, so ∂/∂B = −∂/∂A. The nuclear attraction to a charge at C also
// depends on C (the Hellmann–Feynman, or operator, part); translational
// invariance gives ∂/∂C = −(∂/∂A + ∂/∂B) for each charge separately.
//
// References:
//   - L. E. McMurchie, E. R. Davidson, J. Comput. Phys. 26, 218 (1978),
//     doi:10.1016/0021-9991(78)90092-X.
//   - J. A. Pople, R. Krishnan, H. B. Schlegel, J. S. Binkley, Int. J.
//     Quantum Chem. Symp. 13, 225 (1979), doi:10.1002/qua.560160825
//     (the Hartree–Fock gradient expression; from memory).

// OneElectronGradient returns the one-electron part of a Hartree–Fock
// gradient. For the total density d (α plus β, dimensionless) and the
// energy-weighted density w (hartree),
//
//	basis[A] = Σ_μν d_μν ∂(T+V)_μν/∂A − Σ_μν w_μν ∂S_μν/∂A
//
// summed over the shells on atom A (Shell.Atom, nAtoms atoms), where the
// derivative moves only the basis functions, and
//
//	charges[c] = Σ_μν d_μν ∂V_μν/∂C_c
//
// moves only point charge c (the operator part). Both are in hartree/bohr.
// A caller whose charges sit on the atoms adds charges[c] to basis[c].
// It returns an error for malformed shells, a Shell.Atom outside
// 0..nAtoms−1 or matrices of the wrong size.
func OneElectronGradient(shells []Shell, norm CartNorm, charges []PointCharge, d, w *mat.SymDense, nAtoms int) (basis, chg [][3]float64, err error) {
	ps, err := prepare(shells, norm)
	if err != nil {
		return nil, nil, err
	}
	n := NumFunctions(shells)
	for _, m := range []*mat.SymDense{d, w} {
		if m == nil || m.SymmetricDim() != n {
			return nil, nil, fmt.Errorf("integral: one-electron gradient: density must be %d×%d", n, n)
		}
	}
	for i, s := range shells {
		if s.Atom < 0 || s.Atom >= nAtoms {
			return nil, nil, fmt.Errorf("integral: one-electron gradient: shell %d sits on atom %d, want 0..%d", i, s.Atom, nAtoms-1)
		}
	}
	basis = make([][3]float64, nAtoms)
	chg = make([][3]float64, len(charges))
	maxl := 0
	for _, s := range ps {
		maxl = max(maxl, s.l)
	}
	ws := newOneDerivWork(maxl, len(charges))
	for a := range ps {
		for b := 0; b <= a; b++ {
			sa, sb := &ps[a], &ps[b]
			f := 2.0 // the (b,a) block is the transpose
			if a == b {
				f = 1
			}
			ws.loadDensity(sa, sb, d, ws.dc)
			ws.loadDensity(sa, sb, w, ws.wc)
			gA, gB := ws.pair(sa, sb, charges)
			A, B := shells[a].Atom, shells[b].Atom
			for x := range 3 {
				basis[A][x] += f * gA[x]
				basis[B][x] += f * gB[x]
			}
			for c := range charges {
				for x := range 3 {
					chg[c][x] += f * ws.gc[c][x]
				}
			}
		}
	}
	return basis, chg, nil
}

type oneDerivWork struct {
	ex     [3][]float64
	r, f   []float64
	dc, wc []float64 // density blocks over raw Cartesian components
	tmp    []float64
	gc     [][3]float64
	maxl   int
}

func newOneDerivWork(maxl, ncharges int) *oneDerivWork {
	w := &oneDerivWork{maxl: maxl}
	ni, nj, nt := maxl+2, maxl+3, 2*maxl+6
	for d := range 3 {
		w.ex[d] = make([]float64, ni*nj*nt)
	}
	L := 2*maxl + 1
	w.r = make([]float64, (L+1)*(L+1)*(L+1)*(L+1))
	w.f = make([]float64, L+1)
	nc := ncart(maxl)
	w.dc = make([]float64, nc*nc)
	w.wc = make([]float64, nc*nc)
	w.tmp = make([]float64, nc*nc)
	w.gc = make([][3]float64, ncharges)
	return w
}

// loadDensity copies the (a, b) block of m into dst as the matrix that,
// contracted with raw Cartesian integrals (axial normalisation, no
// spherical transform), gives the same sum as m contracted with the
// finished integrals: dst = Tₐᵀ m_ab T_b.
func (w *oneDerivWork) loadDensity(sa, sb *prepShell, m *mat.SymDense, dst []float64) {
	blk := w.tmp[:sa.nfunc*sb.nfunc]
	for i := range sa.nfunc {
		for j := range sb.nfunc {
			blk[i*sb.nfunc+j] = m.At(sa.off+i, sb.off+j)
		}
	}
	half := dst[:sa.ncart*sb.nfunc]
	// index a: (outer 1, inner nb_func); then index b.
	backIndex(sa, 1, sb.nfunc, blk, half)
	out := dst[:sa.ncart*sb.ncart]
	scratch := make([]float64, sa.ncart*sb.ncart)
	backIndex(sb, sa.ncart, 1, half, scratch)
	copy(out, scratch)
}

// backIndex is the transpose of finishIndex: it maps one index of a
// row-major tensor from output functions (outer, nfunc, inner) in src back
// to Cartesian components (outer, ncart, inner) in dst. dst and src must
// not overlap.
func backIndex(s *prepShell, outer, inner int, src, dst []float64) {
	nc, nf := s.ncart, s.nfunc
	if !s.pure {
		for o := range outer {
			for c := range nc {
				f := s.scale[c]
				sb := src[(o*nc+c)*inner : (o*nc+c+1)*inner]
				db := dst[(o*nc+c)*inner : (o*nc+c+1)*inner]
				for k, v := range sb {
					db[k] = v * f
				}
			}
		}
		return
	}
	tab := c2sTables[s.l]
	for o := range outer {
		for c := range nc {
			db := dst[(o*nc+c)*inner : (o*nc+c+1)*inner]
			for k := range db {
				db[k] = 0
			}
			for m := range nf {
				wgt := tab[m*nc+c]
				if wgt == 0 {
					continue
				}
				sb := src[(o*nf+m)*inner : (o*nf+m+1)*inner]
				for k, v := range sb {
					db[k] += wgt * v
				}
			}
		}
	}
}

// pair returns Σ dc·∂(T+V)/∂A − Σ wc·∂S/∂A and the same for B over the
// raw Cartesian components of the shell pair, and sets w.gc[c] to the
// operator derivative for each charge.
func (w *oneDerivWork) pair(sa, sb *prepShell, charges []PointCharge) (gA, gB [3]float64) {
	la, lb := sa.l, sb.l
	nb := sb.ncart
	ea, eb := cartExps(la), cartExps(lb)
	for c := range w.gc {
		w.gc[c] = [3]float64{}
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
				k00 := 1.0
				if d == 0 {
					k00 = math.Exp(-mu * ab2)
				}
				nj, nt = hermiteE(w.ex[d], la+1, lb+2, p, P[d]-sa.center[d], P[d]-sb.center[d], k00)
			}
			E := func(d, i, j, t int) float64 {
				if i < 0 || j < 0 {
					return 0
				}
				return w.ex[d][(i*nj+j)*nt+t]
			}
			sq := math.Sqrt(math.Pi / p)
			s1 := func(d, i, j int) float64 {
				if i < 0 || j < 0 {
					return 0
				}
				return E(d, i, j, 0) * sq
			}
			t1 := func(d, i, j int) float64 {
				if i < 0 {
					return 0
				}
				return -0.5 * (float64(j*(j-1))*s1(d, i, j-2) - 2*beta*float64(2*j+1)*s1(d, i, j) + 4*beta*beta*s1(d, i, j+2))
			}
			// Derivatives with respect to A of the 1-D factors.
			ds := func(d, i, j int) float64 { return 2*alpha*s1(d, i+1, j) - float64(i)*s1(d, i-1, j) }
			dt := func(d, i, j int) float64 { return 2*alpha*t1(d, i+1, j) - float64(i)*t1(d, i-1, j) }
			for ia, ca := range ea {
				for ib, cb := range eb {
					dv, wv := w.dc[ia*nb+ib]*cc, w.wc[ia*nb+ib]*cc
					if dv == 0 && wv == 0 {
						continue
					}
					var S, T, DS, DT [3]float64
					for d := range 3 {
						S[d] = s1(d, ca[d], cb[d])
						T[d] = t1(d, ca[d], cb[d])
						DS[d] = ds(d, ca[d], cb[d])
						DT[d] = dt(d, ca[d], cb[d])
					}
					for x := range 3 {
						y, z := (x+1)%3, (x+2)%3
						dS := DS[x] * S[y] * S[z]
						dT := DT[x]*S[y]*S[z] + DS[x]*(T[y]*S[z]+S[y]*T[z])
						g := dv*dT - wv*dS
						gA[x] += g
						gB[x] -= g
					}
				}
			}
			// Nuclear attraction.
			L := la + lb + 1
			dd := L + 1
			for ci, ch := range charges {
				pc := [3]float64{P[0] - ch.Pos[0], P[1] - ch.Pos[1], P[2] - ch.Pos[2]}
				hermiteR(w.r, w.f, L, p, pc)
				pre := -ch.Z * 2 * math.Pi / p * cc
				R := func(t, u, v int) float64 { return w.r[(t*dd+u)*dd+v] }
				var vA, vB [3]float64
				for ia, ca := range ea {
					for ib, cb := range eb {
						dv := w.dc[ia*nb+ib]
						if dv == 0 {
							continue
						}
						// hx(i, j) contracts the x expansion with R; the
						// three directions are handled by building the
						// sums with one index shifted at a time.
						i0, j0 := ca, cb
						for x := range 3 {
							// A derivative in direction x.
							var accA, accB float64
							for t := 0; t <= i0[0]+j0[0]+1; t++ {
								for u := 0; u <= i0[1]+j0[1]+1; u++ {
									for v := 0; v <= i0[2]+j0[2]+1; v++ {
										var ta, tb float64
										ex, ey, ez := E(0, i0[0], j0[0], t), E(1, i0[1], j0[1], u), E(2, i0[2], j0[2], v)
										switch x {
										case 0:
											ta = (2*alpha*E(0, i0[0]+1, j0[0], t) - float64(i0[0])*E(0, i0[0]-1, j0[0], t)) * ey * ez
											tb = (2*beta*E(0, i0[0], j0[0]+1, t) - float64(j0[0])*E(0, i0[0], j0[0]-1, t)) * ey * ez
										case 1:
											ta = ex * (2*alpha*E(1, i0[1]+1, j0[1], u) - float64(i0[1])*E(1, i0[1]-1, j0[1], u)) * ez
											tb = ex * (2*beta*E(1, i0[1], j0[1]+1, u) - float64(j0[1])*E(1, i0[1], j0[1]-1, u)) * ez
										case 2:
											ta = ex * ey * (2*alpha*E(2, i0[2]+1, j0[2], v) - float64(i0[2])*E(2, i0[2]-1, j0[2], v))
											tb = ex * ey * (2*beta*E(2, i0[2], j0[2]+1, v) - float64(j0[2])*E(2, i0[2], j0[2]-1, v))
										}
										if ta == 0 && tb == 0 {
											continue
										}
										r := R(t, u, v)
										accA += ta * r
										accB += tb * r
									}
								}
							}
							vA[x] += pre * dv * accA
							vB[x] += pre * dv * accB
						}
					}
				}
				for x := range 3 {
					gA[x] += vA[x]
					gB[x] += vB[x]
					w.gc[ci][x] -= vA[x] + vB[x]
				}
			}
		}
	}
	return gA, gB
}
