package analysis_test

import (
	"context"
	"fmt"
	"math"

	"wellscan/planner"
	"wellscan/runner/analysis"
)

// A methyl rotor of ethane (the geometry of the ethane example) on a
// model potential V = V3/2 (1 − cos 3τ), V3 = 0.005 E_h (invented):
// Analyse fits the whole period with a Fourier series, reports the one
// distinct minimum (three per turn), the barrier V3, and the harmonic
// torsional wavenumber with the reduced moment of inertia of the two
// methyl groups.
func ExampleAnalyse() {
	spec, err := planner.Decode([]byte(ethane), "scan.toml")
	if err != nil {
		fmt.Println(err)
		return
	}
	var pts []analysis.Point
	for _, p := range spec.InitialPoints() {
		pts = append(pts, analysis.Point{Key: p.Key, Values: p.Values, Energy: -79.2 + 0.0025*(1-math.Cos(3*p.Values[0]))})
	}
	res, err := analysis.Analyse(context.Background(), spec, pts, analysis.Options{NoLevels: true})
	if err != nil {
		fmt.Println(err)
		return
	}
	m := res.Torsion.Minima[0]
	fmt.Printf("%s: %d distinct minimum, %d per turn\n", res.Model, len(res.Torsion.Minima), m.Multiplicity)
	fmt.Printf("barrier %.1f cm⁻¹ (%.3f kcal/mol)\n", res.Barriers[0].HeightCm1, res.Barriers[0].HeightKcal)
	fmt.Printf("reduced moment %.4f amu·bohr², harmonic %.1f cm⁻¹\n", m.Inertia, m.HarmonicCm1)
	// Output:
	// torsion: 1 distinct minimum, 3 per turn
	// barrier 1097.4 cm⁻¹ (3.138 kcal/mol)
	// reduced moment 5.5902 amu·bohr², harmonic 326.1 cm⁻¹
}
