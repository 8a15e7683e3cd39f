package hf

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"

	"wellscan/planner"
	"wellscan/runner/hf/basis"
	"wellscan/runner/hf/integral"
)

// SpinDensity is a pair of AO spin densities (without a factor 2) that an
// SCF can start from: SCFInput.GuessDensity with Options.Guess set to
// GuessAtoms or GuessAtomsSpin.
type SpinDensity struct {
	Alpha, Beta *mat.SymDense
	// AtomSpins is, per atom, the number of unpaired electrons placed on
	// it with its sign (+ α, − β); all zero for the plain superposition.
	AtomSpins []int
	// Note says why a spin-polarised request fell back to the plain
	// superposition ("" when it did not).
	Note string
}

// AtomicGuess builds superposition-of-atomic-densities (SAD) starting
// densities for molecules in one basis. For every distinct element it
// runs one spherically averaged atomic calculation in that element's
// basis functions and keeps the result for the lifetime of the value
// (make one per calculation or per scan point: nothing is shared between
// values, and a value is not safe for concurrent use).
//
// The atomic calculation is a restricted SCF with fractional occupations:
// the electrons of the neutral atom's ground configuration, filled in the
// order of increasing n + l (then n), are spread evenly over each
// (2l+1)-fold degenerate set, so the density stays spherical at every
// iteration and the Fock matrix keeps its atomic degeneracies (common
// practice for SAD guesses). Orbitals are assigned to l by their
// population on the basis functions of each angular momentum.
type AtomicGuess struct {
	set   *basis.Set
	conv  basis.Convention
	norm  integral.CartNorm
	cache map[int]*atomBlock
}

// atomBlock is the result of one atomic calculation: spherically averaged
// spin densities in the element's own basis functions (molecule order).
type atomBlock struct {
	n           int
	total       *mat.SymDense // total density
	alpha, beta *mat.SymDense // high-spin (Hund) split of the same orbitals
	unpaired    int
	converged   bool
	energy      float64
}

// NewAtomicGuess prepares SAD densities in basis set (with convention conv
// and normalisation norm, as the molecule's own calculation uses them).
// The atomic calculations run on one goroutine: they are small, and a
// serial Fock build makes the guess bit-for-bit reproducible.
func NewAtomicGuess(set *basis.Set, conv basis.Convention, norm integral.CartNorm) *AtomicGuess {
	return &AtomicGuess{set: set, conv: conv, norm: norm, cache: map[int]*atomBlock{}}
}

// Density returns the SAD starting density of mol, whose electron count
// and multiplicity it respects: the block-diagonal sum of the atomic
// densities, scaled so that tr(D^α S) = N_α and tr(D^β S) = N_β.
//
// With polarised, every atom carries its ground-state spin (high-spin
// open subshell) and the signs are chosen greedily, largest spins first,
// so that the unpaired electrons sum to N_α − N_β (each atom takes the
// sign that brings the running sum closer to the target, up on a tie:
// N2 singlet gives the first N up and the second down). If no such assignment is
// found, or fewer than two atoms have unpaired electrons, the plain
// (unpolarised) superposition is returned with Note saying why.
func (g *AtomicGuess) Density(ctx context.Context, mol planner.Molecule, polarised bool) (*SpinDensity, error) {
	blocks := make([]*atomBlock, len(mol.Atoms))
	nbf := 0
	for i, a := range mol.Atoms {
		b, err := g.atom(ctx, a.Element)
		if err != nil {
			return nil, err
		}
		blocks[i] = b
		nbf += b.n
	}
	na, nb := mol.AlphaBeta()
	out := &SpinDensity{Alpha: mat.NewSymDense(nbf, nil), Beta: mat.NewSymDense(nbf, nil), AtomSpins: make([]int, len(mol.Atoms))}
	if polarised {
		spins, note := assignSpins(blocks, na-nb)
		if note == "" {
			out.AtomSpins = spins
		} else {
			out.Note = note
			polarised = false
		}
	}
	off := 0
	var trA, trB float64 // electrons placed (atomic traces; S_AA is the atom's own overlap)
	for i, b := range blocks {
		da, db := b.total, b.total // halved below
		half := 0.5
		if polarised && out.AtomSpins[i] != 0 {
			da, db, half = b.alpha, b.beta, 1
			if out.AtomSpins[i] < 0 {
				da, db = db, da
			}
		}
		for p := range b.n {
			for q := p; q < b.n; q++ {
				out.Alpha.SetSym(off+p, off+q, half*da.At(p, q))
				out.Beta.SetSym(off+p, off+q, half*db.At(p, q))
			}
		}
		z := float64(mol.Atoms[i].Element.Z)
		if polarised && out.AtomSpins[i] != 0 {
			u := float64(out.AtomSpins[i])
			trA += 0.5 * (z + u)
			trB += 0.5 * (z - u)
		} else {
			trA += 0.5 * z
			trB += 0.5 * z
		}
		off += b.n
	}
	// A charged or spin-polarised molecule has other electron counts than
	// its neutral atoms' sum: rescale each spin to its own count.
	if trA > 0 {
		out.Alpha.ScaleSym(float64(na)/trA, out.Alpha)
	}
	if trB > 0 {
		out.Beta.ScaleSym(float64(nb)/trB, out.Beta)
	}
	return out, nil
}

