package basis_test

import (
	"fmt"

	"wellscan/planner"
	"wellscan/runner/hf/basis"
)

func ExampleLookup() {
	s, err := basis.Lookup("cc-pvdz")
	if err != nil {
		fmt.Println(err)
		return
	}
	o, _ := planner.ElementBySymbol("O")
	h, _ := planner.ElementBySymbol("H")
	// Water near its equilibrium geometry (r = 0.957 Å, 104.5°, from
	// memory), positions in bohr; the count does not depend on it.
	water, err := planner.NewMolecule([]planner.Atom{
		planner.NewAtom(o, [3]float64{0, 0, 0}),
		planner.NewAtom(h, [3]float64{0, 1.431, 1.108}),
		planner.NewAtom(h, [3]float64{0, -1.431, 1.108}),
	}, 0, 1)
	if err != nil {
		fmt.Println(err)
		return
	}
	n, _ := s.NumFunctions(water, basis.ConventionAsSet)
	c, _ := s.NumFunctions(water, basis.ConventionCartesian)
	fmt.Printf("%s: %d functions for H2O (%d with Cartesian d)\n", s.Name(), n, c)
	// Output:
	// cc-pVDZ: 24 functions for H2O (25 with Cartesian d)
}
