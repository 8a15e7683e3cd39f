package hf_test

import (
	"context"
	"fmt"

	"wellscan/planner"
	"wellscan/runner/hf"
	"wellscan/runner/hf/basis"
)

// The published worked water example (geometry in bohr, STO-3G data
// version 0, all electrons correlated): E(2) = −0.049149636120 Eh
// (CrawfordGroup ProgrammingProjects commit 297fda1, Project #4); the
// same/opposite-spin split is this engine's own (checked against the
// spin-orbital formula in TestRunMP2_SpinOrbitalBruteForce).
func ExampleEnergy_mp2() {
	o, _ := planner.ElementBySymbol("O")
	h, _ := planner.ElementBySymbol("H")
	mol, err := planner.NewMolecule([]planner.Atom{
		planner.NewAtom(o, [3]float64{0, -0.143225816552, 0}),
		planner.NewAtom(h, [3]float64{1.638036840407, 1.136548822547, 0}),
		planner.NewAtom(h, [3]float64{-1.638036840407, 1.136548822547, 0}),
	}, 0, 1)
	if err != nil {
		fmt.Println(err)
		return
	}
	set, err := basis.Lookup("STO-3G-v0")
	if err != nil {
		fmt.Println(err)
		return
	}
	res, err := hf.Energy(context.Background(), mol, hf.Options{Basis: set, Method: hf.MP2, FrozenCore: hf.AllElectron})
	if err != nil {
		fmt.Println(err)
		return
	}
	m := res.MP2
	fmt.Printf("reference %s %.6f\n", m.Reference, m.ReferenceEnergy)
	fmt.Printf("E(2) %.6f = same spin %.6f + opposite spin %.6f\n", m.Correlation, m.SameSpin, m.OppositeSpin)
	fmt.Printf("Energy %.6f\n", res.Energy)
	// Output:
	// reference rhf -74.942080
	// E(2) -0.049150 = same spin -0.003106 + opposite spin -0.046043
	// Energy -74.991230
}
