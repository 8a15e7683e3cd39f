package command_test

import (
	"fmt"
	"log"

	"wellscan/planner"
	"wellscan/runner/command"
)

// The README's example: testdata/morse.tmpl rendered for one point of an
// invented C–O stretch.
func ExampleConfig_Render() {
	c := command.Config{Template: "testdata/morse.tmpl", InputName: "point.inp"}
	r := 1.13 // Å
	input, err := c.Render(command.Job{
		Title: "toy CO stretch", Key: "r=1.13000",
		Coords: map[string]float64{"r": r}, CoordUnits: map[string]string{"r": "angstrom"},
		Atoms: []command.Atom{
			{Symbol: "C", Z: 6, Mass: 12},
			{Symbol: "O", Z: 8, Mass: 15.99491461957, Pos: [3]float64{0, 0, r * planner.AngstromInBohr}},
		},
		Multiplicity: 1,
	})
	if err != nil {
		log.Fatal(err)
	}
	fmt.Print(string(input))
	// Output:
	// # input for morse.awk (a layout invented for wellscan's tests)
	// title toy CO stretch
	// point r=1.13000
	// charge 0 multiplicity 1
	// atom C 0.0000000000 0.0000000000 0.0000000000
	// atom O 0.0000000000 0.0000000000 1.1300000000
	// end
}
