package integral

import (
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// TestPairBlock_CoversEveryPairOnce reads all ket-pair blocks from the
// in-core array and from the direct (recomputing) source of the worked
// DZP water basis (s, p and Cartesian d shells) and compares each value
// with ERI.At: the in-core copy must be exact, the recomputed quartets
// agree to rounding (1e-13 Eh; the same code path computes both) — and
// every ket pair must appear exactly once.
func TestPairBlock_CoversEveryPairOnce(t *testing.T) {
	wc := loadWorked(t, "DZP", NormAxial)
	n := wc.nbf
	np := n * (n + 1) / 2
	eri, err := ComputeERI(t.Context(), wc.shells, NormAxial, 2)
	if err != nil {
		t.Fatal(err)
	}
	direct, err := NewDirect(wc.shells, NormAxial, 2, 1e-12)
	if err != nil {
		t.Fatal(err)
	}
	// Function indices of every packed pair, independently of the code.
	pk, pl := make([]int, np), make([]int, np)
	for k := range n {
		for l := 0; l <= k; l++ {
			pk[k*(k+1)/2+l], pl[k*(k+1)/2+l] = k, l
		}
	}
	type source interface {
		NumPairBlocks() int
		MaxPairBlock() int
	}
	for _, tc := range []struct {
		name  string
		src   source
		block func(b int, dst []float64, kls []int) ([]int, error)
		tol   float64
	}{
		{"in-core", eri, func(b int, dst []float64, kls []int) ([]int, error) { return eri.PairBlock(t.Context(), b, dst, kls) }, 0},
		{"direct", direct, func(b int, dst []float64, kls []int) ([]int, error) {
			return direct.PairBlock(t.Context(), b, dst, kls)
		}, 1e-13},
	} {
		t.Run(tc.name, func(t *testing.T) {
			seen := make([]int, np)
			dst := make([]float64, tc.src.MaxPairBlock()*np)
			for b := range tc.src.NumPairBlocks() {
				kls, err := tc.block(b, dst, nil)
				if err != nil {
					t.Fatal(err)
				}
				for x, KL := range kls {
					seen[KL]++
					for i := range n {
						for j := 0; j <= i; j++ {
							k, l := pk[KL], pl[KL]
							got, want := dst[x*np+PairIndex(i, j)], eri.At(i, j, k, l)
							if !scalar.EqualWithinAbs(got, want, tc.tol) {
								t.Fatalf("block %d: (%d%d|%d%d) = %.16g, want %.16g", b, i, j, k, l, got, want)
							}
						}
					}
				}
			}
			for KL, c := range seen {
				if c != 1 {
					t.Errorf("ket pair %d appears %d times", KL, c)
				}
			}
			if _, err := tc.block(tc.src.NumPairBlocks(), dst, nil); err == nil {
				t.Error("block out of range: no error")
			}
		})
	}
}
