package planner

import (
	"math"
	"strings"
	"testing"
)

const relaxBase = `[molecule]
geometry = """
O 0 0 0
O 0 0 1.45
H 0.95 0 -0.2
H 0 0.95 1.65
"""
[[scan]]
name = "phi"
torsion = [3, 1, 2, 4]
values = [0, 90, 180]
%RELAX%
[engine]
kind = "builtin"
method = "rhf"
basis = "sto-3g"
%EXTRA%
`

func relaxText(relax, extra string) string {
	return strings.NewReplacer("%RELAX%", relax, "%EXTRA%", extra).Replace(relaxBase)
}

func TestSpec_Relaxed_HeldAndFingerprint(t *testing.T) {
	rigid := mustDecode(t, relaxText("", ""))
	relaxed := mustDecode(t, relaxText("relax = true", "[relax]\nhold = [[1, 3], [2, 1, 3]]\ntie = [[[1, 3], [2, 4]]]\nmax_steps = 40"))
	if ties := relaxed.Ties(); len(ties) != 1 || len(ties[0]) != 2 || ties[0][1].Atoms[0] != 1 || ties[0][1].Kind != KindDistance {
		t.Errorf("ties = %+v; want one group of two distances", ties)
	}
	if rigid.Relaxed() || rigid.ScanMode() != "rigid" || rigid.Held() != nil {
		t.Errorf("rigid spec: Relaxed %v, mode %q, held %v", rigid.Relaxed(), rigid.ScanMode(), rigid.Held())
	}
	if !relaxed.Relaxed() || relaxed.ScanMode() != "relaxed" {
		t.Fatalf("relaxed spec: Relaxed %v, mode %q", relaxed.Relaxed(), relaxed.ScanMode())
	}
	h := relaxed.Held()
	if len(h) != 3 || h[0].Kind != KindTorsion || !math.IsNaN(h[0].Value) || h[1].Kind != KindDistance || h[2].Kind != KindAngle {
		t.Fatalf("held = %+v; want the torsion, then a distance and a bend", h)
	}
	// The O–H distance of the geometry above, computed independently:
	// 0.95² + 0.2² Å², in bohr.
	if want := math.Sqrt(0.95*0.95+0.2*0.2) / BohrInAngstrom; math.Abs(h[1].Value-want) > 1e-12 {
		t.Errorf("held O–H = %.12f bohr, want %.12f", h[1].Value, want)
	}
	if ms, f := relaxed.RelaxLimits(); ms != 40 || f != 1 {
		t.Errorf("RelaxLimits = %d, %v; want 40, 1", ms, f)
	}
	if rigid.Fingerprint().Engine == relaxed.Fingerprint().Engine {
		t.Error("rigid and relaxed scans share an engine fingerprint: a resume would mix their energies")
	}
}

func TestSpec_Relax_Errors(t *testing.T) {
	cases := []struct{ name, text, want string }{
		{"relax table without relaxed scan", relaxText("", "[relax]\nmax_steps = 3"), "relaxed scans only"},
		{"bad hold", relaxText("relax = true", "[relax]\nhold = [[1]]"), "give 2 (distance)"},
		{"hold atom range", relaxText("relax = true", "[relax]\nhold = [[1, 9]]"), "outside 1..4"},
		{"tie of one", relaxText("relax = true", "[relax]\ntie = [[[1, 3]]]"), "at least two"},
		{"tie mixed kinds", relaxText("relax = true", "[relax]\ntie = [[[1, 3], [2, 1, 3]]]"), "mixes kinds"},
		{"negative steps", relaxText("relax = true", "[relax]\nmax_steps = -1"), "max_steps"},
		{"model engine", strings.Replace(relaxText("relax = true", ""), "kind = \"builtin\"\nmethod = \"rhf\"\nbasis = \"sto-3g\"", "kind = \"model\"\n[[engine.model.term]]\nshape = \"harmonic\"\nforce = 1.0", 1), "model potential"},
		{"mixed blocks", relaxText("relax = true", "") + "[[scan]]\nname = \"r\"\nbond = [1, 2]\nvalues = [1.4, 1.5]\n", "relax = true in 1 of 2"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Decode([]byte(tc.text), "test.toml")
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("Decode: %v; want an error containing %q", err, tc.want)
			}
		})
	}
}

