package command

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"syscall"
	"time"

	"wellscan/parsers"
	"wellscan/planner"
	"wellscan/runner"
)

// retryable reports whether running the same point again may succeed
// after a failure of class f. A missing program, a template error, or an
// output that holds no valid energy comes back the same way every time
// (the same input gives the same output), so those are not retried
// blindly. A non-zero exit (a crash, a full disk, a licence server), a
// timeout (a loaded machine; the lead may raise the limit) and a
// cancellation can go differently next time.
func retryable(f runner.FailureClass) bool {
	switch f {
	case runner.ClassExitNonZero, runner.ClassTimedOut, runner.ClassCancelled:
		return true
	}
	return false
}

// Outcome is what one run produced. Stdout and Stderr are the paths of the
// kept output files; ExitCode is -1 when the program did not exit on its
// own (killed, or never started).
type Outcome struct {
	Energy float64 // hartree; meaningful only when Class is empty
	// Gradient is dE/dR per atom (hartree/bohr) when Config.Gradient is
	// set; nil otherwise.
	Gradient [][3]float64
	Class    runner.FailureClass
	ExitCode int
	Input    string
	Stdout   string
	Stderr   string
	Elapsed  time.Duration
	// Adopted: the energy comes from a program an earlier, killed run
	// started for this point, waited for instead of run again.
	Adopted bool
}

// RunError is the error of a failed run. Err is the cause: a
// parsers.ErrEnergyMissing/ErrEnergyInvalid error, a context error, an
// exec error, or an error of this package.
type RunError struct {
	Key   string
	Class runner.FailureClass
	Err   error
}

func (e *RunError) Error() string {
	return fmt.Sprintf("command: point %s: %s: %v", e.Key, e.Class, e.Err)
}

func (e *RunError) Unwrap() error { return e.Err }

// ClassOf returns the failure class carried by err, or "" when err is nil
// or not from this package.
func ClassOf(err error) runner.FailureClass {
	var re *RunError
	if errors.As(err, &re) {
		return re.Class
	}
	return ""
}

// maxOutputBytes bounds what is read whole for an energy or a gradient
// (64 MiB): a JSON document, or an output searched by a pattern that can
// match across lines — far more than such an output holds, small enough
// that several points at once cannot exhaust memory. Label and line-bound
// pattern extractors read any output line by line, in bounded memory
// (parsers.Extractor.ExtractFrom), and are not capped. A larger output
// fails the point with a message saying why it was needed whole.
const maxOutputBytes = 64 << 20

// stderrTailLines is how many lines of stderr a non-zero exit quotes.
const stderrTailLines = 8

