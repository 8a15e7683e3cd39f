package hf

import (
	"context"
	"fmt"
	"wellscan/runner/hf/integral"
)

// The perturbative triples correction (T) of CCSD(T) for a closed-shell
// RHF reference. For each occupied triple (i, j, k), with
//
//	Y^{pqr}_{abc} = Σ_d (pa|bd) T_rq^cd − Σ_l (rc|ql) T_pl^ab
//	W_abc = Y^{ijk}_{abc} + Y^{ikj}_{acb} + Y^{jik}_{bac} + Y^{jki}_{bca} + Y^{kij}_{cab} + Y^{kji}_{cba}
//	V_abc = W_abc + (jb|kc) t_ia + (ia|kc) t_jb + (ia|jb) t_kc
//
// (the six permutations of the pairs (ia), (jb), (kc) of the connected
// triples, and the disconnected part from the singles), the correction is
//
//	E(T) = Σ_ijk Σ_abc (4W_abc + W_bca + W_cab)(V_abc − V_cba) / (3 D_ijk^abc),
//	D_ijk^abc = ε_i + ε_j + ε_k − ε_a − ε_b − ε_c.
//
// W and V are invariant under simultaneous permutations of (ia), (jb),
// (kc), so they are built only for i ≥ j ≥ k; the summand of the other
// orderings of the same three orbitals (it is not itself invariant) is
// read from them with permuted virtual indices. Each Y is two matrix
// products, of cost v⁴ and o·v³; the whole correction costs about o³v⁴
// (a sixth of building W for every ordering) and O(v³) memory per worker.
//
// References:
//   - K. Raghavachari, G. W. Trucks, J. A. Pople and M. Head-Gordon, Chem. Phys. Lett. 157, 479 (1989),
//     doi:10.1016/S0009-2614(89)87395-6 (the (T) correction).
//   - A. P. Rendell, T. J. Lee and A. Komornicki, Chem. Phys. Lett. 178, 462 (1991),
//     doi:10.1016/0009-2614(91)87003-T (closed-shell, matrix-product form used here).
//
// The citations are given from memory.

type tripleIdx struct{ i, j, k, mult int }

// triples returns E(T) for converged amplitudes t1 [i][a] and t2 [i][j][a][b].
func triples(ctx context.Context, g *ccInts, t1, T []float64, workers int) (float64, error) {
	o, v := g.o, g.v
	var list []tripleIdx
	for i := range o {
		for j := 0; j <= i; j++ {
			for k := 0; k <= j; k++ {
				mult := 6
				switch {
				case i == j && j == k:
					mult = 1
				case i == j || j == k:
					mult = 3
				}
				list = append(list, tripleIdx{i, j, k, mult})
			}
		}
	}
	v2, v3 := v*v, v*v*v
	type scratch struct {
		y, w, vv []float64
	}
	parts := make([]float64, len(list))
	err := integral.ParallelFor(ctx, workers, len(list), func() *scratch {
		return &scratch{y: make([]float64, v3), w: make([]float64, v3), vv: make([]float64, v3)}
	}, func(s *scratch, x int) error {
		tr := list[x]
		i, j, k := tr.i, tr.j, tr.k
		W := s.w
		clear(W)
		// Y^{pqr} into s.y as [a][b][c], then added to W with the index
		// order of its permutation.
		type perm struct {
			p, q, r int
			// stride of the Y indices (first, second, third) in W
			s1, s2, s3 int
		}
		perms := [6]perm{
			{i, j, k, v2, v, 1}, // Y^{ijk}_{abc} → W_abc
			{i, k, j, v2, 1, v}, // Y^{ikj}_{acb}: (first, second, third) = (a, c, b)
			{j, i, k, v, v2, 1}, // Y^{jik}_{bac}
			{j, k, i, v, 1, v2}, // Y^{jki}_{bca}
			{k, i, j, 1, v2, v}, // Y^{kij}_{cab}
			{k, j, i, 1, v, v2}, // Y^{kji}_{cba}
		}
		for _, pm := range perms {
			p, q, r := pm.p, pm.q, pm.r
			// Σ_d (pa|bd) T_rq^cd: [(a b)][d] × (T_rq[c][d])ᵀ.
			gemm(false, true, v2, v, v, 1, g.ovvv[p*v3:], v, T[(r*o+q)*v2:], v, 0, s.y, v)
			// − Σ_l T_pl^ab (rc|ql): (T_p[l][(a b)])ᵀ × B[l][c], B[l][c] = (ql|rc).
			gemm(true, false, v2, v, o, -1, T[p*o*v2:], v2, g.ooov[(q*o*o+r)*v:], o*v, 1, s.y, v)
			for a := range v {
				for b := range v {
					y := s.y[(a*v+b)*v : (a*v+b)*v+v]
					base := a*pm.s1 + b*pm.s2
					for c, val := range y {
						W[base+c*pm.s3] += val
					}
				}
			}
		}
		V := s.vv
		for a := range v {
			tia := t1[i*v+a]
			for b := range v {
				tjb := t1[j*v+b]
				iajb := g.ovov[((i*v+a)*o+j)*v+b]
				for c := range v {
					abc := (a*v+b)*v + c
					V[abc] = W[abc] + g.ovov[((j*v+b)*o+k)*v+c]*tia + g.ovov[((i*v+a)*o+k)*v+c]*tjb + iajb*t1[k*v+c]
				}
			}
		}
		eijk := g.eo[i] + g.eo[j] + g.eo[k]
		// Every distinct ordering (i', j', k') of the triple: W and V of
		// the reordered triple are W and V with their virtual indices
		// permuted the same way, read here through strides.
		occ := [3]int{i, j, k}
		stride := [3]int{v2, v, 1}
		var seen [][3]int
		var e float64
		for _, sg := range [6][3]int{{0, 1, 2}, {0, 2, 1}, {1, 0, 2}, {1, 2, 0}, {2, 0, 1}, {2, 1, 0}} {
			lab := [3]int{occ[sg[0]], occ[sg[1]], occ[sg[2]]}
			dup := false
			for _, l := range seen {
				dup = dup || l == lab
			}
			if dup {
				continue
			}
			seen = append(seen, lab)
			s1, s2, s3 := stride[sg[0]], stride[sg[1]], stride[sg[2]]
			for a := range v {
				for b := range v {
					eab := eijk - g.ev[a] - g.ev[b]
					for c := range v {
						d := eab - g.ev[c]
						w := 4*W[a*s1+b*s2+c*s3] + W[b*s1+c*s2+a*s3] + W[c*s1+a*s2+b*s3]
						e += w * (V[a*s1+b*s2+c*s3] - V[c*s1+b*s2+a*s3]) / d
					}
				}
			}
		}
		if len(seen) != tr.mult {
			return fmt.Errorf("hf: ccsd(t): triple (%d, %d, %d) has %d orderings, expected %d", i, j, k, len(seen), tr.mult)
		}
		parts[x] = e / 3
		return nil
	})
	if err != nil {
		return 0, fmt.Errorf("hf: ccsd(t): %w", err)
	}
	var et float64
	for _, p := range parts {
		et += p
	}
	return et, nil
}
