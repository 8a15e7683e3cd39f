// Package geomopt minimises the energy of a molecule over its nuclear
// positions, with internal coordinates held at chosen values, and
// differentiates energy-only methods by central differences. It knows no
// electronic-structure method: callers hand it a function that returns the
// energy and gradient of a geometry.
//
// # Units
//
// Atomic units inside: positions in bohr, energies in hartree, gradients
// in hartree/bohr, angles in radians. Conversions to Å and degrees belong
// to the callers' edges.
package geomopt