// OpenShellAtoms counts the atoms of mol whose ground state has unpaired
// electrons (those a spin-polarised guess can give a spin to).
func OpenShellAtoms(mol planner.Molecule) int {
	k := 0
	for _, a := range mol.Atoms {
		if _, u, err := groundConfig(a.Element.Z); err == nil && u > 0 {
			k++
		}
	}
	return k
}

// assignSpins gives every open-shell atom a sign so the unpaired
// electrons add up to target (= N_α − N_β). It returns a note instead
// when that is impossible or pointless.
func assignSpins(blocks []*atomBlock, target int) ([]int, string) {
	idx := make([]int, 0, len(blocks))
	for i, b := range blocks {
		if b.unpaired > 0 {
			idx = append(idx, i)
		}
	}
	if len(idx) < 2 {
		return nil, fmt.Sprintf("%d atom(s) with unpaired electrons: a spin-polarised guess needs two", len(idx))
	}
	sort.SliceStable(idx, func(a, b int) bool { return blocks[idx[a]].unpaired > blocks[idx[b]].unpaired })
	spins := make([]int, len(blocks))
	sum := 0
	for _, i := range idx {
		u := blocks[i].unpaired
		if abs(sum+u-target) <= abs(sum-u-target) {
			spins[i] = u
		} else {
			spins[i] = -u
		}
		sum += spins[i]
	}
	if sum != target {
		return nil, fmt.Sprintf("atomic spins sum to %d, not N_α − N_β = %d", sum, target)
	}
	return spins, ""
}

func abs(x int) int {
	if x < 0 {
		return -x
	}
	return x
}

func (g *AtomicGuess) atom(ctx context.Context, el planner.Element) (*atomBlock, error) {
	if b, ok := g.cache[el.Z]; ok {
		return b, nil
	}
	b, err := atomicDensity(ctx, g.set, g.conv, g.norm, el)
	if err != nil {
		return nil, fmt.Errorf("hf: atomic density guess for %s: %w", el.Symbol, err)
	}
	g.cache[el.Z] = b
	return b, nil
}

// madelung is the order in which subshells fill (n + l, then n; common
// practice), as (n, l) pairs.
var madelung = [...][2]int{{1, 0}, {2, 0}, {2, 1}, {3, 0}, {3, 1}, {4, 0}, {3, 2}, {4, 1}, {5, 0}, {4, 2}, {5, 1},
	{6, 0}, {4, 3}, {5, 2}, {6, 1}, {7, 0}, {5, 3}, {6, 2}, {7, 1}}

// groundConfig returns, for the neutral atom Z, the electrons of each
// subshell grouped by l (occ[l][k] for the k-th subshell of that l, in
// increasing n) and the Hund's-rule number of unpaired electrons. The
// Madelung order ignores the few exceptions (Cr, Cu, …), which is
// harmless for a starting guess.
func groundConfig(z int) (occ [4][]float64, unpaired int, err error) {
	if z < 1 || z > 118 {
		return occ, 0, fmt.Errorf("nuclear charge %d outside 1–118", z)
	}
	left := z
	for _, s := range madelung {
		if left == 0 {
			break
		}
		l := s[1]
		c := min(left, 2*(2*l+1))
		occ[l] = append(occ[l], float64(c))
		left -= c
		if c < 2*(2*l+1) {
			unpaired += min(c, 2*(2*l+1)-c)
		}
	}
	return occ, unpaired, nil
}

