package command

import (
	"context"
	"errors"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"gonum.org/v1/gonum/floats/scalar"

	"wellscan/parsers"
	"wellscan/planner"
	"wellscan/runner"
)

func testdata(t *testing.T, name string) string {
	t.Helper()
	p, err := filepath.Abs(filepath.Join("testdata", name))
	if err != nil {
		t.Fatal(err)
	}
	return p
}

// diatomic is an invented two-atom point: C at the origin, O at r Å on z.
func diatomic(dir string, r float64) Job {
	return Job{
		Dir:        dir,
		Title:      "toy CO stretch",
		Key:        "r=" + strconv.FormatFloat(r, 'f', 5, 64),
		Coords:     map[string]float64{"r": r},
		CoordUnits: map[string]string{"r": "angstrom"},
		Atoms: []Atom{
			{Symbol: "C", Z: 6, Mass: 12, Pos: [3]float64{0, 0, 0}},
			{Symbol: "O", Z: 8, Mass: 15.99491461957, Pos: [3]float64{0, 0, r * planner.AngstromInBohr}},
		},
		Charge:       0,
		Multiplicity: 1,
	}
}

// morseConfig drives testdata/morse.awk through argv (no shell).
func morseConfig(t *testing.T) Config {
	t.Helper()
	return Config{
		Template:  testdata(t, "morse.tmpl"),
		InputName: "point.inp",
		Args:      []string{"awk", "-f", testdata(t, "morse.awk"), "point.inp"},
		Timeout:   30 * time.Second,
		Energy:    parsers.ExtractorSpec{Label: "well energy / eV", Unit: "eV"},
	}
}

// printConfig runs testdata/print.sh, which prints its argument.
func printConfig(t *testing.T, line string) Config {
	t.Helper()
	c := morseConfig(t)
	c.Args = []string{"sh", testdata(t, "print.sh"), line}
	return c
}

func TestConfig_Run_MorseScript(t *testing.T) {
	if _, err := exec.LookPath("awk"); err != nil {
		t.Skip("awk not installed")
	}
	c := morseConfig(t)
	root := t.TempDir()
	if err := os.Mkdir(filepath.Join(root, "points"), 0o700); err != nil {
		t.Fatal(err)
	}
	for _, r := range []float64{0.95, 1.13, 1.3, 2.5} {
		job := diatomic(filepath.Join(root, "points", "r="+strconv.FormatFloat(r, 'f', 5, 64)), r)
		out, err := c.Run(t.Context(), job)
		if err != nil {
			t.Fatalf("r=%v: Run: %v", r, err)
		}
		// The Morse form with the toy parameters written in morse.awk
		// (invented for the demo; Morse, Phys. Rev. 34, 57 (1929)).
		q := 1 - math.Exp(-2.1*(r-1.13))
		want := (-3050.0 + 4.6*q*q) / planner.HartreeInEV
		// 1e-9 hartree: the script prints 16 significant digits of an
		// energy near 3050 eV (≈ 1e-12 eV) and reads r to 10 decimals.
		if !scalar.EqualWithinAbs(out.Energy, want, 1e-9) {
			t.Errorf("r=%v: energy %.12f hartree, want %.12f", r, out.Energy, want)
		}
		if out.Class != "" || out.ExitCode != 0 {
			t.Errorf("r=%v: class %q, exit %d; want success", r, out.Class, out.ExitCode)
		}
		for _, f := range []string{"point.inp", StdoutFile, StderrFile, ExitStatusFile, GeometryFile} {
			if _, err := os.Stat(filepath.Join(job.Dir, f)); err != nil {
				t.Errorf("r=%v: point directory lacks %s: %v", r, f, err)
			}
		}
		status, _ := os.ReadFile(filepath.Join(job.Dir, ExitStatusFile))
		if !strings.Contains(string(status), "exit_code = 0\nclass = ok\n") {
			t.Errorf("r=%v: exit-status file %q", r, status)
		}
		frames, err := parsers.ReadXYZ(strings.NewReader(mustRead(t, filepath.Join(job.Dir, GeometryFile))), GeometryFile)
		if err != nil || len(frames) != 1 || !scalar.EqualWithinAbs(frames[0].Coords[1][2], r, 1e-10) {
			t.Errorf("r=%v: %s = %v, %v; want O at z = r Å", r, GeometryFile, frames, err)
		}
	}
}