func TestSpec_GeometryFrom_SetsScanValues(t *testing.T) {
	s := mustDecode(t, relaxText("relax = true", ""))
	m := s.mol.Clone()
	m.Atoms[2].Pos[0] += 0.05 // a "relaxed" neighbour geometry of our own
	g, err := s.GeometryFrom(m, []float64{math.Pi / 3})
	if err != nil {
		t.Fatal(err)
	}
	if got := s.coords[0].Measure(g, 0); math.Abs(got-math.Pi/3) > 1e-12 {
		t.Errorf("torsion after GeometryFrom = %.12f rad, want π/3", got)
	}
	if d := g.Atoms[2].Pos[0] - m.Atoms[2].Pos[0]; math.Abs(d) > 1e-12 {
		t.Errorf("fixed atom 3 moved by %g bohr", d)
	}
}

// TestDecodeSingle: a spec of one geometry (no [[scan]]) is relaxed,
// holds only its [relax] coordinates, and refuses the tables of a scan
// and a model engine; Decode refuses it and points at `wellscan relax`.
func TestDecodeSingle(t *testing.T) {
	const base = "[molecule]\ngeometry = \"\"\"\nO 0 0 0\nH 0.96 0 0\nH -0.24 0.93 0\n\"\"\"\n"
	s, err := DecodeSingle([]byte(base+"[engine]\nkind = \"builtin\"\nbasis = \"sto-3g\"\n[relax]\nhold = [[2, 1, 3]]\nmax_steps = 7\n"), "single.toml")
	if err != nil {
		t.Fatal(err)
	}
	if !s.Single() || !s.Relaxed() || s.ScanMode() != "relaxed" || len(s.Coordinates()) != 0 || len(s.InitialPoints()) != 0 {
		t.Errorf("single spec: Single %v Relaxed %v mode %q, %d coordinates, %d points", s.Single(), s.Relaxed(), s.ScanMode(), len(s.Coordinates()), len(s.InitialPoints()))
	}
	h := s.Held()
	// The bend of the geometry above, computed here: acos(u·v/|u||v|).
	want := math.Acos((0.96 * -0.24) / (0.96 * math.Hypot(0.24, 0.93)))
	if len(h) != 1 || h[0].Kind != KindAngle || math.Abs(h[0].Value-want) > 1e-12 { // exact arithmetic up to rounding
		t.Errorf("Held = %+v, want one bend of %.12f rad", h, want)
	}
	if n, _ := s.RelaxLimits(); n != 7 {
		t.Errorf("max_steps = %d, want 7", n)
	}
	for _, tc := range []struct{ text, want string }{
		{base + "[engine]\nkind = \"builtin\"\nbasis = \"sto-3g\"\n[[scan]]\nname = \"r\"\nbond = [1, 2]\nvalues = [1]\n", "no [[scan]] blocks"},
		{base + "[engine]\nkind = \"builtin\"\nbasis = \"sto-3g\"\n[refine]\nadaptive = false\n", "[refine] applies to scans"},
		{base + "[engine]\nkind = \"model\"\n[[engine.model.term]]\nshape = \"harmonic\"\nforce = 1\n", "no geometry to optimise"},
	} {
		if _, err := DecodeSingle([]byte(tc.text), "single.toml"); err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("DecodeSingle: error %v, want %q", err, tc.want)
		}
	}
	if _, err := Decode([]byte(base+"[engine]\nkind = \"builtin\"\nbasis = \"sto-3g\"\n"), "scan.toml"); err == nil || !strings.Contains(err.Error(), "wellscan relax DIR") {
		t.Errorf("Decode without [[scan]]: %v, want a pointer to wellscan relax DIR", err)
	}
}
