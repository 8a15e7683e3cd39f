package integral

import (
	"context"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
)

// incoreScreen is the Schwarz bound below which ComputeERI skips a shell
// quartet (its integrals are stored as zero). 1e-15 hartree is far below
// the accuracy any SCF energy needs (common practice is 1e-10…1e-14).
const incoreScreen = 1e-15

// eriBasis is the shell-pair data shared by the in-core and direct codes.
// Pairs are pairs of shell groups (general contractions, group.go); with
// grouping off every group is one shell and group indices are shell
// indices.
type eriBasis struct {
	ps       []prepShell
	gs       []shellGroup
	pairs    []shellPair // index a(a+1)/2 + b for groups a ≥ b
	order    []int       // bra pairs, most expensive task first
	nbf      int
	maxl     int
	maxm     int // most members of a group
	maxBlock int // largest quartet block
	maxf     int // most functions of a shell group
	// info is the part of pairs a J/K build reads per block, compact so
	// that the walk over all blocks stays in cache.
	info []pairInfo
}

// pairInfo is what a J/K build reads of a shell pair for every block.
type pairInfo struct {
	s1, s2, n1, n2 int32
	schwarz        float64
	same           bool
}

// newWork returns scratch for the quartets of this basis.
func (eb *eriBasis) newWork() *eriWork { return newERIWorkGroups(eb.maxl, eb.maxm, eb.maxBlock) }

// newERIBasis prepares the shell pairs: of shell groups as mode says
// (buildGroups; shells sharing primitives computed once per primitive set,
// with primitive pair bounds for primitive screening), of single shells
// (no bounds) with groupNone.
func newERIBasis(ctx context.Context, shells []Shell, norm CartNorm, workers int, mode int) (*eriBasis, error) {
	grouped := mode != groupNone
	ps, err := prepare(shells, norm)
	if err != nil {
		return nil, err
	}
	eb := &eriBasis{ps: ps, gs: buildGroups(shells, ps, mode), nbf: NumFunctions(shells)}
	maxf := 0
	for _, g := range eb.gs {
		eb.maxl = max(eb.maxl, g.rep.l)
		eb.maxm = max(eb.maxm, g.m)
		maxf = max(maxf, g.ncart)
	}
	eb.maxBlock = maxf * maxf * maxf * maxf
	eb.maxf = maxf
	ng := len(eb.gs)
	eb.pairs = make([]shellPair, ng*(ng+1)/2)
	for a := range ng {
		for b := 0; b <= a; b++ {
			eb.pairs[a*(a+1)/2+b] = newGroupPair(eb.gs, a, b)
		}
	}
	// Schwarz factors √max|(ab|ab)| and primitive pair bounds, in parallel.
	err = parallelFor(ctx, ResolveWorkers(workers), len(eb.pairs), func(w *eriWork, p int) {
		sp := &eb.pairs[p]
		blk := w.quartet(sp, sp)
		n1, n2 := sp.n1, sp.n2
		var m float64
		for i := range n1 {
			for j := range n2 {
				m = max(m, math.Abs(blk[((i*n2+j)*n1+i)*n2+j]))
			}
		}
		sp.schwarz = math.Sqrt(m)
		if grouped {
			setPrimBounds(w, sp)
		}
	}, eb.newWork)
	if err != nil {
		return nil, fmt.Errorf("integral: Schwarz factors: %w", err)
	}
	eb.info = make([]pairInfo, len(eb.pairs))
	for P := range eb.pairs {
		sp := &eb.pairs[P]
		eb.info[P] = pairInfo{s1: int32(sp.s1), s2: int32(sp.s2), n1: int32(sp.n1), n2: int32(sp.n2), schwarz: sp.schwarz, same: sp.same}
	}
	eb.buildOrder()
	return eb, nil
}

// buildOrder sorts the bra shell pairs by an estimate of the work of the
// task "all ket pairs Q ≤ P" (primitive pairs × Cartesian components of
// P times the same summed over Q ≤ P), most expensive first, so that the
// last tasks handed out are short and the workers finish together.
func (eb *eriBasis) buildOrder() {
	n := len(eb.pairs)
	w := make([]float64, n)
	cost := make([]float64, n)
	var cum float64
	for P := range eb.pairs {
		sp := &eb.pairs[P]
		w[P] = float64(len(sp.prims)) * float64(ncart(sp.l1)*ncart(sp.l2))
		cum += w[P]
		cost[P] = w[P] * cum
	}
	eb.order = make([]int, n)
	for i := range eb.order {
		eb.order[i] = i
	}
	sort.SliceStable(eb.order, func(a, b int) bool { return cost[eb.order[a]] > cost[eb.order[b]] })
}

// parallelFor runs body(w, i) for i = n−1 … 0 through ParallelFor, each
// goroutine with its own scratch (largest index first, which for shell
// pairs is roughly the most expensive first).
func parallelFor(ctx context.Context, workers, n int, body func(w *eriWork, i int), newWork func() *eriWork) error {
	return ParallelFor(ctx, workers, n, newWork, func(w *eriWork, i int) error {
		body(w, n-1-i)
		return nil
	})
}

// pidx is the packed index of the unordered pair (i, j).
func pidx(i, j int) int {
	if i < j {
		i, j = j, i
	}
	return i*(i+1)/2 + j
}

