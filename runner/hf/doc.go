// Package hf is the built-in Hartree–Fock engine: the self-consistent-field
// (SCF) solver for restricted (RHF) and unrestricted (UHF) Hartree–Fock,
// the orbital file used to start one scan point from its neighbour, and
// simple one-electron properties (Mulliken charges, dipole moment).
//
// # Overview
//
// [RunSCF] works on matrices: the overlap S and core Hamiltonian H of a
// basis, and a [JKBuilder] that turns densities into Coulomb and exchange
// matrices. The integral package (wellscan/runner/hf/integral) provides
// in-core and direct JK builders; any other implementation of the one-method
// interface works too, which is how the tests drive the solver from
// published integral files.
//
// The iteration is Roothaan–Hall (RHF) or Pople–Nesbet (UHF) with Pulay's
// DIIS on the orbital-gradient (commutator) error, and a fall-back chain
// (damping, then level shifting, then a restart from another guess) for the
// cases where DIIS stalls or the energy keeps rising. A run that does not
// converge is still a result: [SCFResult.Converged] is false, Status and
// Reason say why, and RunSCF also returns an error that wraps
// [ErrNotConverged].
//
// Starting guesses: the core Hamiltonian, GWH, and the superposition of
// spherically averaged atomic densities ([AtomicGuess], "atoms"), plain or
// with spin-polarised atoms ("atoms-spin") for broken-symmetry UHF. [Energy]
// starts RHF from the atoms guess and runs every cold guess for UHF,
// keeping the lowest converged state ([Result.Trials] lists them).
//
// References:
//   - C. C. J. Roothaan, Rev. Mod. Phys. 23, 69 (1951), doi:10.1103/RevModPhys.23.69.
//   - J. A. Pople and R. K. Nesbet, J. Chem. Phys. 22, 571 (1954), doi:10.1063/1.1740120.
//   - P. Pulay, Chem. Phys. Lett. 73, 393 (1980), doi:10.1016/0009-2614(80)80396-4.
//   - P. Pulay, J. Comput. Chem. 3, 556 (1982), doi:10.1002/jcc.540030413.
//   - V. R. Saunders and I. H. Hillier, Int. J. Quantum Chem. 7, 699 (1973), doi:10.1002/qua.560070407.
//   - P.-O. Löwdin, Adv. Quantum Chem. 5, 185 (1970), doi:10.1016/S0065-3276(08)60339-1
//     (symmetric and canonical orthogonalisation).
//   - A. Szabo and N. S. Ostlund, Modern Quantum Chemistry (Dover, 1996),
//     ch. 3 (SCF procedure, §3.4.6; UHF and ⟨S²⟩, §3.8).
//
// The citations and DOIs above are given from memory.
//
// [Energy] with Method MP2 adds second-order Møller–Plesset perturbation
// theory on top of the converged RHF (closed shell) or UHF (open shell)
// determinant ([RunMP2]); by default the atoms' noble-gas cores are frozen.
// Methods CCSD and CCSDT add closed-shell coupled cluster with singles and
// doubles, and the perturbative triples (T), on an RHF determinant
// ([RunCCSD]; open shells are refused with [ErrCCReference]), with the same
// frozen-core default. [ComputeLimit] extrapolates a correlated method to
// the basis-set limit from two correlation-consistent sets (X⁻³ for the
// correlation energy, Karton–Martin for Hartree–Fock) and can add a
// core–valence correction; each of its components is a separate [Energy]
// calculation ([LimitRecipe.Components], [CombineLimit]).
//
// # Units
//
// Atomic units throughout: energies in hartree (Eh), lengths in bohr,
// dipole moments in e·bohr. Conversions to eV, Å or debye belong at the
// edges of the program, not here.
//
// # Conventions
//
// Spin densities are D^σ_μν = Σ_i^occ C^σ_μi C^σ_νi (no factor 2). For RHF
// only the α density is iterated; the total density is 2D^α. Fock matrices
// are F^σ = H + J[D^α + D^β] − K[D^σ], and the electronic energy is
// E = ½ Σ_σ Σ_μν D^σ_μν (H_μν + F^σ_μν).
//
// # Concurrency
//
// RunSCF is safe to call from several goroutines at once with different
// inputs; it does not modify S, H or the guess. Parallelism inside one SCF
// lives in the JKBuilder.
package hf