// Run does one point: it renders the input into job.Dir, starts the
// program there, waits for it (killing its process group on timeout or
// cancellation), checks the expected outputs and extracts the energy. The
// error, when not nil, is a [*RunError] whose class is also in the
// Outcome. The exit-status file is written in every case where the
// directory exists. job.Dir is made when missing, but not its parent,
// which must exist (a scan directory moved away while it runs is never
// made again at its old path).
func (c Config) Run(ctx context.Context, job Job) (Outcome, error) {
	dir, err := filepath.Abs(job.Dir)
	out := Outcome{ExitCode: -1}
	fail := func(class runner.FailureClass, err error) (Outcome, error) {
		out.Class = class
		return out, &RunError{Key: job.Key, Class: class, Err: err}
	}
	if err != nil || job.Dir == "" {
		dir = ""
		return fail(runner.ClassSetupFailed, fmt.Errorf("point directory %q: %v", job.Dir, err))
	}
	if err := ctx.Err(); err != nil {
		dir = ""
		return fail(runner.ClassCancelled, err)
	}
	if err := c.Validate(); err != nil {
		dir = ""
		return fail(runner.ClassSetupFailed, err)
	}
	x, _ := c.Energy.Compile() // Validate compiled it already
	// Only the point's own directory is made, never its parents: a scan
	// directory moved or deleted while it runs must not be made again
	// (empty) at its old path.
	if err := os.Mkdir(dir, 0o700); err != nil && !errors.Is(err, fs.ErrExist) {
		dir = ""
		return fail(runner.ClassSetupFailed, fmt.Errorf("point directory: %w", err))
	}
	// Every file of the point is created inside its directory and never
	// through a symbolic link (see pointFiles).
	pf, err := openPointFiles(dir)
	if err != nil {
		dir = ""
		return fail(runner.ClassSetupFailed, err)
	}
	defer pf.Close()
	fail = func(class runner.FailureClass, err error) (Outcome, error) {
		out.Class = class
		pf.writeStatus(out, err)
		return out, &RunError{Key: job.Key, Class: class, Err: err}
	}
	out.Input = filepath.Join(dir, c.InputName)
	out.Stdout = filepath.Join(dir, StdoutFile)
	out.Stderr = filepath.Join(dir, StderrFile)

	// A program left running by an orchestrator that was killed is waited
	// for (never run a second time beside itself); its output is taken
	// when it holds a valid energy.
	if e, ok, class, err := c.adopt(ctx, pf, x, job.Attempt); err != nil {
		return fail(class, err)
	} else if ok {
		out.Energy, out.Adopted = e, true
		pf.writeStatus(out, nil)
		return out, nil
	}

	// A file left by an earlier attempt must not pass for this one's.
	stale := append(slices.Clone(c.Outputs), ExitStatusFile)
	if c.EnergyFrom != "" && c.EnergyFrom != Stdout && c.EnergyFrom != StderrFile {
		stale = append(stale, c.EnergyFrom)
	}
	if c.GradientFrom != "" && c.GradientFrom != Stdout && c.GradientFrom != StderrFile {
		stale = append(stale, c.GradientFrom)
	}
	for _, name := range stale {
		if err := pf.root.Remove(name); err != nil && !errors.Is(err, fs.ErrNotExist) {
			return fail(runner.ClassSetupFailed, fmt.Errorf("removing %s left by an earlier attempt: %w", name, err))
		}
	}

	input, err := c.RenderContext(ctx, job)
	if err != nil {
		return fail(runner.ClassSetupFailed, err)
	}
	if err := pf.writeFile(c.InputName, input); err != nil {
		return fail(runner.ClassSetupFailed, err)
	}
	if err := writeGeometry(pf, job); err != nil {
		return fail(runner.ClassSetupFailed, err)
	}
	token, err := newRunToken()
	if err != nil {
		return fail(runner.ClassSetupFailed, err)
	}
	env, err := c.environ(job, dir)
	if err != nil {
		return fail(runner.ClassSetupFailed, err)
	}
	env = append(env, envPrefix+"RUN_TOKEN="+token)
	path, args, err := c.program()
	if err != nil {
		return fail(runner.ClassProgramMissing, err)
	}

	stdout, err := pf.create(StdoutFile)
	if err != nil {
		return fail(runner.ClassSetupFailed, err)
	}
	defer stdout.Close()
	stderr, err := pf.create(StderrFile)
	if err != nil {
		return fail(runner.ClassSetupFailed, err)
	}
	defer stderr.Close()

	cmd := &exec.Cmd{Path: path, Args: append([]string{path}, args...), Dir: dir, Env: env, Stdout: stdout, Stderr: stderr}
	ownProcessGroup(cmd)
	start := time.Now()
	// The record goes down before the program starts, so that no moment
	// exists in which a program runs without one: a later run that finds
	// the record looks for the token's processes, with or without a PID.
	rec := runRecord{Token: token, Host: hostName(), BootID: bootID(), Started: start, Key: job.Key, Attempt: job.Attempt}
	if err := pf.writeRecord(rec); err != nil {
		return fail(runner.ClassSetupFailed, fmt.Errorf("writing %s: %w", RunRecordFile, err))
	}
	if err := cmd.Start(); err != nil {
		_ = pf.root.Remove(RunRecordFile)
		if errors.Is(err, fs.ErrNotExist) || errors.Is(err, fs.ErrPermission) || errors.Is(err, exec.ErrNotFound) {
			return fail(runner.ClassProgramMissing, err)
		}
		return fail(runner.ClassSetupFailed, fmt.Errorf("starting %s: %w", path, err))
	}
	done := make(chan error, 1)
	go func() { done <- cmd.Wait() }()
	// The record lets a later run find this program if this process dies
	// before it (SIGKILL): it then waits for it instead of starting a
	// second copy in the same directory.
	rec.PID = cmd.Process.Pid
	_ = pf.writeRecord(rec)

	var timeout <-chan time.Time
	if c.Timeout > 0 {
		t := time.NewTimer(c.Timeout)
		defer t.Stop()
		timeout = t.C
	}
	grace := c.KillGrace
	if grace == 0 {
		grace = DefaultKillGrace
	}
	var stopped runner.FailureClass
	var stopErr error
	select {
	case err = <-done:
	case <-timeout:
		stopped, stopErr = runner.ClassTimedOut, fmt.Errorf("still running after the timeout of %v; its process group was killed", c.Timeout)
		err = stopGroup(cmd, done, grace)
	case <-ctx.Done():
		stopped, stopErr = runner.ClassCancelled, ctx.Err()
		err = stopGroup(cmd, done, grace)
	}
	// Whatever the program left running in its group ends with it, and so
	// does every process that still carries its token (a descendant that
	// left the group with setsid).
	killGroup(cmd, syscall.SIGKILL)
	sweepToken(token)
	rec.Exited, rec.ExitCode = true, -1
	if cmd.ProcessState != nil {
		rec.ExitCode = cmd.ProcessState.ExitCode()
	}
	if stopped != "" {
		// Stopped by wellscan: nothing to adopt later.
		_ = pf.root.Remove(RunRecordFile)
	} else {
		_ = pf.writeRecord(rec)
	}
	out.Elapsed = time.Since(start)
	if cmd.ProcessState != nil {
		out.ExitCode = cmd.ProcessState.ExitCode()
	}
	if stopped != "" {
		out.ExitCode = -1
		return fail(stopped, stopErr)
	}
	if err != nil {
		var ee *exec.ExitError
		if !errors.As(err, &ee) {
			return fail(runner.ClassSetupFailed, fmt.Errorf("waiting for %s: %w", path, err))
		}
		return fail(runner.ClassExitNonZero, fmt.Errorf("%s %s%s", filepath.Base(path), describeExit(cmd.ProcessState), outputTail(out.Stderr, out.Stdout)))
	}

	e, class, err := c.collect(pf, x)
	if err != nil {
		return fail(class, err)
	}
	out.Energy = e
	if c.Gradient != nil {
		g, class, err := c.collectGradient(pf, len(job.Atoms))
		if err != nil {
			return fail(class, err)
		}
		out.Gradient = g
	}
	pf.writeStatus(out, nil)
	return out, nil
}