// atomicDensity runs the spherically averaged fractional-occupation SCF
// of one neutral atom of element el in basis set.
func atomicDensity(ctx context.Context, set *basis.Set, conv basis.Convention, norm integral.CartNorm, el planner.Element) (*atomBlock, error) {
	occ, unpaired, err := groundConfig(el.Z)
	if err != nil {
		return nil, err
	}
	mol := planner.Molecule{Atoms: []planner.Atom{planner.NewAtom(el, [3]float64{})}, Multiplicity: unpaired + 1}
	shells, err := set.Shells(mol, conv)
	if err != nil {
		return nil, err
	}
	if err := integral.Validate(shells); err != nil {
		return nil, err
	}
	var lOf []int // angular momentum of every basis function
	for _, sh := range shells {
		for range sh.NumFunctions() {
			lOf = append(lOf, sh.L)
		}
	}
	s := integral.Overlap(shells, norm)
	h := mat.NewSymDense(s.SymmetricDim(), nil)
	h.AddSym(integral.Kinetic(shells, norm), integral.Nuclear(shells, norm, []integral.PointCharge{{Z: float64(el.Z)}}))
	eri, err := integral.ComputePacked(ctx, shells, norm, 1)
	if err != nil {
		return nil, err
	}
	n := s.SymmetricDim()
	x, _, _, err := orthogonalizer(s, 1e-7, OrthCanonical)
	if err != nil {
		return nil, err
	}
	_, m := x.Dims()
	var xts mat.Dense
	xts.Mul(x.T(), s)

	eig := newEigenSolver(m)
	fo, po, fuse, cp, c := mat.NewDense(m, m, nil), mat.NewDense(m, m, nil), mat.NewDense(m, m, nil), mat.NewDense(m, m, nil), mat.NewDense(n, m, nil)
	eo, tmp := mat.NewDense(m, m, nil), mat.NewDense(m, m, nil)
	eps := make([]float64, m)
	occAlpha := make([]float64, m)
	occBeta := make([]float64, m)
	p := mat.NewSymDense(n, nil)
	j, k, f := mat.NewSymDense(n, nil), mat.NewSymDense(n, nil), mat.NewSymDense(n, nil)
	var tnm mat.Dense
	dm := newDIIS(6, 1, m, m*m)

	// diagonalise fuse and occupy: returns false when the basis cannot
	// hold the configuration.
	occupy := func() error {
		if err := eig.solve(fuse, eps, cp); err != nil {
			return err
		}
		c.Mul(x, cp)
		if err := fractionalOccupations(c, s, lOf, eps, occ, occAlpha, occBeta); err != nil {
			return err
		}
		p.Zero()
		for i := range m {
			if w := occAlpha[i] + occBeta[i]; w > 0 {
				col := mat.Col(nil, i, c)
				p.SymRankOne(p, w, mat.NewVecDense(n, col))
			}
		}
		return nil
	}
	tnm.Mul(h, x)
	fuse.Mul(x.T(), &tnm)
	if err := occupy(); err != nil {
		return nil, err
	}
	const maxIter = 100
	prevE := 0.0
	b := &atomBlock{n: n}
	for it := 0; it < maxIter; it++ {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		if err := eri.JK(ctx, []*mat.SymDense{p}, []*mat.SymDense{j}, []*mat.SymDense{k}); err != nil {
			return nil, err
		}
		// Spin-averaged closed-shell form with the total density P:
		// F = H + J[P] − ½K[P], E = ½ tr P(H + F).
		for a := range n {
			for q := a; q < n; q++ {
				f.SetSym(a, q, h.At(a, q)+j.At(a, q)-0.5*k.At(a, q))
			}
		}
		e := 0.5 * (symTrace(p, h) + symTrace(p, f))
		tnm.Mul(f, x)
		fo.Mul(x.T(), &tnm)
		var tmn mat.Dense
		tmn.Mul(&xts, p)
		po.Mul(&tmn, xts.T())
		tmp.Mul(fo, po)
		errMax := antisymInto(eo, tmp)
		b.energy = e
		if it > 0 && math.Abs(e-prevE) < 1e-10 && errMax < 1e-7 {
			b.converged = true
			break
		}
		prevE = e
		dm.push([]*mat.Dense{fo}, func(dst []float64) { flatten(dst, eo) })
		dm.extrapolate([]*mat.Dense{fuse})
		if err := occupy(); err != nil {
			return nil, err
		}
	}
	// The densities of the last orbitals (total, and the high-spin split).
	b.total = mat.NewSymDense(n, nil)
	b.total.CopySym(p)
	b.alpha, b.beta = mat.NewSymDense(n, nil), mat.NewSymDense(n, nil)
	for i := range m {
		col := mat.NewVecDense(n, mat.Col(nil, i, c))
		if occAlpha[i] > 0 {
			b.alpha.SymRankOne(b.alpha, occAlpha[i], col)
		}
		if occBeta[i] > 0 {
			b.beta.SymRankOne(b.beta, occBeta[i], col)
		}
	}
	b.unpaired = unpaired
	return b, nil
}

