package integral

import (
	"context"
	"fmt"
)

// Block-wise access to the two-electron integrals for integral
// transformations (MP2 and the like). The packed pair index of functions
// (i, j) is PairIndex(i, j) = i(i+1)/2 + j for i ≥ j. The ket pairs KL are
// split into blocks; block b lists some KL values and, for each of them,
// every bra value (IJ|KL), IJ = 0 … n(n+1)/2 − 1. Blocks partition the ket
// pairs: every KL appears in exactly one block.
//
// For the in-core [ERI] the blocks are runs of consecutive KL values read
// from the packed array. For [Direct] a block is one ket shell pair and its
// integrals are recomputed, shell quartet by shell quartet, on every call
// (Schwarz-screened at 1e-15 hartree, the in-core threshold).

// PairIndex is the packed index of the unordered function pair (i, j).
func PairIndex(i, j int) int { return pidx(i, j) }

// eriBlockLen is the number of consecutive ket pairs per in-core block:
// small enough that a block of a 500-function basis stays near 32 MB per
// worker, large enough to amortise the walk over the bra pairs.
const eriBlockLen = 32

// NumPairBlocks is the number of ket-pair blocks of [ERI.PairBlock].
func (e *ERI) NumPairBlocks() int {
	np := e.n * (e.n + 1) / 2
	return (np + eriBlockLen - 1) / eriBlockLen
}

// MaxPairBlock is the largest number of ket pairs in one block.
func (e *ERI) MaxPairBlock() int { return eriBlockLen }

// PairBlock writes block b: it appends the block's ket pairs KL to kls and
// returns the result, and sets dst[x·np + IJ] = (IJ|KL_x) for the x-th of
// them (np = n(n+1)/2; dst needs MaxPairBlock()·np elements). It is safe
// for concurrent use with different dst. An out-of-range b is an error.
func (e *ERI) PairBlock(ctx context.Context, b int, dst []float64, kls []int) ([]int, error) {
	np := e.n * (e.n + 1) / 2
	if b < 0 || b >= e.NumPairBlocks() {
		return kls, fmt.Errorf("integral: pair block %d out of range [0, %d)", b, e.NumPairBlocks())
	}
	k0, k1 := b*eriBlockLen, min((b+1)*eriBlockLen, np)
	nk := k1 - k0
	if len(dst) < nk*np {
		return kls, fmt.Errorf("integral: pair block needs %d elements, got %d", nk*np, len(dst))
	}
	if err := ctx.Err(); err != nil {
		return kls, err
	}
	for KL := k0; KL < k1; KL++ {
		kls = append(kls, KL)
	}
	data := e.data
	// IJ < KL: (KL|IJ) is row KL, column IJ (contiguous in IJ).
	for x := range nk {
		KL := k0 + x
		copy(dst[x*np:x*np+KL], data[KL*(KL+1)/2:KL*(KL+1)/2+KL])
	}
	// IJ ≥ KL: row IJ holds the run KL = k0 … min(k1, IJ+1) − 1.
	for IJ := k0; IJ < np; IJ++ {
		row := data[IJ*(IJ+1)/2:]
		for KL := k0; KL < min(k1, IJ+1); KL++ {
			dst[(KL-k0)*np+IJ] = row[KL]
		}
	}
	return kls, nil
}

// NumPairBlocks is the number of ket-pair blocks of [Direct.PairBlock]:
// one per shell pair.
func (d *Direct) NumPairBlocks() int { return len(d.eb.pairs) }

// MaxPairBlock is the largest number of ket pairs in one block.
func (d *Direct) MaxPairBlock() int {
	m := 0
	for i := range d.eb.pairs {
		m = max(m, d.eb.pairs[i].n1*d.eb.pairs[i].n2)
	}
	return m
}

// PairBlock computes block b (the b-th shell pair as ket) like
// [ERI.PairBlock]: all quartets (bra|b) whose Schwarz bound reaches 1e-15
// (the others are written as zero). It is safe for concurrent use with
// different dst; each call allocates its own scratch.
func (d *Direct) PairBlock(ctx context.Context, b int, dst []float64, kls []int) ([]int, error) {
	eb := d.eb
	n := eb.nbf
	np := n * (n + 1) / 2
	if b < 0 || b >= len(eb.pairs) {
		return kls, fmt.Errorf("integral: pair block %d out of range [0, %d)", b, len(eb.pairs))
	}
	kp := &eb.pairs[b]
	// Local slot of each ket function pair; duplicates (same shell) once.
	slot := make([]int, kp.n1*kp.n2)
	first := len(kls)
	for k, K := range kp.fi {
		for l, L := range kp.fj {
			KL := pidx(K, L)
			s := -1
			for x := first; x < len(kls); x++ {
				if kls[x] == KL {
					s = x - first
					break
				}
			}
			if s < 0 {
				s = len(kls) - first
				kls = append(kls, KL)
			}
			slot[k*kp.n2+l] = s
		}
	}
	nk := len(kls) - first
	if len(dst) < nk*np {
		return kls, fmt.Errorf("integral: pair block needs %d elements, got %d", nk*np, len(dst))
	}
	clear(dst[:nk*np])
	w := eb.newWork()
	for P := range eb.pairs {
		if P%64 == 0 {
			if err := ctx.Err(); err != nil {
				return kls, err
			}
		}
		bp := &eb.pairs[P]
		if bp.schwarz*kp.schwarz < incoreScreen {
			continue
		}
		n1, n2, n3, n4 := bp.n1, bp.n2, kp.n1, kp.n2
		w.cut = primCut(incoreScreen, 1, bp, kp)
		if P >= b {
			blk := w.quartet(bp, kp)
			for i, I := range bp.fi {
				for j, J := range bp.fj {
					IJ := pidx(I, J)
					row := blk[(i*n2+j)*n3*n4:]
					for kl := range n3 * n4 {
						dst[slot[kl]*np+IJ] = row[kl]
					}
				}
			}
			continue
		}
		blk := w.quartet(kp, bp) // (ket|bra), read transposed
		for kl := range n3 * n4 {
			row := blk[kl*n1*n2:]
			out := dst[slot[kl]*np:]
			for i, I := range bp.fi {
				for j, J := range bp.fj {
					out[pidx(I, J)] = row[i*n2+j]
				}
			}
		}
	}
	return kls, nil
}
