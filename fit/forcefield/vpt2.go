package forcefield

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
)

// Model is the input of [VPT2Constants]: harmonic wavenumbers, cubic and
// semi-diagonal quartic constants in dimensionless normal coordinates (all
// cm⁻¹), and optionally the Coriolis coupling constants ζ^α_ij with the
// rotational constants B_α (cm⁻¹) of the same axes. A nil Zeta leaves the
// Coriolis terms out: the pure vibrational Hamiltonian.
type Model struct {
	OmegaCm1 []float64
	Cubic    [][][]float64
	Quartic  [][]float64
	Zeta     *[3][][]float64
	BeCm1    [3]float64
}

// FermiOptions controls the detection of Fermi resonances. A triple is
// resonant when |ω_a − ω_b − ω_c| < MaxGapCm1 and the resonant second-order
// term estimated as φ_abb⁴/(256 Δ³) (ω_a ≈ 2ω_b) or φ_abc⁴/(64 Δ³)
// (ω_a ≈ ω_b + ω_c) is at least MinTermCm1 (Martin, Lee, Taylor & François
// 1995). The zero value takes the defaults 200 cm⁻¹ and 1 cm⁻¹ (the values
// of that paper, from memory). Off turns detection off (plain VPT2).
type FermiOptions struct {
	MaxGapCm1  float64
	MinTermCm1 float64
	Off        bool
}

// Resonance is one detected Fermi resonance ω_A ≈ ω_B + ω_C (B == C for
// ω_A ≈ 2ω_B); mode indices are 0-based.
type Resonance struct {
	A, B, C int
	GapCm1  float64 // ω_A − ω_B − ω_C
	// CouplingCm1 is the off-diagonal matrix element between the two
	// deperturbed states: φ_ABB/4 or φ_ABC/(2√2).
	CouplingCm1 float64
	// TermCm1 is the size of the resonant second-order term that made it
	// count (the Martin test).
	TermCm1 float64
}

// Band is a vibrational level relative to the ground state.
type Band struct {
	Label  string // "ν2", "2ν1", "ν1+ν3" (modes numbered from 1 by increasing ω)
	Quanta []int
	// HarmonicCm1 is Σ ω_i v_i.
	HarmonicCm1 float64
	// DeperturbedCm1 is the VPT2 level with the resonant denominators
	// removed (equal to plain VPT2 when no resonance touches the level's
	// constants).
	DeperturbedCm1 float64
	// Cm1 is the final level: the deperturbed one after the resonance
	// matrix is diagonalised, else the plain VPT2 level.
	Cm1 float64
	// Resonant says the band belongs to a resonance polyad; Partners lists
	// the other members' labels.
	Resonant bool
	Partners []string
	// DeperturbedOnly marks a level outside every listed polyad that is
	// nevertheless in resonance with an unlisted level: Cm1 is its
	// deperturbed value, with the resonance not treated.
	DeperturbedOnly bool
}

// Anharmonic is the VPT2 result.
type Anharmonic struct {
	OmegaCm1 []float64
	// X are the anharmonicity constants x_ij (cm⁻¹), symmetric, with the
	// resonant denominators removed where Resonances lists a resonance.
	X [][]float64
	// XPlain are the x_ij of plain VPT2 (no deperturbation).
	XPlain       [][]float64
	Resonances   []Resonance
	Fundamentals []Band
	Overtones    []Band
	Combinations []Band
	// AlphaCm1[r][β] is the vibration–rotation constant α_r^β of mode r
	// and axis β (A, B, C order); B0Cm1 = Be − ½ Σ_r α_r (nil when the
	// input carried no rotational data).
	AlphaCm1 [][3]float64
	BeCm1    [3]float64
	B0Cm1    [3]float64
	Warnings []string
}

// triple identifies ω_a ≈ ω_b + ω_c with b ≤ c.
type triple struct{ a, b, c int }

func mkTriple(a, b, c int) triple {
	if b > c {
		b, c = c, b
	}
	return triple{a, b, c}
}

