// Package forcefield turns the force field of a polyatomic molecule into the
// numbers a vibrational spectroscopist compares with measured bands:
// harmonic wavenumbers and normal modes (any isotopologue from one Hessian),
// infrared intensities, rotational constants, cubic and semi-diagonal
// quartic force constants in normal coordinates by finite differences, and
// second-order vibrational perturbation theory (VPT2) with Fermi-resonance
// detection and deperturbation.
//
// # Overview
//
// [Analyze] takes a Cartesian Hessian and the masses and returns the
// Eckart-projected harmonic analysis ([Harmonic]): wavenumbers (imaginary
// ones flagged), normal modes, reduced masses, force constants, the
// zero-point energy and the equilibrium rotational constants. Calling it
// again with other masses gives another isotopologue from the same Hessian.
// [Harmonic.Intensities] turns dipole derivatives into band intensities.
// [QFFDisplacements] lists the displacements along dimensionless normal
// coordinates that [QFFFromEnergies] needs for the cubic and semi-diagonal
// quartic constants; [VPT2] turns those into anharmonicity constants,
// fundamentals, overtones, binary combination bands and α constants.
//
// # Units
//
// Inputs: positions in bohr, masses in unified atomic mass units (amu),
// Hessians in hartree/bohr², dipoles in e·bohr and their Cartesian
// derivatives in e (e·bohr/bohr). Outputs are labelled in their field
// names: wavenumbers, anharmonic constants and rotational constants in
// cm⁻¹, force constants of normal modes in mdyn/Å, reduced masses in amu,
// intensities in km/mol, energies in hartree unless a name says cm⁻¹.
// Force constants in normal coordinates (φ_ijk, φ_iijj) are in cm⁻¹ with
// respect to dimensionless normal coordinates q_i = Q_i (ω_i/ħ)^{1/2}, the
// convention of Mills (1972), so that V = ½ Σ ω_i q_i² + (1/6) Σ φ_ijk q_i
// q_j q_k + (1/24) Σ φ_ijkl q_i q_j q_k q_l.
//
// # Invariants
//
// The package imports no other wellscan package; it keeps its own copy of
// the few CODATA 2018 constants it needs (see constants.go). Functions do
// not retain or modify their slice arguments.
//
// # References
//
//   - E. B. Wilson, J. C. Decius, P. C. Cross, Molecular Vibrations
//     (McGraw-Hill, 1955): the GF method, normal coordinates, the
//     Teller–Redlich product rule (ch. 8).
//   - I. M. Mills, "Vibration–rotation structure in asymmetric- and
//     symmetric-top molecules", in Molecular Spectroscopy: Modern Research,
//     eds. K. N. Rao, C. W. Mathews (Academic Press, 1972), pp. 115–140:
//     the VPT2 anharmonicity and α constants in dimensionless normal
//     coordinates.
//   - D. Papoušek, M. R. Aliev, Molecular Vibrational–Rotational Spectra
//     (Elsevier, 1982), ch. 10–11: the same formulas, Coriolis ζ constants.
//   - J. M. L. Martin, T. J. Lee, P. R. Taylor, J.-P. François, J. Chem.
//     Phys. 103, 2589 (1995), doi:10.1063/1.469681: the Fermi-resonance
//     test on the size of the resonant second-order term and the
//     deperturbed treatment.
//   - P. M. Morse, Phys. Rev. 34, 57 (1929), doi:10.1103/PhysRev.34.57:
//     ω_e x_e = ω_e²/(4 D_e), used by the tests.
//   - C. L. Pekeris, Phys. Rev. 45, 98 (1934),
//     doi:10.1103/PhysRev.45.98: α_e of the Morse oscillator, used by the
//     tests.
package forcefield
