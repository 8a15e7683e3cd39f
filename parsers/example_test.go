package parsers_test

import (
	"fmt"
	"log"

	"wellscan/parsers"
)

func ExampleExtractorSpec_Compile() {
	// An output layout invented for this example.
	output := []byte(`toy run, 3 cycles
 cycle 1  E = -75.9
 cycle 3  E = -76.0107
TOTAL ENERGY = -0.2068791D+04 eV
`)
	x, err := parsers.ExtractorSpec{Label: "TOTAL ENERGY", Unit: "eV"}.Compile()
	if err != nil {
		log.Fatal(err)
	}
	e, err := x.Extract(output)
	if err != nil {
		log.Fatal(err)
	}
	fmt.Printf("%s: %.6f hartree\n", x, e)

	first, _ := parsers.ExtractorSpec{Pattern: `E = (?P<energy>\S+)`, Match: "first", Unit: "hartree"}.Compile()
	e, _ = first.Extract(output)
	fmt.Printf("%s: %.6f hartree\n", first, e)
	// Output:
	// label "TOTAL ENERGY" (last match, eV): -76.026667 hartree
	// pattern "E = (?P<energy>\\S+)" (first match, hartree): -75.900000 hartree
}
