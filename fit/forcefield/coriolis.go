package forcefield

import (
	"fmt"
	"math"
)

// toPrincipal returns per-atom 3-vectors of the 3N-vector v in the principal
// axis frame (axis k of h.Axes, i.e. the A, B, C order).
func (h *Harmonic) toPrincipal(v []float64) [][3]float64 {
	n := len(h.Masses)
	out := make([][3]float64, n)
	for a := range n {
		for k := range 3 {
			out[a][k] = h.Axes[k][0]*v[3*a] + h.Axes[k][1]*v[3*a+1] + h.Axes[k][2]*v[3*a+2]
		}
	}
	return out
}

// Zeta returns the Coriolis coupling constants ζ^α_ij = Σ_a (L_ai × L_aj)_α
// of the mass-weighted normal modes, α over the principal axes in A, B, C
// order (Papoušek & Aliev 1982, §10; Wilson, Decius & Cross 1955, App. X).
// ζ^α is antisymmetric.
func (h *Harmonic) Zeta() [3][][]float64 {
	n := h.NVib()
	var z [3][][]float64
	lp := make([][][3]float64, n)
	for i := range n {
		lp[i] = h.toPrincipal(h.L[i])
	}
	for a := range 3 {
		z[a] = make([][]float64, n)
		for i := range n {
			z[a][i] = make([]float64, n)
		}
	}
	for i := range n {
		for j := range n {
			for at := range lp[i] {
				c := cross3(lp[i][at], lp[j][at])
				for a := range 3 {
					z[a][i][j] += c[a]
				}
			}
		}
	}
	return z
}

// InertiaDerivatives returns a_k^{αβ} = ∂I_αβ/∂Q_k (amu^{1/2}·bohr) for each
// mode k in the principal axis frame:
// a_k^{αβ} = Σ_a √m_a [2 δ_αβ (r_a·L_ak) − r_aα L_akβ − r_aβ L_akα].
func (h *Harmonic) InertiaDerivatives() [][3][3]float64 {
	n := h.NVib()
	pos := h.toPrincipal(flatten(h.Pos))
	out := make([][3][3]float64, n)
	for k := range n {
		lk := h.toPrincipal(h.L[k])
		for at, m := range h.Masses {
			r, l := pos[at], lk[at]
			rl := r[0]*l[0] + r[1]*l[1] + r[2]*l[2]
			for al := range 3 {
				for be := range 3 {
					v := -r[al]*l[be] - r[be]*l[al]
					if al == be {
						v += 2 * rl
					}
					out[k][al][be] += math.Sqrt(m) * v
				}
			}
		}
	}
	return out
}

func flatten(p [][3]float64) []float64 {
	out := make([]float64, 0, 3*len(p))
	for _, r := range p {
		out = append(out, r[0], r[1], r[2])
	}
	return out
}

// VPT2Options controls [VPT2].
type VPT2Options struct {
	Fermi FermiOptions
	// NoCoriolis leaves the Coriolis terms out of x_ij (the pure
	// vibrational Hamiltonian); α constants keep theirs.
	NoCoriolis bool
}

// VPT2 runs second-order perturbation theory for the molecule of h with the
// force constants of q (which must be along h's normal modes, in the same
// order and sign). Besides [VPT2Constants] it gives the vibration–rotation
// constants (Mills 1972, eq. for α_r^β; atomic units, ħ = 1):
//
//	α_r^β = −(2B_β²/ω_r) [ Σ_γ 3(a_r^{βγ})²/(4I_γ)
//	        + Σ_s (ζ^β_rs)² (3ω_r² + ω_s²)/(ω_r² − ω_s²)
//	        + ½ Σ_s φ_rrs a_s^{ββ} ω_r/ω_s^{3/2} ]
//
// with B, ω, φ in hartree, a in m_e^{1/2}·bohr and I in m_e·bohr² (the
// ½ is π(c/h)^{1/2} of the wavenumber form with h = 2π). For a diatomic
// this is α_e = −(6B_e²/ω_e)(1 + f₃r_e/(3f₂)), the Dunham-theory result.
func VPT2(h *Harmonic, q *QFF, opts VPT2Options) (*Anharmonic, error) {
	n := h.NVib()
	if q == nil || q.N != n {
		return nil, fmt.Errorf("%w: force field for %d modes, molecule has %d", ErrInput, qN(q), n)
	}
	m := Model{OmegaCm1: h.WavenumbersCm1, Cubic: q.Cubic, Quartic: q.Quartic, BeCm1: h.RotCm1}
	z := h.Zeta()
	if !opts.NoCoriolis {
		m.Zeta = &z
	}
	out, err := VPT2Constants(m, opts.Fermi)
	if err != nil {
		return nil, err
	}
	// α constants in atomic units.
	ad := h.InertiaDerivatives()
	au := math.Sqrt(AmuInElectronMass) // amu^{1/2} → m_e^{1/2}
	out.AlphaCm1 = make([][3]float64, n)
	out.BeCm1 = h.RotCm1
	for b := range 3 {
		bau := h.RotCm1[b] / HartreeInCm1
		if math.IsInf(bau, 0) {
			out.B0Cm1[b] = math.Inf(1)
			continue
		}
		for r := range n {
			wr := h.WavenumbersCm1[r] / HartreeInCm1
			t1 := 0.0
			for g := range 3 {
				if h.Inertia[g] < linearTol {
					continue
				}
				a := ad[r][b][g] * au
				t1 += 3 * a * a / (4 * h.Inertia[g] * AmuInElectronMass)
			}
			t2 := 0.0
			for s := range n {
				if s == r {
					continue
				}
				ws := h.WavenumbersCm1[s] / HartreeInCm1
				zz := z[b][r][s]
				if zz == 0 {
					continue
				}
				if math.Abs(h.WavenumbersCm1[r]-h.WavenumbersCm1[s]) < 10 {
					out.Warnings = append(out.Warnings, fmt.Sprintf("Coriolis resonance: ω%d and ω%d within 10 cm⁻¹ with ζ = %.3f; α%d not reliable", r+1, s+1, zz, r+1))
				}
				t2 += zz * zz * (3*wr*wr + ws*ws) / (wr*wr - ws*ws)
			}
			t3 := 0.0
			for s := range n {
				ws := h.WavenumbersCm1[s] / HartreeInCm1
				phi := q.Cubic[r][r][s] / HartreeInCm1
				t3 += 0.5 * phi * ad[s][b][b] * au * wr / math.Pow(ws, 1.5)
			}
			alpha := -2 * bau * bau / wr * (t1 + t2 + t3)
			out.AlphaCm1[r][b] = alpha * HartreeInCm1
		}
		out.B0Cm1[b] = h.RotCm1[b]
		for r := range n {
			out.B0Cm1[b] -= 0.5 * out.AlphaCm1[r][b]
		}
	}
	return out, nil
}

func qN(q *QFF) int {
	if q == nil {
		return 0
	}
	return q.N
}