func mustRead(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

func TestConfig_Run_FailureClasses(t *testing.T) {
	notExec := filepath.Join(t.TempDir(), "toyprog")
	if err := os.WriteFile(notExec, []byte("#!/bin/sh\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name    string
		config  func(Config) Config
		class   runner.FailureClass
		code    int
		cause   error  // errors.Is target, or nil
		message string // part of the error text
	}{
		{"missing binary", func(c Config) Config { c.Args = []string{"wellscan-test-no-such-program"}; return c },
			runner.ClassProgramMissing, -1, exec.ErrNotFound, "wellscan-test-no-such-program"},
		{"missing path", func(c Config) Config { c.Args = []string{"/nonexistent/toyprog"}; return c },
			runner.ClassProgramMissing, -1, os.ErrNotExist, "/nonexistent/toyprog"},
		{"not executable", func(c Config) Config { c.Args = []string{notExec}; return c },
			runner.ClassProgramMissing, -1, os.ErrPermission, "toyprog"},
		{"missing script", func(c Config) Config { c.Args, c.Shell, c.Script = nil, true, "/nonexistent/run.sh"; return c },
			runner.ClassProgramMissing, -1, os.ErrNotExist, "run.sh"},
		{"exit 3", func(c Config) Config { c.Args = []string{"sh", testdata(t, "exit3.sh")}; return c },
			runner.ClassExitNonZero, 3, nil, "exited with status 3; stderr: last 1 line(s) of the output:\n  | toy: unknown keyword 'nonsense' on line 2"},
		{"killed by a signal", func(c Config) Config {
			c.Args = []string{"sh", "-c", "echo toy: crashing >&2; kill -KILL $$"}
			return c
		},
			runner.ClassExitNonZero, -1, nil, "sh was killed by signal killed; stderr: last 1 line(s) of the output:\n  | toy: crashing"},
		{"energy missing", func(c Config) Config { return printConfig(t, "converged, but no energy line") },
			runner.ClassEnergyMissing, 0, parsers.ErrEnergyMissing, "| converged, but no energy line"},
		{"energy NaN", func(c Config) Config { return printConfig(t, "well energy / eV : NaN") },
			runner.ClassEnergyInvalid, 0, parsers.ErrEnergyInvalid, `"NaN" is not a finite number`},
		{"energy positive", func(c Config) Config { return printConfig(t, "well energy / eV : 2.5") },
			runner.ClassEnergyInvalid, 0, parsers.ErrEnergyInvalid, "is positive"},
		{"output missing", func(c Config) Config {
			c = printConfig(t, "well energy / eV : -2.5")
			c.Outputs = []string{"toy.orbitals"}
			return c
		}, runner.ClassOutputMissing, 0, nil, "did not write toy.orbitals"},
		{"energy file missing", func(c Config) Config {
			c = printConfig(t, "well energy / eV : -2.5")
			c.EnergyFrom = "toy.out"
			return c
		}, runner.ClassOutputMissing, 0, nil, "did not write toy.out"},
		{"template error", func(c Config) Config {
			c.Template = filepath.Join(t.TempDir(), "bad.tmpl")
			if err := os.WriteFile(c.Template, []byte("line one\n{{.Coords.theta}}\n"), 0o644); err != nil {
				t.Fatal(err)
			}
			return c
		}, runner.ClassSetupFailed, -1, nil, `bad.tmpl:2:9: executing "`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c := tc.config(morseConfig(t))
			job := diatomic(filepath.Join(t.TempDir(), "p"), 1.1)
			out, err := c.Run(t.Context(), job)
			if err == nil {
				t.Fatalf("Run succeeded with energy %v; want class %s", out.Energy, tc.class)
			}
			if out.Class != tc.class || ClassOf(err) != tc.class {
				t.Fatalf("Run class %q (error class %q), want %q; error: %v", out.Class, ClassOf(err), tc.class, err)
			}
			if out.ExitCode != tc.code {
				t.Errorf("exit code %d, want %d", out.ExitCode, tc.code)
			}
			if tc.cause != nil && !errors.Is(err, tc.cause) {
				t.Errorf("error %v does not wrap %v", err, tc.cause)
			}
			if !strings.Contains(err.Error(), tc.message) || !strings.Contains(err.Error(), "point r=1.10000") {
				t.Errorf("error %q does not contain %q and the point key", err, tc.message)
			}
			status := mustRead(t, filepath.Join(job.Dir, ExitStatusFile))
			if !strings.Contains(status, "class = "+string(tc.class)+"\n") {
				t.Errorf("exit-status %q does not record class %s", status, tc.class)
			}
		})
	}
}

func TestConfig_Run_AllowPositive(t *testing.T) {
	c := printConfig(t, "well energy / eV : 2.5")
	c.AllowPositive = true
	out, err := c.Run(t.Context(), diatomic(t.TempDir(), 1.1))
	// 1e-15 relative: one division by the CODATA factor.
	if err != nil || !scalar.EqualWithinRel(out.Energy, 2.5/parsers.HartreeInEV, 1e-15) {
		t.Errorf("Run = %v, %v; want 2.5 eV in hartree", out.Energy, err)
	}
}

func TestConfig_Run_StaleOutputRemoved(t *testing.T) {
	c := printConfig(t, "no energy here")
	c.EnergyFrom = "toy.out"
	dir := t.TempDir()
	// An earlier attempt left a good-looking result; this attempt writes
	// none, so the point must fail rather than reuse it.
	if err := os.WriteFile(filepath.Join(dir, "toy.out"), []byte("well energy / eV : -3.0\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	out, err := c.Run(t.Context(), diatomic(dir, 1.1))
	if out.Class != runner.ClassOutputMissing {
		t.Errorf("Run = %v, class %q; want %s", err, out.Class, runner.ClassOutputMissing)
	}
}

func TestConfig_Run_EnergyFromFile(t *testing.T) {
	c := morseConfig(t)
	c.Args = []string{"sh", "-c", `printf 'well energy / eV : -27.211386245988\n' > toy.out`}
	c.EnergyFrom = "toy.out"
	out, err := c.Run(t.Context(), diatomic(t.TempDir(), 1.1))
	// 1e-15: one rounding in the division by the same CODATA factor.
	if err != nil || !scalar.EqualWithinAbs(out.Energy, -1, 1e-15) {
		t.Errorf("Run = %v, %v; want -1 hartree", out.Energy, err)
	}
}

// alive reports whether pid is a live process (a zombie counts as dead).
func alive(pid int) bool {
	if syscall.Kill(pid, 0) != nil {
		return false
	}
	stat, err := os.ReadFile("/proc/" + strconv.Itoa(pid) + "/stat")
	if err != nil {
		return !errors.Is(err, os.ErrNotExist)
	}
	// Field 3 of /proc/PID/stat is the state; it follows "(comm) ".
	s := string(stat)
	if i := strings.LastIndexByte(s, ')'); i >= 0 && i+2 < len(s) {
		return s[i+2] != 'Z'
	}
	return true
}

func waitDead(t *testing.T, pid int) {
	t.Helper()
	deadline := time.Now().Add(5 * time.Second)
	for alive(pid) {
		if time.Now().After(deadline) {
			syscall.Kill(pid, syscall.SIGKILL)
			t.Fatalf("grandchild %d is still alive after its point was stopped", pid)
		}
		time.Sleep(20 * time.Millisecond)
	}
}

func grandchild(t *testing.T, dir string) int {
	t.Helper()
	text := strings.TrimSpace(mustRead(t, filepath.Join(dir, "grandchild.pid")))
	pid, err := strconv.Atoi(text)
	if err != nil {
		t.Fatalf("grandchild.pid holds %q", text)
	}
	return pid
}

func TestConfig_Run_TimeoutKillsProcessGroup(t *testing.T) {
	c := morseConfig(t)
	c.Args = []string{"sh", testdata(t, "spawn.sh")}
	c.Timeout = 500 * time.Millisecond
	c.KillGrace = 200 * time.Millisecond // spawn.sh ignores SIGTERM: SIGKILL must follow
	dir := t.TempDir()
	start := time.Now()
	out, err := c.Run(t.Context(), diatomic(dir, 1.1))
	if out.Class != runner.ClassTimedOut || !strings.Contains(err.Error(), "timeout of 500ms") {
		t.Fatalf("Run = %v, class %q; want %s", err, out.Class, runner.ClassTimedOut)
	}
	if el := time.Since(start); el > 10*time.Second {
		t.Errorf("Run took %v; the timeout and grace are 0.7 s", el)
	}
	if out.ExitCode != -1 {
		t.Errorf("exit code %d, want -1 for a killed program", out.ExitCode)
	}
	waitDead(t, grandchild(t, dir))
	if !retryable(out.Class) {
		t.Error("a timeout should be retryable")
	}
}

func TestConfig_Run_CancelKillsProcessGroup(t *testing.T) {
	c := morseConfig(t)
	c.Args = []string{"sh", testdata(t, "spawn.sh")}
	c.KillGrace = 100 * time.Millisecond
	dir := t.TempDir()
	ctx, cancel := context.WithCancel(t.Context())
	go func() {
		// Cancel once the grandchild exists.
		for range 500 {
			if _, err := os.Stat(filepath.Join(dir, "grandchild.pid")); err == nil {
				break
			}
			time.Sleep(10 * time.Millisecond)
		}
		cancel()
	}()
	out, err := c.Run(ctx, diatomic(dir, 1.1))
	if out.Class != runner.ClassCancelled || !errors.Is(err, context.Canceled) {
		t.Fatalf("Run = %v, class %q; want %s wrapping context.Canceled", err, out.Class, runner.ClassCancelled)
	}
	waitDead(t, grandchild(t, dir))
}

func TestConfig_Run_NoInjection(t *testing.T) {
	// Every value below would create a marker file if it reached a shell.
	title := "q\"uote' $(touch MARK1) `touch MARK2`; touch MARK3\ntouch MARK4 && echo \\ ${HOME}"
	key := "r=1.1;touch MARK5|touch MARK6"
	arg := "$(touch MARK7) `touch MARK8`"
	coord := "r$(touch MARK9)"
	for _, shell := range []bool{false, true} {
		t.Run("shell="+strconv.FormatBool(shell), func(t *testing.T) {
			c := Config{
				Template:  testdata(t, "inject.tmpl"),
				InputName: "point.inp",
				Energy:    parsers.ExtractorSpec{Label: "well energy / eV", Unit: "eV"},
			}
			if shell {
				c.Shell, c.Script = true, testdata(t, "inject.sh")
			} else {
				c.Args = []string{"sh", testdata(t, "inject.sh"), arg}
			}
			job := diatomic(t.TempDir(), 1.1)
			job.Title, job.Key = title, key
			job.Coords = map[string]float64{coord: 1.1, "theta": 104.5}
			out, err := c.Run(t.Context(), job)
			if err != nil {
				t.Fatalf("Run: %v", err)
			}
			if !scalar.EqualWithinRel(out.Energy, -1.5/parsers.HartreeInEV, 1e-15) {
				t.Errorf("energy %v", out.Energy)
			}
			entries, _ := os.ReadDir(job.Dir)
			for _, e := range entries {
				if strings.HasPrefix(e.Name(), "MARK") {
					t.Errorf("marker %s exists: a value reached a shell", e.Name())
				}
			}
			if got := mustRead(t, filepath.Join(job.Dir, "seen-title")); got != title {
				t.Errorf("WELLSCAN_TITLE = %q, want %q", got, title)
			}
			if got := mustRead(t, filepath.Join(job.Dir, "seen-key")); got != key {
				t.Errorf("WELLSCAN_KEY = %q, want %q", got, key)
			}
			if !shell {
				if got := mustRead(t, filepath.Join(job.Dir, "seen-arg")); got != arg {
					t.Errorf("argument = %q, want %q", got, arg)
				}
			}
			coords := mustRead(t, filepath.Join(job.Dir, "seen-coords"))
			if want := "WELLSCAN_COORD_R__TOUCH_MARK9_=1.1\nWELLSCAN_COORD_THETA=104.5\n"; coords != want {
				t.Errorf("coordinate variables %q, want %q", coords, want)
			}
			input := mustRead(t, filepath.Join(job.Dir, "seen-input"))
			if !strings.HasPrefix(input, "title "+title+"\nkey "+key+"\ncoord "+coord+" = 1.1000000000\n") {
				t.Errorf("input %q does not carry the values verbatim", input)
			}
		})
	}
}

func TestRetryable(t *testing.T) {
	tests := map[runner.FailureClass]bool{
		runner.ClassProgramMissing: false, runner.ClassExitNonZero: true, runner.ClassTimedOut: true, runner.ClassOutputMissing: false,
		runner.ClassEnergyMissing: false, runner.ClassEnergyInvalid: false, runner.ClassSetupFailed: false, runner.ClassCancelled: true,
	}
	for class, want := range tests {
		if got := retryable(class); got != want {
			t.Errorf("retryable(%s) = %v, want %v", class, got, want)
		}
	}
}
