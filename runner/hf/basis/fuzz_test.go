package basis_test

import (
	"bytes"
	"os"
	"strings"
	"testing"

	"wellscan/planner"
	"wellscan/runner/hf/basis"
)

// FuzzParse checks that Parse never panics, and that whatever it accepts
// can be written, read back unchanged, and turned into shells.
func FuzzParse(f *testing.F) {
	f.Add(userFile)
	f.Add("wellscan-basis 1\nelement H\nshell s\n  1.0  1.0\n")
	f.Add("wellscan-basis 1\nharmonics spherical\nelement O\nshell d\n 1.2 1.0 0.5\n 0.3 0 1\n")
	f.Add("wellscan-basis 1\r\ntitle x\r\nelement he\r\nshell S\r\n 1D0 1d0\r\n")
	for _, name := range []string{"data/6-311gss.basis"} {
		b, err := os.ReadFile(name)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(string(b))
	}
	f.Fuzz(func(t *testing.T, in string) {
		s, err := basis.Parse(strings.NewReader(in), "fuzz.basis")
		if err != nil {
			return
		}
		var a, b bytes.Buffer
		if err := s.Write(&a); err != nil {
			t.Fatalf("accepted file does not write: %v", err)
		}
		s2, err := basis.Parse(bytes.NewReader(a.Bytes()), "fuzz.basis")
		if err != nil {
			t.Fatalf("written file does not parse: %v\n%s", err, a.String())
		}
		if err := s2.Write(&b); err != nil || a.String() != b.String() {
			t.Fatalf("parse → write → parse → write not stable (%v)", err)
		}
		var atoms []planner.Atom
		for i, sym := range s.Elements() {
			e, err := planner.ElementBySymbol(sym)
			if err != nil {
				t.Fatalf("set holds unknown element %q", sym)
			}
			atoms = append(atoms, planner.NewAtom(e, [3]float64{float64(i), 0, 0}))
		}
		mol := planner.Molecule{Atoms: atoms}
		for _, conv := range []basis.Convention{basis.ConventionAsSet, basis.ConventionCartesian, basis.ConventionSpherical} {
			sh, err := s.Shells(mol, conv)
			if err != nil {
				t.Fatalf("Shells(%v): %v", conv, err)
			}
			n, err := s.NumFunctions(mol, conv)
			sum := 0
			for _, x := range sh {
				sum += x.NumFunctions()
			}
			if err != nil || n != sum {
				t.Fatalf("NumFunctions(%v) = %d, %v; shells give %d", conv, n, err, sum)
			}
		}
	})
}
