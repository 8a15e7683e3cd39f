package fit_test

import (
	"context"
	"fmt"
	"math"

	"wellscan/fit"
)

// morseCurve samples an invented Morse curve (D_e = 0.2 E_h, a = 1.1
// bohr⁻¹, r_e = 2.4 bohr) on an even grid.
func morseCurve(n int, lo, hi float64) (r, e []float64) {
	for i := range n {
		x := lo + (hi-lo)*float64(i)/float64(n-1)
		s := 1 - math.Exp(-1.1*(x-2.4))
		r = append(r, x)
		e = append(e, -300+0.2*s*s)
	}
	return r, e
}

func ExampleMorse() {
	r, e := morseCurve(60, 1.8, 8)
	m, err := fit.Morse(r, e)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("D_e = %.6g E_h, a = %.6g /bohr, r_e = %.6g bohr\n", m.De, m.Beta[0], m.Re)
	// Output:
	// D_e = 0.2 E_h, a = 1.1 /bohr, r_e = 2.4 bohr
}

func ExampleCurve() {
	r, e := morseCurve(81, 1.9, 3.5)
	res, err := fit.Curve(context.Background(), r, e, fit.Options{
		Isotopologues: []fit.MassSet{{Name: "invented diatomic", Masses: []float64{12, 19}}},
		NoGlobal:      true,
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	m := res.Minima[0]
	fmt.Printf("r_e = %.6g Å\n", m.REAngstrom)
	fmt.Printf("ω_e = %.1f cm⁻¹, ω_e x_e = %.2f cm⁻¹\n", m.OmegaE, m.OmegaExe)
	fmt.Printf("G(0) = %.1f cm⁻¹\n", m.Levels[0])
	// The analytic Morse values (Morse 1929) are ω_e = a√(2D_e/μ) =
	// 1318.7 cm⁻¹, ω_e x_e = ω_e²/(4D_e) = 9.90 cm⁻¹, G(0) = 656.9 cm⁻¹.

	// Output:
	// r_e = 1.27003 Å
	// ω_e = 1318.7 cm⁻¹, ω_e x_e = 9.90 cm⁻¹
	// G(0) = 656.9 cm⁻¹
}

// A threefold hindered rotor, V(φ) = V3/2 (1 − cos 3φ) with V3 = 0.005 E_h
// (invented, ethane-like) and a reduced moment of inertia of 5.5
// amu·bohr², sampled every 10° over one period of 120°. The barrier is V3
// (1097.4 cm⁻¹) and the harmonic wavenumber √(9V3/2 / I) (328.8 cm⁻¹),
// both exact for the model.
func ExampleTorsion() {
	p := 2 * math.Pi / 3
	var x, e []float64
	for i := range 12 {
		v := p * float64(i) / 12
		x = append(x, v)
		e = append(e, -79.2+0.0025*(1-math.Cos(3*v)))
	}
	res, err := fit.Torsion(context.Background(), x, e, p, fit.TorsionOptions{
		Inertia: func(float64) (float64, error) { return 5.5, nil },
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	m, b := res.Minima[0], res.Barriers[0]
	fmt.Printf("minimum at %.0f°, %d per turn, harmonic %.1f cm⁻¹\n", m.XDegree, m.Multiplicity, m.HarmonicCm1)
	fmt.Printf("barrier at %.0f°: %.1f cm⁻¹ = %.3f kcal/mol\n", b.XDegree, b.HeightCm1, b.HeightKcal)
	fmt.Printf("rotor: %d wells per turn, ZPE %.1f cm⁻¹\n", res.Rotor.WellsPerTurn, res.Rotor.ZPE)
	// Output:
	// minimum at 0°, 3 per turn, harmonic 328.8 cm⁻¹
	// barrier at 60°: 1097.4 cm⁻¹ = 3.138 kcal/mol
	// rotor: 3 wells per turn, ZPE 158.0 cm⁻¹
}
