package hf_test

import (
	"context"
	"fmt"

	"gonum.org/v1/gonum/mat"

	"wellscan/runner/hf"
)

// smallJK is an in-core JKBuilder over a full n⁴ array of (ij|kl).
type smallJK struct {
	n   int
	eri []float64
}

func (b smallJK) JK(_ context.Context, dens []*mat.SymDense, j, k []*mat.SymDense) error {
	n := b.n
	at := func(p, q, r, s int) float64 { return b.eri[((p*n+q)*n+r)*n+s] }
	for d, D := range dens {
		for p := range n {
			for q := p; q < n; q++ {
				var jv, kv float64
				for r := range n {
					for s := range n {
						jv += at(p, q, r, s) * D.At(r, s)
						kv += at(p, r, q, s) * D.At(r, s)
					}
				}
				j[d].SetSym(p, q, jv)
				k[d].SetSym(p, q, kv)
			}
		}
	}
	return nil
}

// H2 at 1.4 bohr in a minimal basis, from the 4-decimal integrals printed
// by Szabo & Ostlund, Modern Quantum Chemistry (Dover, 1996), §3.5.2 (from
// memory); their RHF energy is −1.1167 Eh (the rounded integrals give
// −1.1168, hence three decimals below).
func ExampleRunSCF() {
	s := mat.NewSymDense(2, []float64{1, 0.6593, 0.6593, 1})
	h := mat.NewSymDense(2, []float64{-1.1204, -0.9584, -0.9584, -1.1204})
	// Unique integrals (11|11) = (22|22), (11|22), (21|11) = (21|22), (21|21).
	v := map[[4]int]float64{}
	set := func(x float64, p, q, r, s int) {
		for _, i := range [][4]int{{p, q, r, s}, {q, p, r, s}, {p, q, s, r}, {q, p, s, r}, {r, s, p, q}, {s, r, p, q}, {r, s, q, p}, {s, r, q, p}} {
			v[i] = x
		}
	}
	set(0.7746, 0, 0, 0, 0)
	set(0.7746, 1, 1, 1, 1)
	set(0.5697, 0, 0, 1, 1)
	set(0.4441, 1, 0, 0, 0)
	set(0.4441, 1, 0, 1, 1)
	set(0.2970, 1, 0, 1, 0)
	eri := make([]float64, 16)
	for i, x := range v {
		eri[((i[0]*2+i[1])*2+i[2])*2+i[3]] = x
	}

	res, err := hf.RunSCF(context.Background(), hf.SCFInput{
		S: s, Hcore: h, JK: smallJK{n: 2, eri: eri}, ENuc: 1 / 1.4,
		NAlpha: 1, NBeta: 1, Restricted: true,
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("converged: %v\n", res.Converged)
	fmt.Printf("E = %.3f Eh\n", res.Energy)
	fmt.Printf("orbital energies: %.2f %.2f Eh\n", res.Orbitals.EnergiesAlpha[0], res.Orbitals.EnergiesAlpha[1])
	// Output:
	// converged: true
	// E = -1.117 Eh
	// orbital energies: -0.58 0.67 Eh
}
