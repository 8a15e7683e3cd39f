package main

import (
	"bytes"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"wellscan/runner"
)

// bendDir makes a `wellscan relax DIR` directory for the toy force field
// runner/command/testdata/bend.awk (copied in with morse.tmpl); extra is
// appended to [engine.command], rest after it.
func bendDir(t *testing.T, geometry, extra, rest string) string {
	t.Helper()
	if _, err := exec.LookPath("awk"); err != nil {
		t.Skip("awk not installed")
	}
	dir := t.TempDir()
	for _, name := range []string{"bend.awk", "morse.tmpl"} {
		b, err := os.ReadFile(filepath.Join("..", "..", "runner", "command", "testdata", name))
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	spec := `title = "toy bend through awk"
[molecule]
geometry = """
` + geometry + `
"""
[engine]
kind = "command"
[engine.command]
template = "morse.tmpl"
input = "point.inp"
command = ["awk", "-f", "bend.awk", "point.inp"]
timeout = "30s"
energy = { label = "bend toy energy / eV", unit = "eV" }
` + extra + "\n" + rest
	writeSpec(t, dir, spec)
	return dir
}

const (
	bendStart    = "O 0 0 0\nH 0.9 0 0.1\nH -0.3 0.95 0"
	bendForces   = `gradient = { label = "forces (eV/Angstrom)", unit = "eV/angstrom", sign = "force" }`
	hartreeInEV  = 27.211386245988 // eV, CODATA 2018
	bendR0       = 0.96            // Å, bend.awk's invented constant
	bendTheta0   = 104.0           // degrees, bend.awk's invented constant
	bendE0       = -2000.0         // eV, bend.awk's invented constant
	bendKTheta   = 4.0             // eV/rad², bend.awk's invented constant
	bendTighter  = "[relax]\ntighter = 100\n"
	bendInternal = "angle(2-1-3)"
)

func relaxDirJSON(t *testing.T, args ...string) (relaxReport, int, string) {
	t.Helper()
	code, out, errs := runCLI(t, "", append([]string{"relax"}, append(args, "--json")...)...)
	var rep relaxReport
	if code == 0 || strings.HasPrefix(strings.TrimSpace(out), "{") {
		if err := json.Unmarshal([]byte(out), &rep); err != nil {
			t.Fatalf("exit %d, JSON: %v\n%s%s", code, err, out, errs)
		}
	}
	return rep, code, errs
}

func internalValue(rep relaxReport, name string) float64 {
	for _, l := range rep.Internals {
		if l.Name == name {
			return l.Value
		}
	}
	return math.NaN()
}

func countLines(t *testing.T, path string) int {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return bytes.Count(b, []byte("\n"))
}

// TestRelaxDir_ThroughProgram optimises the toy triatomic of bend.awk
// through `wellscan relax DIR`, reading the program's forces and by
// central differences of its energies. The minimum is known in closed
// form from the script's invented constants: both bonds r0 = 0.96 Å, the
// bend θ0 = 104°, E = E0 = −2000 eV. Every run has its own directory,
// and a second `relax DIR` continues the finished checkpoint without
// running the program again.
func TestRelaxDir_ThroughProgram(t *testing.T) {
	for _, tc := range []struct {
		name, gradient string
		runsPerGrad    int
	}{
		{"forces read", bendForces, 1},
		{"differences", "", 1 + 6*3},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := bendDir(t, bendStart, tc.gradient, bendTighter)
			rep, code, errs := relaxDirJSON(t, dir)
			if code != 0 {
				t.Fatalf("relax: exit %d\n%s", code, errs)
			}
			// Thresholds tightened 100×: max force ≤ 4.5e-6 Eh/bohr. The
			// bonds (k = 40 eV/Å² = 0.41 Eh/bohr²) are then within 1.1e-5
			// bohr of r0 and the bend (4 eV/rad² = 0.147 Eh/rad²) within
			// 3e-5 rad: 1e-4 Å and 0.005° bound both.
			for _, b := range []string{"bond(1-2)", "bond(1-3)"} {
				if v := internalValue(rep, b); math.Abs(v-bendR0) > 1e-4 {
					t.Errorf("%s = %.6f Å, want %.2f (bend.awk's r0)", b, v, bendR0)
				}
			}
			if v := internalValue(rep, bendInternal); math.Abs(v-bendTheta0) > 5e-3 {
				t.Errorf("angle = %.5f°, want %.1f (bend.awk's θ0)", v, bendTheta0)
			}
			// ½k δ² with the bounds above: below 1e-10 Eh; 1e-9 leaves room.
			if want := bendE0 / hartreeInEV; !rep.Converged || math.Abs(rep.EnergyHartree-want) > 1e-9 {
				t.Errorf("converged %v, E = %.12f Eh, want %.12f (bend.awk's E0)", rep.Converged, rep.EnergyHartree, want)
			}
			if rep.Program == "" || rep.Directory != dir {
				t.Errorf("report names program %q, directory %q", rep.Program, rep.Directory)
			}
			// One directory per gradient (plus 6N displaced runs each by
			// differences), and one log line per gradient.
			steps, _ := filepath.Glob(filepath.Join(dir, "relax", "step-*"))
			disp, _ := filepath.Glob(filepath.Join(dir, "relax", "step-*", "d-*"))
			if len(steps) != rep.Gradients || len(steps)+len(disp) != rep.Gradients*tc.runsPerGrad {
				t.Errorf("%d step and %d displacement directories for %d gradients, want %d runs each", len(steps), len(disp), rep.Gradients, tc.runsPerGrad)
			}
			for _, s := range steps {
				if _, err := os.Stat(filepath.Join(s, "point.inp")); err != nil {
					t.Errorf("%s: no rendered input: %v", s, err)
				}
			}
			logPath := filepath.Join(dir, runner.RelaxGradientLogFile)
			if n := countLines(t, logPath); n != rep.Gradients {
				t.Errorf("%s has %d lines, %d gradients", runner.RelaxGradientLogFile, n, rep.Gradients)
			}
			for _, f := range []string{runner.RelaxedFile, runner.RelaxTrajectoryFile, runner.RelaxStateFile} {
				if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
					t.Errorf("missing %s: %v", f, err)
				}
			}
			again, code, errs := relaxDirJSON(t, dir)
			if code != 0 || again.EnergyHartree != rep.EnergyHartree || again.Gradients != rep.Gradients {
				t.Errorf("second relax: exit %d, E %.12f, %d gradients; want the first run's %.12f, %d\n%s", code, again.EnergyHartree, again.Gradients, rep.EnergyHartree, rep.Gradients, errs)
			}
			if n := countLines(t, logPath); n != rep.Gradients {
				t.Errorf("the second relax computed %d more gradients, want none", n-rep.Gradients)
			}
		})
	}
}

