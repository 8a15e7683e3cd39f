package planner

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func readExample(t testing.TB, name string) string {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "testdata", "examples", name, "scan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

func TestLoad_Examples(t *testing.T) {
	tests := []struct {
		dir    string
		kind   string
		points int
	}{
		{"morse-model", "model", 11},
		{"co-demo", "builtin", 7},
		{"water-stretch", "builtin", 11},
		{"water-bend", "builtin", 9},
		{"water-stretch-bend", "builtin", 20},
		{"ethane-torsion", "builtin", 6},
	}
	for _, tc := range tests {
		t.Run(tc.dir, func(t *testing.T) {
			s, err := Load(filepath.Join("..", "testdata", "examples", tc.dir, "scan.toml"))
			if err != nil {
				t.Fatal(err)
			}
			if s.Engine.Kind != tc.kind {
				t.Errorf("engine kind = %q, want %q", s.Engine.Kind, tc.kind)
			}
			pts := s.InitialPoints()
			if len(pts) != tc.points {
				t.Errorf("InitialPoints: %d points, want %d", len(pts), tc.points)
			}
			seen := map[string]bool{}
			for _, p := range pts {
				if seen[p.Key] {
					t.Errorf("duplicate key %s", p.Key)
				}
				seen[p.Key] = true
				if _, err := s.Geometry(p); err != nil {
					t.Errorf("Geometry(%s): %v", p.Key, err)
				}
				q, err := s.ParseKey(p.Key)
				if err != nil || q.Key != p.Key {
					t.Errorf("ParseKey(%s) = %v, %v", p.Key, q.Key, err)
				}
			}
		})
	}
}

func TestSpec_PointAt_Keys(t *testing.T) {
	s := mustDecode(t, readExample(t, "water-stretch-bend"))
	tests := []struct {
		x    []float64
		want string
	}{
		{[]float64{0.95, 104.5}, "r=0.95000,theta=104.500"},
		{[]float64{0.9500000001, 104.49999999}, "r=0.95000,theta=104.500"},
		{[]float64{1.000004, 99.9996}, "r=1.00000,theta=100.000"},
	}
	for _, tc := range tests {
		if got := s.PointAt(tc.x).Key; got != tc.want {
			t.Errorf("PointAt(%v).Key = %q, want %q", tc.x, got, tc.want)
		}
	}
	m := mustDecode(t, h2o2+"[[scan]]\nname = \"t\"\ntorsion = [3, 1, 2, 4]\nfrom = -10\nto = 10\nstep = 5\n")
	if got := m.PointAt([]float64{-0.0000001}).Key; got != "t=0.000" {
		t.Errorf("negative zero key = %q, want t=0.000", got)
	}
}

func TestAxisValues_Growth(t *testing.T) {
	from, to, step, g := 1.0, 3.0, 0.1, 1.5
	xs, _, msg := axisValues(ScanSpec{From: &from, To: &to, Step: &step, Growth: &g}, 5)
	if msg != "" {
		t.Fatal(msg)
	}
	// 1.0, 1.1, 1.25, 1.475, 1.8125, 2.31875 (steps 0.1·1.5^k), next 3.078 > 3.
	want := []float64{1, 1.1, 1.25, 1.475, 1.8125, 2.31875}
	if fmt.Sprint(xs) != fmt.Sprint(want) {
		t.Errorf("geometric grid = %v, want %v", xs, want)
	}
}

const goodTail = `
[engine]
kind = "model"
[[engine.model.term]]
shape = "harmonic"
force = 1.0
`

const co = `
[molecule]
geometry = """
C 0 0 0
O 0 0 1.13
"""
`

const water = `
[molecule]
geometry = """
O  0.000000  0.000000  0.117300
H  0.000000  0.757200 -0.469200
H  0.000000 -0.757200 -0.469200
"""
`

const scanR = `
[[scan]]
name = "r"
bond = [1, 2]
from = 1.0
to = 1.2
step = 0.05
`

func TestDecode_Errors(t *testing.T) {
	tests := []struct {
		name, spec, want string
	}{
		{"unknown top key", "colour = 1\n" + co + scanR + goodTail, "test.toml:1: colour: unknown key"},
		{"unknown scan key", co + strings.Replace(scanR, "step = 0.05", "stepp = 0.05", 1) + goodTail, "test.toml:13: scan.stepp: unknown key"},
		{"unknown model key", co + scanR + goodTail + "colour = 2\n", "test.toml:20: engine.model.term.colour: unknown key"},
		{"type error", co + strings.Replace(scanR, "from = 1.0", `from = "one"`, 1) + goodTail, "test.toml:11: scan.from: incompatible types"},
		{"syntax error", co + strings.Replace(scanR, "from = 1.0", "from = ", 1) + goodTail, "test.toml:11: scan.from: expected value"},
		{"inverted range", co + strings.Replace(scanR, "to = 1.2", "to = 0.9", 1) + goodTail, "test.toml:12: scan[1].to: inverted range: to = 0.9 is below from = 1"},
		{"empty range", co + strings.Replace(scanR, "to = 1.2", "to = 1.0", 1) + goodTail, "scan[1].to: empty range"},
		{"step larger than range", co + strings.Replace(scanR, "step = 0.05", "step = 0.5", 1) + goodTail, "test.toml:13: scan[1].step: step 0.5 is larger than the range 1–1.2"},
		{"no step", co + strings.Replace(scanR, "step = 0.05", "", 1) + goodTail, "scan[1].step: missing"},
		{"atom out of range", co + strings.Replace(scanR, "[1, 2]", "[1, 5]", 1) + goodTail, "test.toml:10: scan[1].bond: atom 5 is out of range (the molecule has 2 atoms)"},
		{"same atom twice", co + strings.Replace(scanR, "[1, 2]", "[2, 2]", 1) + goodTail, "scan[1].bond: atom 2 appears twice"},
		{"coinciding atoms", "[molecule]\ngeometry = \"\"\"\nC 0 0 0\nO 0 0 0.01\n\"\"\"\n" + scanR + goodTail, "molecule.geometry: atoms too close"},
		{"collinear torsion", "[molecule]\ngeometry = \"\"\"\nC 0 0 0\nC 0 0 1.2\nH 0 0 -1.06\nH 0 0 2.26\n\"\"\"\n[[scan]]\ntorsion = [3, 1, 2, 4]\nfrom = 0\nto = 180\nstep = 10\n" + goodTail,
			"scan[1].torsion: atoms 3, 1, 2 are collinear"},
		{"tied overlap", water + "[[scan]]\nbonds = [[2, 1], [3, 1]]\nfrom = 0.9\nto = 1.0\nstep = 0.05\n" + goodTail, "scan[1].moving: atom 1 moves with tied members 1 and 2"},
		{"two coordinates in a block", co + strings.Replace(scanR, "bond = [1, 2]", "bond = [1, 2]\nangle = [1, 2, 3]", 1) + goodTail, "scan[1].angle: a [[scan]] block scans one coordinate"},
		{"angle out of range", water + "[[scan]]\nangle = [2, 1, 3]\nfrom = 170\nto = 190\nstep = 10\n" + goodTail, "scan[1].from: angle 190° is outside (0°, 180°]"},
		{"unknown unit", strings.Replace(co, "[molecule]", "[molecule]\nunits = \"furlong\"", 1) + scanR + goodTail, "test.toml:3: molecule.units: unknown unit \"furlong\""},
		{"isotope of wrong element", strings.Replace(co, "[molecule]", "[molecule]\nisotopes = { 2 = \"13C\" }", 1) + scanR + goodTail, "molecule.isotopes.2: atom 2 is O, not C"},
		{"no geometry", "[molecule]\ncharge = 0\n" + scanR + goodTail, "molecule: missing geometry"},
		{"unknown engine", co + scanR + "[engine]\nkind = \"oracle\"\n", "engine.kind: unknown engine \"oracle\""},
		{"rhf open shell", strings.Replace(co, "[molecule]", "[molecule]\nmultiplicity = 3", 1) + scanR + "[engine]\nkind = \"builtin\"\nmethod = \"rhf\"\nbasis = \"STO-3G\"\n", "engine.method: rhf needs a closed-shell molecule"},
		{"impossible multiplicity", strings.Replace(co, "[molecule]", "[molecule]\nmultiplicity = 2", 1) + scanR + goodTail, "test.toml:3: molecule.multiplicity: impossible charge and multiplicity: 14 electrons"},
		{"model term coordinate", co + scanR + strings.Replace(goodTail, "shape", "coordinate = \"q\"\nshape", 1), "engine.model.term[1].coordinate: no [[scan]] block is named \"q\""},
		{"model shape", co + scanR + strings.Replace(goodTail, "harmonic", "sombrero", 1), "engine.model.term[1].shape: unknown shape \"sombrero\""},
		{"builtin key with model", co + scanR + strings.Replace(goodTail, "kind = \"model\"", "kind = \"model\"\nbasis = \"STO-3G\"", 1), "engine.basis: belongs to another engine kind"},
		{"queue attempts", co + scanR + goodTail + "[queue]\nattempts = -1\n", "queue.attempts: must be between 1 and 100"},
		{"target step too small", co + scanR + "[refine]\ntarget_step = 1e-6\n" + goodTail, "refine.target_step: 1e-06 is below 10× the key precision"},
		{"bad duration", co + scanR + goodTail + "[queue]\ntimeout = \"soon\"\n", "queue.timeout"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Decode([]byte(tc.spec), "test.toml")
			if err == nil {
				t.Fatalf("Decode succeeded, want error containing %q", tc.want)
			}
			if !strings.Contains(err.Error(), tc.want) {
				t.Errorf("Decode error = %q, want it to contain %q", err, tc.want)
			}
			if !errors.Is(err, ErrSpec) {
				t.Errorf("error %q does not match ErrSpec", err)
			}
		})
	}
}

