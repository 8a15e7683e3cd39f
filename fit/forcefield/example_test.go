package forcefield_test

import (
	"fmt"

	"wellscan/fit/forcefield"
)

// A diatomic with a harmonic force constant of 0.5 hartree/bohr² along
// its axis, analysed for two isotopologues from the same Hessian: ω =
// √(k/μ_AB). The mode's reduced mass is that of its normalised Cartesian
// displacement (m_H for H2, not the diatomic's m_H/2).
func ExampleAnalyze() {
	pos := [][3]float64{{0, 0, 0}, {0, 0, 1.4}} // bohr
	k := 0.5                                    // hartree/bohr²
	hess := make([]float64, 36)
	for _, e := range [][3]float64{{2, 2, k}, {5, 5, k}, {2, 5, -k}, {5, 2, -k}} {
		hess[int(e[0])*6+int(e[1])] = e[2]
	}
	for _, m := range [][]float64{{1.00782503, 1.00782503}, {1.00782503, 2.01410178}} {
		h, err := forcefield.Analyze(pos, m, hess)
		if err != nil {
			fmt.Println(err)
			return
		}
		fmt.Printf("ω = %.6g cm⁻¹, μ = %.6g amu, linear %v\n", h.WavenumbersCm1[0], h.ReducedMassAmu[0], h.Linear)
	}
	// Output:
	// ω = 5120.49 cm⁻¹, μ = 1.00783 amu, linear true
	// ω = 4435.04 cm⁻¹, μ = 1.20933 amu, linear true
}
