package main

import (
	"bytes"
	"crypto/sha256"
	"encoding/json"
	"os"
	"path/filepath"
	"runtime/debug"
	"strings"
	"testing"

	"wellscan/planner"
)

// modelSpec is a quick model scan (invented Morse constants, atomic units).
var modelSpec = coMorse{Title: "cmd test", From: "1.00", To: "1.30", Step: "0.05", Queue: "[queue]\nworkers = 2"}.String()

func wellscan(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var out, errb bytes.Buffer
	code := run(args, strings.NewReader(""), &out, &errb)
	return code, out.String(), errb.String()
}

func writeSpec(t *testing.T, dir, text string) {
	t.Helper()
	if err := os.WriteFile(filepath.Join(dir, "scan.toml"), []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
}

func hashFile(t *testing.T, path string) [32]byte {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return sha256.Sum256(b)
}

func TestRun_ModelScan_StatusJSON(t *testing.T) {
	dir := t.TempDir()
	writeSpec(t, dir, modelSpec)
	code, out, errs := wellscan(t, "run", dir)
	if code != 0 {
		t.Fatalf("run exit %d\n%s%s", code, out, errs)
	}
	if !strings.Contains(out, "refinement: converged") || !strings.Contains(out, "minimum: r=1.1297") {
		t.Errorf("run summary lacks the converged minimum:\n%s", out)
	}
	code, out, errs = wellscan(t, "status", "--json", dir)
	if code != 0 {
		t.Fatalf("status exit %d: %s", code, errs)
	}
	var snap struct {
		Counts map[string]int `json:"counts"`
		Points []struct {
			Key         string             `json:"key"`
			Coordinates map[string]float64 `json:"coordinates"`
			State       string             `json:"state"`
			Energy      *float64           `json:"energy_hartree"`
		} `json:"points"`
	}
	if err := json.Unmarshal([]byte(out), &snap); err != nil {
		t.Fatalf("status --json: %v\n%s", err, out)
	}
	for _, s := range []string{"planned", "submitted", "running", "done", "failed"} {
		if _, ok := snap.Counts[s]; !ok {
			t.Errorf("counts lacks %q: %v", s, snap.Counts)
		}
	}
	if snap.Counts["done"] != len(snap.Points) || len(snap.Points) < 7 {
		t.Errorf("counts %v for %d points", snap.Counts, len(snap.Points))
	}
	for _, p := range snap.Points {
		if p.State != "done" || p.Energy == nil || p.Coordinates["r"] == 0 {
			t.Errorf("point %+v incomplete", p)
		}
	}
	code, out, _ = wellscan(t, "status", dir)
	if code != 0 || !strings.Contains(out, "done 12") && !strings.Contains(out, "done 1") {
		t.Errorf("status text (exit %d):\n%s", code, out)
	}
}

func TestRun_SpecErrors_StoreUntouched(t *testing.T) {
	dir := t.TempDir()
	writeSpec(t, dir, modelSpec)
	if code, out, errs := wellscan(t, "run", dir); code != 0 {
		t.Fatalf("first run exit %d\n%s%s", code, out, errs)
	}
	db := filepath.Join(dir, "wellscan.db")
	before := hashFile(t, db)
	tests := []struct {
		name, old, new, want string
	}{
		{"unknown key", "step = 0.05", "stride = 0.05", "scan.toml:12: scan.stride: unknown key"},
		{"inverted range", "to = 1.30", "to = 0.80", "scan.toml:11: scan[1].to: inverted range: to = 0.8 is below from = 1"},
		{"step too large", "step = 0.05", "step = 0.5", "scan.toml:12: scan[1].step: step 0.5 is larger than the range 1–1.3"},
		{"atom out of range", "bond = [1, 2]", "bond = [1, 3]", "scan.toml:9: scan[1].bond: atom 3 is out of range (the molecule has 2 atoms)"},
		{"same atoms", "bond = [1, 2]", "bond = [1, 1]", "scan[1].bond: atom 1 appears twice"},
		{"type error", "from = 1.00", "from = \"near\"", "scan.toml:10: scan.from: incompatible types"},
		{"engine changed", "depth = 0.41", "depth = 0.45", "runner: spec changed since this scan started: engine settings changed"},
		{"geometry changed", "O 0 0 1.13", "O 0 0 1.20", "molecule (atoms, geometry, charge or multiplicity) changed"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			writeSpec(t, dir, strings.Replace(modelSpec, tc.old, tc.new, 1))
			code, _, errs := wellscan(t, "run", dir)
			if code != 1 || !strings.Contains(errs, tc.want) {
				t.Errorf("run exit %d, stderr %q; want 1 and %q", code, errs, tc.want)
			}
			if hashFile(t, db) != before {
				t.Errorf("the store changed")
			}
		})
	}
}