// TestRelaxDir_HoldBuiltinAndErrors: a [relax] hold keeps the bend at its
// starting value while the bonds relax to r0; [engine] kind = "builtin"
// works the same way (H2/STO-3G, r_e = 0.712 Å: Hehre, Radom, Schleyer &
// Pople, Ab Initio Molecular Orbital Theory, Wiley 1986; from memory);
// bad directories and flags are refused with the key or flag named.
func TestRelaxDir_HoldBuiltinAndErrors(t *testing.T) {
	dir := bendDir(t, bendStart, bendForces, "[relax]\nhold = [[2, 1, 3]]\ntighter = 100\n")
	rep, code, errs := relaxDirJSON(t, dir)
	if code != 0 {
		t.Fatalf("relax with hold: exit %d\n%s", code, errs)
	}
	// The starting bend, computed independently from bendStart.
	u, v := [3]float64{0.9, 0, 0.1}, [3]float64{-0.3, 0.95, 0}
	start := math.Acos((u[0]*v[0]+u[1]*v[1]+u[2]*v[2])/math.Sqrt((u[0]*u[0]+u[1]*u[1]+u[2]*u[2])*(v[0]*v[0]+v[1]*v[1]+v[2]*v[2]))) * 180 / math.Pi
	if got := internalValue(rep, bendInternal); math.Abs(got-start) > 1e-4 { // the 1e-4° bound
		t.Errorf("held bend = %.6f°, start %.6f°", got, start)
	}
	// With the bend held the bonds still relax to r0 (the toy's terms
	// are separable); 1e-4 Å as in TestRelaxDir_ThroughProgram.
	if r := internalValue(rep, "bond(1-2)"); math.Abs(r-bendR0) > 1e-4 {
		t.Errorf("bond(1-2) = %.6f Å with the bend held, want %.2f", r, bendR0)
	}
	d := (start - bendTheta0) * math.Pi / 180
	if want := (bendE0 + 0.5*bendKTheta*d*d) / hartreeInEV; math.Abs(rep.EnergyHartree-want) > 1e-9 { // bend.awk's closed form
		t.Errorf("E = %.12f Eh with the bend held, want %.12f", rep.EnergyHartree, want)
	}
	if len(rep.Held) != 1 || rep.Held[0] != "angle:2,1,3" {
		t.Errorf("held = %q, want [angle:2,1,3]", rep.Held)
	}

	h2 := t.TempDir()
	writeSpec(t, h2, "[molecule]\ngeometry = \"\"\"\nH 0 0 0\nH 0 0 0.80\n\"\"\"\n[engine]\nkind = \"builtin\"\nmethod = \"rhf\"\nbasis = \"sto-3g\"\n")
	rep, code, errs = relaxDirJSON(t, h2)
	if code != 0 {
		t.Fatalf("builtin relax DIR: exit %d\n%s", code, errs)
	}
	p, q := rep.GeometryAng[0], rep.GeometryAng[1]
	if r := math.Sqrt((p[0]-q[0])*(p[0]-q[0]) + (p[1]-q[1])*(p[1]-q[1]) + (p[2]-q[2])*(p[2]-q[2])); math.Abs(r-0.712) > 0.001 { // HRSP 1986, from memory; the table's last digit
		t.Errorf("H2/STO-3G via relax DIR: r = %.4f Å, want 0.712", r)
	}

	// Refusals, each naming what is wrong.
	for _, tc := range []struct {
		name, spec string
		args       []string
		want       string
	}{
		{"scan block", "[[scan]]\nname = \"r\"\nbond = [1, 2]\nvalues = [0.7]\n", nil, "takes no [[scan]] blocks"},
		{"refine", "[refine]\nadaptive = false\n", nil, "[refine] applies to scans"},
		{"flag", "", []string{"--basis", "6-31G"}, "--basis: with a directory"},
		{"hold flag", "", []string{"--hold", "bond:1,2"}, "--hold: with a directory"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			d := t.TempDir()
			writeSpec(t, d, "[molecule]\ngeometry = \"\"\"\nH 0 0 0\nH 0 0 0.80\n\"\"\"\n[engine]\nkind = \"builtin\"\nbasis = \"sto-3g\"\n"+tc.spec)
			code, _, errs := runCLI(t, "", append([]string{"relax", d}, tc.args...)...)
			if code != 1 || !strings.Contains(errs, tc.want) {
				t.Errorf("exit %d, stderr %q; want 1 and %q", code, errs, tc.want)
			}
		})
	}
	// A checkpoint of another spec is not continued.
	writeSpec(t, h2, "[molecule]\ngeometry = \"\"\"\nH 0 0 0\nH 0 0 0.75\n\"\"\"\n[engine]\nkind = \"builtin\"\nmethod = \"rhf\"\nbasis = \"sto-3g\"\n")
	if code, _, errs := runCLI(t, "", "relax", h2); code != 1 || !strings.Contains(errs, "belongs to another spec") || !strings.Contains(errs, "molecule") {
		t.Errorf("changed spec: exit %d, stderr %q; want 1 and a refusal naming the molecule", code, errs)
	}
}

