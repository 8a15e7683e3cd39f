package main

import (
	"fmt"
	"io"
	"os"

	"github.com/spf13/pflag"

	"wellscan/parsers"
	"wellscan/planner"
	"wellscan/runner/hf/basis"
)

// moleculeFlags are the flags that energy and relax share: the one
// molecule read from an XYZ file (units, charge, multiplicity), the basis
// set and its convention, the goroutines and the output form.
type moleculeFlags struct {
	basis, basisFile, convention string
	charge, multiplicity         int
	units                        string
	json                         bool
	workers                      int
}

func (o *moleculeFlags) AddFlags(fs *pflag.FlagSet) {
	fs.StringVar(&o.basis, "basis", "6-31G*", "basis set from the built-in library (see 'wellscan basis list'); case-insensitive")
	fs.StringVar(&o.basisFile, "basis-file", "", "read the basis set from this file (wellscan basis format) instead of the library")
	fs.StringVar(&o.convention, "convention", "as-set", "d and f shells: as-set (as the basis set defines them), cartesian (every x^a y^b z^c product, 6 d and 10 f functions per shell) or spherical (2l+1 real solid harmonics, 5 d and 7 f)")
	fs.IntVar(&o.charge, "charge", 0, "total charge of the molecule")
	fs.IntVar(&o.multiplicity, "multiplicity", 0, "spin multiplicity 2S+1 (default: Hund's rules for a lone atom, the lowest consistent with the electron count for a molecule)")
	fs.StringVar(&o.units, "units", "angstrom", "units of the XYZ coordinates: angstrom or bohr")
	fs.BoolVar(&o.json, "json", false, "print one JSON object instead of the text")
	fs.IntVar(&o.workers, "workers", 0, "goroutines for integrals, Fock builds and gradients (default: all CPUs)")
}

// checkUnitsConvention checks --units and --convention before any work.
func (o *moleculeFlags) checkUnitsConvention() (planner.LengthUnit, basis.Convention, error) {
	unit, ok := planner.ParseLengthUnit(o.units)
	if !ok {
		return unit, 0, usageError{fmt.Errorf("--units: unknown unit %q (expected angstrom or bohr)", o.units)}
	}
	conv, err := basis.ParseConvention(o.convention)
	if err != nil {
		return unit, 0, usageError{fmt.Errorf("--convention: %w", err)}
	}
	return unit, conv, nil
}

// readMolecule reads the one geometry in path ("-": standard input; at
// most 64 MiB; a standard XYZ frame or bare "element x y z" lines, as in a
// spec) and builds the molecule with the flags' charge and multiplicity.
func (o *moleculeFlags) readMolecule(stdin io.Reader, path string, unit planner.LengthUnit) (planner.Molecule, error) {
	r := stdin
	if path != "-" {
		if err := planner.CheckRegular(path); err != nil {
			return planner.Molecule{}, err
		}
		f, err := os.Open(path)
		if err != nil {
			return planner.Molecule{}, err
		}
		defer f.Close()
		r = f
	} else {
		path = "<stdin>"
	}
	text, err := io.ReadAll(io.LimitReader(r, 64<<20))
	if err != nil {
		return planner.Molecule{}, fmt.Errorf("%s: %w", path, err)
	}
	frame, err := parsers.ReadGeometryBlock(string(text), path, 1)
	if err != nil {
		return planner.Molecule{}, err
	}
	mol, err := planner.MoleculeFromFrame(frame, unit, o.charge, o.multiplicity, path)
	return mol, err
}

// basisSet is the set --basis-file reads or --basis names.
func (o *moleculeFlags) basisSet() (*basis.Set, error) {
	if o.basisFile != "" {
		return basis.LoadFile(o.basisFile)
	}
	return basis.Lookup(o.basis)
}
