// Package parsers reads text that other people's programs and files
// produce: XYZ geometries, and energies extracted from program output for
// the external-command backend. It imports no other wellscan package.
//
// # Overview
//
// An energy extractor is described by an [ExtractorSpec] (plain data, as a
// spec states it) and compiled into an [Extractor]: a regular expression
// with a named group energy, a "label = value" line, or a path into JSON
// output ([ParseJSONPath]); each picks the first, last or n-th occurrence
// and names the unit the program writes. [Plausibility] rejects values that
// cannot be right for a molecule (positive total energy, a spike against
// both neighbours).
//
// [Extractor.ExtractFrom] and [GradientExtractor.ExtractFrom] read from an
// io.Reader and return exactly what Extract returns for the same bytes,
// in memory that does not grow with the output wherever the extractor
// allows it: labels, patterns that cannot match across a line break and
// gradient blocks are read line by line, keeping only the matches the
// match rule needs; JSON is decoded one document at a time; a pattern
// that can span lines reads the whole output, within a cap
// ([ErrOutputTooLarge]).
//
// XYZ files are read and written with [ReadXYZ] and [WriteXYZ] (several
// frames per file); [FormatXYZComment] and [ParseXYZComment] put a point's
// key and energy on a frame's comment line.
//
// # Units
//
// Extracted energies are returned in hartree, converted from hartree, eV,
// kJ/mol, kcal/mol or cm⁻¹ with CODATA 2018 factors ([HartreeInEV] and
// friends). XYZ coordinates are returned as written; the caller knows the
// file's unit.
//
// # Invariants
//
// No parser panics on any input; every error names the source (file name,
// the label the caller gave, or the extractor) and the line or item it
// concerns, and extraction errors quote the last lines of the output
// ([Tail]). Numbers may carry Fortran D exponents ([ParseFloat]). Every
// parser has a fuzz target.
//
// # Concurrency
//
// Compiled extractors and paths are immutable and safe for concurrent use.
package parsers
