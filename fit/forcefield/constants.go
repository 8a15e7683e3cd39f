package forcefield

import "math"

// Physical constants, from the 2018 CODATA recommended values (E. Tiesinga,
// P. J. Mohr, D. B. Newell, B. N. Taylor, Rev. Mod. Phys. 93, 025010
// (2021), doi:10.1103/RevModPhys.93.025010). They duplicate a few of
// planner's and fit's constants on purpose: this package imports no other
// wellscan package.
const (
	// HartreeInCm1 is the hartree as a wavenumber in cm⁻¹.
	HartreeInCm1 = 219474.63136320
	// AmuInElectronMass is m_u/m_e (electron mass 5.48579909065e-4 u).
	AmuInElectronMass = 1 / 5.48579909065e-4
	// BohrInAngstrom is the Bohr radius in ångström.
	BohrInAngstrom = 0.529177210903
	// SpeedOfLightCmPerS is c in cm/s (exact).
	SpeedOfLightCmPerS = 29979245800
	// HartreePerBohr2InMdynPerAngstrom converts a force constant from
	// E_h/a0² to mdyn/Å (E_h = 4.3597447222071e-18 J; 1 mdyn/Å = 100 N/m).
	HartreePerBohr2InMdynPerAngstrom = 4.3597447222071e-18 / (0.529177210903e-10 * 0.529177210903e-10) / 100

	avogadro          = 6.02214076e23    // mol⁻¹, exact
	elementaryCharge  = 1.602176634e-19  // C, exact
	vacuumPermittivty = 8.8541878128e-12 // F/m
	atomicMassUnitKg  = 1.66053906660e-27
	speedOfLightMPerS = 299792458
)

// IntensityKmPerMol is the factor that turns |∂μ/∂Q|², with μ in e·bohr and
// Q the mass-weighted normal coordinate in amu^{1/2}·bohr, into an
// integrated band intensity in km/mol: N_A e²/(12 ε0 c² m_u) in m/mol,
// divided by 1000 (the intensity of a fundamental in the double-harmonic
// approximation, Wilson, Decius & Cross 1955, §7-8; about 974.88).
var IntensityKmPerMol = avogadro * elementaryCharge * elementaryCharge / (12 * vacuumPermittivty * speedOfLightMPerS * speedOfLightMPerS * atomicMassUnitKg) / 1000

// eigenvalueToCm1 turns an eigenvalue of the mass-weighted Hessian
// (hartree/(amu·bohr²)) into a wavenumber (cm⁻¹), negative when the
// eigenvalue is negative (an imaginary frequency).
func eigenvalueToCm1(lam float64) float64 {
	w := math.Sqrt(math.Abs(lam)/AmuInElectronMass) * HartreeInCm1
	if lam < 0 {
		return -w
	}
	return w
}
