// Package planner decides what a scan computes: the molecule (elements,
// isotopes, masses, units), internal coordinates and how moving one
// displaces which atoms, the scan spec, the grid, adaptive refinement and
// stable point keys.
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
