package integral

import (
	"context"
	"fmt"
	"math"
	"sync"
	"sync/atomic"

	"gonum.org/v1/gonum/mat"
)

// Direct builds J and K integral-direct: every call recomputes the shell
// quartets that survive Schwarz screening weighted by the density. A
// Direct is immutable after NewDirect; JK may be called concurrently.
type Direct struct {
	eb        *eriBasis
	workers   int
	threshold float64
	// store holds blocks computed once (nil: none); with storedOnly
	// every block that passes screening is in it (in core).
	store      *blockStore
	storedOnly bool
}

// NewDirect prepares shell-pair data and Schwarz factors for
// integral-direct J/K builds with workers goroutines (≤ 0 means
// runtime.NumCPU()). A shell quartet is skipped when its Schwarz bound
// times the largest density element it meets is below threshold
// (hartree; 1e-12 is a sound default; 0 keeps every quartet).
func NewDirect(shells []Shell, norm CartNorm, workers int, threshold float64) (*Direct, error) {
	return newDirect(context.Background(), shells, norm, workers, threshold)
}

func newDirect(ctx context.Context, shells []Shell, norm CartNorm, workers int, threshold float64) (*Direct, error) {
	if threshold < 0 || math.IsNaN(threshold) {
		return nil, fmt.Errorf("integral: screening threshold %v, want ≥ 0", threshold)
	}
	workers = resolveWorkers(workers)
	eb, err := newERIBasis(ctx, shells, norm, workers, groupAll)
	if err != nil {
		return nil, err
	}
	return &Direct{eb: eb, workers: workers, threshold: threshold}, nil
}

// NewDirectStored is NewDirect for a semi-direct build: it computes once
// and keeps in memory, within budget bytes, the shell-quartet blocks that
// cost most to recompute per byte (many primitives, few functions: core
// and general contractions first), and recomputes the others at every
// build. A budget that holds every block gives an in-core build with the
// direct builder's density screening.
func NewDirectStored(ctx context.Context, shells []Shell, norm CartNorm, workers int, threshold float64, budget int64) (*Direct, error) {
	d, err := newDirect(ctx, shells, norm, workers, threshold)
	if err != nil {
		return nil, err
	}
	if d.store, err = buildStore(ctx, d.eb, d.workers, budget); err != nil {
		return nil, err
	}
	return d, nil
}

// StoredBytes is the memory of the blocks a semi-direct builder keeps (0
// for a direct one).
func (d *Direct) StoredBytes() int64 {
	if d.store == nil {
		return 0
	}
	return d.store.bytes()
}

// IncrementalJK reports that the cost of JK falls with the density it is
// given (quartets are screened by the density they meet), so an SCF gains
// by building J and K from the change of the density between iterations.
func (d *Direct) IncrementalJK() bool { return true }

// NumFunctions is the number of basis functions.
func (d *Direct) NumFunctions() int { return d.eb.nbf }

