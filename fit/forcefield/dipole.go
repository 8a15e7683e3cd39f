package forcefield

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// CartesianDipoleDerivatives completes dipole derivatives known along the
// vibrational directions into the full Cartesian derivative tensor
// ∂μ/∂x (3N rows of 3, in e) that [Harmonic.Intensities] takes, so that
// isotopologues, whose normal modes leave the parent's vibrational space,
// get exact intensities. patterns[j] is a Cartesian displacement (bohr,
// 3N) along which the dipole changes by dmu[j] (e·bohr per unit of the
// pattern); the translations and rotations are added here: a translation
// by e_α changes μ by charge·e_α, a rotation about the centre of mass by
// e_α × (μ0 − charge·R_com) (μ0 in e·bohr about the coordinate origin).
// Together they must span all 3N directions.
func CartesianDipoleDerivatives(pos [][3]float64, masses []float64, charge float64, mu0 [3]float64, patterns [][]float64, dmu [][3]float64) ([][3]float64, error) {
	n := len(masses)
	n3 := 3 * n
	if len(pos) != n || len(patterns) != len(dmu) {
		return nil, fmt.Errorf("%w: %d positions, %d masses, %d patterns, %d derivatives", ErrInput, len(pos), n, len(patterns), len(dmu))
	}
	com := centreOfMass(pos, masses)
	cols := append([][]float64(nil), patterns...)
	vals := append([][3]float64(nil), dmu...)
	for k := range 3 {
		v := make([]float64, n3)
		for a := range n {
			v[3*a+k] = 1
		}
		var d [3]float64
		d[k] = charge
		cols, vals = append(cols, v), append(vals, d)
	}
	ref := [3]float64{mu0[0] - charge*com[0], mu0[1] - charge*com[1], mu0[2] - charge*com[2]}
	for k := range 3 {
		var e [3]float64
		e[k] = 1
		v := make([]float64, n3)
		for a := range n {
			c := cross3(e, [3]float64{pos[a][0] - com[0], pos[a][1] - com[1], pos[a][2] - com[2]})
			copy(v[3*a:], c[:])
		}
		if math.Sqrt(dotv(v, v)) < 1e-8 {
			continue // rotation about the axis of a linear molecule
		}
		cols, vals = append(cols, v), append(vals, cross3(e, ref))
	}
	// Least squares G·P = Δ, P (3N × m), solved as Pᵀ Gᵀ = Δᵀ.
	m := len(cols)
	if m < n3 {
		return nil, fmt.Errorf("%w: %d directions cannot span 3N = %d", ErrInput, m, n3)
	}
	pt := mat.NewDense(m, n3, nil)
	dt := mat.NewDense(m, 3, nil)
	for j := range m {
		if len(cols[j]) != n3 {
			return nil, fmt.Errorf("%w: pattern %d has %d entries, want %d", ErrInput, j+1, len(cols[j]), n3)
		}
		pt.SetRow(j, cols[j])
		dt.SetRow(j, vals[j][:])
	}
	var gt mat.Dense
	if err := gt.Solve(pt, dt); err != nil {
		return nil, fmt.Errorf("%w: dipole derivative directions are singular: %v", ErrNumerics, err)
	}
	out := make([][3]float64, n3)
	for c := range n3 {
		for k := range 3 {
			out[c][k] = gt.At(c, k)
		}
	}
	return out, nil
}

// CartesianHessian rebuilds the Cartesian Hessian (hartree/bohr²) from the
// Hessian hMW (hartree/(amu·bohr²)) in an orthonormal basis of the
// vibrational space in mass-weighted coordinates (basis[i], 3N each, for
// the given masses in amu): H = M^{1/2} D hMW Dᵀ M^{1/2}. Its null space
// holds the Cartesian translations and rotations, which do not depend on
// the masses, so [Analyze] gives any isotopologue from it.
func CartesianHessian(masses []float64, basis [][]float64, hMW [][]float64) ([]float64, error) {
	n3 := 3 * len(masses)
	nb := len(basis)
	if len(hMW) != nb {
		return nil, fmt.Errorf("%w: %d×? Hessian for %d basis vectors", ErrInput, len(hMW), nb)
	}
	u := make([][]float64, nb) // u_a = M^{1/2} D_a
	for a, d := range basis {
		if len(d) != n3 || len(hMW[a]) != nb {
			return nil, fmt.Errorf("%w: basis vector or Hessian row %d has the wrong length", ErrInput, a+1)
		}
		u[a] = make([]float64, n3)
		for c := range n3 {
			u[a][c] = math.Sqrt(masses[c/3]) * d[c]
		}
	}
	out := make([]float64, n3*n3)
	for a := range nb {
		for b := range nb {
			h := hMW[a][b]
			if h == 0 {
				continue
			}
			for c := range n3 {
				x := u[a][c] * h
				if x == 0 {
					continue
				}
				row := out[c*n3 : (c+1)*n3]
				for d := range n3 {
					row[d] += x * u[b][d]
				}
			}
		}
	}
	return out, nil
}
