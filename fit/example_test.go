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
