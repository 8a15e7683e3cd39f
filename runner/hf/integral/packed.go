package integral

import (
	"context"
	"fmt"
	"sync"
	"sync/atomic"

	"gonum.org/v1/gonum/mat"
)

// The packed in-core store: every unique integral once, in the order of
// the function pairs. It takes 8 bytes per unique integral, zeros of
// screened quartets included, and its J/K build walks them all; ERI
// (blocks) is the store for calculations. PackedERI serves small systems
// whose J/K must be summed in one fixed order over the unique integrals:
// the spherically averaged atoms of the atomic-density guess, whose
// fractional-occupation SCF amplifies the rounding differences between
// the components of a degenerate set.

// PackedERI holds all permutationally unique two-electron integrals (μν|λσ)
// (chemists' notation) of a basis, packed with 8-fold symmetry:
// index ij(ij+1)/2 + kl with ij = i(i+1)/2 + j for i ≥ j, kl likewise,
// ij ≥ kl. A PackedERI is immutable after ComputePacked and safe for
// concurrent use.
type PackedERI struct {
	n       int
	data    []float64
	workers int
	pi, pj  []int32   // function indices of packed pair ij
	wkl     []float64 // ½ for a diagonal pair (k = l), else 1
}

// NumFunctions is the number of basis functions.
func (e *PackedERI) NumFunctions() int { return e.n }

// ComputePacked computes all unique two-electron integrals in core, in
// parallel with workers goroutines (workers ≤ 0 means runtime.NumCPU()).
// Shell quartets whose Schwarz bound is below 1e-15 are stored as zero.
// It allocates InCoreBytes(NumFunctions(shells)) bytes. It returns an
// error for malformed shells or when ctx ends.
func ComputePacked(ctx context.Context, shells []Shell, norm CartNorm, workers int) (*PackedERI, error) {
	workers = ResolveWorkers(workers)
	eb, err := newERIBasis(ctx, shells, norm, workers, groupSameL)
	if err != nil {
		return nil, err
	}
	n := eb.nbf
	np := n * (n + 1) / 2
	e := &PackedERI{n: n, workers: workers, data: make([]float64, InCoreBytes(n)/8)}
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
func (e *PackedERI) At(i, j, k, l int) float64 {
	if i < 0 || j < 0 || k < 0 || l < 0 || i >= e.n || j >= e.n || k >= e.n || l >= e.n {
		panic("integral: PackedERI index out of range")
	}
	return e.data[pidx(pidx(i, j), pidx(k, l))]
}

// JK builds J[d]_μν = Σ_λσ (μν|λσ) D[d]_λσ and K[d]_μν = Σ_λσ (μλ|νσ)
// D[d]_λσ for each symmetric density, overwriting j[d] and k[d] (which
// the caller allocates, n×n). Work is split over rows of the packed array
// on the workers given to ComputePacked, each with its own accumulators,
// summed at the end. It is safe to call concurrently with different
// outputs.
func (e *PackedERI) JK(ctx context.Context, dens []*mat.SymDense, j, k []*mat.SymDense) error {
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
func (e *PackedERI) jkRow(IJ int, D, Dp, jp, B [][]float64) {
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
