package slurm

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"strings"
	"sync"
	"time"
)

// Cmd is one scheduler command: an argv list, never a shell string.
type Cmd struct {
	Argv []string
	// Stdin, when not empty, is a file fed to the command's standard input
	// (profiles whose submit command reads the script from stdin).
	Stdin string
	// Env, when not nil, is the command's whole environment (the runner's
	// own choice otherwise).
	Env []string
}

// Output is what a finished command produced. A non-zero ExitCode is not an
// error of Runner.Run: the caller reads Stderr to classify it. ExitCode is -1
// when the command was killed by a signal.
type Output struct {
	Stdout, Stderr []byte
	ExitCode       int
}

// A Runner runs scheduler commands. It returns an error only when the
// command could not run or finish (not found, context done, timeout).
// Implementations must be safe for concurrent use.
type Runner interface {
	Run(ctx context.Context, c Cmd) (Output, error)
}

// ExecRunner runs commands with os/exec, without a shell.
type ExecRunner struct {
	// Timeout bounds each command; 0 means 60 s (SOURCES.md §1).
	Timeout time.Duration
	// Env is the child environment; nil means the current environment. When
	// the current environment belongs to a Slurm job (SLURM_JOB_ID is set,
	// e.g. wellscan itself runs inside an allocation), the SLURM_* variables
	// are removed, so they do not leak into nested submissions.
	Env []string
}

// defaultCommandTimeout bounds one scheduler command (SOURCES.md §1).
const defaultCommandTimeout = 60 * time.Second

// Run implements [Runner].
func (r ExecRunner) Run(ctx context.Context, c Cmd) (Output, error) {
	if len(c.Argv) == 0 {
		return Output{}, errors.New("slurm: empty command")
	}
	timeout := r.Timeout
	if timeout == 0 {
		timeout = defaultCommandTimeout
	}
	ctx, cancel := context.WithTimeout(ctx, timeout)
	defer cancel()
	cmd := exec.CommandContext(ctx, c.Argv[0], c.Argv[1:]...)
	cmd.Env = r.Env
	if c.Env != nil {
		cmd.Env = c.Env
	}
	if cmd.Env == nil {
		cmd.Env = cleanEnv(os.Environ())
	}
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if c.Stdin != "" {
		f, err := os.Open(c.Stdin)
		if err != nil {
			return Output{}, fmt.Errorf("slurm: %s: %w", c.Argv[0], err)
		}
		defer f.Close()
		cmd.Stdin = f
	}
	err := cmd.Run()
	out := Output{Stdout: stdout.Bytes(), Stderr: stderr.Bytes()}
	if ctx.Err() != nil {
		return out, fmt.Errorf("slurm: %s: %w", strings.Join(c.Argv, " "), ctx.Err())
	}
	var ee *exec.ExitError
	switch {
	case err == nil:
	case errors.As(err, &ee):
		out.ExitCode = ee.ExitCode()
	default:
		return out, fmt.Errorf("slurm: run %s: %w", c.Argv[0], err)
	}
	return out, nil
}

// cleanEnv drops SLURM_* when env belongs to a Slurm job.
func cleanEnv(env []string) []string {
	inJob := false
	for _, e := range env {
		if strings.HasPrefix(e, "SLURM_JOB_ID=") {
			inJob = true
			break
		}
	}
	if !inJob {
		return env
	}
	out := make([]string, 0, len(env))
	for _, e := range env {
		if !strings.HasPrefix(e, "SLURM_") {
			out = append(out, e)
		}
	}
	return out
}

// CountingRunner wraps a Runner and counts the commands it runs, by program
// name, so tests and benchmarks can check how many scheduler calls a poll
// cycle makes. It is safe for concurrent use.
type CountingRunner struct {
	Next Runner

	mu     sync.Mutex
	counts map[string]int
}

// Run implements [Runner].
func (c *CountingRunner) Run(ctx context.Context, cmd Cmd) (Output, error) {
	c.mu.Lock()
	if c.counts == nil {
		c.counts = map[string]int{}
	}
	if len(cmd.Argv) > 0 {
		c.counts[cmd.Argv[0]]++
	}
	c.mu.Unlock()
	return c.Next.Run(ctx, cmd)
}

// Counts returns a copy of the per-program counts.
func (c *CountingRunner) Counts() map[string]int {
	c.mu.Lock()
	defer c.mu.Unlock()
	out := make(map[string]int, len(c.counts))
	for k, v := range c.counts {
		out[k] = v
	}
	return out
}

// Total returns the number of commands run so far.
func (c *CountingRunner) Total() int {
	c.mu.Lock()
	defer c.mu.Unlock()
	n := 0
	for _, v := range c.counts {
		n += v
	}
	return n
}
