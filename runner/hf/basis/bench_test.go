package basis_test

import (
	"testing"

	"wellscan/runner/hf/basis"
)

func BenchmarkLookup(b *testing.B) {
	for _, name := range []string{"STO-3G", "cc-pVTZ"} {
		b.Run(name, func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				if _, err := basis.Lookup(name); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

func BenchmarkSet_Shells(b *testing.B) {
	s, err := basis.Lookup("cc-pVTZ")
	if err != nil {
		b.Fatal(err)
	}
	mol := molecule(b, "O", "H", "H")
	b.ReportAllocs()
	for b.Loop() {
		if _, err := s.Shells(mol, basis.ConventionAsSet); err != nil {
			b.Fatal(err)
		}
	}
}
