package forcefield

import (
	"fmt"
	"math"
)

// Displacement is a point of the quartic force-field stencil: Steps[i] is
// the multiple of mode i's step (−2…2).
type Displacement struct {
	Steps []int
}

// QFFDisplacements lists, for n modes, every displacement [QFFFromEnergies]
// evaluates, the reference first: ±1 and ±2 steps along each mode; the four
// (±1, ±1) corners of each pair of modes; the eight (±1, ±1, ±1) corners of
// each triple. That is 1 + 4n + 4·n(n−1)/2 + 8·n(n−1)(n−2)/6 energies
// (33 for n = 3, 245 for n = 6), before symmetry.
func QFFDisplacements(n int) []Displacement {
	mk := func(pairs ...int) Displacement {
		s := make([]int, n)
		for k := 0; k < len(pairs); k += 2 {
			s[pairs[k]] = pairs[k+1]
		}
		return Displacement{Steps: s}
	}
	out := []Displacement{mk()}
	for i := range n {
		for _, s := range []int{-2, -1, 1, 2} {
			out = append(out, mk(i, s))
		}
	}
	for i := range n {
		for j := i + 1; j < n; j++ {
			for _, si := range []int{-1, 1} {
				for _, sj := range []int{-1, 1} {
					out = append(out, mk(i, si, j, sj))
				}
			}
		}
	}
	for i := range n {
		for j := i + 1; j < n; j++ {
			for k := j + 1; k < n; k++ {
				for _, si := range []int{-1, 1} {
					for _, sj := range []int{-1, 1} {
						for _, sk := range []int{-1, 1} {
							out = append(out, mk(i, si, j, sj, k, sk))
						}
					}
				}
			}
		}
	}
	return out
}

// QFF holds force constants in dimensionless normal coordinates, in cm⁻¹.
// Cubic is the full symmetric cubic tensor φ_ijk; Quartic[i][j] is the
// semi-diagonal φ_iijj (Quartic[i][i] = φ_iiii); Harmonic[i] is the second
// derivative along q_i from the same energies (≈ ω_i, a consistency check).
type QFF struct {
	N        int
	Cubic    [][][]float64
	Quartic  [][]float64
	Harmonic []float64
	StepQ    []float64 // the dimensionless step of each mode
}

// QFFFromEnergies evaluates the cubic and semi-diagonal quartic force
// constants by central finite differences of energies (hartree) along the
// dimensionless normal coordinates, with step h[i] for mode i. energy is
// called with every displacement of [QFFDisplacements]. The formulas (all
// O(h²), exact for a quartic polynomial; common practice, e.g. Allen &
// co-workers' finite-difference force fields):
//
//	φ_iii  = [E(2) − 2E(1) + 2E(−1) − E(−2)] / (2h³)
//	φ_iiii = [E(2) − 4E(1) + 6E(0) − 4E(−1) + E(−2)] / h⁴
//	φ_iij  = [E(1,1) + E(−1,1) − 2E(0,1) − E(1,−1) − E(−1,−1) + 2E(0,−1)] / (2h_i²h_j)
//	φ_iijj = [Σ E(±1,±1) − 2(E(±1,0) + E(0,±1)) + 4E(0)] / (h_i²h_j²)
//	φ_ijk  = Σ s_i s_j s_k E(s_i,s_j,s_k) / (8 h_i h_j h_k)
func QFFFromEnergies(n int, h []float64, energy func(d Displacement) (float64, error)) (*QFF, error) {
	if n < 1 || len(h) != n {
		return nil, fmt.Errorf("%w: %d steps for %d modes", ErrInput, len(h), n)
	}
	for i, s := range h {
		if !(s > 0) || math.IsInf(s, 0) {
			return nil, fmt.Errorf("%w: step of mode %d is %v, want > 0", ErrInput, i+1, s)
		}
	}
	cache := map[string]float64{}
	var ferr error
	e := func(pairs ...int) float64 {
		d := Displacement{Steps: make([]int, n)}
		for k := 0; k < len(pairs); k += 2 {
			d.Steps[pairs[k]] = pairs[k+1]
		}
		key := fmt.Sprint(d.Steps)
		if v, ok := cache[key]; ok {
			return v
		}
		v, err := energy(d)
		if err != nil && ferr == nil {
			ferr = fmt.Errorf("forcefield: energy at steps %v: %w", d.Steps, err)
		}
		cache[key] = v
		return v
	}
	q := &QFF{N: n, StepQ: append([]float64(nil), h...)}
	q.Cubic = make([][][]float64, n)
	q.Quartic = make([][]float64, n)
	q.Harmonic = make([]float64, n)
	for i := range n {
		q.Cubic[i] = make([][]float64, n)
		for j := range n {
			q.Cubic[i][j] = make([]float64, n)
		}
		q.Quartic[i] = make([]float64, n)
	}
	e0 := e()
	set3 := func(i, j, k int, v float64) {
		for _, p := range [][3]int{{i, j, k}, {i, k, j}, {j, i, k}, {j, k, i}, {k, i, j}, {k, j, i}} {
			q.Cubic[p[0]][p[1]][p[2]] = v
		}
	}
	for i := range n {
		hi := h[i]
		p1, m1, p2, m2 := e(i, 1), e(i, -1), e(i, 2), e(i, -2)
		q.Harmonic[i] = (p1 - 2*e0 + m1) / (hi * hi)
		set3(i, i, i, (p2-2*p1+2*m1-m2)/(2*hi*hi*hi))
		q.Quartic[i][i] = (p2 - 4*p1 + 6*e0 - 4*m1 + m2) / (hi * hi * hi * hi)
	}
	for i := range n {
		for j := i + 1; j < n; j++ {
			hi, hj := h[i], h[j]
			pp, pm, mp, mm := e(i, 1, j, 1), e(i, 1, j, -1), e(i, -1, j, 1), e(i, -1, j, -1)
			ip, im, jp, jm := e(i, 1), e(i, -1), e(j, 1), e(j, -1)
			set3(i, i, j, (pp+mp-2*jp-pm-mm+2*jm)/(2*hi*hi*hj))
			set3(i, j, j, (pp+pm-2*ip-mp-mm+2*im)/(2*hj*hj*hi))
			v := (pp + pm + mp + mm - 2*(ip+im+jp+jm) + 4*e0) / (hi * hi * hj * hj)
			q.Quartic[i][j], q.Quartic[j][i] = v, v
		}
	}
	for i := range n {
		for j := i + 1; j < n; j++ {
			for k := j + 1; k < n; k++ {
				s := 0.0
				for _, si := range []int{-1, 1} {
					for _, sj := range []int{-1, 1} {
						for _, sk := range []int{-1, 1} {
							s += float64(si*sj*sk) * e(i, si, j, sj, k, sk)
						}
					}
				}
				set3(i, j, k, s/(8*h[i]*h[j]*h[k]))
			}
		}
	}
	if ferr != nil {
		return nil, ferr
	}
	// hartree → cm⁻¹
	for i := range n {
		q.Harmonic[i] *= HartreeInCm1
		for j := range n {
			q.Quartic[i][j] *= HartreeInCm1
			for k := range n {
				q.Cubic[i][j][k] *= HartreeInCm1
			}
		}
	}
	return q, nil
}
