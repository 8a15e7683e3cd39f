// Package planner decides what a scan computes: the molecule (elements,
// isotopes, masses, units), internal coordinates and how moving one
// displaces which atoms, the scan spec, the grid, adaptive refinement and
// stable point keys.
//
// A spec with a [forcefield] table instead of [[scan]] blocks plans a force
// field (forcefield.go): stage-1 displacements along a symmetry-adapted
// basis of the vibrational space for the Hessian, then, planned from their
// energies by [Refine], stage-2 displacements along the normal modes for
// the cubic and semi-diagonal quartic constants. Their keys ("hess.d1=+1",
// "qff.q1=+1,q2=-1") are stable, their values are Cartesian displacements
// (bohr), and displaced geometries that are images of each other under a
// symmetry operation of the reference are computed once.
//
// # Units
//
// Everything inside is atomic units: positions in bohr, energies in hartree,
// masses in unified atomic mass units (amu) where a mass is stored, converted
// to electron masses only where a formula needs it. Conversions to and from
// Å, degrees, eV, cm⁻¹ and kJ/mol happen at the edges with the constants in
// units.go (CODATA 2018).
//
// # Concurrency
//
// Values returned by this package are plain data; a Molecule may be read from
// several goroutines but must not be mutated while shared.
package planner
