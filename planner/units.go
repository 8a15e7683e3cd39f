package planner

import "strings"

// Physical constants and unit conversions, all from the 2018 CODATA
// recommended values (E. Tiesinga, P. J. Mohr, D. B. Newell, B. N. Taylor,
// "CODATA recommended values of the fundamental physical constants: 2018",
// Rev. Mod. Phys. 93, 025010 (2021), doi:10.1103/RevModPhys.93.025010).
// This is the only place these numbers are written; every other package
// refers to them by name.
const (
	// BohrInAngstrom is the Bohr radius a0 in ångström (CODATA 2018).
	BohrInAngstrom = 0.529177210903
	// AngstromInBohr converts Å to bohr.
	AngstromInBohr = 1 / BohrInAngstrom
	// HartreeInEV is the hartree energy in electronvolt (CODATA 2018).
	HartreeInEV = 27.211386245988
	// HartreeInCm1 is the hartree expressed as a wavenumber in cm⁻¹
	// (CODATA 2018: hartree-inverse meter relationship 2.1947463136320e7 m⁻¹).
	HartreeInCm1 = 219474.63136320
	// HartreeInKJPerMol is the molar hartree energy in kJ/mol
	// (CODATA 2018: E_h N_A = 2625.4996394799 kJ/mol).
	HartreeInKJPerMol = 2625.4996394799
	// KcalInKJ is the thermochemical calorie (exact by definition, 4.184 J).
	KcalInKJ = 4.184
	// HartreeInKcalPerMol follows from the two values above.
	HartreeInKcalPerMol = HartreeInKJPerMol / KcalInKJ
	// AmuInElectronMass is the atomic mass constant in electron masses,
	// m_u/m_e (CODATA 2018: electron mass in u = 5.48579909065e-4).
	AmuInElectronMass = 1 / 5.48579909065e-4
	// HartreePerBohr2InMdynPerAngstrom converts a force constant from
	// hartree/bohr² to mdyn/Å (1 mdyn/Å = 100 N/m). E_h = 4.3597447222071e-18 J
	// (CODATA 2018) and a0 = 0.529177210903e-10 m give 1 E_h/a0² =
	// 1556.8931 N/m.
	HartreePerBohr2InNPerM = 4.3597447222071e-18 / (0.529177210903e-10 * 0.529177210903e-10)
	// HartreePerBohr2InMdynPerAngstrom is the same force constant in mdyn/Å.
	HartreePerBohr2InMdynPerAngstrom = HartreePerBohr2InNPerM / 100
)

// LengthUnit names the unit a length is given in at an edge of the program.
type LengthUnit string

// The length units accepted in specs, XYZ input and on the command line.
const (
	Angstrom LengthUnit = "angstrom"
	Bohr     LengthUnit = "bohr"
)

// ParseLengthUnit accepts "angstrom", "ang", "a", "Å" and "bohr", "au",
// case-insensitively; ok is false for anything else.
func ParseLengthUnit(s string) (LengthUnit, bool) {
	switch lower(s) {
	case "angstrom", "angstroms", "ang", "a", "å":
		return Angstrom, true
	case "bohr", "au", "a.u.", "a0":
		return Bohr, true
	}
	return "", false
}

// ToBohr converts a length in unit u to bohr.
func (u LengthUnit) ToBohr(x float64) float64 {
	if u == Angstrom {
		return x * AngstromInBohr
	}
	return x
}

// FromBohr converts a length in bohr to unit u.
func (u LengthUnit) FromBohr(x float64) float64 {
	if u == Angstrom {
		return x * BohrInAngstrom
	}
	return x
}

func lower(s string) string { return strings.ToLower(strings.TrimSpace(s)) }

// BohrElectronInDebye converts a dipole moment from e·a0 to debye:
// e·a0 = 8.4783536255e-30 C·m (CODATA 2018) and 1 D = 1e-21/c C·m with
// c = 299792458 m/s (exact).
const BohrElectronInDebye = 8.4783536255e-30 / (1e-21 / 299792458)
