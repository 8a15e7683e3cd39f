package planner

import (
	"fmt"
	"strings"

	"wellscan/parsers"
)

// MoleculeFromFrame builds a molecule from an XYZ frame whose coordinates
// are in unit. Labels may be element symbols, atomic numbers or isotope
// labels ("13C", "D"). source names the input in errors.
func MoleculeFromFrame(f parsers.Frame, unit LengthUnit, charge, multiplicity int, source string) (Molecule, error) {
	atoms := make([]Atom, len(f.Labels))
	for i, l := range f.Labels {
		e, a, m, err := ParseIsotope(l)
		if err != nil {
			return Molecule{}, fmt.Errorf("planner: %s: atom %d: %s", source, i+1, strings.TrimPrefix(err.Error(), "planner: "))
		}
		var pos [3]float64
		for k := range 3 {
			pos[k] = unit.ToBohr(f.Coords[i][k])
		}
		atoms[i] = Atom{Element: e, Pos: pos, MassNumber: a, Mass: m}
	}
	mol, err := NewMolecule(atoms, charge, multiplicity)
	if err != nil {
		return Molecule{}, fmt.Errorf("%s: %w", source, err)
	}
	return mol, nil
}