// ERI holds the two-electron integrals (μν|λσ) (chemists' notation) of a
// basis in memory, by shell-quartet block: every block of two pairs of
// shell groups (general contractions, see SameContraction) whose Schwarz
// bound reaches 1e-15 hartree, bra pair ≥ ket pair, the others left out
// (they are zero to that accuracy). An ERI is immutable after ComputeERI
// and safe for concurrent use.
type ERI struct {
	d      *Direct
	fg, fl []int32 // shell group of each function, and its index in the group
}

// InCoreBytes is 8 bytes times the number of permutationally unique
// two-electron integrals of nbf functions (n(n+1)/2 pairs, pairs of
// pairs): the reference size for shares of integrals. ComputeERI stores
// by block and needs StoreBytes(shells).
func InCoreBytes(nbf int) int64 {
	np := int64(nbf) * int64(nbf+1) / 2
	return 8 * np * (np + 1) / 2
}

// NumFunctions is the number of basis functions.
func (e *ERI) NumFunctions() int { return e.d.eb.nbf }

// Bytes is the memory the stored integrals take (at most
// StoreBytes of the shells).
func (e *ERI) Bytes() int64 { return e.d.store.bytes() }

// ComputeERI computes the two-electron integrals in core, in parallel with
// workers goroutines (workers ≤ 0 means runtime.NumCPU()). Shell quartets
// whose Schwarz bound is below 1e-15 are not stored and read as zero. It
// allocates at most StoreBytes(shells) bytes; callers choose between
// ComputeERI, NewDirectStored and NewDirect by that figure. It returns an
// error for malformed shells or when ctx ends.
func ComputeERI(ctx context.Context, shells []Shell, norm CartNorm, workers int) (*ERI, error) {
	d, err := newDirect(ctx, shells, norm, workers, incoreScreen)
	if err != nil {
		return nil, err
	}
	if d.store, err = buildStore(ctx, d.eb, d.workers, math.MaxInt64); err != nil {
		return nil, err
	}
	d.storedOnly = true
	e := &ERI{d: d, fg: make([]int32, d.eb.nbf), fl: make([]int32, d.eb.nbf)}
	for g, sg := range d.eb.gs {
		for i := range sg.nf {
			e.fg[sg.off+i], e.fl[sg.off+i] = int32(g), int32(i)
		}
	}
	return e, nil
}

// At returns (ij|kl) in chemists' notation. It panics if an index is out
// of range.
func (e *ERI) At(i, j, k, l int) float64 {
	n := e.d.eb.nbf
	if i < 0 || j < 0 || k < 0 || l < 0 || i >= n || j >= n || k >= n || l >= n {
		panic("integral: ERI index out of range")
	}
	eb := e.d.eb
	// pair returns the pair index of functions (a, b) and their positions
	// in the pair's row and column order.
	pair := func(a, b int) (int, int, int) {
		ga, gb := int(e.fg[a]), int(e.fg[b])
		P := pidx(ga, gb)
		if eb.pairs[P].s1 != ga {
			a, b = b, a
		}
		return P, int(e.fl[a]), int(e.fl[b])
	}
	P, r1, r2 := pair(i, j)
	Q, r3, r4 := pair(k, l)
	if P < Q {
		P, Q, r1, r2, r3, r4 = Q, P, r3, r4, r1, r2
	}
	blk := e.d.store.find(P, Q, eb)
	if blk == nil {
		return 0
	}
	bp, kp := &eb.pairs[P], &eb.pairs[Q]
	return blk[((r1*bp.n2+r2)*kp.n1+r3)*kp.n2+r4]
}

// checkJK validates the density and output matrices.
func checkJK(n int, dens []*mat.SymDense, j, k []*mat.SymDense) error {
	if len(j) != len(dens) || len(k) != len(dens) {
		return fmt.Errorf("integral: %d densities but %d J and %d K matrices", len(dens), len(j), len(k))
	}
	for d := range dens {
		for name, m := range map[string]*mat.SymDense{"density": dens[d], "J": j[d], "K": k[d]} {
			if m == nil {
				return fmt.Errorf("integral: %s matrix %d is nil", name, d)
			}
			if m.SymmetricDim() != n {
				return fmt.Errorf("integral: %s matrix %d is %d×%d, want %d×%d", name, d, m.SymmetricDim(), m.SymmetricDim(), n, n)
			}
		}
	}
	return nil
}

// denseCopy returns the full row-major n×n copy of a symmetric matrix.
func denseCopy(m *mat.SymDense, n int) []float64 {
	out := make([]float64, n*n)
	for i := range n {
		for j := 0; j <= i; j++ {
			v := m.At(i, j)
			out[i*n+j], out[j*n+i] = v, v
		}
	}
	return out
}

// JK builds J[d]_μν = Σ_λσ (μν|λσ) D[d]_λσ and K[d]_μν = Σ_λσ (μλ|νσ)
// D[d]_λσ for each symmetric density, overwriting j[d] and k[d] (which
// the caller allocates, n×n), from the stored blocks, on the workers given
// to ComputeERI (blocks whose bound times the density they meet is below
// 1e-15 are skipped). It is safe to call concurrently with different
// outputs.
func (e *ERI) JK(ctx context.Context, dens []*mat.SymDense, j, k []*mat.SymDense) error {
	return e.d.JK(ctx, dens, j, k)
}

// primCut is the primitive screening allowance (eriWork.cut) of a shell
// quartet screened at threshold thr with density weight dm: the primitive
// quartets skipped change any integral of the block by less than thr/dm
// in total, so their contribution to J and K stays below thr, the size of
// the quartet-level screening error.
func primCut(thr, dm float64, _, _ *shellPair) float64 {
	return thr / dm
}
