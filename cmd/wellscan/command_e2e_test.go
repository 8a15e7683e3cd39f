package main

import (
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

const e2eSpec = `title = "H2 stretch through an external program"

[molecule]
geometry = """
H 0 0 0
H 0 0 0.74
"""

[[scan]]
name = "r"
bond = [1, 2]
from = 0.60
to = 0.90
step = 0.05

[refine]
adaptive = false

[engine]
kind = "%KIND%"
%ENGINE%

[queue]
kind = "local"
workers = 2
`

// pointEnergies runs the scan in dir with the binary and returns key → energy.
func pointEnergies(t *testing.T, bin, dir string) map[string]float64 {
	t.Helper()
	cmd := exec.Command(bin, "run", dir, "-q")
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("wellscan run %s: %v\n%s", dir, err, out)
	}
	out, err := exec.Command(bin, "status", dir, "--json").Output()
	if err != nil {
		t.Fatal(err)
	}
	var st struct {
		Points []struct {
			Key    string   `json:"key"`
			State  string   `json:"state"`
			Energy *float64 `json:"energy_hartree"`
		} `json:"points"`
	}
	if err := json.Unmarshal(out, &st); err != nil {
		t.Fatal(err)
	}
	m := map[string]float64{}
	for _, p := range st.Points {
		if p.State != "done" || p.Energy == nil {
			t.Fatalf("%s: point %s is %s", dir, p.Key, p.State)
		}
		m[p.Key] = *p.Energy
	}
	return m
}

// TestCommandBackend_OwnEnergyCommand drives wellscan's own `energy`
// command as the external program through a template and compares every
// point with the built-in backend (≤1e-9 Eh: both run the same engine; the
// only difference is the geometry's round trip through 10-decimal Å text).
func TestCommandBackend_OwnEnergyCommand(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary and runs two scans")
	}
	bin := buildWellscan(t)
	root := t.TempDir()
	mk := func(name, kind, engine string) string {
		dir := filepath.Join(root, name)
		if err := os.MkdirAll(dir, 0o755); err != nil {
			t.Fatal(err)
		}
		spec := strings.NewReplacer("%KIND%", kind, "%ENGINE%", engine).Replace(e2eSpec)
		if err := os.WriteFile(filepath.Join(dir, "scan.toml"), []byte(spec), 0o644); err != nil {
			t.Fatal(err)
		}
		return dir
	}
	builtin := mk("builtin", "builtin", `method = "rhf"
basis = "6-31G**"
guess = "fresh"`)
	cmdDir := mk("command", "command", `[engine.command]
template = "point.tmpl"
input = "point.xyz.in"
command = ["`+bin+`", "energy", "point.xyz.in", "--basis", "6-31G**", "--method", "rhf", "--json"]
timeout = "60s"
energy = { path = "energy_hartree", unit = "hartree" }`)
	tmpl := "{{.NAtoms}}\n{{oneline .Title}} {{.Key}}\n{{.XYZ \"angstrom\"}}\n"
	if err := os.WriteFile(filepath.Join(cmdDir, "point.tmpl"), []byte(tmpl), 0o644); err != nil {
		t.Fatal(err)
	}
	want := pointEnergies(t, bin, builtin)
	got := pointEnergies(t, bin, cmdDir)
	if len(got) != len(want) || len(got) != 7 {
		t.Fatalf("%d command points, %d built-in points; want 7 each", len(got), len(want))
	}
	for k, e := range want {
		if d := math.Abs(got[k] - e); d > 1e-9 {
			t.Errorf("%s: command %.12f vs built-in %.12f (diff %.1e)", k, got[k], e, d)
		}
	}
}