// collectGradient reads the nuclear gradient (hartree/bohr per atom) a
// finished program printed, as c.Gradient says.
func (c Config) collectGradient(pf *pointFiles, atoms int) ([][3]float64, runner.FailureClass, error) {
	gx, _ := c.Gradient.Compile() // Validate compiled it already
	source := StdoutFile
	switch c.GradientFrom {
	case StderrFile:
		source = StderrFile
	case "", Stdout:
	default:
		source = c.GradientFrom
	}
	f, err := pf.openOutput(source)
	if err != nil {
		return nil, runner.ClassOutputMissing, fmt.Errorf("gradient: %w", err)
	}
	defer f.Close()
	g, err := gx.ExtractFrom(f, atoms, maxOutputBytes)
	if err != nil {
		class := runner.ClassGradientMissing
		switch {
		case errors.Is(err, parsers.ErrGradientInvalid):
			class = runner.ClassGradientInvalid
		case errors.Is(err, parsers.ErrOutputTooLarge):
			class = runner.ClassOutputMissing
		case !errors.Is(err, parsers.ErrGradientMissing):
			class = runner.ClassOutputMissing // a read error
		}
		return nil, class, fmt.Errorf("%s: %w", filepath.Base(source), err)
	}
	return g, "", nil
}

// collect checks the outputs a finished program left and extracts its
// energy (hartree).
func (c Config) collect(pf *pointFiles, x parsers.Extractor) (float64, runner.FailureClass, error) {
	var missing []string
	for _, o := range c.Outputs {
		if _, err := pf.root.Stat(o); err != nil {
			missing = append(missing, o)
		}
	}
	source := StdoutFile
	switch c.EnergyFrom {
	case StderrFile:
		source = StderrFile
	case "", Stdout:
	default:
		source = c.EnergyFrom
		if _, err := pf.root.Stat(source); err != nil && !slices.Contains(missing, c.EnergyFrom) {
			missing = append(missing, c.EnergyFrom)
		}
	}
	if len(missing) > 0 {
		return 0, runner.ClassOutputMissing, fmt.Errorf("the program exited with status 0 but did not write %s", strings.Join(missing, ", "))
	}
	f, err := pf.openOutput(source)
	if err != nil {
		return 0, runner.ClassOutputMissing, err
	}
	defer f.Close()
	e, err := x.ExtractFrom(f, maxOutputBytes)
	if err != nil {
		class := runner.ClassEnergyMissing
		switch {
		case errors.Is(err, parsers.ErrEnergyInvalid):
			class = runner.ClassEnergyInvalid
		case errors.Is(err, parsers.ErrOutputTooLarge):
			class = runner.ClassOutputMissing
			err = fmt.Errorf("%w; have the program write its energy to a file of its own and name it in energy_from, or use a label or a pattern that stays within a line", err)
		case !errors.Is(err, parsers.ErrEnergyMissing):
			class = runner.ClassOutputMissing // a read error
		}
		return 0, class, fmt.Errorf("%s: %w", filepath.Base(source), err)
	}
	if err := (parsers.Plausibility{AllowPositive: c.AllowPositive}).Check(e); err != nil {
		return 0, runner.ClassEnergyInvalid, fmt.Errorf("%s: %w", filepath.Base(source), err)
	}
	return e, "", nil
}

