package integral

import (
	"context"
	"fmt"
	"math"
	"sort"
)

// blockStore holds computed shell-quartet blocks (bra pair P ≥ ket pair
// Q), each in the layout quartet returns, grouped by bra pair: the
// entries of P are start[P] … start[P+1]−1, ascending in Q. A J/K build
// walks them block by block (contiguous memory, no screened zeros).
type blockStore struct {
	start []int64 // per bra pair, len(pairs)+1
	q     []int32 // ket pair of each entry
	off   []int64 // offset of each entry's block in data
	data  []float64
}

// storeEntryBytes is the index overhead of one stored block.
const storeEntryBytes = 4 + 8

// bytes is the memory the store takes.
func (bs *blockStore) bytes() int64 {
	return 8*int64(len(bs.data)) + storeEntryBytes*int64(len(bs.q)) + 8*int64(len(bs.start))
}

// find returns the block (P|Q), P ≥ Q, or nil when it is not stored.
func (bs *blockStore) find(P, Q int, eb *eriBasis) []float64 {
	lo, hi := bs.start[P], bs.start[P+1]
	qs := bs.q[lo:hi]
	k := sort.Search(len(qs), func(i int) bool { return int(qs[i]) >= Q })
	if k == len(qs) || int(qs[k]) != Q {
		return nil
	}
	bp, kp := &eb.pairs[P], &eb.pairs[Q]
	o := bs.off[lo+int64(k)]
	return bs.data[o : o+int64(bp.n1*bp.n2*kp.n1*kp.n2)]
}

// StoreBytes is the memory ComputeERI needs at most for shells: every
// shell-quartet block of the shell groups (general contractions), before
// screening leaves out the negligible ones, with its index. Blocks of a
// pair of one group with itself hold both orders of the pair, so this is
// somewhat above 8 bytes per unique integral (InCoreBytes).
func StoreBytes(shells []Shell) int64 {
	starts := GroupStart(shells)
	var g []float64 // functions per group
	for i, s := range shells {
		if starts[i] {
			g = append(g, 0)
		}
		g[len(g)-1] += float64(s.NumFunctions())
	}
	var G, G2, G4 float64
	for _, x := range g {
		G += x
		G2 += x * x
		G4 += x * x * x * x
	}
	S := (G*G + G2) / 2      // Σ over pairs a ≥ b of g_a g_b
	S2 := (G2*G2 + G4) / 2   // Σ over pairs of (g_a g_b)²
	floats := (S*S + S2) / 2 // Σ over pair pairs P ≥ Q of n_P n_Q
	np := float64(len(g)) * float64(len(g)+1) / 2
	return int64(8*floats + storeEntryBytes*np*(np+1)/2 + 8*(np+1))
}

// quartetCost estimates the work of computing block (P|Q): primitive
// quartets times the recurrence size, plus the horizontal recurrences of
// every member combination.
func quartetCost(bp, kp *shellPair) float64 {
	nE := ncum(bp.l1+bp.l2) - ncum(bp.l1-1)
	nF := ncum(kp.l1+kp.l2) - ncum(kp.l1-1)
	L := bp.l1 + bp.l2 + kp.l1 + kp.l2
	prim := float64(len(bp.prims)*len(kp.prims)) * float64(nE*nF+8*(L+1)+20)
	return prim + float64(bp.n1*bp.n2*kp.n1*kp.n2)*4
}

// buildStore computes and keeps the blocks whose Schwarz bound reaches
// incoreScreen: all of them when they fit in budget bytes, otherwise those
// that cost most to recompute per byte kept (quartetCost over block
// size), as many as fit. keep is called once per candidate block, in pair
// order.
func buildStore(ctx context.Context, eb *eriBasis, workers int, budget int64) (*blockStore, error) {
	np := len(eb.pairs)
	keep := func(P, Q int) bool { return eb.pairs[P].schwarz*eb.pairs[Q].schwarz >= incoreScreen }
	size := func(P, Q int) int64 {
		bp, kp := &eb.pairs[P], &eb.pairs[Q]
		return int64(bp.n1*bp.n2*kp.n1*kp.n2)*8 + storeEntryBytes
	}
	value := func(P, Q int) float64 {
		return quartetCost(&eb.pairs[P], &eb.pairs[Q]) / float64(size(P, Q))
	}
	var total int64
	for P := range np {
		for Q := 0; Q <= P; Q++ {
			if keep(P, Q) {
				total += size(P, Q)
			}
		}
	}
	fixed := 8 * int64(np+1)
	if total+fixed > budget {
		// Histogram of bytes over log-spaced value buckets; keep whole
		// buckets from the best down, and of the first that does not fit
		// as many blocks as fit (in pair order).
		const nb = 512
		bucket := func(v float64) int {
			b := int(math.Floor(8 * math.Log2(v)))
			return min(max(b+nb/2, 0), nb-1)
		}
		var hist [nb]int64
		for P := range np {
			for Q := 0; Q <= P; Q++ {
				if keep(P, Q) {
					hist[bucket(value(P, Q))] += size(P, Q)
				}
			}
		}
		left := budget - fixed
		full, partial := nb, -1 // buckets ≥ full are kept whole
		for b := nb - 1; b >= 0; b-- {
			if hist[b] == 0 {
				continue
			}
			if hist[b] <= left {
				left -= hist[b]
				full = b
				continue
			}
			partial = b
			break
		}
		screened := keep
		keep = func(P, Q int) bool {
			if !screened(P, Q) {
				return false
			}
			switch b := bucket(value(P, Q)); {
			case b >= full:
				return true
			case b == partial && size(P, Q) <= left:
				left -= size(P, Q)
				return true
			}
			return false
		}
	}
	bs := &blockStore{start: make([]int64, np+1)}
	var n int64
	for P := range np {
		bs.start[P] = int64(len(bs.q))
		for Q := 0; Q <= P; Q++ {
			if keep(P, Q) {
				bs.q = append(bs.q, int32(Q))
				bs.off = append(bs.off, n)
				bp, kp := &eb.pairs[P], &eb.pairs[Q]
				n += int64(bp.n1 * bp.n2 * kp.n1 * kp.n2)
			}
		}
	}
	bs.start[np] = int64(len(bs.q))
	bs.data = make([]float64, n)
	err := parallelFor(ctx, workers, np, func(w *eriWork, t int) {
		P := eb.order[len(eb.order)-1-t]
		bp := &eb.pairs[P]
		for e := bs.start[P]; e < bs.start[P+1]; e++ {
			kp := &eb.pairs[bs.q[e]]
			w.cut = primCut(incoreScreen, 1, bp, kp)
			blk := w.quartet(bp, kp)
			copy(bs.data[bs.off[e]:], blk)
		}
	}, eb.newWork)
	if err != nil {
		return nil, fmt.Errorf("integral: two-electron integrals: %w", err)
	}
	return bs, nil
}
