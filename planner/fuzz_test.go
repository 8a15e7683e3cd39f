package planner

import (
	"testing"
)

// FuzzDecode: any bytes either decode to a spec or give an error, never a
// panic; a decoded spec plans its grid without panicking, and decoding
// its own text again succeeds.
func FuzzDecode(f *testing.F) {
	for _, s := range []string{
		"[molecule]\ngeometry = \"\"\"\nC 0 0 0\nO 0 0 1.13\n\"\"\"\n[[scan]]\nname = \"r\"\nbond = [1, 2]\nfrom = 1.0\nto = 1.3\nstep = 0.05\n[engine]\nkind = \"model\"\n[[engine.model.term]]\nshape = \"morse\"\ndepth = 0.41\nwidth = 1.22\ncenter = 2.135\n",
		"[molecule]\ngeometry = \"\"\"\nO 0 0 0\nH 0 0 0.96\nH 0 0.93 -0.24\n\"\"\"\n[[scan]]\nname = \"a\"\nangle = [2, 1, 3]\nvalues = [100, 104.5, 110]\n[engine]\nkind = \"builtin\"\nmethod = \"rhf\"\nbasis = \"STO-3G\"\n",
		"[molecule]\ngeometry = \"\"\"\nO 0 0 0\nH 0 0.757 -0.586\nH 0 -0.757 -0.586\n\"\"\"\n[engine]\nkind = \"builtin\"\nmethod = \"rhf\"\nbasis = \"STO-3G\"\n[forcefield]\norder = \"quartic\"\n[[forcefield.isotopologue]]\nname = \"D2O\"\nisotopes = { 2 = \"2H\", 3 = \"2H\" }\nquartic = true\n",
		"[molecule]\ngeometry = \"\"\"\nC 0 0 0\nO 0 0 1.13\n\"\"\"\n[forcefield]\norder = \"harmonic\"\n",
		"title = 1", "[[scan]]\nname = \"r\"\nbond = [1, 99]", "[molecule]\ncharge = -9223372036854775808",
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		s, err := Decode(data, "fuzz.toml")
		if err != nil {
			return
		}
		if len(s.InitialPoints()) > 1<<20 {
			t.Fatalf("%d initial points", len(s.InitialPoints()))
		}
		if _, err := Decode(s.Text(), "fuzz.toml"); err != nil {
			t.Fatalf("decoded spec does not decode again: %v", err)
		}
	})
}