// VPT2Constants computes the anharmonicity constants, Fermi resonances and
// band origins from m. The formulas are those of second-order perturbation
// theory for a nondegenerate (asymmetric-top) molecule (Mills 1972, eqs.
// for x_rr and x_rs; Papoušek & Aliev 1982, ch. 10), written with every
// resonant denominator separate so the deperturbed constants drop exactly
// the resonant terms:
//
//	x_ii = φ_iiii/16 − (1/16) Σ_k φ_iik² [2/ω_k − ½/(2ω_i − ω_k) + ½/(2ω_i + ω_k)]
//	x_ij = φ_iijj/4 − (1/4) Σ_k φ_iik φ_jjk/ω_k
//	       − (1/8) Σ_k φ_ijk² [1/(ω_k+ω_i+ω_j) + 1/(ω_k−ω_i−ω_j) + 1/(ω_k+ω_i−ω_j) + 1/(ω_k−ω_i+ω_j)]
//	       + (ω_i/ω_j + ω_j/ω_i) Σ_α B_α (ζ^α_ij)²
//
// (the bracket of x_ij combines to the textbook 2ω_k(ω_k² − ω_i² −
// ω_j²)/Δ_ijk form). Levels: E(v) − E(0) = Σ ω_i v_i + Σ_{i≤j} x_ij
// [(v_i+½)(v_j+½) − ¼].
func VPT2Constants(m Model, fo FermiOptions) (*Anharmonic, error) {
	n := len(m.OmegaCm1)
	if n == 0 {
		return nil, fmt.Errorf("%w: no modes", ErrInput)
	}
	if len(m.Cubic) != n || len(m.Quartic) != n {
		return nil, fmt.Errorf("%w: force constants for %d/%d modes, want %d", ErrInput, len(m.Cubic), len(m.Quartic), n)
	}
	for i, w := range m.OmegaCm1 {
		if !(w > 0) || math.IsInf(w, 0) {
			return nil, fmt.Errorf("%w: ω_%d = %v cm⁻¹; VPT2 needs real frequencies (is the reference a minimum?)", ErrInput, i+1, w)
		}
		if len(m.Cubic[i]) != n || len(m.Quartic[i]) != n {
			return nil, fmt.Errorf("%w: force-constant row %d has the wrong length", ErrInput, i+1)
		}
		for j := range n {
			if len(m.Cubic[i][j]) != n {
				return nil, fmt.Errorf("%w: cubic constants [%d][%d] have the wrong length", ErrInput, i+1, j+1)
			}
		}
	}
	res := &Anharmonic{OmegaCm1: append([]float64(nil), m.OmegaCm1...)}
	w := m.OmegaCm1
	f3 := m.Cubic
	// Degenerate modes need the formulas for symmetric tops and linear
	// molecules, which this package does not implement: refuse rather than
	// print wrong numbers. 0.5 cm⁻¹ is far below any accidental near-
	// degeneracy that matters at this order and above the noise of finite
	// differences (common practice).
	for i := range n {
		for j := i + 1; j < n; j++ {
			if math.Abs(w[i]-w[j]) < 0.5 {
				return nil, fmt.Errorf("%w (%w): modes %d and %d are degenerate (%.3f and %.3f cm⁻¹): VPT2 for degenerate modes (symmetric tops, linear molecules) is not implemented", ErrInput, ErrDegenerate, i+1, j+1, w[i], w[j])
			}
		}
	}
	// Fermi resonances.
	reson := map[triple]bool{}
	if !fo.Off {
		gapMax, termMin := fo.MaxGapCm1, fo.MinTermCm1
		if gapMax == 0 {
			gapMax = 200
		}
		if termMin == 0 {
			termMin = 1
		}
		for a := range n {
			for b := range n {
				for c := b; c < n; c++ {
					if a == b || a == c {
						continue
					}
					gap := w[a] - w[b] - w[c]
					if math.Abs(gap) >= gapMax {
						continue
					}
					phi := f3[a][b][c]
					var term, coup float64
					if b == c {
						term = math.Pow(phi, 4) / (256 * math.Pow(math.Abs(gap), 3))
						coup = phi / 4
					} else {
						term = math.Pow(phi, 4) / (64 * math.Pow(math.Abs(gap), 3))
						coup = phi / (2 * math.Sqrt2)
					}
					if term >= termMin {
						reson[mkTriple(a, b, c)] = true
						res.Resonances = append(res.Resonances, Resonance{A: a, B: b, C: c, GapCm1: gap, CouplingCm1: coup, TermCm1: term})
					}
				}
			}
		}
	}
	// inv returns 1/(ω_x − ω_y − ω_z) unless (x; y, z) is resonant and
	// dropping is on.
	inv := func(drop bool, x, y, z int) float64 {
		if drop && reson[mkTriple(x, y, z)] {
			return 0
		}
		return 1 / (w[x] - w[y] - w[z])
	}
	xmat := func(drop bool) [][]float64 {
		x := make([][]float64, n)
		for i := range x {
			x[i] = make([]float64, n)
		}
		for i := range n {
			s := m.Quartic[i][i] / 16
			for k := range n {
				p := f3[i][i][k]
				if p == 0 {
					continue
				}
				// −½/(2ω_i − ω_k) = +½ · 1/(ω_k − ω_i − ω_i)
				br := 2/w[k] + 0.5*inv(drop, k, i, i) + 0.5/(2*w[i]+w[k])
				s -= p * p * br / 16
			}
			x[i][i] = s
			for j := i + 1; j < n; j++ {
				s := m.Quartic[i][j] / 4
				for k := range n {
					s -= f3[i][i][k] * f3[j][j][k] / (4 * w[k])
					p := f3[i][j][k]
					if p == 0 {
						continue
					}
					// 1/(ω_k+ω_i−ω_j) = −1/(ω_j − ω_k − ω_i); likewise for i.
					br := 1/(w[k]+w[i]+w[j]) + inv(drop, k, i, j) - inv(drop, j, k, i) - inv(drop, i, k, j)
					s -= p * p * br / 8
				}
				if m.Zeta != nil {
					cor := 0.0
					for a := range 3 {
						if math.IsInf(m.BeCm1[a], 0) || len(m.Zeta[a]) != n {
							continue
						}
						z := m.Zeta[a][i][j]
						cor += m.BeCm1[a] * z * z
					}
					s += (w[i]/w[j] + w[j]/w[i]) * cor
				}
				x[i][j], x[j][i] = s, s
			}
		}
		return x
	}
	res.XPlain = xmat(false)
	res.X = xmat(true)
	level := func(x [][]float64, v []int) float64 {
		e := 0.0
		for i := range n {
			e += w[i] * float64(v[i])
			for j := i; j < n; j++ {
				e += x[i][j] * ((float64(v[i])+0.5)*(float64(v[j])+0.5) - 0.25)
			}
		}
		return e
	}
	name := func(v []int) string {
		s := ""
		for i, q := range v {
			if q == 0 {
				continue
			}
			if s != "" {
				s += "+"
			}
			if q > 1 {
				s += fmt.Sprint(q)
			}
			s += fmt.Sprintf("ν%d", i+1)
		}
		return s
	}
	var all []*Band
	index := map[string]*Band{}
	add := func(v []int) *Band {
		b := &Band{Label: name(v), Quanta: v}
		for i := range n {
			b.HarmonicCm1 += w[i] * float64(v[i])
		}
		b.DeperturbedCm1 = level(res.X, v)
		b.Cm1 = level(res.XPlain, v)
		all = append(all, b)
		index[fmt.Sprint(v)] = b
		return b
	}
	unit := func(pairs ...int) []int {
		v := make([]int, n)
		for k := 0; k < len(pairs); k += 2 {
			v[pairs[k]] += pairs[k+1]
		}
		return v
	}
	for i := range n {
		add(unit(i, 1))
	}
	for i := range n {
		add(unit(i, 2))
	}
	for i := range n {
		for j := i + 1; j < n; j++ {
			add(unit(i, 1, j, 1))
		}
	}
	// Resonance polyads: connected components of the coupling graph.
	if len(res.Resonances) > 0 {
		type edge struct {
			p, q *Band
			w    float64
		}
		var edges []edge
		for _, r := range res.Resonances {
			p := index[fmt.Sprint(unit(r.A, 1))]
			q := index[fmt.Sprint(unit(r.B, 1, r.C, 1))]
			edges = append(edges, edge{p, q, r.CouplingCm1})
		}
		comp := map[*Band]int{}
		var groups [][]*Band
		for _, e := range edges {
			cp, okp := comp[e.p]
			cq, okq := comp[e.q]
			switch {
			case !okp && !okq:
				comp[e.p], comp[e.q] = len(groups), len(groups)
				groups = append(groups, []*Band{e.p, e.q})
			case okp && !okq:
				comp[e.q] = cp
				groups[cp] = append(groups[cp], e.q)
			case !okp && okq:
				comp[e.p] = cq
				groups[cq] = append(groups[cq], e.p)
			case cp != cq:
				for _, b := range groups[cq] {
					comp[b] = cp
				}
				groups[cp] = append(groups[cp], groups[cq]...)
				groups[cq] = nil
			}
		}
		for gi, g := range groups {
			if len(g) == 0 {
				continue
			}
			pos := map[*Band]int{}
			for k, b := range g {
				pos[b] = k
			}
			hm := mat.NewSymDense(len(g), nil)
			for k, b := range g {
				hm.SetSym(k, k, b.DeperturbedCm1)
			}
			for _, e := range edges {
				if comp[e.p] == gi {
					hm.SetSym(pos[e.p], pos[e.q], e.w)
				}
			}
			var es mat.EigenSym
			if !es.Factorize(hm, true) {
				return nil, fmt.Errorf("%w: resonance matrix", ErrNumerics)
			}
			vals := es.Values(nil)
			var vec mat.Dense
			es.VectorsTo(&vec)
			// Assign each eigenvalue to the state with the largest weight,
			// greedily by decreasing weight.
			type cand struct {
				k, s int
				wt   float64
			}
			var cs []cand
			for k := range vals {
				for s := range g {
					cs = append(cs, cand{k, s, vec.At(s, k) * vec.At(s, k)})
				}
			}
			sort.Slice(cs, func(a, b int) bool { return cs[a].wt > cs[b].wt })
			usedK, usedS := map[int]bool{}, map[int]bool{}
			for _, c := range cs {
				if usedK[c.k] || usedS[c.s] {
					continue
				}
				usedK[c.k], usedS[c.s] = true, true
				g[c.s].Cm1 = vals[c.k]
			}
			for _, b := range g {
				b.Resonant = true
				for _, o := range g {
					if o != b {
						b.Partners = append(b.Partners, o.Label)
					}
				}
			}
		}
		// A level outside every polyad whose value changed when the
		// resonant denominators went is in resonance with a level that is
		// not listed (e.g. ν_a+ν_b with 3ν_b when ω_a ≈ 2ω_b): it gets the
		// deperturbed value, flagged.
		for _, b := range all {
			if !b.Resonant && math.Abs(b.DeperturbedCm1-b.Cm1) > 1e-9 {
				b.Cm1 = b.DeperturbedCm1
				b.DeperturbedOnly = true
			}
		}
	}
	for _, b := range all {
		switch sum(b.Quanta) {
		case 1:
			res.Fundamentals = append(res.Fundamentals, *b)
		default:
			if maxInt(b.Quanta...) == 2 {
				res.Overtones = append(res.Overtones, *b)
			} else {
				res.Combinations = append(res.Combinations, *b)
			}
		}
	}
	return res, nil
}

func sum(v []int) int {
	s := 0
	for _, x := range v {
		s += x
	}
	return s
}

func maxInt(v ...int) int {
	m := v[0]
	for _, x := range v[1:] {
		if x > m {
			m = x
		}
	}
	return m
}
