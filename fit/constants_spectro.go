package fit

import (
	"fmt"
	"math"
)

// ForceConstants are the derivatives of a potential at its minimum, in
// atomic units: X is the position of the minimum (bohr, or radian for an
// angle), F2 = V”(X) in E_h/bohr², F3 = V”'(X) in E_h/bohr³, F4 = V””(X)
// in E_h/bohr⁴ (E_h/rad^n for angles).
type ForceConstants struct {
	X, F2, F3, F4 float64
}

// Anharmonic holds the second-order perturbation theory results for one
// vibrational coordinate, in cm⁻¹. They describe the term values
// G(v) = Y00 + ω(v+½) − ωx(v+½)² measured from the minimum.
type Anharmonic struct {
	Omega  float64 // harmonic wavenumber ω (ω_e for a diatomic)
	OmegaX float64 // anharmonicity constant ωx (ω_e x_e), positive for a softening well
	Y00    float64 // Dunham's constant term
	ZPE    float64 // zero-point energy G(0) = Y00 + ω/2 − ωx/4
}

// AnharmonicConstants returns ω, ωx, Y00 and the ZPE of a one-dimensional
// oscillator with kinetic energy p²/(2μ), μ in amu (amu·bohr² for an angle,
// i.e. 1/G for a Wilson G-matrix element G), and the potential expanded to
// quartic order at its minimum.
//
// With dimensionless normal coordinate q and φ_n = f_n (ħ/(μω))^{n/2}, second
// order perturbation theory gives
//
//	ωx  = −φ4/16 + 5φ3²/(48ω)
//	Y00 =  φ4/64 − 7φ3²/(576ω)
//
// which for a diatomic are exactly Dunham's Y20 = −ω_e x_e and Y00 written
// with his a1, a2.
//
// References:
//   - J. L. Dunham, "The energy levels of a rotating vibrator", Phys. Rev. 41,
//     721 (1932), doi:10.1103/PhysRev.41.721.
//   - I. M. Mills, "Vibration-rotation structure in asymmetric- and
//     symmetric-top molecules", in Molecular Spectroscopy: Modern Research,
//     K. N. Rao, C. W. Mathews (eds.), Academic Press 1972, pp. 115–140
//     (the one-mode x_ii formula).
func AnharmonicConstants(fc ForceConstants, mu float64) (Anharmonic, error) {
	if !(mu > 0) || math.IsInf(mu, 0) {
		return Anharmonic{}, fmt.Errorf("fit: mass %g amu is not a positive finite number", mu)
	}
	if !(fc.F2 > 0) {
		return Anharmonic{}, fmt.Errorf("fit: the curvature at the minimum is %g E_h/bohr², not positive: not a minimum", fc.F2)
	}
	m := mu * AmuInElectronMass
	w := math.Sqrt(fc.F2 / m) // hartree (ħ = 1)
	l := 1 / (m * w)          // (ħ/(μω)) in bohr²
	p3 := fc.F3 * math.Pow(l, 1.5)
	p4 := fc.F4 * l * l
	wx := -p4/16 + 5*p3*p3/(48*w)
	y00 := p4/64 - 7*p3*p3/(576*w)
	a := Anharmonic{
		Omega:  w * HartreeInCm1,
		OmegaX: wx * HartreeInCm1,
		Y00:    y00 * HartreeInCm1,
	}
	a.ZPE = a.Y00 + a.Omega/2 - a.OmegaX/4
	return a, nil
}

// Rotational holds the vibration–rotation constants of a diatomic, in cm⁻¹.
type Rotational struct {
	Be     float64 // B_e = ħ²/(2μ r_e²)
	AlphaE float64 // α_e, the vibrational dependence B_v = B_e − α_e(v+½)
	DbarE  float64 // centrifugal distortion D̄_e (Kratzer relation 4B_e³/ω_e²)
}

// RotationalConstants returns B_e, α_e and D̄_e of a diatomic with reduced
// mass mu (amu) from the force constants at r_e = fc.X (bohr):
//
//	a1  = r_e f3 / (3 f2)                 (Dunham's a1)
//	α_e = −(6 B_e²/ω_e)(1 + a1)
//	D̄_e = 4 B_e³ / ω_e²
//
// References:
//   - J. L. Dunham, Phys. Rev. 41, 721 (1932), doi:10.1103/PhysRev.41.721
//     (Y11 = −α_e and Y02 = −D̄_e).
//   - G. Herzberg, Molecular Spectra and Molecular Structure I. Spectra of
//     Diatomic Molecules, 2nd ed., Van Nostrand 1950, ch. III (the Kratzer
//     relation for D̄_e).
func RotationalConstants(fc ForceConstants, mu float64) (Rotational, error) {
	a, err := AnharmonicConstants(fc, mu)
	if err != nil {
		return Rotational{}, err
	}
	if !(fc.X > 0) {
		return Rotational{}, fmt.Errorf("fit: bond length %g bohr at the minimum is not positive", fc.X)
	}
	m := mu * AmuInElectronMass
	be := 1 / (2 * m * fc.X * fc.X) * HartreeInCm1
	a1 := fc.X * fc.F3 / (3 * fc.F2)
	return Rotational{
		Be:     be,
		AlphaE: -(6 * be * be / a.Omega) * (1 + a1),
		DbarE:  4 * be * be * be / (a.Omega * a.Omega),
	}, nil
}
