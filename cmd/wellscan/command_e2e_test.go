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
