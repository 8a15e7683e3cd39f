// Package parsers reads text that other people's programs and files
// produce: XYZ geometries and (with the external-command backend) energies
// extracted from program output. It imports no other wellscan package.
//
// # Invariants
//
// No parser panics on any input; every error names the source (file name or
// the label the caller gave) and the line it concerns. Every parser has a
// fuzz target.
package parsers
