package integral_test

import (
	"context"
	"fmt"

	"wellscan/runner/hf/integral"
)

// H2 in STO-3G at R = 1.4 bohr. The printed values agree with the
// integrals tabulated by Szabo & Ostlund, Modern Quantum Chemistry
// (Macmillan 1982; Dover 1996), §3.5.2 (from memory): S12 = 0.6593,
// H11 = −1.1204, H12 = −0.9584, (11|11) = 0.7746, (11|22) = 0.5697,
// (21|11) = 0.4441, (21|21) = 0.2970.
func Example() {
	// STO-3G hydrogen 1s (ζ = 1.24): exponents and coefficients as in
	// the basis-set library.
	exps := []float64{3.42525091, 0.62391373, 0.16885540}
	coefs := []float64{0.15432897, 0.53532814, 0.44463454}
	a := [3]float64{0, 0, 0}
	b := [3]float64{0, 0, 1.4}
	shells := []integral.Shell{
		{L: 0, Center: a, Atom: 0, Exps: exps, Coefs: coefs},
		{L: 0, Center: b, Atom: 1, Exps: exps, Coefs: coefs},
	}
	nuclei := []integral.PointCharge{{Z: 1, Pos: a}, {Z: 1, Pos: b}}
	if err := integral.Validate(shells); err != nil {
		fmt.Println(err)
		return
	}
	s := integral.Overlap(shells, integral.NormPerComponent)
	t := integral.Kinetic(shells, integral.NormPerComponent)
	v := integral.Nuclear(shells, integral.NormPerComponent, nuclei)
	eri, err := integral.ComputeERI(context.Background(), shells, integral.NormPerComponent, 1)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("S12 = %.4f\n", s.At(0, 1))
	fmt.Printf("H11 = %.4f  H12 = %.4f\n", t.At(0, 0)+v.At(0, 0), t.At(0, 1)+v.At(0, 1))
	fmt.Printf("(11|11) = %.4f  (11|22) = %.4f  (21|11) = %.4f  (21|21) = %.4f\n",
		eri.At(0, 0, 0, 0), eri.At(0, 0, 1, 1), eri.At(1, 0, 0, 0), eri.At(1, 0, 1, 0))
	// Output:
	// S12 = 0.6593
	// H11 = -1.1204  H12 = -0.9584
	// (11|11) = 0.7746  (11|22) = 0.5697  (21|11) = 0.4441  (21|21) = 0.2970
}
