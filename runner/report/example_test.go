package report_test

import (
	"fmt"
	"os"

	"wellscan/runner/report"
)

func ExampleWriteCSV() {
	e := func(v float64) *float64 { return &v }
	in := report.Input{
		Axes: []report.Axis{{Name: "r", Kind: "distance", Unit: "angstrom", Digits: 3}},
		Points: []report.Point{
			{Key: "r=1.100", Values: []float64{1.1}, State: "done", Energy: e(-112.70)},
			{Key: "r=1.150", Values: []float64{1.15}, State: "done", Energy: e(-112.69)}, // invented energies
			{Key: "r=1.200", Values: []float64{1.2}, State: "failed"},
		},
	}
	// 0.01 E_h = 2194.7463 cm⁻¹ = 26.254996 kJ/mol; 1.15 Å = 2.17319 bohr
	// (CODATA 2018 factors).
	if err := report.WriteCSV(os.Stdout, in); err != nil {
		fmt.Println(err)
	}
	// Output:
	// key,r [angstrom],r [bohr],energy [hartree],relative [cm-1],relative [kJ/mol],state,scan
	// r=1.100,1.100,2.07870,-112.7000000000,0.0000,0.000000,done,rigid
	// r=1.150,1.150,2.17319,-112.6900000000,2194.7463,26.254996,done,rigid
	// r=1.200,1.200,2.26767,,,,failed,rigid
}