func TestRun_FailedPoint_Exit3(t *testing.T) {
	dir := t.TempDir()
	writeSpec(t, dir, strings.Replace(modelSpec, "offset = -112.7", "offset = -112.7\nfail = [\"r=1.25000\"]", 1))
	code, out, errs := wellscan(t, "run", dir)
	if code != 3 || !strings.Contains(out, "failed: r=1.25000 (error, 3 attempts)") {
		t.Errorf("exit %d, want 3\n%s%s", code, out, errs)
	}
}

func TestInit_WritesValidSpecOnce(t *testing.T) {
	dir := t.TempDir()
	if code, _, errs := wellscan(t, "init", dir); code != 0 {
		t.Fatalf("init exit %d: %s", code, errs)
	}
	s, err := planner.Load(filepath.Join(dir, "scan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	if s.Engine.Kind != "builtin" || len(s.InitialPoints()) != 15 { // 0.75–1.45 Å in steps of 0.05
		t.Errorf("init spec: engine %q, %d points", s.Engine.Kind, len(s.InitialPoints()))
	}
	if code, _, errs := wellscan(t, "init", dir); code != 1 || !strings.Contains(errs, "already exists") {
		t.Errorf("second init exit %d: %s", code, errs)
	}
}

func TestPlan_ComputesNothing(t *testing.T) {
	dir := t.TempDir()
	writeSpec(t, dir, modelSpec)
	code, out, errs := wellscan(t, "plan", dir)
	if code != 0 {
		t.Fatalf("plan exit %d: %s", code, errs)
	}
	for _, want := range []string{"round 1: 7 points", "r=1.00000", "r=1.30000", "refinement: adaptive", "cost: about"} {
		if !strings.Contains(out, want) {
			t.Errorf("plan output lacks %q:\n%s", want, out)
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "wellscan.db")); err == nil {
		t.Errorf("plan created a store")
	}
}

func TestDemo_Runs(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the demo scan")
	}
	dir := t.TempDir()
	code, out, errs := wellscan(t, "demo", "--dir", dir, "-q")
	if code != 0 || !strings.Contains(out, "located minimum: r = ") {
		t.Errorf("demo exit %d\n%s%s", code, out, errs)
	}
	for _, spec := range [][]byte{demoCO, demoModel} {
		if _, err := planner.Decode(spec, "demo.toml"); err != nil {
			t.Errorf("embedded demo spec: %v", err)
		}
	}
}

func TestVersionText(t *testing.T) {
	info := &debug.BuildInfo{Settings: []debug.BuildSetting{{Key: "vcs.revision", Value: "0123456789abcdef0123"},
		{Key: "vcs.time", Value: "2026-12-03T10:00:00Z"}, {Key: "vcs.modified", Value: "true"}}}
	if got, want := versionText("1.2.3", info, true), "wellscan 1.2.3 (commit 0123456789ab + local changes, 2026-12-03T10:00:00Z)"; got != want {
		t.Errorf("versionText = %q, want %q", got, want)
	}
	if got := versionText("1.2.3", nil, false); !strings.Contains(got, "commit unknown") {
		t.Errorf("versionText without build info = %q", got)
	}
	code, out, _ := wellscan(t, "help")
	if code != 0 || strings.Contains(out, "node-task") {
		t.Errorf("help lists the internal node-task command:\n%s", out)
	}
}

// TestDemo_CleansUp: without --dir the demo's temporary directory is gone
// afterwards; with --keep it stays and its path is printed (TMPDIR points
// at a fresh directory to look in).
func TestDemo_CleansUp(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the demo scan twice")
	}
	tmp := t.TempDir()
	t.Setenv("TMPDIR", tmp)
	code, _, errs := wellscan(t, "demo", "-q")
	if code != 0 {
		t.Fatalf("demo: exit %d: %s", code, errs)
	}
	if left, _ := filepath.Glob(filepath.Join(tmp, "wellscan-demo-*")); len(left) != 0 {
		t.Errorf("demo left %v behind", left)
	}
	code, _, errs = wellscan(t, "demo", "-q", "--keep")
	left, _ := filepath.Glob(filepath.Join(tmp, "wellscan-demo-*"))
	if code != 0 || len(left) != 1 || !strings.Contains(errs, "demo scan kept in "+left[0]) {
		t.Errorf("demo --keep: exit %d, dirs %v, stderr %q; want one kept directory, named", code, left, errs)
	}
}