// TestPlan_RendersTemplates: plan renders the round-1 inputs of a command
// scan and stops on a template naming a field the point lacks, naming
// the template file and line.
func TestPlan_RendersTemplates(t *testing.T) {
	dir := t.TempDir()
	spec := strings.NewReplacer("%KIND%", "command", "%ENGINE%", `[engine.command]
template = "point.tmpl"
input = "point.in"
command = ["true"]
energy = { label = "energy", unit = "hartree" }`).Replace(e2eSpec)
	if err := os.WriteFile(filepath.Join(dir, "scan.toml"), []byte(spec), 0o644); err != nil {
		t.Fatal(err)
	}
	write := func(text string) {
		if err := os.WriteFile(filepath.Join(dir, "point.tmpl"), []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	write("r = {{.Coords.r}}\n{{.XYZ \"bohr\"}}\n")
	code, out, errs := runCLI(t, "", "plan", dir)
	if code != 0 || !strings.Contains(out, "rendered 7 inputs") {
		t.Fatalf("plan: exit %d\n%s%s", code, out, errs)
	}
	in, err := os.ReadFile(filepath.Join(dir, "plan-inputs", "r=0.60000.in"))
	if err != nil || !strings.HasPrefix(string(in), "r = 0.6000000000\n") {
		t.Errorf("rendered input = %q, %v", in, err)
	}
	write("line one\nr = {{.Coords.theta}}\n")
	code, _, errs = runCLI(t, "", "plan", dir)
	if code != 1 || !strings.Contains(errs, "point.tmpl:2") {
		t.Errorf("bad template: exit %d, stderr %q; want exit 1 naming point.tmpl:2", code, errs)
	}
}

// TestCommandBackend_MorseScript scans a toy program of our own
// (runner/command/testdata/morse.awk: a Morse curve in eV, invented
// constants De = 4.6 eV, a = 2.1 Å⁻¹, r_e = 1.13 Å) through a template,
// fits the scan, and compares with the analytic Morse constants:
// ω_e = a·sqrt(2 D_e/μ), ω_e x_e = ω_e²/(4 D_e) (P. M. Morse, Phys. Rev. 34,
// 57 (1929)).
func TestCommandBackend_MorseScript(t *testing.T) {
	if testing.Short() {
		t.Skip("runs a scan through awk")
	}
	if _, err := exec.LookPath("awk"); err != nil {
		t.Skip("no awk")
	}
	awk, err := filepath.Abs("../../runner/command/testdata/morse.awk")
	if err != nil {
		t.Fatal(err)
	}
	tmpl, err := os.ReadFile("../../runner/command/testdata/morse.tmpl")
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	spec := `title = "toy Morse well through awk"
[molecule]
geometry = """
C 0 0 0
O 0 0 1.13
"""
[[scan]]
name = "r"
bond = [1, 2]
from = 0.95
to = 1.60
step = 0.05
[engine]
kind = "command"
[engine.command]
template = "morse.tmpl"
input = "point.inp"
command = ["awk", "-f", "` + awk + `", "point.inp"]
timeout = "30s"
energy = { label = "well energy / eV", unit = "eV" }
`
	for name, text := range map[string][]byte{"scan.toml": []byte(spec), "morse.tmpl": tmpl} {
		if err := os.WriteFile(filepath.Join(dir, name), text, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	if code, out, errs := runCLI(t, "", "run", dir, "-q"); code != 0 {
		t.Fatalf("run: exit %d\n%s%s", code, out, errs)
	}
	code, out, errs := runCLI(t, "", "fit", dir, "--json")
	if code != 0 {
		t.Fatalf("fit: exit %d\n%s", code, errs)
	}
	var res struct {
		Minima []struct {
			RE     float64 `json:"r_e_angstrom"`
			Omega  float64 `json:"omega_e_cm1"`
			OmegaX float64 `json:"omega_e_x_e_cm1"`
		} `json:"minima"`
	}
	if err := json.Unmarshal([]byte(out), &res); err != nil || len(res.Minima) != 1 {
		t.Fatalf("fit JSON: %v, %d minima\n%s", err, len(res.Minima), out)
	}
	m := res.Minima[0]
	const (
		bohr    = 0.529177210903       // Å, CODATA 2018
		hartree = 27.211386245988      // eV, CODATA 2018
		cm1     = 219474.63136320      // cm⁻¹ per hartree, CODATA 2018
		amu     = 1 / 5.48579909065e-4 // electron masses, CODATA 2018
	)
	mu := 12.0 * 15.99491461957 / (12.0 + 15.99491461957) * amu // 12C16O, AME2020
	de := 4.6 / hartree
	a := 2.1 * bohr
	omega := a * math.Sqrt(2*de/mu) * cm1
	omegaX := omega * omega / (4 * de * cm1)
	if math.Abs(m.RE-1.13) > 1e-5 { // refinement tolerance 1e-4 Å; the fit does better on exact data
		t.Errorf("r_e = %.6f Å, want 1.13", m.RE)
	}
	if math.Abs(m.Omega-omega) > 0.5 { // the refinement's frequency tolerance
		t.Errorf("ω_e = %.3f cm⁻¹, want %.3f", m.Omega, omega)
	}
	if math.Abs(m.OmegaX-omegaX) > 0.01*omegaX { // quartic force constant from a local fit: 1 %
		t.Errorf("ω_e x_e = %.4f cm⁻¹, want %.4f", m.OmegaX, omegaX)
	}
}

// TestScan_WaterSymmetricStretchMP2 runs the water symmetric-stretch
// example at MP2/6-31G* through the scan machinery and fits it. Physical
// sanity (common practice): MP2 lengthens the O–H bond relative to RHF
// (r_e RHF/6-31G* ≈ 0.947 Å, MP2/6-31G* ≈ 0.969 Å, both from memory of
// standard tables), so the MP2 minimum must lie between 0.955 and 0.985 Å,
// and its correlation energy must be reported for every point.
func TestScan_WaterSymmetricStretchMP2(t *testing.T) {
	if testing.Short() {
		t.Skip("runs an MP2 scan")
	}
	text, err := os.ReadFile("../../testdata/examples/water-stretch/scan.toml")
	if err != nil {
		t.Fatal(err)
	}
	spec := strings.Replace(string(text), `method = "rhf"`, `method = "mp2"`, 1)
	spec = strings.Replace(spec, "from = 0.85\nto = 1.10\nstep = 0.025", "from = 0.90\nto = 1.05\nstep = 0.025", 1)
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "scan.toml"), []byte(spec), 0o644); err != nil {
		t.Fatal(err)
	}
	if code, out, errs := runCLI(t, "", "run", dir, "-q"); code != 0 {
		t.Fatalf("run: exit %d\n%s%s", code, out, errs)
	}
	code, out, errs := runCLI(t, "", "fit", dir, "--json")
	if code != 0 {
		t.Fatalf("fit: exit %d\n%s", code, errs)
	}
	var res struct {
		Mass   string `json:"mass_model"`
		Minima []struct {
			RE    float64 `json:"r_e_angstrom"`
			Omega float64 `json:"omega_e_cm1"`
		} `json:"minima"`
	}
	if err := json.Unmarshal([]byte(out), &res); err != nil || len(res.Minima) != 1 {
		t.Fatalf("fit JSON: %v\n%s", err, out)
	}
	if r := res.Minima[0].RE; r < 0.955 || r > 0.985 {
		t.Errorf("MP2 symmetric-stretch minimum at %.4f Å, want 0.955–0.985", r)
	}
	if !strings.Contains(res.Mass, "1-D along the scan") {
		t.Errorf("mass model %q: a polyatomic scan must be labelled 1-D along the scan", res.Mass)
	}
	raw, err := os.ReadFile(filepath.Join(dir, "points", "r=0.95000", "result.json"))
	if err != nil || !strings.Contains(string(raw), "mp2_correlation_hartree") {
		t.Errorf("point result lacks the MP2 correlation energy: %v\n%s", err, raw)
	}
}

// TestScan_HFStretchCCSDT runs an H–F stretch at CCSD(T)/cc-pVDZ through
// run, fit and report. Physical sanity: the CCSD(T)/cc-pVDZ bond length of
// HF is about 0.920 Å (T. H. Dunning Jr., K. A. Peterson and D. E. Woon,
// in Encyclopedia of Computational Chemistry (1998), from memory), so the
// minimum must lie in 0.91–0.93 Å; every point carries its CCSD and (T)
// energies; the report names the method, frozen core and basis exactly.
func TestScan_HFStretchCCSDT(t *testing.T) {
	if testing.Short() {
		t.Skip("runs a CCSD(T) scan")
	}
	spec := `title = "HF stretch"
[molecule]
geometry = """
H 0 0 0
F 0 0 0.92
"""
[[scan]]
name = "r"
bond = [1, 2]
from = 0.86
to = 0.98
step = 0.02
[refine]
adaptive = false
[engine]
kind = "builtin"
method = "ccsd(t)"
basis = "cc-pVDZ"
`
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "scan.toml"), []byte(spec), 0o644); err != nil {
		t.Fatal(err)
	}
	if code, out, errs := runCLI(t, "", "run", dir, "-q"); code != 0 {
		t.Fatalf("run: exit %d\n%s%s", code, out, errs)
	}
	code, out, errs := runCLI(t, "", "fit", dir, "--json")
	if code != 0 {
		t.Fatalf("fit: exit %d\n%s", code, errs)
	}
	var res struct {
		Minima []struct {
			RE    float64 `json:"r_e_angstrom"`
			Omega float64 `json:"omega_e_cm1"`
		} `json:"minima"`
	}
	if err := json.Unmarshal([]byte(out), &res); err != nil || len(res.Minima) != 1 {
		t.Fatalf("fit JSON: %v\n%s", err, out)
	}
	if r := res.Minima[0].RE; r < 0.91 || r > 0.93 {
		t.Errorf("CCSD(T)/cc-pVDZ minimum at %.4f Å, want 0.91–0.93", r)
	}
	raw, err := os.ReadFile(filepath.Join(dir, "points", "r=0.92000", "result.json"))
	if err != nil || !strings.Contains(string(raw), "ccsd_correlation_hartree") || !strings.Contains(string(raw), "triples_hartree") {
		t.Errorf("point result lacks the CCSD and (T) energies: %v\n%s", err, raw)
	}
	if code, _, errs := runCLI(t, "", "report", dir); code != 0 {
		t.Fatalf("report: exit %d\n%s", code, errs)
	}
	sum, err := os.ReadFile(filepath.Join(dir, "report", "summary.md"))
	if err != nil || !strings.Contains(string(sum), "CCSD(T)(fc)/cc-pVDZ") {
		t.Errorf("summary does not name CCSD(T)(fc)/cc-pVDZ: %v\n%s", err, sum)
	}
}

