// Package integral computes one- and two-electron integrals over contracted
// Cartesian Gaussian shells for the built-in Hartree–Fock engine.
//
// # Overview
//
// A basis is a []Shell. Functions are numbered shell by shell in list
// order. Within a Cartesian shell the components are ordered
// lexicographically by (lx descending, ly descending): p x,y,z; d xx, xy,
// xz, yy, yz, zz; f xxx, xxy, xxz, xyy, xyz, xzz, yyy, yyz, yzz, zzz. A
// shell with Pure set and L ≥ 2 has 2L+1 real solid harmonics ordered
// m = −L … +L (for d: xy, yz, z², xz, x²−y² up to normalisation); for s and
// p Pure changes nothing and p stays x, y, z.
//
// Coefs multiply normalised primitives; each contracted function is
// renormalised. [NormPerComponent] gives every Cartesian component unit
// self-overlap; [NormAxial] gives every component the normalisation of
// x^L (⟨xy|xy⟩ = 1/3 for d), as in some published worked examples. Pure
// functions always have unit norm.
//
// # Methods
//
// One-electron integrals (overlap, kinetic, nuclear attraction, dipole)
// use the McMurchie–Davidson Hermite expansion: it is short, exact for any
// L, and its cost is negligible next to the two-electron part.
//
// Two-electron integrals use the Head-Gordon–Pople scheme: the
// Obara–Saika vertical recurrence builds [e0|f0] on the primitives, the
// primitives are contracted, and the horizontal recurrence (which does
// not depend on the exponents) moves angular momentum to the second
// centre of each pair on contracted quantities. For contracted basis
// sets this needs far fewer operations per primitive quartet than the
// Hermite scheme, which is where the time goes.
//
// References:
//   - L. E. McMurchie, E. R. Davidson, J. Comput. Phys. 26, 218 (1978),
//     doi:10.1016/0021-9991(78)90092-X.
//   - S. Obara, A. Saika, J. Chem. Phys. 84, 3963 (1986),
//     doi:10.1063/1.450106.
//   - M. Head-Gordon, J. A. Pople, J. Chem. Phys. 89, 5777 (1988),
//     doi:10.1063/1.455553.
//   - T. Helgaker, P. Jørgensen, J. Olsen, Molecular Electronic-Structure
//     Theory, Wiley (2000), ch. 6 (solid harmonics) and ch. 9.
//
// Screening: primitive pairs with exp(−μ|AB|²) < 1e-18 are dropped;
// [ComputeERI] skips shell quartets whose Schwarz bound
// √(ab|ab)·√(cd|cd) is below 1e-15; [Direct] skips quartets whose Schwarz
// bound times the largest density element they touch is below the
// caller's threshold. J and K are linear in the density, so an SCF can
// pass density differences to [Direct.JK] for sharper screening.
//
// # Invariants
//
// [ERI.JK] and [Direct.JK] compute the same sums and agree to rounding
// (tested to 1e-12) when the direct threshold is small. Matrices are
// symmetric; [ERI.At] has the full 8-fold permutational symmetry.
//
// # Units
//
// Atomic units: centres and exponents in bohr and bohr⁻², integrals in
// hartree (or bohr for multipole integrals).
//
// # Concurrency
//
// All functions are safe for concurrent use. The package holds only
// read-only tables (Boys function grid, solid-harmonic coefficients,
// Cartesian index tables) computed deterministically at initialisation.
// [ComputeERI], [ERI.JK] and [Direct.JK] run on the requested number of
// goroutines, each with its own scratch and accumulators (nothing is
// allocated per shell quartet); results are summed after all workers
// finish, and every call returns only after its goroutines have exited.
package integral
