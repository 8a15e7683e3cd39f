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
	workers = ResolveWorkers(workers)
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
	tl := newTileLayout(eb.gs, n)
	Dt := make([][]float64, nd)
	for x := range nd {
		Dt[x] = tl.toTiles(D[x])
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
			var w *eriWork // allocated at the first block computed
			ac := acc{a: make([][]float64, nd), b: make([][]float64, nd)}
			for x := range nd {
				ac.a[x] = make([]float64, tl.size)
				ac.b[x] = make([]float64, tl.size)
			}
			for ctx.Err() == nil {
				t := int(next.Add(-1))
				if t < 0 {
					break
				}
				P := eb.order[len(eb.order)-1-t]
				bi := &eb.info[P]
				// weight is the density weight of block (P|Q): the
				// largest density element its contributions meet.
				// (Plain comparisons: the max builtin's NaN handling made
				// this a tenth of an in-core build.)
				da, db := dmax[int(bi.s1)*ns:int(bi.s1+1)*ns], dmax[int(bi.s2)*ns:int(bi.s2+1)*ns]
				wP := 4 * dmax[int(bi.s1)*ns+int(bi.s2)]
				weight := func(ki *pairInfo) float64 {
					c, dd := int(ki.s1), int(ki.s2)
					m := wP
					if v := 4 * dmax[c*ns+dd]; v > m {
						m = v
					}
					if v := da[c]; v > m {
						m = v
					}
					if v := da[dd]; v > m {
						m = v
					}
					if v := db[c]; v > m {
						m = v
					}
					if v := db[dd]; v > m {
						m = v
					}
					return m
				}
				digest := func(blk []float64, Q int, ki *pairInfo) {
					f := 1.0
					if bi.same {
						f *= 0.5
					}
					if ki.same {
						f *= 0.5
					}
					if P == Q {
						f *= 0.5
					}
					for x := range nd {
						jkBlock(blk, bi, ki, f, tl, Dt[x], ac.a[x], ac.b[x])
					}
				}
				nP := int64(bi.n1 * bi.n2)
				if d.storedOnly {
					// In core: walk the stored blocks of P only.
					for e := st.start[P]; e < st.start[P+1]; e++ {
						Q := int(st.q[e])
						ki := &eb.info[Q]
						if bi.schwarz*ki.schwarz*weight(ki) < d.threshold {
							continue
						}
						digest(st.data[st.off[e]:st.off[e]+nP*int64(ki.n1*ki.n2)], Q, ki)
					}
					continue
				}
				bp := &eb.pairs[P]
				var e, end int64 // stored blocks of P, walked along with Q
				if st != nil {
					e, end = st.start[P], st.start[P+1]
				}
				for Q := 0; Q <= P; Q++ {
					ki := &eb.info[Q]
					s := bi.schwarz * ki.schwarz
					if s < d.threshold {
						continue
					}
					dm := weight(ki)
					if s*dm < d.threshold {
						continue
					}
					for e < end && int(st.q[e]) < Q {
						e++
					}
					if e < end && int(st.q[e]) == Q {
						digest(st.data[st.off[e]:st.off[e]+nP*int64(ki.n1*ki.n2)], Q, ki)
						continue
					}
					if w == nil {
						w = eb.newWork()
					}
					kp := &eb.pairs[Q]
					w.cut = primCut(d.threshold, dm, bp, kp)
					digest(w.quartet(bp, kp), Q, ki)
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
			tl.addDense(A, ac.a[x])
			tl.addDense(B, ac.b[x])
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

// tileLayout is the density and J/K accumulators stored by shell-group
// tile: the nf[x]×nf[y] block of functions of groups x and y is
// contiguous (row-major) at off[x·ng+y], tiles in x-major order, n²
// elements in all. jkBlock then reads and writes its six tiles as
// contiguous slices, with no index arithmetic on the n×n matrix.
type tileLayout struct {
	ng      int
	off     []int
	gs      []shellGroup
	n, size int
}

func newTileLayout(gs []shellGroup, n int) *tileLayout {
	ng := len(gs)
	t := &tileLayout{ng: ng, off: make([]int, ng*ng), gs: gs, n: n}
	o := 0
	for x := range ng {
		for y := range ng {
			t.off[x*ng+y] = o
			o += gs[x].nf * gs[y].nf
		}
	}
	t.size = o
	return t
}

// tile returns the tile of groups (x, y) of a matrix in this layout.
func (t *tileLayout) tile(M []float64, x, y int) []float64 {
	o := t.off[x*t.ng+y]
	return M[o : o+t.gs[x].nf*t.gs[y].nf]
}

// toTiles copies the row-major n×n matrix M into the layout.
func (t *tileLayout) toTiles(M []float64) []float64 {
	out := make([]float64, t.size)
	for x, gx := range t.gs {
		for y, gy := range t.gs {
			tl := t.tile(out, x, y)
			for r := range gx.nf {
				row := (gx.off + r) * t.n
				copy(tl[r*gy.nf:(r+1)*gy.nf], M[row+gy.off:row+gy.off+gy.nf])
			}
		}
	}
	return out
}

// addDense adds the tiled matrix M to the row-major n×n matrix out.
func (t *tileLayout) addDense(out, M []float64) {
	for x, gx := range t.gs {
		for y, gy := range t.gs {
			tl := t.tile(M, x, y)
			for r := range gx.nf {
				row := out[(gx.off+r)*t.n+gy.off : (gx.off+r)*t.n+gy.off+gy.nf]
				for c, v := range tl[r*gy.nf : (r+1)*gy.nf] {
					row[c] += v
				}
			}
		}
	}
}

// jkBlock adds one shell quartet's contributions. Every element of the
// block stands for its 8 permutational images with weight f·v (f = ½ per
// coincidence of shells, pairs of shells), giving A[i][j] += 4f v D_kl,
// A[k][l] += 4f v D_ij, B[i][k] += 2f v D_jl, B[j][k] += 2f v D_il,
// B[i][l] += 2f v D_jk, B[j][l] += 2f v D_ik, with J = (A+Aᵀ)/2 and
// K = (B+Bᵀ)/2 (common practice). D, A and B are in the tile layout t.
//
// The terms are symmetric in i and j, so the rows (ij| of the block are
// digested two at a time that share one bra function (i with j, j+1; or,
// when the second bra group has one function, i, i+1 with j): the shared
// function's D and B rows are read and written once for both, which
// saves a third of the memory traffic per integral.
func jkBlock(blk []float64, bp, kp *pairInfo, f float64, t *tileLayout, D, A, B []float64) {
	n1, n2, n3, n4 := int(bp.n1), int(bp.n2), int(kp.n1), int(kp.n2)
	ng, a, b, c, d := t.ng, int(bp.s1), int(bp.s2), int(kp.s1), int(kp.s2)
	// Offsets of the six tiles (the same in D, A and B).
	oij, okl := t.off[a*ng+b], t.off[c*ng+d]
	oik, oil, ojk, ojl := t.off[a*ng+c], t.off[a*ng+d], t.off[b*ng+c], t.off[b*ng+d]
	f2 := 2 * f
	if n2 == 1 && n4 == 1 {
		jkBlockSS(blk[:n1*n3], f2, D[oij:oij+n1], A[oij:oij+n1], D[okl:okl+n3], A[okl:okl+n3],
			D[oik:oik+n1*n3], B[oik:oik+n1*n3], D[oil:oil+n1], B[oil:oil+n1],
			D[ojk:ojk+n3], B[ojk:ojk+n3], &D[ojl], &B[ojl])
		return
	}
	n34 := n3 * n4
	ket := jkKet{dkl: D[okl : okl+n34], akl: A[okl : okl+n34], n3: n3, n4: n4, f2: f2}
	if n2 > 1 {
		// Rows (i0|, (i1|, … share i; the j run over the second group.
		rj := jkSide{dl: D[ojl : ojl+n2*n4], bl: B[ojl : ojl+n2*n4], dk: D[ojk : ojk+n2*n3], bk: B[ojk : ojk+n2*n3]}
		for i := range n1 {
			si := jkSide{dl: D[oil+i*n4 : oil+(i+1)*n4], bl: B[oil+i*n4 : oil+(i+1)*n4],
				dk: D[oik+i*n3 : oik+(i+1)*n3], bk: B[oik+i*n3 : oik+(i+1)*n3]}
			o := oij + i*n2
			ket.rows(blk[i*n2*n34:(i+1)*n2*n34], &si, &rj, D[o:o+n2], A[o:o+n2])
		}
		return
	}
	// One function in the second bra group: all rows share it.
	sj := jkSide{dl: D[ojl : ojl+n4], bl: B[ojl : ojl+n4], dk: D[ojk : ojk+n3], bk: B[ojk : ojk+n3]}
	ri := jkSide{dl: D[oil : oil+n1*n4], bl: B[oil : oil+n1*n4], dk: D[oik : oik+n1*n3], bk: B[oik : oik+n1*n3]}
	ket.rows(blk[:n1*n34], &sj, &ri, D[oij:oij+n1], A[oij:oij+n1])
}

// jkSide is the part of the density and of B that bra functions meet in
// a block: rows of D[x][l], B[x][l] over the ket pair's second group (n4
// wide) and of D[x][k], B[x][k] over its first (n3 wide), one row per
// function x.
type jkSide struct{ dl, bl, dk, bk []float64 }

// jkKet is the ket side of a block: D and A over its functions (k, l),
// row-major n3×n4, and the weight 2f of the B terms.
type jkKet struct {
	dkl, akl []float64
	n3, n4   int
	f2       float64
}

// rows digests the rows (sr| of a block, r = 0 … len(dr)−1, that share
// the bra function s (side s, one row) and have the other function r
// (side rs, one row per r, density D_sr = dr[r] and A_sr accumulated in
// ar[r]): A[k][l] += 4f v D_sr, the four B terms of jkBlock (symmetric
// in s and r), and A_sr += 4f Σ_kl v D_kl. Rows are taken two at a time,
// so the shared function's rows of D and B are read and written once
// per two integrals. It is kept out of line: inlined into jkBlock, the
// compiler ran out of registers and reloaded the row pointers from the
// stack at every integral.
//
//go:noinline
func (kt *jkKet) rows(v []float64, s, rs *jkSide, dr, ar []float64) {
	n3, n4, f2 := kt.n3, kt.n4, kt.f2
	n34 := n3 * n4
	g := 2 * f2
	nr := len(dr)
	ar = ar[:nr]
	sk, sbk := s.dk[:n3], s.bk[:n3]
	r := 0
	for ; r+1 < nr; r += 2 {
		v0, v1 := v[r*n34:(r+1)*n34], v[(r+1)*n34:(r+2)*n34]
		r0k, r0bk := rs.dk[r*n3:(r+1)*n3], rs.bk[r*n3:(r+1)*n3]
		r1k, r1bk := rs.dk[(r+1)*n3:(r+2)*n3], rs.bk[(r+1)*n3:(r+2)*n3]
		r0l, r0bl := rs.dl[r*n4:(r+1)*n4], rs.bl[r*n4:(r+1)*n4]
		r1l, r1bl := rs.dl[(r+1)*n4:(r+2)*n4], rs.bl[(r+1)*n4:(r+2)*n4]
		d0, d1 := g*dr[r], g*dr[r+1]
		var j0, j1 float64
		if n4 == 1 {
			// s-type second ket group: one loop over k, l = 0 in
			// registers.
			sl, r0l, r1l := f2*s.dl[0], f2*r0l[0], f2*r1l[0]
			var ssl, s0l, s1l float64
			v0, v1 = v0[:n3], v1[:n3]
			dkl, akl := kt.dkl[:n3], kt.akl[:n3]
			r0k, r1k, r0bk, r1bk = r0k[:n3], r1k[:n3], r0bk[:n3], r1bk[:n3]
			for k, x := range v0 {
				y := v1[k]
				j0 += x * dkl[k]
				j1 += y * dkl[k]
				akl[k] += d0*x + d1*y
				sbk[k] += x*r0l + y*r1l
				r0bk[k] += x * sl
				r1bk[k] += y * sl
				ssl += x*r0k[k] + y*r1k[k]
				s0l += x * sk[k]
				s1l += y * sk[k]
			}
			s.bl[0] += f2 * ssl
			r0bl[0] += f2 * s0l
			r1bl[0] += f2 * s1l
		} else {
			for k := range n3 {
				x0 := v0[k*n4 : (k+1)*n4]
				x1 := v1[k*n4 : (k+1)*n4]
				x1 = x1[:len(x0)]
				dk, ak := kt.dkl[k*n4:(k+1)*n4], kt.akl[k*n4:(k+1)*n4]
				dk, ak = dk[:len(x0)], ak[:len(x0)]
				sl, sbl := s.dl[:len(x0)], s.bl[:len(x0)]
				r0l, r0bl := r0l[:len(x0)], r0bl[:len(x0)]
				r1l, r1bl := r1l[:len(x0)], r1bl[:len(x0)]
				skk, r0kk, r1kk := f2*sk[k], f2*r0k[k], f2*r1k[k]
				var ssk, s0k, s1k float64
				for l, x := range x0 {
					y := x1[l]
					j0 += x * dk[l]
					j1 += y * dk[l]
					ak[l] += d0*x + d1*y
					ssk += x*r0l[l] + y*r1l[l]
					s0k += x * sl[l]
					s1k += y * sl[l]
					sbl[l] += x*r0kk + y*r1kk
					r0bl[l] += x * skk
					r1bl[l] += y * skk
				}
				sbk[k] += f2 * ssk
				r0bk[k] += f2 * s0k
				r1bk[k] += f2 * s1k
			}
		}
		ar[r] += g * j0
		ar[r+1] += g * j1
	}
	if r == nr {
		return
	}
	// The last row of an odd count.
	x0 := v[r*n34 : (r+1)*n34]
	rk, rbk := rs.dk[r*n3:(r+1)*n3], rs.bk[r*n3:(r+1)*n3]
	rl, rbl := rs.dl[r*n4:(r+1)*n4], rs.bl[r*n4:(r+1)*n4]
	d0 := g * dr[r]
	var j0 float64
	for k := range n3 {
		x := x0[k*n4 : (k+1)*n4]
		dk, ak := kt.dkl[k*n4:(k+1)*n4], kt.akl[k*n4:(k+1)*n4]
		dk, ak = dk[:len(x)], ak[:len(x)]
		sl, sbl := s.dl[:len(x)], s.bl[:len(x)]
		rl, rbl := rl[:len(x)], rbl[:len(x)]
		skk, rkk := f2*sk[k], f2*rk[k]
		var ssk, srk float64
		for l, y := range x {
			j0 += y * dk[l]
			ak[l] += d0 * y
			ssk += y * rl[l]
			srk += y * sl[l]
			sbl[l] += y * rkk
			rbl[l] += y * skk
		}
		sbk[k] += f2 * ssk
		rbk[k] += f2 * srk
	}
	ar[r] += g * j0
}

// jkBlockSS is jkBlock for a block whose two pairs each end in a group of
// one function (j and l fixed; typically an s shell): the block is the
// n1×n3 matrix v[i][k], the terms of jkBlock reduce to matrix–vector
// products, and this saves the general path's set-up, which costs more
// than the arithmetic for these small blocks. dij, aij are D and A over
// (i, j); dkl, akl over (k, l); dik, bik over (i, k) (n1×n3); dil, bil
// over (i, l); djk, bjk over (j, k); djl, bjl the single (j, l) element.
func jkBlockSS(v []float64, f2 float64, dij, aij, dkl, akl, dik, bik, dil, bil, djk, bjk []float64, djl, bjl *float64) {
	n3 := len(dkl)
	akl, djk, bjk = akl[:n3], djk[:n3], bjk[:n3]
	g := 2 * f2
	wjl := f2 * *djl
	var sjl float64
	for i, dI := range dij {
		row := v[i*n3 : (i+1)*n3]
		row = row[:n3]
		ik, bk := dik[i*n3:(i+1)*n3], bik[i*n3:(i+1)*n3]
		ik, bk = ik[:n3], bk[:n3]
		di, wi := g*dI, f2*dil[i]
		var jsum, sil float64
		for k, x := range row {
			jsum += x * dkl[k]
			akl[k] += di * x
			bk[k] += wjl * x
			bjk[k] += wi * x
			sil += x * djk[k]
			sjl += x * ik[k]
		}
		aij[i] += g * jsum
		bil[i] += f2 * sil
	}
	*bjl += f2 * sjl
}
