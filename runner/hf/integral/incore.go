package integral

import (
	"context"
	"fmt"
	"math"
	"runtime"
	"sort"
	"sync"
	"sync/atomic"

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
}

// newWork returns scratch for the quartets of this basis.
func (eb *eriBasis) newWork() *eriWork { return newERIWorkGroups(eb.maxl, eb.maxm, eb.maxBlock) }

func resolveWorkers(workers int) int {
	if workers <= 0 {
		return runtime.NumCPU()
	}
	return workers
}

// newERIBasis prepares the shell pairs: of shell groups when grouped
// (general contractions computed once per primitive set, with primitive
// pair bounds for primitive screening), of single shells otherwise.
func newERIBasis(ctx context.Context, shells []Shell, norm CartNorm, workers int, grouped bool) (*eriBasis, error) {
	ps, err := prepare(shells, norm)
	if err != nil {
		return nil, err
	}
	eb := &eriBasis{ps: ps, gs: buildGroups(shells, ps, grouped), nbf: NumFunctions(shells)}
	maxf := 0
	for _, g := range eb.gs {
		eb.maxl = max(eb.maxl, g.rep.l)
		eb.maxm = max(eb.maxm, g.m)
		maxf = max(maxf, g.m*g.rep.ncart)
	}
	eb.maxBlock = maxf * maxf * maxf * maxf
	ng := len(eb.gs)
	eb.pairs = make([]shellPair, ng*(ng+1)/2)
	for a := range ng {
		for b := 0; b <= a; b++ {
			eb.pairs[a*(a+1)/2+b] = newGroupPair(eb.gs, a, b)
		}
	}
	// Schwarz factors √max|(ab|ab)| and primitive pair bounds, in parallel.
	err = parallelFor(ctx, resolveWorkers(workers), len(eb.pairs), func(w *eriWork, p int) {
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

// parallelFor runs body(w, i) for i = n−1 … 0 on workers goroutines, each
// with its own scratch, handing out indices dynamically (largest first,
// which for shell pairs is roughly the most expensive first). It stops
// early and returns ctx.Err() if the context ends.
func parallelFor(ctx context.Context, workers, n int, body func(w *eriWork, i int), newWork func() *eriWork) error {
	var next atomic.Int64
	next.Store(int64(n))
	var wg sync.WaitGroup
	for range min(workers, max(n, 1)) {
		wg.Go(func() {
			w := newWork()
			for ctx.Err() == nil {
				i := int(next.Add(-1))
				if i < 0 {
					return
				}
				body(w, i)
			}
		})
	}
	wg.Wait()
	return ctx.Err()
}

// pidx is the packed index of the unordered pair (i, j).
func pidx(i, j int) int {
	if i < j {
		i, j = j, i
	}
	return i*(i+1)/2 + j
}

// ERI holds all permutationally unique two-electron integrals (μν|λσ)
// (chemists' notation) of a basis, packed with 8-fold symmetry:
// index ij(ij+1)/2 + kl with ij = i(i+1)/2 + j for i ≥ j, kl likewise,
// ij ≥ kl. An ERI is immutable after ComputeERI and safe for concurrent
// use.
type ERI struct {
	n       int
	data    []float64
	workers int
	pi, pj  []int32   // function indices of packed pair ij
	wkl     []float64 // ½ for a diagonal pair (k = l), else 1
}

// InCoreBytes is the memory ComputeERI needs for nbf functions (the packed
// integral array; the rest is negligible).
func InCoreBytes(nbf int) int64 {
	np := int64(nbf) * int64(nbf+1) / 2
	return 8 * np * (np + 1) / 2
}

// NumFunctions is the number of basis functions.
func (e *ERI) NumFunctions() int { return e.n }

// ComputeERI computes all unique two-electron integrals in core, in
// parallel with workers goroutines (workers ≤ 0 means runtime.NumCPU()).
// Shell quartets whose Schwarz bound is below 1e-15 are stored as zero.
// It allocates InCoreBytes(NumFunctions(shells)) bytes; callers choose
// between ComputeERI and NewDirect by that figure. It returns an error for
// malformed shells or when ctx ends.
func ComputeERI(ctx context.Context, shells []Shell, norm CartNorm, workers int) (*ERI, error) {
	workers = resolveWorkers(workers)
	eb, err := newERIBasis(ctx, shells, norm, workers, true)
	if err != nil {
		return nil, err
	}
	n := eb.nbf
	np := n * (n + 1) / 2
	e := &ERI{n: n, workers: workers, data: make([]float64, InCoreBytes(n)/8)}
	e.pi = make([]int32, np)
	e.pj = make([]int32, np)
	e.wkl = make([]float64, np)
	for i := range n {
		for j := 0; j <= i; j++ {
			e.pi[pidx(i, j)], e.pj[pidx(i, j)] = int32(i), int32(j)
			e.wkl[pidx(i, j)] = 1
			if i == j {
				e.wkl[pidx(i, j)] = 0.5
			}
		}
	}
	data := e.data
	err = parallelFor(ctx, workers, len(eb.pairs), func(w *eriWork, t int) {
		P := eb.order[len(eb.order)-1-t]
		bp := &eb.pairs[P]
		for Q := 0; Q <= P; Q++ {
			kp := &eb.pairs[Q]
			if bp.schwarz*kp.schwarz < incoreScreen {
				continue
			}
			w.cut = primCut(incoreScreen, 1, bp, kp)
			blk := w.quartet(bp, kp)
			n2, n3, n4 := bp.n2, kp.n1, kp.n2
			for i, I := range bp.fi {
				for j, J := range bp.fj {
					ij := pidx(I, J)
					row := blk[(i*n2+j)*n3*n4:]
					for k, K := range kp.fi {
						for l, L := range kp.fj {
							data[pidx(ij, pidx(K, L))] = row[k*n4+l]
						}
					}
				}
			}
		}
	}, eb.newWork)
	if err != nil {
		return nil, fmt.Errorf("integral: two-electron integrals: %w", err)
	}
	return e, nil
}

// At returns (ij|kl) in chemists' notation. It panics if an index is out
// of range.
func (e *ERI) At(i, j, k, l int) float64 {
	if i < 0 || j < 0 || k < 0 || l < 0 || i >= e.n || j >= e.n || k >= e.n || l >= e.n {
		panic("integral: ERI index out of range")
	}
	return e.data[pidx(pidx(i, j), pidx(k, l))]
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
// the caller allocates, n×n). Work is split over rows of the packed array
// on the workers given to ComputeERI, each with its own accumulators,
// summed at the end. It is safe to call concurrently with different
// outputs.
func (e *ERI) JK(ctx context.Context, dens []*mat.SymDense, j, k []*mat.SymDense) error {
	n := e.n
	if err := checkJK(n, dens, j, k); err != nil {
		return err
	}
	nd := len(dens)
	if nd == 0 || n == 0 {
		return nil
	}
	np := n * (n + 1) / 2
	D := make([][]float64, nd)
	Dp := make([][]float64, nd) // packed, off-diagonal doubled
	for d := range nd {
		D[d] = denseCopy(dens[d], n)
		Dp[d] = make([]float64, np)
		for ij := range np {
			i, jj := int(e.pi[ij]), int(e.pj[ij])
			v := D[d][i*n+jj]
			if i != jj {
				v *= 2
			}
			Dp[d][ij] = v
		}
	}
	const chunk = 8
	nchunks := (np + chunk - 1) / chunk
	type acc struct{ jp, b [][]float64 }
	var mu sync.Mutex
	var accs []acc
	var next atomic.Int64
	next.Store(int64(nchunks))
	var wg sync.WaitGroup
	for range min(e.workers, nchunks) {
		wg.Go(func() {
			a := acc{jp: make([][]float64, nd), b: make([][]float64, nd)}
			for d := range nd {
				a.jp[d] = make([]float64, np)
				a.b[d] = make([]float64, n*n)
			}
			for ctx.Err() == nil {
				c := int(next.Add(-1))
				if c < 0 {
					break
				}
				for IJ := c * chunk; IJ < min((c+1)*chunk, np); IJ++ {
					e.jkRow(IJ, D, Dp, a.jp, a.b)
				}
			}
			mu.Lock()
			accs = append(accs, a)
			mu.Unlock()
		})
	}
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return fmt.Errorf("integral: J/K build: %w", err)
	}
	for d := range nd {
		jp := make([]float64, np)
		b := make([]float64, n*n)
		for _, a := range accs {
			for x, v := range a.jp[d] {
				jp[x] += v
			}
			for x, v := range a.b[d] {
				b[x] += v
			}
		}
		for i := range n {
			for jj := 0; jj <= i; jj++ {
				j[d].SetSym(i, jj, jp[pidx(i, jj)])
				k[d].SetSym(i, jj, 0.5*(b[i*n+jj]+b[jj*n+i]))
			}
		}
	}
	return nil
}

// jkRow adds the contributions of all (IJ|KL), KL ≤ IJ. With
// g = v·(½ if IJ = KL) and f = g·w_IJ·w_KL (w = ½ for a diagonal pair),
// each unique integral stands for its 8 images with weight f:
// J_ij += g·Dp_kl, J_kl += g·Dp_ij (Dp doubles off-diagonal elements), and
// B[i][k] += 2f D_jl, B[j][k] += 2f D_il, B[i][l] += 2f D_jk,
// B[j][l] += 2f D_ik with K = (B + Bᵀ)/2 (common practice).
func (e *ERI) jkRow(IJ int, D, Dp, jp, B [][]float64) {
	n := e.n
	i, j := int(e.pi[IJ]), int(e.pj[IJ])
	row := e.data[IJ*(IJ+1)/2 : IJ*(IJ+1)/2+IJ+1]
	wij2 := 2.0
	if i == j {
		wij2 = 1
	}
	pi, pj, wkl := e.pi[:IJ+1], e.pj[:IJ+1], e.wkl[:IJ+1]
	for d := range D {
		dd, dp, jpd, bd := D[d], Dp[d][:IJ+1], jp[d][:IJ+1], B[d]
		dpij := dp[IJ]
		di, dj := dd[i*n:(i+1)*n], dd[j*n:(j+1)*n]
		bi, bj := bd[i*n:(i+1)*n], bd[j*n:(j+1)*n]
		var jsum float64
		// KL < IJ; the diagonal KL = IJ (g = v/2) is done after the loop.
		for KL, v := range row[:IJ] {
			k, l := int(pi[KL]), int(pj[KL])
			jsum += v * dp[KL]
			jpd[KL] += v * dpij
			f2 := v * wij2 * wkl[KL]
			bi[k] += f2 * dj[l]
			bj[k] += f2 * di[l]
			bi[l] += f2 * dj[k]
			bj[l] += f2 * di[k]
		}
		g := 0.5 * row[IJ]
		jsum += g * dpij
		jpd[IJ] += g * dpij
		f2 := g * wij2 * wkl[IJ]
		bi[i] += f2 * dj[j]
		bj[i] += f2 * di[j]
		bi[j] += f2 * dj[i]
		bj[j] += f2 * di[i]
		jpd[IJ] += jsum
	}
}

// primCut is the primitive screening threshold of a shell quartet screened
// at threshold thr with density weight dm: primitive quartets whose bound
// product is below thr/(dm·K), K the number of primitive quartets, are
// skipped, so that all of them together change any integral of the block
// by less than thr/dm, the size of the quartet-level screening error.
func primCut(thr, dm float64, bp, kp *shellPair) float64 {
	return thr / (dm * float64(len(bp.prims)*len(kp.prims)))
}