func TestSpec_Fingerprint_Parts(t *testing.T) {
	base := mustDecode(t, readExample(t, "morse-model"))
	tests := []struct {
		name, old, new string
		changed        bool
	}{
		{"grid change allowed", "step = 0.05", "step = 0.025", false},
		{"refine change allowed", "target_step = 0.002", "target_step = 0.004", false},
		{"queue change allowed", "kind = \"local\"", "kind = \"local\"\nworkers = 1", false},
		{"delay allowed", "offset = -112.7", "offset = -112.7\ndelay = \"5ms\"", false},
		{"geometry refused", "O 0.0 0.0 1.13", "O 0.0 0.0 1.15", true},
		{"engine refused", "depth = 0.41", "depth = 0.42", true},
		{"coordinate refused", "bond = [1, 2]", "bond = [2, 1]", true},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			text := readExample(t, "morse-model")
			if !strings.Contains(text, tc.old) {
				t.Fatalf("example lacks %q", tc.old)
			}
			s := mustDecode(t, strings.Replace(text, tc.old, tc.new, 1))
			d := base.Fingerprint().Diff(s.Fingerprint())
			if (len(d) > 0) != tc.changed {
				t.Errorf("Diff = %v, want changed=%v", d, tc.changed)
			}
		})
	}
}

func ExampleDecode() {
	spec := `
title = "a model stretch"
[molecule]
geometry = """
C 0 0 0
O 0 0 1.13
"""
[[scan]]
name = "r"
bond = [1, 2]
from = 1.0
to = 1.2
step = 0.1
[engine]
kind = "model"
[[engine.model.term]]
shape = "harmonic"
force = 1.2
center = 2.13
`
	s, err := Decode([]byte(spec), "scan.toml")
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, p := range s.InitialPoints() {
		fmt.Printf("%s %.6g bohr\n", p.Key, p.Values[0])
	}
	// Output:
	// r=1.00000 1.88973 bohr
	// r=1.10000 2.0787 bohr
	// r=1.20000 2.26767 bohr
}