// JK builds J[d]_μν = Σ_λσ (μν|λσ) D[d]_λσ and K[d]_μν = Σ_λσ (μλ|νσ)
// D[d]_λσ for each symmetric density, overwriting j[d] and k[d] (caller
// allocated, n×n). Bra shell pairs are handed out dynamically to the
// workers; each worker accumulates its own J and K, and they are summed
// at the end.
func (d *Direct) JK(ctx context.Context, dens []*mat.SymDense, j, k []*mat.SymDense) error {
	eb := d.eb
	n := eb.nbf
	if err := checkJK(n, dens, j, k); err != nil {
		return err
	}
	nd := len(dens)
	if nd == 0 || n == 0 {
		return nil
	}
	D := make([][]float64, nd)
	for x := range nd {
		D[x] = denseCopy(dens[x], n)
	}
	// Largest |D| over each shell-group block (over all densities).
	ns := len(eb.gs)
	dmax := groupMax(eb.gs, n, D)
	st := d.store
	type acc struct{ a, b [][]float64 }
	var mu sync.Mutex
	var accs []acc
	var next atomic.Int64
	np := len(eb.pairs)
	next.Store(int64(np))
	var wg sync.WaitGroup
	for range min(d.workers, np) {
		wg.Go(func() {
			w := eb.newWork()
			ac := acc{a: make([][]float64, nd), b: make([][]float64, nd)}
			for x := range nd {
				ac.a[x] = make([]float64, n*n)
				ac.b[x] = make([]float64, n*n)
			}
			for ctx.Err() == nil {
				t := int(next.Add(-1))
				if t < 0 {
					break
				}
				P := eb.order[len(eb.order)-1-t]
				bp := &eb.pairs[P]
				var e, end int64 // stored blocks of P, walked along with Q
				if st != nil {
					e, end = st.start[P], st.start[P+1]
				}
				for Q := 0; Q <= P; Q++ {
					kp := &eb.pairs[Q]
					s := bp.schwarz * kp.schwarz
					if s < d.threshold {
						continue
					}
					a, b, c, dd := bp.s1, bp.s2, kp.s1, kp.s2
					dm := max(4*dmax[c*ns+dd], 4*dmax[a*ns+b], dmax[a*ns+c], dmax[a*ns+dd], dmax[b*ns+c], dmax[b*ns+dd])
					if s*dm < d.threshold {
						continue
					}
					var blk []float64
					for e < end && int(st.q[e]) < Q {
						e++
					}
					if e < end && int(st.q[e]) == Q {
						blk = st.data[st.off[e] : st.off[e]+int64(bp.n1*bp.n2*kp.n1*kp.n2)]
					} else if d.storedOnly {
						continue // not stored: below the in-core screening
					} else {
						w.cut = primCut(d.threshold, dm, bp, kp)
						blk = w.quartet(bp, kp)
					}
					f := 1.0
					if bp.same {
						f *= 0.5
					}
					if kp.same {
						f *= 0.5
					}
					if P == Q {
						f *= 0.5
					}
					for x := range nd {
						jkBlock(blk, bp, kp, f, n, D[x], ac.a[x], ac.b[x])
					}
				}
			}
			mu.Lock()
			accs = append(accs, ac)
			mu.Unlock()
		})
	}
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return fmt.Errorf("integral: direct J/K build: %w", err)
	}
	for x := range nd {
		A := make([]float64, n*n)
		B := make([]float64, n*n)
		for _, ac := range accs {
			for y, v := range ac.a[x] {
				A[y] += v
			}
			for y, v := range ac.b[x] {
				B[y] += v
			}
		}
		for i := range n {
			for jj := 0; jj <= i; jj++ {
				j[x].SetSym(i, jj, 0.5*(A[i*n+jj]+A[jj*n+i]))
				k[x].SetSym(i, jj, 0.5*(B[i*n+jj]+B[jj*n+i]))
			}
		}
	}
	return nil
}

// groupMax is the largest |D[x]_ij| over the functions i of group a and j
// of group b, over all densities, as [a·len(gs)+b].
func groupMax(gs []shellGroup, n int, D [][]float64) []float64 {
	ns := len(gs)
	out := make([]float64, ns*ns)
	for a := range ns {
		ia, na := gs[a].off, gs[a].nf
		for b := 0; b <= a; b++ {
			ib, nb := gs[b].off, gs[b].nf
			var m float64
			for _, d := range D {
				for i := ia; i < ia+na; i++ {
					for _, v := range d[i*n+ib : i*n+ib+nb] {
						m = max(m, math.Abs(v))
					}
				}
			}
			out[a*ns+b], out[b*ns+a] = m, m
		}
	}
	return out
}

// jkBlock adds one shell quartet's contributions. Every element of the
// block stands for its 8 permutational images with weight f·v (f = ½ per
// coincidence of shells, pairs of shells), giving A[i][j] += 4f v D_kl,
// A[k][l] += 4f v D_ij, B[i][k] += 2f v D_jl, B[j][k] += 2f v D_il,
// B[i][l] += 2f v D_jk, B[j][l] += 2f v D_ik, with J = (A+Aᵀ)/2 and
// K = (B+Bᵀ)/2 (common practice).
func jkBlock(blk []float64, bp, kp *shellPair, f float64, n int, D, A, B []float64) {
	n2, n3, n4 := bp.n2, kp.n1, kp.n2
	f4, f2 := 4*f, 2*f
	for ii, i := range bp.fi {
		di, ai, bi := D[i*n:(i+1)*n], A[i*n:(i+1)*n], B[i*n:(i+1)*n]
		for jj, j := range bp.fj {
			dj, bj := D[j*n:(j+1)*n], B[j*n:(j+1)*n]
			dij := f4 * di[j]
			row := blk[(ii*n2+jj)*n3*n4 : (ii*n2+jj+1)*n3*n4]
			var jsum float64
			for kk, k := range kp.fi {
				dk, ak := D[k*n:(k+1)*n], A[k*n:(k+1)*n]
				vrow := row[kk*n4 : (kk+1)*n4]
				var bik, bjk float64
				for ll, l := range kp.fj {
					v := vrow[ll]
					jsum += v * dk[l]
					ak[l] += dij * v
					v2 := f2 * v
					bik += v2 * dj[l]
					bjk += v2 * di[l]
					bi[l] += v2 * dj[k]
					bj[l] += v2 * di[k]
				}
				bi[k] += bik
				bj[k] += bjk
			}
			ai[j] += f4 * jsum
		}
	}
}
