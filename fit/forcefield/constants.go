package forcefield

import (
	"math"

	"wellscan/fit"
)

// Physical constants: CODATA 2018, named once in package fit.
const (
	// HartreeInCm1 is the hartree as a wavenumber in cm⁻¹.
	HartreeInCm1 = fit.HartreeInCm1
	// AmuInElectronMass is m_u/m_e.
	AmuInElectronMass = fit.AmuInElectronMass
	// BohrInAngstrom is the Bohr radius in ångström.
	BohrInAngstrom = fit.BohrInAngstrom
	// SpeedOfLightCmPerS is c in cm/s (exact).
	SpeedOfLightCmPerS = fit.SpeedOfLightCmPerS
	// HartreePerBohr2InMdynPerAngstrom converts a force constant from
	// E_h/a0² to mdyn/Å.
	HartreePerBohr2InMdynPerAngstrom = fit.HartreePerBohr2InMdynPerAngstrom
)

// IntensityKmPerMol is the factor that turns |∂μ/∂Q|², with μ in e·bohr and
// Q the mass-weighted normal coordinate in amu^{1/2}·bohr, into an
// integrated band intensity in km/mol: N_A e²/(12 ε0 c² m_u) in m/mol,
// divided by 1000 (the intensity of a fundamental in the double-harmonic
// approximation, Wilson, Decius & Cross 1955, §7-8; about 974.88).
var IntensityKmPerMol = fit.AvogadroPerMol * fit.ElementaryChargeC * fit.ElementaryChargeC / (12 * fit.VacuumPermittivityFPerM * (fit.SpeedOfLightCmPerS / 100) * (fit.SpeedOfLightCmPerS / 100) * fit.AtomicMassUnitKg) / 1000

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