// TestRelaxDir_KillResume SIGKILLs `wellscan relax DIR` (central
// differences through bend.awk: 19 program runs per gradient) at random
// moments, then lets it finish: the result must equal an uninterrupted
// run's, and no gradient may be computed twice beyond the one in flight
// at each kill (relax-gradients.log against the checkpoint's count).
func TestRelaxDir_KillResume(t *testing.T) {
	if testing.Short() && os.Getenv("WELLSCAN_TORTURE") == "" {
		t.Skip("builds the binary and kills it as a child process")
	}
	seed := tortureSeed(t)
	t.Logf("seed %d (rerun with WELLSCAN_TORTURE_SEED=%d)", seed, seed)
	rng := rand.New(rand.NewPCG(seed, 0x7e1a))
	bin := buildWellscan(t)
	run := func(dir string) (relaxReport, time.Duration) {
		t.Helper()
		start := time.Now()
		out, err := exec.Command(bin, "relax", dir, "--json").Output()
		if err != nil {
			t.Fatalf("relax %s: %v\n%s", dir, err, out)
		}
		var rep relaxReport
		if err := json.Unmarshal(out, &rep); err != nil {
			t.Fatal(err)
		}
		return rep, time.Since(start)
	}
	ref := bendDir(t, bendStart, "", bendTighter)
	want, wall := run(ref)
	dir := bendDir(t, bendStart, "", bendTighter)
	logPath := filepath.Join(dir, runner.RelaxGradientLogFile)
	lines := func() int {
		b, _ := os.ReadFile(logPath)
		return bytes.Count(b, []byte("\n"))
	}
	// Each run is killed a random moment (0–30 ms) after its first new
	// gradient is logged: inside the next gradient's 19 program runs, so
	// that gradient is the one in flight. Progress, not wall time, decides
	// when, so a slow machine does not let the run finish first.
	kills := killCount(4, 2)
	killed := 0
	for killed < kills {
		n0 := lines()
		cmd := exec.Command(bin, "relax", dir, "--json")
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		exited := make(chan struct{})
		go func() { _ = cmd.Wait(); close(exited) }()
		finished := false
	wait:
		for lines() <= n0 {
			select {
			case <-exited:
				finished = true
				break wait
			case <-time.After(2 * time.Millisecond):
			}
		}
		if finished {
			t.Logf("the run after %d kills finished before its kill", killed)
			break
		}
		time.Sleep(time.Duration(rng.Int64N(int64(30 * time.Millisecond))))
		_ = cmd.Process.Signal(syscall.SIGKILL)
		<-exited
		if ws, _ := cmd.ProcessState.Sys().(syscall.WaitStatus); !ws.Signaled() {
			t.Logf("the run after %d kills finished before its kill", killed)
			break
		}
		killed++
	}
	t.Logf("uninterrupted: %d gradients in %v; %d kills", want.Gradients, wall.Round(time.Millisecond), killed)
	if killed < 2 {
		t.Fatalf("only %d kills landed before the optimisation finished", killed)
	}
	got, _ := run(dir)
	// The resumed optimisation replays the same steps (the program is
	// deterministic and the checkpoint holds the optimiser's full state),
	// so only the last printed digits may differ.
	if math.Abs(got.EnergyHartree-want.EnergyHartree) > 1e-12 || got.Gradients != want.Gradients {
		t.Errorf("after %d kills: E = %.13f Eh, %d gradients; uninterrupted %.13f Eh, %d", killed, got.EnergyHartree, got.Gradients, want.EnergyHartree, want.Gradients)
	}
	for i := range got.GeometryAng {
		for k := range 3 {
			if d := math.Abs(got.GeometryAng[i][k] - want.GeometryAng[i][k]); d > 1e-9 {
				t.Errorf("atom %d coordinate %d differs by %.1e Å from the uninterrupted run", i+1, k, d)
			}
		}
	}
	logged := countLines(t, logPath)
	t.Logf("gradients: %d computed in all runs, %d kept, %d kills", logged, got.Gradients, killed)
	if logged > got.Gradients+killed {
		t.Errorf("%d gradients computed for %d kept: more than one lost per kill (%d kills)", logged, got.Gradients, killed)
	}
}
