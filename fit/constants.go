package fit

// Physical constants, from the 2018 CODATA recommended values
// (E. Tiesinga, P. J. Mohr, D. B. Newell, B. N. Taylor, "CODATA recommended
// values of the fundamental physical constants: 2018", Rev. Mod. Phys. 93,
// 025010 (2021), doi:10.1103/RevModPhys.93.025010).
//
// This is the program's one source of these numbers: fit is a leaf
// (it imports no other wellscan package), so planner and fit/forcefield
// take them from here by name.
const (
	// BohrInAngstrom is the Bohr radius a0 in ångström (CODATA 2018).
	BohrInAngstrom = 0.529177210903
	// HartreeInCm1 is the hartree as a wavenumber in cm⁻¹ (CODATA 2018:
	// hartree–inverse metre relationship 2.1947463136320e7 m⁻¹).
	HartreeInCm1 = 219474.63136320
	// HartreeInEV is the hartree in electronvolt (CODATA 2018).
	HartreeInEV = 27.211386245988
	// HartreeInKJPerMol is the molar hartree energy E_h N_A in kJ/mol
	// (CODATA 2018).
	HartreeInKJPerMol = 2625.4996394799
	// HartreeInKcalPerMol is E_h N_A in thermochemical kcal/mol (1 kcal =
	// 4.184 kJ exactly, by definition of the thermochemical calorie).
	HartreeInKcalPerMol = HartreeInKJPerMol / 4.184
	// AmuInElectronMass is m_u/m_e (CODATA 2018: electron mass
	// 5.48579909065e-4 u).
	AmuInElectronMass = 1 / 5.48579909065e-4
	// KcalInKJ is the thermochemical calorie in joule per gram-calorie
	// (exactly 4.184, by definition).
	KcalInKJ = 4.184
	// SpeedOfLightCmPerS is c in cm/s (exact, by definition of the metre).
	SpeedOfLightCmPerS = 29979245800
	// AvogadroPerMol is N_A in mol⁻¹ (exact since 2019, CODATA 2018).
	AvogadroPerMol = 6.02214076e23
	// ElementaryChargeC is e in coulomb (exact, CODATA 2018).
	ElementaryChargeC = 1.602176634e-19
	// VacuumPermittivityFPerM is ε0 in F/m (CODATA 2018).
	VacuumPermittivityFPerM = 8.8541878128e-12
	// AtomicMassUnitKg is m_u in kg (CODATA 2018).
	AtomicMassUnitKg = 1.66053906660e-27
	// BohrElectronInDebye converts a dipole from e·a0 to debye: e·a0 =
	// 8.4783536255e-30 C·m (CODATA 2018) and 1 D = 1e-21/c C·m.
	BohrElectronInDebye = 8.4783536255e-30 * 299792458 / 1e-21
	// HartreeInJoule is E_h in joule (CODATA 2018).
	HartreeInJoule = 4.3597447222071e-18
	// HartreePerBohr2InNPerM converts a force constant from E_h/a0² to N/m
	// (E_h and a0 from CODATA 2018; 1 E_h/a0² ≈ 1556.89 N/m).
	HartreePerBohr2InNPerM = HartreeInJoule / (BohrInAngstrom * 1e-10 * BohrInAngstrom * 1e-10)
	// HartreePerBohr2InMdynPerAngstrom is the same in mdyn/Å
	// (1 mdyn/Å = 100 N/m, by definition of the units).
	HartreePerBohr2InMdynPerAngstrom = HartreePerBohr2InNPerM / 100
)
