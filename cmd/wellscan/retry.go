package main

import (
	"errors"
	"fmt"
	"path/filepath"
	"strings"
	"time"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"wellscan/planner"
	"wellscan/runner"
)

type retryOptions struct {
	all     bool
	classes []string
}

func (o *retryOptions) AddFlags(fs *pflag.FlagSet) {
	fs.BoolVar(&o.all, "all", false, "every failed and dropped point")
	fs.StringSliceVar(&o.classes, "class", nil, "the failed points whose last failure has this class (program-missing, exit-nonzero, timed-out, energy-missing, energy-jump, …); repeat or separate by commas")
}

func newRetryCommand(a *app) *cobra.Command {
	var o retryOptions
	cmd := &cobra.Command{
		Use:   "retry DIR [KEY...]",
		Short: "Plan failed (or dropped) points of the scan in DIR again",
		Long: `Plan failed points again with fresh attempts, whatever their failure
class: every one (--all), the listed point keys, or those whose last failure
has a class (--class). Dropped points come back the same way. The change is
recorded in the store's event log; the next 'wellscan run DIR' computes
them. Failures that may pass on another try (exit-nonzero, timed-out) are
also tried again by 'run' itself once [queue] attempts is raised.`,
		Example: `  wellscan retry co-stretch --all
  wellscan retry co-stretch r=1.05000 r=1.10000
  wellscan retry co-stretch --class program-missing && wellscan run co-stretch`,
		Args: cobra.MinimumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			dir, keys := args[0], args[1:]
			if !o.all && len(keys) == 0 && len(o.classes) == 0 {
				return usageError{fmt.Errorf("retry: name point keys, --class CLASS or --all")}
			}
			if o.all && (len(keys) > 0 || len(o.classes) > 0) {
				return usageError{fmt.Errorf("retry: --all takes no keys and no --class")}
			}
			spec, err := planner.Load(filepath.Join(dir, "scan.toml"))
			if err != nil {
				return err
			}
			sel := runner.Selection{All: o.all, Keys: keys}
			for _, c := range o.classes {
				sel.Classes = append(sel.Classes, runner.FailureClass(c))
			}
			done, err := runner.RetryPoints(dir, spec, sel, time.Now())
			if err != nil {
				return lockedExit(err)
			}
			fmt.Fprintf(a.stdout, "planned again: %d point(s): %s\nnext: wellscan run %s\n", len(done), strings.Join(done, ", "), dir)
			return nil
		},
	}
	o.AddFlags(cmd.Flags())
	return cmd
}

type dropOptions struct{ reason string }

func (o *dropOptions) AddFlags(fs *pflag.FlagSet) {
	fs.StringVar(&o.reason, "reason", "", "why, kept with the point in the store")
}

func newDropCommand(a *app) *cobra.Command {
	var o dropOptions
	cmd := &cobra.Command{
		Use:   "drop DIR KEY...",
		Short: "Take points out of the scan in DIR",
		Long: `Take points out of the scan: they are never computed again (refinement
does not propose them either), fits and reports leave them out, and they do
not count as failures (the exit code of 'run' no longer says 3 for them).
The store keeps them with the reason; 'wellscan retry DIR KEY' brings one
back.`,
		Example: `  wellscan drop co-stretch r=0.75000 --reason "beyond the program's basis-set range"`,
		Args:    cobra.MinimumNArgs(2),
		RunE: func(cmd *cobra.Command, args []string) error {
			dir := args[0]
			spec, err := planner.Load(filepath.Join(dir, "scan.toml"))
			if err != nil {
				return err
			}
			done, err := runner.DropPoints(dir, spec, args[1:], o.reason, time.Now())
			if err != nil {
				return lockedExit(err)
			}
			if len(done) == 0 {
				fmt.Fprintln(a.stdout, "nothing to do: the points were dropped already")
				return nil
			}
			fmt.Fprintf(a.stdout, "dropped: %s\n", strings.Join(done, ", "))
			return nil
		},
	}
	o.AddFlags(cmd.Flags())
	return cmd
}

// lockedExit gives a held store exit code 11.
func lockedExit(err error) error {
	if errors.Is(err, runner.ErrLocked) {
		return fmt.Errorf("%w: %w", errScanLocked, err)
	}
	return err
}