// fractionalOccupations assigns the configuration occ to the orbitals
// (columns of c, energies eps ascending). Orbitals whose energies agree
// within 1e-5 Eh form a degenerate set; a set of 1, 3, 5 or 7 orbitals has
// l = 0, 1, 2 or 3 (the Fock matrix of a spherical density is invariant
// under rotations, so its levels are (2l+1)-fold; common practice) — which
// also classes the s-type combination of Cartesian d functions as s. Any
// other set (an accidental degeneracy) is split by the l whose basis
// functions carry most of each orbital's Mulliken population. Within each
// l the sets, in energy order, take the subshells in order, each electron
// count spread evenly over its set; α and β per orbital follow Hund's
// rule (α first).
func fractionalOccupations(c *mat.Dense, s *mat.SymDense, lOf []int, eps []float64, occ [4][]float64, oa, ob []float64) error {
	n, m := c.Dims()
	var sc mat.Dense
	sc.Mul(s, c)
	weightL := func(i int) int {
		var w [8]float64
		for mu := range n {
			if l := lOf[mu]; l < len(w) {
				w[l] += c.At(mu, i) * sc.At(mu, i)
			}
		}
		best := 0
		for l := range w {
			if w[l] > w[best] {
				best = l
			}
		}
		return best
	}
	var sets [4][][]int // per l, degenerate sets in energy order
	for i := 0; i < m; {
		j := i + 1
		for j < m && eps[j]-eps[i] < 1e-5 {
			j++
		}
		if g := j - i; g%2 == 1 && g <= 7 {
			l := (g - 1) / 2
			sets[l] = append(sets[l], seq(i, j))
		} else {
			var split [8][]int
			for q := i; q < j; q++ {
				split[weightL(q)] = append(split[weightL(q)], q)
			}
			for l, set := range split {
				if len(set) > 0 && l < len(sets) {
					sets[l] = append(sets[l], set)
				}
			}
		}
		i = j
	}
	for i := range m {
		oa[i], ob[i] = 0, 0
	}
	for l := range occ {
		if len(sets[l]) < len(occ[l]) {
			return fmt.Errorf("the basis has too few l = %d functions for the ground configuration (%d subshells needed, %d found)", l, len(occ[l]), len(sets[l]))
		}
		for k, e := range occ[l] {
			set := sets[l][k]
			g := float64(len(set))
			if e > 2*g+1e-12 {
				return fmt.Errorf("the l = %d subshell %d holds %g electrons but its degenerate set has only %d orbitals DBG %v", l, k+1, e, len(set), eps)
			}
			na := min(e, g)
			for _, q := range set {
				oa[q], ob[q] = na/g, (e-na)/g
			}
		}
	}
	return nil
}

func seq(i, j int) []int {
	out := make([]int, 0, j-i)
	for q := i; q < j; q++ {
		out = append(out, q)
	}
	return out
}

// errNoDensity is returned by RunSCF when an atoms guess is asked for
// without a density.
var errNoDensity = errors.New("hf: scf input: the atoms guesses need SCFInput.GuessDensity (hf.Energy builds it; see AtomicGuess)")