// Check looks for the program (or script) and parses the template, so that
// a plan can report both before anything runs. Its error is a [*RunError]
// of class [runner.ClassProgramMissing] or [runner.ClassSetupFailed], with
// an empty key.
func (c Config) Check() error {
	if err := c.Validate(); err != nil {
		return &RunError{Class: runner.ClassSetupFailed, Err: err}
	}
	if _, _, err := c.program(); err != nil {
		return &RunError{Class: runner.ClassProgramMissing, Err: err}
	}
	if _, err := c.parseTemplate(); err != nil {
		return &RunError{Class: runner.ClassSetupFailed, Err: err}
	}
	return nil
}

// Program is the absolute path of what runs each point (the program, or
// /bin/sh for a script), found and checked as the runs will find it;
// an error says why it would fail with class program-missing.
func (c Config) Program() (string, error) {
	p, _, err := c.program()
	if err != nil {
		return "", &RunError{Class: runner.ClassProgramMissing, Err: err}
	}
	return p, nil
}

// program resolves what to start: an absolute path and its arguments.
func (c Config) program() (string, []string, error) {
	if c.Shell {
		script, err := filepath.Abs(c.Script)
		if err != nil {
			return "", nil, err
		}
		if st, err := os.Stat(script); err != nil {
			return "", nil, fmt.Errorf("shell script %s: %w", c.Script, err)
		} else if st.IsDir() {
			return "", nil, fmt.Errorf("shell script %s is a directory", c.Script)
		}
		sh, err := exec.LookPath("/bin/sh")
		if err != nil {
			return "", nil, fmt.Errorf("/bin/sh: %w", err)
		}
		return sh, []string{script}, nil
	}
	name := c.Args[0]
	if strings.ContainsRune(name, '/') {
		abs, err := filepath.Abs(name)
		if err != nil {
			return "", nil, err
		}
		name = abs
	}
	path, err := exec.LookPath(name)
	if err != nil {
		if errors.Is(err, exec.ErrDot) {
			return "", nil, fmt.Errorf("program %q is found only through a relative PATH entry; give its path", c.Args[0])
		}
		return "", nil, fmt.Errorf("program %q: %w", c.Args[0], err)
	}
	if !filepath.IsAbs(path) {
		if path, err = filepath.Abs(path); err != nil {
			return "", nil, err
		}
	}
	return path, c.Args[1:], nil
}

