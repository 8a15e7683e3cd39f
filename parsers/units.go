package parsers

import (
	"fmt"
	"math"
	"strings"
)

// Energy conversion factors: how many of each unit make one hartree.
// CODATA 2018 recommended values (E. Tiesinga, P. J. Mohr, D. B. Newell,
// B. N. Taylor, "CODATA recommended values of the fundamental physical
// constants: 2018", Rev. Mod. Phys. 93, 025010 (2021),
// doi:10.1103/RevModPhys.93.025010). The program's one source is
// fit/constants.go; parsers imports no other wellscan package, so it keeps
// this copy of the few it needs, which cmd/wellscan's
// TestConstants_OneSource holds equal to fit's, bit for bit.
const (
	// HartreeInEV is the hartree energy in electronvolt.
	HartreeInEV = 27.211386245988
	// HartreeInKJPerMol is the molar hartree energy E_h N_A in kJ/mol.
	HartreeInKJPerMol = 2625.4996394799
	// HartreeInKcalPerMol uses the thermochemical calorie, exactly 4.184 J
	// by definition.
	HartreeInKcalPerMol = HartreeInKJPerMol / 4.184
	// HartreeInCm1 is the hartree as a wavenumber (hartree–inverse metre
	// relationship 2.1947463136320e7 m⁻¹).
	HartreeInCm1 = 219474.63136320
)

// EnergyUnit is the unit an energy is written in by the program whose
// output is read. The zero value is invalid: a unit must always be named,
// so that a value in eV is never taken for hartree.
type EnergyUnit string

// The energy units an extractor accepts.
const (
	Hartree     EnergyUnit = "hartree"
	EV          EnergyUnit = "eV"
	KJPerMol    EnergyUnit = "kJ/mol"
	KcalPerMol  EnergyUnit = "kcal/mol"
	Wavenumbers EnergyUnit = "cm-1"
)

// ParseEnergyUnit accepts the names below, case-insensitively, and returns
// the canonical unit:
//
//	hartree, Eh, au, a.u.      → Hartree
//	eV                         → EV
//	kJ/mol                     → KJPerMol
//	kcal/mol                   → KcalPerMol
//	cm-1, cm^-1, cm⁻¹, 1/cm    → Wavenumbers
func ParseEnergyUnit(s string) (EnergyUnit, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "hartree", "hartrees", "eh", "au", "a.u.":
		return Hartree, nil
	case "ev":
		return EV, nil
	case "kj/mol":
		return KJPerMol, nil
	case "kcal/mol":
		return KcalPerMol, nil
	case "cm-1", "cm^-1", "cm⁻¹", "1/cm":
		return Wavenumbers, nil
	case "":
		return "", fmt.Errorf("parsers: energy unit missing: name one of hartree, eV, kJ/mol, kcal/mol, cm-1")
	}
	return "", fmt.Errorf("parsers: unknown energy unit %q: expected one of hartree, eV, kJ/mol, kcal/mol, cm-1", clip(s))
}

// perHartree is how many u make one hartree; ok is false for an unknown unit.
func (u EnergyUnit) perHartree() (float64, bool) {
	switch u {
	case Hartree:
		return 1, true
	case EV:
		return HartreeInEV, true
	case KJPerMol:
		return HartreeInKJPerMol, true
	case KcalPerMol:
		return HartreeInKcalPerMol, true
	case Wavenumbers:
		return HartreeInCm1, true
	}
	return 0, false
}

// ToHartree converts an energy v given in unit u to hartree. It returns
// NaN for a unit that [ParseEnergyUnit] would not return.
func (u EnergyUnit) ToHartree(v float64) float64 {
	f, ok := u.perHartree()
	if !ok {
		return math.NaN()
	}
	if f == 1 {
		return v
	}
	return v / f
}
