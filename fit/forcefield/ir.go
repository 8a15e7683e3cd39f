package forcefield

import (
	"fmt"
	"math"
)

// Intensities returns the infrared intensity of each mode's fundamental in
// the double-harmonic approximation, in km/mol:
// A_i = (N_A/(12 ε0 c²)) |∂μ/∂Q_i|² (Wilson, Decius & Cross 1955, §7-8).
// dmu[3a+k] is ∂μ/∂x_ak, the derivative of the dipole (e·bohr) with respect
// to the Cartesian coordinate k of atom a (bohr), i.e. in units of e. For an
// ion the dipole depends on the origin, and so do these numbers.
func (h *Harmonic) Intensities(dmu [][3]float64) ([]float64, error) {
	n3 := 3 * len(h.Masses)
	if len(dmu) != n3 {
		return nil, fmt.Errorf("%w: %d dipole derivatives, want 3N = %d", ErrInput, len(dmu), n3)
	}
	out := make([]float64, h.NVib())
	for i, l := range h.L {
		var d [3]float64
		for c := range n3 {
			w := l[c] / math.Sqrt(h.Masses[c/3])
			for k := range 3 {
				d[k] += dmu[c][k] * w
			}
		}
		out[i] = IntensityKmPerMol * (d[0]*d[0] + d[1]*d[1] + d[2]*d[2])
	}
	return out, nil
}

// DipoleDerivativeQ returns ∂μ/∂Q_i (e·amu^{-1/2}) of every mode from
// Cartesian dipole derivatives laid out as for [Harmonic.Intensities].
func (h *Harmonic) DipoleDerivativeQ(dmu [][3]float64) ([][3]float64, error) {
	n3 := 3 * len(h.Masses)
	if len(dmu) != n3 {
		return nil, fmt.Errorf("%w: %d dipole derivatives, want 3N = %d", ErrInput, len(dmu), n3)
	}
	out := make([][3]float64, h.NVib())
	for i, l := range h.L {
		for c := range n3 {
			w := l[c] / math.Sqrt(h.Masses[c/3])
			for k := range 3 {
				out[i][k] += dmu[c][k] * w
			}
		}
	}
	return out, nil
}

// StepBohr returns the Cartesian displacement (bohr, 3N entries) of a step
// of q along dimensionless normal coordinate i: Δx = M^{-1/2} L_i Q with
// Q = q/√ω_i in atomic units (ħ = 1, masses in m_e). It fails for an
// imaginary or zero mode.
func (h *Harmonic) StepBohr(i int, q float64) ([]float64, error) {
	if i < 0 || i >= h.NVib() {
		return nil, fmt.Errorf("%w: mode %d of %d", ErrInput, i+1, h.NVib())
	}
	w := h.WavenumbersCm1[i]
	if !(w > 0) {
		return nil, fmt.Errorf("%w: mode %d has ω = %.6g cm⁻¹; dimensionless coordinates need a real frequency", ErrInput, i+1, w)
	}
	omega := w / HartreeInCm1
	qau := q / math.Sqrt(omega)
	out := make([]float64, len(h.L[i]))
	for c := range out {
		out[c] = h.L[i][c] * qau / math.Sqrt(h.Masses[c/3]*AmuInElectronMass)
	}
	return out, nil
}
