package hf

import (
	"context"
	"fmt"
	"time"
	"wellscan/runner/hf/integral"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/gonum"
)

// The full AO→MO transformation of the two-electron integrals over the
// correlated orbitals, for coupled-cluster theory. Coupled-cluster
// equations need every class of MO integral ((oo|oo), (oo|ov), (ov|ov),
// (oo|vv), (ov|vv) and (vv|vv)), so all of them are made at once and kept
// with their 8-fold permutational symmetry: element (pq|rs) sits at
// pidx(pidx(p,q), pidx(r,s)) with pidx(i,j) = i(i+1)/2 + j for i ≥ j,
// m⁴/8 doubles for m correlated orbitals (136 MB for m = 108, CO in
// cc-pVQZ with the cores frozen).
//
// The route is the one of the MP2 transformation (mp2_transform.go): per
// batch of first indices p and per AO ket pair λσ (read, or recomputed
// integral-direct, block by block)
//
//	(pq|λσ) = Σ_μν C_μp (μν|λσ) C_νq      two matrix products
//
// is stored as H[p q][λσ]; then for each (p ≥ q) of the batch
//
//	(pq|rs) = Σ_λσ C_λr (pq|λσ) C_σs      for r ≤ p only (rs ≤ pq is all the packed array keeps)
//
// Both halves cost O(m·N⁴) and run as gonum BLAS products, parallel over
// ket-pair blocks and over (p q) respectively. The batch size over p is
// the largest that keeps H within the memory budget next to the result.

// moERI holds the packed MO integrals (pq|rs) over m orbitals.
type moERI struct {
	m    int
	data []float64
}

// at returns (pq|rs).
func (g *moERI) at(p, q, r, s int) float64 {
	return g.data[ppidx(ppidx(p, q), ppidx(r, s))]
}

// ppidx is the packed index of the unordered pair (i, j).
func ppidx(i, j int) int {
	if i < j {
		i, j = j, i
	}
	return i*(i+1)/2 + j
}

// moERIBytes is the size of the packed MO integrals of m orbitals.
func moERIBytes(m int) int64 {
	mp := int64(m) * int64(m+1) / 2
	return 8 * mp * (mp + 1) / 2
}

// transformFull returns the packed MO integrals over the m columns of C
// (n × m, row-major), the time taken and the bytes it allocated at its
// peak. budget bounds the result plus the half-transformed batch and the
// per-worker scratch.
func transformFull(ctx context.Context, src PairBlockSource, C []float64, m, workers int, budget int64) (*moERI, time.Duration, int64, error) {
	start := time.Now()
	n := src.NumFunctions()
	if len(C) != n*m {
		return nil, 0, 0, fmt.Errorf("hf: cc: %d orbital coefficients for %d functions × %d orbitals", len(C), n, m)
	}
	np := n * (n + 1) / 2
	out := &moERI{m: m, data: nil}
	outBytes := moERIBytes(m)
	w := int64(min(workers, src.NumPairBlocks()))
	scratch := 8 * w * (int64(src.MaxPairBlock())*int64(np) + 2*int64(n)*int64(n) + 2*int64(m)*int64(n))
	perP := 8 * int64(m) * int64(np)
	nb := (budget - outBytes - scratch) / perP
	if nb < 1 {
		return nil, 0, 0, fmt.Errorf("%w: %d bytes cannot hold the MO integrals: %d bytes for the %d-orbital result, %d for one batch row and %d of scratch", ErrCCMemory, budget, outBytes, m, perP, scratch)
	}
	nb = min(nb, int64(m))
	out.data = make([]float64, outBytes/8)
	H := make([]float64, int(nb)*m*np)
	var impl gonum.Implementation
	maxBlk := src.MaxPairBlock()
	type halfScratch struct {
		dst, mat, x, y []float64
		kls            []int
	}
	for p0 := 0; p0 < m; p0 += int(nb) {
		p1 := min(p0+int(nb), m)
		b := p1 - p0
		cb := make([]float64, n*b)
		for mu := range n {
			copy(cb[mu*b:(mu+1)*b], C[mu*m+p0:mu*m+p1])
		}
		err := integral.ParallelFor(ctx, workers, src.NumPairBlocks(), func() *halfScratch {
			return &halfScratch{dst: make([]float64, maxBlk*np), mat: make([]float64, n*n), x: make([]float64, b*n), y: make([]float64, b*m)}
		}, func(s *halfScratch, blk int) error {
			var err error
			s.kls, err = src.PairBlock(ctx, blk, s.dst, s.kls[:0])
			if err != nil {
				return fmt.Errorf("hf: cc: integrals: %w", err)
			}
			for x, KL := range s.kls {
				unpackSym(s.dst[x*np:(x+1)*np], n, s.mat)
				impl.Dgemm(blas.Trans, blas.NoTrans, b, n, n, 1, cb, b, s.mat, n, 0, s.x, n)
				impl.Dgemm(blas.NoTrans, blas.NoTrans, b, m, n, 1, s.x, n, C, m, 0, s.y, m)
				for pq, v := range s.y {
					H[pq*np+KL] = v
				}
			}
			return nil
		})
		if err != nil {
			return nil, 0, 0, err
		}
		// Second half over the pairs (p, q ≤ p) of the batch.
		type pair struct{ p, q int }
		var pairs []pair
		for p := p0; p < p1; p++ {
			for q := 0; q <= p; q++ {
				pairs = append(pairs, pair{p, q})
			}
		}
		type secScratch struct{ mat, x, z []float64 }
		err = integral.ParallelFor(ctx, workers, len(pairs), func() *secScratch {
			return &secScratch{mat: make([]float64, n*n), x: make([]float64, m*n), z: make([]float64, m*m)}
		}, func(s *secScratch, k int) error {
			p, q := pairs[k].p, pairs[k].q
			unpackSym(H[((p-p0)*m+q)*np:((p-p0)*m+q+1)*np], n, s.mat)
			r := p + 1 // rows r ≤ p suffice: rs ≤ pq
			impl.Dgemm(blas.Trans, blas.NoTrans, r, n, n, 1, C, m, s.mat, n, 0, s.x, n)
			impl.Dgemm(blas.NoTrans, blas.NoTrans, r, m, n, 1, s.x, n, C, m, 0, s.z, m)
			PQ := ppidx(p, q)
			base := PQ * (PQ + 1) / 2
			for rr := range r {
				for ss := 0; ss <= rr; ss++ {
					RS := ppidx(rr, ss)
					if RS > PQ {
						break
					}
					out.data[base+RS] = s.z[rr*m+ss]
				}
			}
			return nil
		})
		if err != nil {
			return nil, 0, 0, err
		}
	}
	return out, time.Since(start), outBytes + 8*int64(len(H)) + scratch, nil
}
