// Command wellscan plans, runs, tracks, refines and fits potential-energy
// scans of molecules. See README.md.
package main

import (
	"context"
	"io"
	"os"
	"os/signal"
	"syscall"
)

func main() {
	os.Exit(run(os.Args[1:], os.Stdin, os.Stdout, os.Stderr))
}

// run executes one wellscan command line and returns the process exit
// code. It is the seam tests use to run commands in-process.
func run(args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	// SIGHUP (the terminal closed) and SIGPIPE (`wellscan run D | head`)
	// stop a run like Ctrl-C: the points in flight, and their programs,
	// are stopped and the store is left consistent. With SIGPIPE caught, a
	// write to a closed pipe fails instead of killing the process.
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM, syscall.SIGHUP, syscall.SIGPIPE)
	defer stop()
	// Everything printed passes through safeWriter: text from a spec, a
	// store or a program cannot reach the terminal as control sequences.
	a := &app{stdin: stdin, stdout: safeWriter{stdout}, stderr: safeWriter{stderr}, rawStderr: stderr}
	root := newRootCommand(a)
	root.SetArgs(args)
	root.SetOut(a.stdout)
	root.SetErr(a.stderr)
	err := root.ExecuteContext(ctx)
	return exitCode(ctx, err, a.stderr)
}
