package integral

import (
	"fmt"
	"testing"
)

func BenchmarkBoys(b *testing.B) {
	f := make([]float64, boysMaxM+1)
	for _, m := range []int{0, 2, 8} {
		b.Run(fmt.Sprintf("m=%d", m), func(b *testing.B) {
			b.ReportAllocs()
			t := 0.0
			for b.Loop() {
				boys(t, m, f)
				t += 0.37
				if t > 60 {
					t = 0
				}
			}
		})
	}
}
