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
// A block is one ket pair of shell groups. [Direct] recomputes its
// integrals, shell quartet by shell quartet, on every call (Schwarz-screened
// at 1e-15 hartree, the in-core threshold), except the blocks it stores;
// the in-core [ERI] reads them all from memory.

// PairIndex is the packed index of the unordered function pair (i, j).
func PairIndex(i, j int) int { return pidx(i, j) }

// NumPairBlocks is the number of ket-pair blocks of [ERI.PairBlock]: one
// per pair of shell groups.
func (e *ERI) NumPairBlocks() int { return e.d.NumPairBlocks() }

// MaxPairBlock is the largest number of ket pairs in one block.
func (e *ERI) MaxPairBlock() int { return e.d.MaxPairBlock() }

// PairBlock writes block b like [Direct.PairBlock], from the stored
// integrals.
func (e *ERI) PairBlock(ctx context.Context, b int, dst []float64, kls []int) ([]int, error) {
	return e.d.PairBlock(ctx, b, dst, kls)
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
			blk := d.block(w, P, b)
			if blk == nil {
				continue
			}
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
		blk := d.block(w, b, P) // (ket|bra), read transposed
		if blk == nil {
			continue
		}
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

// block returns the block (P|Q), P ≥ Q: stored, or computed (nil when
// the builder is in core and the block is not stored: screened).
func (d *Direct) block(w *eriWork, P, Q int) []float64 {
	if d.store != nil {
		if blk := d.store.find(P, Q, d.eb); blk != nil {
			return blk
		}
		if d.storedOnly {
			return nil
		}
	}
	bp, kp := &d.eb.pairs[P], &d.eb.pairs[Q]
	w.cut = primCut(incoreScreen, 1, bp, kp)
	return w.quartet(bp, kp)
}
