// Package report writes the files a finished (or partly finished) scan is
// read through: the curve as a table (curve.csv), the fit as JSON
// (fit.json), a figure of the curve as SVG and PNG, and a one-page summary
// in Markdown and HTML. For a force-field job, [AnalyzeForceField] turns
// the done displacements into harmonic and VPT2 results per isotopologue
// (package fit/forcefield does the numerics), written as Markdown tables,
// JSON, CSV and a stick spectrum ([NewFFFigure]).
//
// The package takes plain data ([Input]): the command layer reads the
// store, runs the fit and fills it in. It never opens a store and never
// prints.
//
// # Units
//
// Coordinates arrive in the spec's display units (Å or bohr for lengths,
// degrees for angles) and are written in those and in the other unit of
// the pair (bohr or Å; radians). Energies arrive in hartree and are
// written in hartree and, relative to the fitted minimum, in cm⁻¹ and
// kJ/mol, with the CODATA 2018 factors of package planner.
//
// # Figure
//
// A 1-D scan is drawn as E − E_min against the coordinate: the points
// coloured by state, the fitted curve (the global extended Morse or Morse
// fit of a bond stretch, else the quartic Taylor series of the local
// polynomial about the minimum, else a not-a-knot cubic spline through the
// points), the minimum, the vibrational levels of the principal
// isotopologue as horizontal lines between their classical turning
// points, and below it a panel of residuals (point − fitted curve). A 2-D
// scan is drawn as a contour map of the sampled surface with the points
// and the fitted stationary point.
//
// The figure is rendered with gonum.org/v1/plot, which writes both SVG and
// PNG in pure Go (no cgo) and shares its numerics with gonum.
package report
