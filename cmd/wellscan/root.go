package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"runtime/debug"

	"github.com/spf13/cobra"
)

// app carries what every command needs; there is no package-level state.
type app struct {
	stdin          io.Reader
	stdout, stderr io.Writer
	// rawStderr is stderr without escaping, for the progress line's own
	// terminal codes (and to tell whether stderr is a terminal); nil:
	// stderr.
	rawStderr io.Writer
}

// version is set at build time with -ldflags "-X main.version=…"; commit
// likewise ("-X main.commit=$(git rev-parse HEAD)") for builds without the
// toolchain's version-control stamping (-buildvcs=false).
var (
	version = "0.1.0-dev"
	commit  = ""
)

const exitCodeTable = `Exit codes:
  0    success
  1    error (bad input, I/O, a calculation that did not converge)
  2    internal error (Go runtime panic)
  3    the scan finished but some points failed
  11   the scan is being run by another process
  130  interrupted (Ctrl-C / SIGINT, SIGTERM, SIGHUP, SIGPIPE)`

func newRootCommand(a *app) *cobra.Command {
	root := &cobra.Command{
		Use:   "wellscan",
		Short: "Potential-energy scans of molecules, from plan to spectroscopic constants",
		Long: `wellscan plans, runs, tracks, refines and fits potential-energy scans:
the energy of a molecule as a bond length, angle or torsion is stepped
through a range, computed with the built-in Hartree–Fock engine or any
external program, and turned into spectroscopic constants.

` + exitCodeTable,
		SilenceUsage:  true,
		SilenceErrors: true,
	}
	root.AddCommand(newVersionCommand(a))
	root.AddCommand(newReportCommand(a), newExportCommand(a))
	root.AddCommand(newEnergyCommand(a), newRelaxCommand(a))
	root.AddCommand(newBasisCommand(a))
	root.AddCommand(newFitCommand(a))
	root.AddCommand(newForcefieldCommand(a))
	root.AddCommand(newCancelCommand(a), newStoreCommand(a), newRetryCommand(a), newDropCommand(a))
	root.AddCommand(newNodeTaskCommand(a))
	root.AddCommand(newInitCommand(a), newPlanCommand(a), newRunCommand(a), newStatusCommand(a), newDemoCommand(a))
	return root
}

func newVersionCommand(a *app) *cobra.Command {
	return &cobra.Command{
		Use:     "version",
		Short:   "Print the wellscan version",
		Example: "  wellscan version",
		Args:    cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			info, ok := debug.ReadBuildInfo()
			fmt.Fprintln(a.stdout, versionText(version, info, ok))
			return nil
		},
	}
}

// versionText is what `wellscan version` prints: the version, the commit
// it was built from (with "+ local changes" when the tree was modified)
// and the commit's time, from the build information the Go toolchain
// records; "commit unknown" when the build recorded none (go run, or a
// build outside a git checkout).
func versionText(v string, info *debug.BuildInfo, ok bool) string {
	var rev, when string
	modified := false
	if ok && info != nil {
		for _, s := range info.Settings {
			switch s.Key {
			case "vcs.revision":
				rev = s.Value
			case "vcs.time":
				when = s.Value
			case "vcs.modified":
				modified = s.Value == "true"
			}
		}
	}
	if rev == "" {
		rev = commit
	}
	if rev == "" {
		return fmt.Sprintf("wellscan %s (commit unknown: built without version-control information)", v)
	}
	if len(rev) > 12 {
		rev = rev[:12]
	}
	s := fmt.Sprintf("wellscan %s (commit %s", v, rev)
	if modified {
		s += " + local changes"
	}
	if when != "" {
		s += ", " + when
	}
	return s + ")"
}

// Exit-code errors returned by commands.
var (
	errSomePointsFailed = errors.New("some points failed")
	errNotConverged     = errors.New("not converged")
	errScanLocked       = errors.New("scan is locked")
)

// usageError marks a mistake on the command line; the usage text is shown.
type usageError struct{ err error }

func (e usageError) Error() string { return e.err.Error() }
func (e usageError) Unwrap() error { return e.err }

func exitCode(ctx context.Context, err error, stderr io.Writer) int {
	if err == nil {
		return 0
	}
	fmt.Fprintf(stderr, "wellscan: %v\n", err)
	switch {
	case errors.Is(err, context.Canceled) || ctx.Err() != nil:
		return 130
	case errors.Is(err, errSomePointsFailed):
		return 3
	case errors.Is(err, errScanLocked):
		return 11
	}
	return 1
}
