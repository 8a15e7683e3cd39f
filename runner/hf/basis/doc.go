// Package basis is the built-in Hartree–Fock engine's library of Gaussian
// basis sets: the sets embedded in the program (STO-3G, 3-21G, the 6-31G
// family, 6-311G**, cc-pVDZ, cc-pVTZ, cc-pVQZ, aug-cc-pVDZ, aug-cc-pVTZ,
// cc-pCVTZ) and user basis files in
// wellscan's own plain-text format (FORMAT.md beside this file).
//
// # Overview
//
// [Lookup] finds an embedded set by name ("6-31G*", "6-31g*" and "6-31gs"
// are the same set); [List] describes all of them; [Parse] and [LoadFile]
// read a user file. [Set.Shells] turns a set and a molecule into the
// contracted shells the integral code works on, one [integral.Shell] per
// contracted function column, and [Set.Write] prints a set (or some of its
// elements) in the file format.
//
// Each set records how its shells with l ≥ 2 are meant to be used, per
// element: Cartesian products (six d and ten f functions per shell) for the
// Pople sets, real solid harmonics (five d, seven f) for the
// correlation-consistent sets, and for 6-311G** what the source data
// says (Li–Ne spherical, Na–Ar Cartesian). [ConventionCartesian] and
// [ConventionSpherical] override this for a whole calculation.
//
// # Units
//
// Exponents are in bohr⁻², shell centres in bohr (the molecule's atomic
// positions). Coefficients multiply normalised primitive Gaussians; the
// contractions are not all normalised (6-311G** Ar, second p contraction, is
// a factor 10 small in the source data), so the integral code renormalises
// every contracted function.
//
// # Invariants
//
// Every number keeps the decimal text of its source: the embedded data are
// the Basis Set Exchange strings unchanged (data/README.md), and a value
// handed out is strconv.ParseFloat of that text. A [Set] is never modified
// after it is built.
//
// # Concurrency
//
// The package has no mutable state: [Lookup] parses the embedded file each
// time it is called (about a millisecond of CPU
// time for the largest set). A *Set may be used from several
// goroutines at once; slices it returns are fresh copies owned by the
// caller.
//
// References:
//
// The embedded data come from the Basis Set Exchange data library: B. P.
// Pritchard, D. Altarawy, B. Didier, T. D. Gibson, T. L. Windus, J. Chem.
// Inf. Model. 59, 4814 (2019), doi:10.1021/acs.jcim.9b00725. The
// literature of each set is in its file's cite lines and in
// [Set.References].
package basis

//go:generate go run ./internal/convert -src ../../../../shared/reference/basis -dst data
