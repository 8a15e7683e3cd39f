package hf

import (
	"context"

	"gonum.org/v1/gonum/mat"
)

// incrementalJK is implemented by J/K builders whose cost falls with the
// density they are given: integral-direct builders skip the quartets whose
// Schwarz bound times the largest density element they meet is below
// their threshold.
type incrementalJK interface {
	IncrementalJK() bool
}

// fullJKEvery is how many Fock builds from density differences may follow
// a full build before the next full one: each difference build carries
// the screening error of the quartets it skips, and a full build resets
// the sum (common practice; 8 keeps it below the error of one full build
// times eight, far under the SCF convergence thresholds).
const fullJKEvery = 8

// jkState is what an SCF keeps between difference Fock builds: the
// densities of the last build and their J and K.
type jkState struct {
	d, j, k    []*mat.SymDense
	dd, tj, tk []*mat.SymDense // scratch: density change and its J and K
	since      int             // difference builds since the last full one
	full, diff int             // counts, for the record
}

// jk builds st.j and st.k from st.d. With a builder that screens on the
// density, J and K are built from the change of the density since the
// previous build and added to that build's (Almlöf, Faegri and Korsell
// 1982, incremental Fock build), with a full build every fullJKEvery
// builds; other builders build them in full every time.
//
// References:
//
//	J. Almlöf, K. Faegri Jr., K. Korsell, "Principles for a direct SCF
//	approach to LCAO-MO ab-initio calculations", J. Comput. Chem. 3,
//	385–399 (1982), doi:10.1002/jcc.540030314.
func (st *scfState) jk(ctx context.Context) error {
	inc, ok := st.in.JK.(incrementalJK)
	if !ok || !inc.IncrementalJK() {
		return st.in.JK.JK(ctx, st.d, st.j, st.k)
	}
	s := &st.jks
	if s.d == nil || s.since >= fullJKEvery {
		if err := st.in.JK.JK(ctx, st.d, st.j, st.k); err != nil {
			return err
		}
		if s.d == nil {
			s.d, s.j, s.k = newSyms(st.ns, st.n), newSyms(st.ns, st.n), newSyms(st.ns, st.n)
			s.dd, s.tj, s.tk = newSyms(st.ns, st.n), newSyms(st.ns, st.n), newSyms(st.ns, st.n)
		}
		for x := range st.ns {
			s.d[x].CopySym(st.d[x])
			s.j[x].CopySym(st.j[x])
			s.k[x].CopySym(st.k[x])
		}
		s.since = 0
		s.full++
		return nil
	}
	for x := range st.ns {
		subSym(s.dd[x], st.d[x], s.d[x])
	}
	if err := st.in.JK.JK(ctx, s.dd, s.tj, s.tk); err != nil {
		return err
	}
	for x := range st.ns {
		addSym(st.j[x], s.j[x], s.tj[x])
		addSym(st.k[x], s.k[x], s.tk[x])
		s.d[x].CopySym(st.d[x])
		s.j[x].CopySym(st.j[x])
		s.k[x].CopySym(st.k[x])
	}
	s.since++
	s.diff++
	return nil
}

func newSyms(k, n int) []*mat.SymDense {
	out := make([]*mat.SymDense, k)
	for i := range out {
		out[i] = mat.NewSymDense(n, nil)
	}
	return out
}

// subSym sets dst = a − b (upper triangles of the raw storage).
func subSym(dst, a, b *mat.SymDense) {
	rd, ra, rb := dst.RawSymmetric(), a.RawSymmetric(), b.RawSymmetric()
	for i := range rd.N {
		for j := i; j < rd.N; j++ {
			rd.Data[i*rd.Stride+j] = ra.Data[i*ra.Stride+j] - rb.Data[i*rb.Stride+j]
		}
	}
}

// addSym sets dst = a + b.
func addSym(dst, a, b *mat.SymDense) {
	rd, ra, rb := dst.RawSymmetric(), a.RawSymmetric(), b.RawSymmetric()
	for i := range rd.N {
		for j := i; j < rd.N; j++ {
			rd.Data[i*rd.Stride+j] = ra.Data[i*ra.Stride+j] + rb.Data[i*rb.Stride+j]
		}
	}
}
