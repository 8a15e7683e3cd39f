package planner

import (
	"math"
	"strings"

	"wellscan/fit"
)

// Physical constants and unit conversions: CODATA 2018 (E. Tiesinga,
// P. J. Mohr, D. B. Newell, B. N. Taylor, "CODATA recommended values of the
// fundamental physical constants: 2018", Rev. Mod. Phys. 93, 025010 (2021),
// doi:10.1103/RevModPhys.93.025010), written once in package fit (a leaf)
// and named here for the packages that import planner.
const (
	// BohrInAngstrom is the Bohr radius a0 in ångström.
	BohrInAngstrom = fit.BohrInAngstrom
	// AngstromInBohr converts Å to bohr.
	AngstromInBohr = 1 / BohrInAngstrom
	// HartreeInEV is the hartree energy in electronvolt.
	HartreeInEV = fit.HartreeInEV
	// HartreeInCm1 is the hartree expressed as a wavenumber in cm⁻¹.
	HartreeInCm1 = fit.HartreeInCm1
	// HartreeInKJPerMol is the molar hartree energy in kJ/mol.
	HartreeInKJPerMol = fit.HartreeInKJPerMol
	// KcalInKJ is the thermochemical calorie (exact by definition, 4.184 J).
	KcalInKJ = fit.KcalInKJ
	// HartreeInKcalPerMol is the molar hartree energy in kcal/mol.
	HartreeInKcalPerMol = fit.HartreeInKcalPerMol
	// AmuInElectronMass is the atomic mass constant in electron masses.
	AmuInElectronMass = fit.AmuInElectronMass
	// HartreePerBohr2InNPerM converts a force constant from hartree/bohr²
	// to N/m.
	HartreePerBohr2InNPerM = fit.HartreePerBohr2InNPerM
	// HartreePerBohr2InMdynPerAngstrom is the same force constant in mdyn/Å.
	HartreePerBohr2InMdynPerAngstrom = fit.HartreePerBohr2InMdynPerAngstrom
	// BohrElectronInDebye converts a dipole moment from e·a0 to debye.
	BohrElectronInDebye = fit.BohrElectronInDebye
)

// DipoleDebye is the magnitude in debye of a dipole moment given in e·bohr
// (atomic units): the one conversion every screen and export uses.
func DipoleDebye(d [3]float64) float64 {
	return math.Sqrt(d[0]*d[0]+d[1]*d[1]+d[2]*d[2]) * BohrElectronInDebye
}

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