// TestScan_RelaxedThroughProgram runs a relaxed bend scan through an
// external program (runner/command/testdata/bend.awk, a toy force field
// with analytic forces) twice: reading the program's forces, and by
// central differences of its energies. With the bonds relaxed the energy
// is exactly the bend term E0 + kt/2 (θ − θ0)² of the script's invented
// constants (an independent closed form), and both ways must agree.
func TestScan_RelaxedThroughProgram(t *testing.T) {
	if testing.Short() {
		t.Skip("runs awk a few hundred times")
	}
	if _, err := exec.LookPath("awk"); err != nil {
		t.Skip("awk not installed")
	}
	awk, err := filepath.Abs(filepath.Join("..", "..", "runner", "command", "testdata", "bend.awk"))
	if err != nil {
		t.Fatal(err)
	}
	tmpl, err := os.ReadFile(filepath.Join("..", "..", "runner", "command", "testdata", "morse.tmpl"))
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct{ name, gradient string }{
		{"forces read", `gradient = { label = "forces (eV/Angstrom)", unit = "eV/angstrom", sign = "force" }`},
		{"differences", ``},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			spec := `title = "toy bend through awk"
[molecule]
geometry = """
O 0 0 0
H 0.9 0 0.1
H -0.3 0.95 0
"""
[[scan]]
name = "theta"
angle = [2, 1, 3]
values = [95, 104, 115]
relax = true
[refine]
adaptive = false
[engine]
kind = "command"
[engine.command]
template = "morse.tmpl"
input = "point.inp"
command = ["awk", "-f", "` + awk + `", "point.inp"]
timeout = "30s"
energy = { label = "bend toy energy / eV", unit = "eV" }
` + tc.gradient + `
[queue]
workers = 1
`
			for name, text := range map[string][]byte{"scan.toml": []byte(spec), "morse.tmpl": tmpl} {
				if err := os.WriteFile(filepath.Join(dir, name), text, 0o644); err != nil {
					t.Fatal(err)
				}
			}
			if code, out, errs := runCLI(t, "", "run", dir, "-q"); code != 0 {
				t.Fatalf("run: exit %d\n%s%s", code, out, errs)
			}
			code, out, errs := runCLI(t, "", "export", dir, "--format", "json")
			if code != 0 {
				t.Fatalf("export: exit %d\n%s", code, errs)
			}
			type point struct {
				Mode        string             `json:"scan_mode"`
				Coordinates map[string]float64 `json:"coordinates"`
				Energy      *float64           `json:"energy_hartree"`
			}
			var pts []point
			dec := json.NewDecoder(strings.NewReader(out))
			for dec.More() {
				var p point
				if err := dec.Decode(&p); err != nil {
					t.Fatal(err)
				}
				if p.Mode != "relaxed" {
					t.Errorf("export: point scan_mode %q, want relaxed", p.Mode)
				}
				pts = append(pts, p)
			}
			if len(pts) != 3 {
				t.Fatalf("export: %d points, want 3", len(pts))
			}
			const hartree = 27.211386245988 // eV, CODATA 2018
			for _, p := range pts {
				th := p.Coordinates["theta"] * math.Pi / 180
				d := th - 104*math.Pi/180
				want := (-2000 + 0.5*4*d*d) / hartree // bend.awk's invented constants
				// 1e-8 hartree: the optimiser's force threshold (4.5e-4
				// Eh/bohr) on bonds of 40 eV/Å² leaves them ~1e-5 Å from r0,
				// an energy error far below this.
				if p.Energy == nil || math.Abs(*p.Energy-want) > 1e-8 {
					t.Errorf("θ = %v°: E = %v hartree, want %.10f", p.Coordinates["theta"], p.Energy, want)
				}
			}
			code, out, _ = runCLI(t, "", "export", dir, "--format", "xyz")
			if code != 0 || !strings.Contains(out, "scan=relaxed") {
				t.Errorf("export xyz: exit %d, no scan=relaxed in the comments", code)
			}
			// The fit says what it fitted: a relaxed scan is never called
			// rigid (it was, in the fit's model line).
			code, out, _ = runCLI(t, "", "fit", dir)
			if code != 0 || !strings.Contains(out, "1-D along the relaxed scan") || strings.Contains(out, "rigid") {
				t.Errorf("fit: exit %d; want the relaxed model named and no 'rigid':\n%s", code, out)
			}
		})
	}
}
