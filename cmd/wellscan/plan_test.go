package main

import (
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// commandScanDir writes a small awk-driven scan (the toy Morse program of
// runner/command/testdata, copied next to the spec) with the given
// command line.
func commandScanDir(t *testing.T, command string) string {
	t.Helper()
	if _, err := exec.LookPath("awk"); err != nil {
		t.Skip("no awk")
	}
	dir := t.TempDir()
	for _, f := range []string{"morse.awk", "morse.tmpl"} {
		b, err := os.ReadFile(filepath.Join("../../runner/command/testdata", f))
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, f), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	writeCommandSpec(t, dir, command)
	return dir
}

func writeCommandSpec(t *testing.T, dir, command string) {
	t.Helper()
	spec := `title = "toy Morse well through awk"
[molecule]
geometry = """
C 0 0 0
O 0 0 1.13
"""
[[scan]]
name = "r"
bond = [1, 2]
from = 1.05
to = 1.25
step = 0.05
[refine]
adaptive = false
[engine]
kind = "command"
[engine.command]
template = "morse.tmpl"
input = "point.inp"
command = ` + command + `
timeout = "30s"
energy = { label = "well energy / eV", unit = "eV" }
[queue]
attempts = 2
`
	if err := os.WriteFile(filepath.Join(dir, "scan.toml"), []byte(spec), 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestPlan_ExternalProgramChecks: plan finds the program as the runs
// will, says which arguments name files in the scan directory (passed as
// absolute paths, since the program runs in points/<key>/), and refuses a
// program that is missing or not executable.
func TestPlan_ExternalProgramChecks(t *testing.T) {
	dir := commandScanDir(t, `["awk", "-f", "morse.awk", "point.inp"]`)
	code, out, errs := runCLI(t, "", "plan", dir)
	if code != 0 {
		t.Fatalf("plan: exit %d\n%s%s", code, out, errs)
	}
	for _, want := range []string{"(found, executable); it runs in points/<key>/",
		`argument 2 "morse.awk" names a file in the scan directory: passed as ` + filepath.Join(dir, "morse.awk"),
		"rendered 5 inputs of round 1", "label: CO · external program · rigid scan", "reference geometry (Å):"} {
		if !strings.Contains(out, want) {
			t.Errorf("plan output lacks %q:\n%s", want, out)
		}
	}
	// The program, started in the point's directory, finds morse.awk.
	if code, out, errs := runCLI(t, "", "run", "-q", dir); code != 0 {
		t.Fatalf("run: exit %d\n%s%s", code, out, errs)
	}

	notExec := filepath.Join(dir, "notexec.sh")
	if err := os.WriteFile(notExec, []byte("#!/bin/sh\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct{ command, want string }{
		{`["./no-such-program", "point.inp"]`, "no-such-program"},
		{`["./notexec.sh", "point.inp"]`, "notexec.sh"},
		{`["wellscan-test-no-such-program-in-path"]`, "wellscan-test-no-such-program-in-path"},
	} {
		d := commandScanDir(t, tc.command)
		if err := os.WriteFile(filepath.Join(d, "notexec.sh"), []byte("#!/bin/sh\n"), 0o644); err != nil {
			t.Fatal(err)
		}
		code, out, errs := runCLI(t, "", "plan", d)
		if code != 1 || !strings.Contains(errs, tc.want) || !strings.Contains(errs, "program-missing") {
			t.Errorf("plan with %s: exit %d, stderr %q; want exit 1 naming the program and class program-missing\n%s", tc.command, code, errs, out)
		}
	}
}

// TestRun_RecoversAfterWrongProgramArgument: every point fails because an
// argument names a file that is not there; fixing the spec before any
// point finished is accepted (the engine settings may change then) and
// the failed points run again.
func TestRun_RecoversAfterWrongProgramArgument(t *testing.T) {
	dir := commandScanDir(t, `["awk", "-f", "nothere.awk", "point.inp"]`)
	code, out, errs := runCLI(t, "", "run", "-q", dir)
	if code != 3 || !strings.Contains(out, "5 failed") || !strings.Contains(out, "2 attempts") {
		t.Fatalf("broken run: exit %d, want 3 with every point failed\n%s%s", code, out, errs)
	}
	if !strings.Contains(errs, "wellscan: some points failed: 5 of 5\n") {
		t.Errorf("stderr %q, want the plain \"some points failed: 5 of 5\"", errs)
	}
	for _, line := range strings.Split(out, "\n") {
		if strings.HasPrefix(line, "failed: ") && strings.Count(line, "exit-nonzero") != 1 {
			t.Errorf("failure class repeated: %q", line)
		}
	}
	// The summary and status put the warning first; report still writes
	// a summary that lists the failures.
	if !strings.Contains(out, "warnings (1, most serious first):\n  caution: 5 point(s) failed and have no energy") {
		t.Errorf("run summary lacks the warning at the top:\n%s", out)
	}
	if code, out, errs := runCLI(t, "", "status", dir); code != 0 || !strings.Contains(out, "caution: 5 point(s) failed") {
		t.Errorf("status: exit %d\n%s%s", code, out, errs)
	}
	code, out, errs = runCLI(t, "", "report", "--date", "2026-12-01", dir)
	if code != 0 || strings.Contains(out, "curve.svg") {
		t.Fatalf("report of a scan with every point failed: exit %d\n%s%s", code, out, errs)
	}
	md, err := os.ReadFile(filepath.Join(dir, "report", "summary.md"))
	if err != nil || !strings.Contains(string(md), "## Failed points (5)") {
		t.Errorf("summary.md (%v) lacks the failed points:\n%s", err, md)
	}
	writeCommandSpec(t, dir, `["awk", "-f", "morse.awk", "point.inp"]`)
	code, out, errs = runCLI(t, "", "run", "-q", dir)
	if !strings.Contains(errs, "engine settings changed before any point finished: accepted; 5 failed point(s) planned again") {
		t.Errorf("the accepted engine change is not said: %q", errs)
	}
	if code != 0 || !strings.Contains(out, "5 done, 0 failed") {
		t.Fatalf("fixed run: exit %d, want 0 with every point done\n%s%s", code, out, errs)
	}
	// A second change once points are done is refused.
	writeCommandSpec(t, dir, `["awk", "-f", "morse.awk", "-v", "x=1", "point.inp"]`)
	if code, _, errs := runCLI(t, "", "run", "-q", dir); code != 1 || !strings.Contains(errs, "engine settings changed") {
		t.Errorf("change after points finished: exit %d, stderr %q; want it refused", code, errs)
	}
}

// hdoPlanSpec: the README's water stretch as HDO, at MP2 with the
// defaults for the multiplicity, on two workers.
const hdoPlanSpec = `title = "HDO stretch"
[molecule]
geometry = """
O  0.000000  0.000000  0.117300
H  0.000000  0.757200 -0.469200
H  0.000000 -0.757200 -0.469200
"""
isotopes = { 3 = "2H" }
[[scan]]
name = "r"
bond = [1, 3]
from = 0.90
to = 1.00
step = 0.05
[refine]
target_step = 0.002
tolerance = 1e-4
[engine]
kind = "builtin"
method = "mp2"
basis = "6-31G**"
[queue]
workers = 2
`

// TestPlan_Golden: plan's text for a builtin scan (label, defaults,
// isotopes, reference geometry, --geometries, refinement settings
// without round-off noise).
func TestPlan_Golden(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "hdo")
	if err := os.Mkdir(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	writeSpec(t, dir, hdoPlanSpec)
	code, out, errs := runCLI(t, "", "plan", "--geometries", dir)
	if code != 0 {
		t.Fatalf("plan: exit %d\n%s", code, errs)
	}
	if want := golden(t, "plan_hdo", []byte(out)); out != string(want) {
		t.Errorf("plan output differs from testdata/plan_hdo.golden (rerun with -update if intended):\n%s", out)
	}
}