// environ builds the program's environment: wellscan's own (less any
// WELLSCAN_* variables it inherited), then Config.Env, then the point's
// values.
func (c Config) environ(job Job, dir string) ([]string, error) {
	var env []string
	for _, kv := range os.Environ() {
		if !strings.HasPrefix(kv, envPrefix) {
			env = append(env, kv)
		}
	}
	keys := make([]string, 0, len(c.Env))
	for k := range c.Env {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	for _, k := range keys {
		env = append(env, k+"="+c.Env[k])
	}
	set := map[string]string{
		"KEY":          job.Key,
		"TITLE":        job.Title,
		"CHARGE":       strconv.Itoa(job.Charge),
		"MULTIPLICITY": strconv.Itoa(job.Multiplicity),
		"NATOMS":       strconv.Itoa(len(job.Atoms)),
		"INPUT":        c.InputName,
		"XYZ":          GeometryFile,
		"POINT_DIR":    dir,
	}
	names := make([]string, 0, len(job.Coords))
	for name := range job.Coords {
		names = append(names, name)
	}
	slices.Sort(names)
	var envNames []string
	for _, name := range names {
		en := "COORD_" + envName(name)
		if _, dup := set[en]; dup {
			return nil, fmt.Errorf("coordinates named %q and another give the same variable %s%s", name, envPrefix, en)
		}
		set[en] = strconv.FormatFloat(job.Coords[name], 'g', -1, 64)
		envNames = append(envNames, envName(name))
	}
	set["COORDS"] = strings.Join(envNames, " ")
	for _, k := range slices.Sorted(mapKeys(set)) {
		v := set[k]
		if strings.ContainsRune(v, 0) {
			return nil, fmt.Errorf("value of %s%s contains a NUL byte", envPrefix, k)
		}
		env = append(env, envPrefix+k+"="+v)
	}
	return env, nil
}

func mapKeys(m map[string]string) func(yield func(string) bool) {
	return func(yield func(string) bool) {
		for k := range m {
			if !yield(k) {
				return
			}
		}
	}
}

// envName turns a coordinate name into the tail of a variable name:
// upper-case letters, digits and '_'; anything else becomes '_'.
func envName(name string) string {
	var b strings.Builder
	for _, r := range name {
		switch {
		case r >= 'a' && r <= 'z':
			b.WriteRune(r - 'a' + 'A')
		case r >= 'A' && r <= 'Z', r >= '0' && r <= '9', r == '_':
			b.WriteRune(r)
		default:
			b.WriteByte('_')
		}
	}
	return b.String()
}

func writeGeometry(pf *pointFiles, job Job) error {
	f := parsers.Frame{Comment: "wellscan point " + job.Key + " (angstrom)"}
	for _, a := range job.Atoms {
		f.Labels = append(f.Labels, a.Symbol)
		f.Coords = append(f.Coords, [3]float64{
			a.Pos[0] * planner.BohrInAngstrom, a.Pos[1] * planner.BohrInAngstrom, a.Pos[2] * planner.BohrInAngstrom,
		})
	}
	var buf bytes.Buffer
	if len(f.Labels) > 0 {
		if err := parsers.WriteXYZ(&buf, []parsers.Frame{f}); err != nil {
			return err
		}
	}
	return pf.writeFile(GeometryFile, buf.Bytes())
}

func describeExit(ps *os.ProcessState) string {
	if ws, ok := ps.Sys().(syscall.WaitStatus); ok && ws.Signaled() {
		return "was killed by signal " + ws.Signal().String()
	}
	return fmt.Sprintf("exited with status %d", ps.ExitCode())
}

// outputTail quotes the end of stderr, or of stdout when stderr is empty.
func outputTail(stderr, stdout string) string {
	for _, p := range []string{stderr, stdout} {
		b, err := readTail(p, 64<<10)
		if err == nil && len(bytes.TrimSpace(b)) > 0 {
			return "; " + filepath.Base(p) + ": " + parsers.Tail(b, stderrTailLines)
		}
	}
	return "; it wrote nothing to stderr or stdout"
}

func readTail(path string, n int64) ([]byte, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, err
	}
	off := max(st.Size()-n, 0)
	buf := make([]byte, st.Size()-off)
	_, err = f.ReadAt(buf, off)
	return buf, err
}
