package hf

import (
	"errors"
	"fmt"

	"gonum.org/v1/gonum/mat"
)

// Mulliken returns the Mulliken charge of every atom,
//
//	q_A = Z_A − Σ_{μ∈A} (P S)_μμ,
//
// with P the total density of res (both spins, so twice the RHF α
// density). atomOfFunction[μ] is the atom index of basis function μ;
// nuclearCharges[A] is Z_A (use the effective charge for atoms with a core
// potential).
//
// References: R. S. Mulliken, J. Chem. Phys. 23, 1833 (1955),
// doi:10.1063/1.1740588 (from memory).
func Mulliken(res *SCFResult, s *mat.SymDense, atomOfFunction []int, nuclearCharges []float64) ([]float64, error) {
	if res == nil || res.Density == nil {
		return nil, errors.New("hf: mulliken: result has no density")
	}
	n := res.Density.SymmetricDim()
	if s == nil || s.SymmetricDim() != n {
		return nil, fmt.Errorf("hf: mulliken: overlap matrix must be %d×%d", n, n)
	}
	if len(atomOfFunction) != n {
		return nil, fmt.Errorf("hf: mulliken: %d atom indices for %d basis functions", len(atomOfFunction), n)
	}
	q := append([]float64(nil), nuclearCharges...)
	for mu, a := range atomOfFunction {
		if a < 0 || a >= len(q) {
			return nil, fmt.Errorf("hf: mulliken: basis function %d on atom %d, but there are %d atoms", mu, a, len(q))
		}
		var ps float64
		for nu := range n {
			ps += res.Density.At(mu, nu) * s.At(nu, mu)
		}
		q[a] -= ps
	}
	return q, nil
}

// DipoleMoment returns the dipole moment (e·bohr) about origin,
//
//	μ_c = −Σ_μν P_μν ⟨μ|(r − O)_c|ν⟩ + Σ_A Z_A (R_A − O)_c,
//
// where dipInts[c] are the electronic position integrals ⟨μ|(r − O)_c|ν⟩
// about the same origin O (no electron charge included), P is the total
// density of res, and charges/positions are the nuclear charges and
// positions (bohr). For a neutral molecule the result does not depend on
// the origin.
func DipoleMoment(res *SCFResult, dipInts [3]*mat.SymDense, charges []float64, positions [][3]float64, origin [3]float64) ([3]float64, error) {
	var mu [3]float64
	if res == nil || res.Density == nil {
		return mu, errors.New("hf: dipole: result has no density")
	}
	if len(charges) != len(positions) {
		return mu, fmt.Errorf("hf: dipole: %d charges for %d positions", len(charges), len(positions))
	}
	n := res.Density.SymmetricDim()
	for c, m := range dipInts {
		if m == nil || m.SymmetricDim() != n {
			return mu, fmt.Errorf("hf: dipole: integral matrix %c must be %d×%d", "xyz"[c], n, n)
		}
		mu[c] = -symTrace(res.Density, m)
		for a, z := range charges {
			mu[c] += z * (positions[a][c] - origin[c])
		}
	}
	return mu, nil
}
