package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"wellscan/planner"
	"wellscan/runner"
)

type statusOptions struct {
	json bool
}

func (o *statusOptions) AddFlags(fs *pflag.FlagSet) {
	fs.BoolVar(&o.json, "json", false, "print the status as JSON (counts keyed by state, points with coordinates and energy_hartree)")
}

func newStatusCommand(a *app) *cobra.Command {
	var o statusOptions
	cmd := &cobra.Command{
		Use:   "status DIR",
		Short: "Show the progress of the scan in DIR",
		Long: `Show how many points are in each state, the current estimate of each
minimum, the refinement status and the last errors. While a run holds the
store, status reads the snapshot (status.json) that the run rewrites every
few seconds.`,
		Example: `  wellscan status co-stretch
  wellscan status co-stretch --json | jq .counts`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			dir := args[0]
			spec, err := planner.Load(filepath.Join(dir, "scan.toml"))
			if err != nil {
				return err
			}
			snap, source, err := readStatus(dir, spec)
			if err != nil {
				return err
			}
			if o.json {
				enc := json.NewEncoder(a.stdout)
				enc.SetIndent("", "  ")
				return enc.Encode(snap)
			}
			printStatus(a.stdout, spec, snap, source)
			return nil
		},
	}
	o.AddFlags(cmd.Flags())
	return cmd
}

// readStatus reads the store if no run holds it, else the snapshot.
func readStatus(dir string, spec *planner.Spec) (runner.Snapshot, string, error) {
	st, err := runner.Open(dir, runner.OpenOptions{ReadOnly: true, Timeout: 300 * time.Millisecond})
	switch {
	case err == nil:
		defer st.Close()
		snap, err := runner.StoreSnapshot(spec, st, time.Now())
		source := "store"
		if li := runner.ReadLockInfo(dir); li != nil {
			source += "; note: " + runner.StaleLockMessage(dir, li) + " (wellscan run resumes it)"
		}
		return snap, source, err
	case errors.Is(err, runner.ErrLocked):
		snap, serr := runner.ReadSnapshot(dir)
		if serr != nil {
			return snap, "", fmt.Errorf("%w (and no snapshot: %w)", err, serr)
		}
		return snap, fmt.Sprintf("snapshot of %s, run by PID %d on %s", snap.Updated.Local().Format("15:04:05"), snap.PID, snap.Host), nil
	case errors.Is(err, runner.ErrNoStore):
		return runner.Snapshot{}, "", fmt.Errorf("%s has not been run yet (wellscan run %s)", dir, dir)
	}
	return runner.Snapshot{}, "", err
}

func printStatus(w io.Writer, spec *planner.Spec, s runner.Snapshot, source string) {
	if s.Title != "" {
		fmt.Fprintf(w, "scan: %s\n", s.Title)
	}
	fmt.Fprintf(w, "source: %s\n", source)
	var parts []string
	for _, st := range runner.States {
		parts = append(parts, fmt.Sprintf("%s %d", st, s.Counts[string(st)]))
	}
	fmt.Fprintf(w, "round %d · %d points: %s\n", s.Round, s.Total, strings.Join(parts, ", "))
	for _, x := range s.Suspects {
		fmt.Fprintf(w, "warning: %s: %s (another SCF state? recompute it with engine.guess = \"fresh\")\n", x.Key, x.Reason)
	}
	if s.Refine != nil {
		fmt.Fprintf(w, "refinement after round %d: %s — %s\n", s.Refine.Round, s.Refine.Status, s.Refine.Reason)
	}
	for _, e := range s.Extrema {
		var cs []string
		for _, c := range spec.Coordinates() {
			cs = append(cs, fmt.Sprintf("%s = %.*f %s", c.Name, c.Digits, e.Coordinates[c.Name], c.UnitLabel(spec.Units())))
		}
		line := fmt.Sprintf("%s: %s, E = %.8f hartree", e.Kind, strings.Join(cs, ", "), e.EnergyHartree)
		if e.FrequencyCm1 != nil {
			line += fmt.Sprintf(", harmonic ≈ %.1f cm⁻¹", *e.FrequencyCm1)
		}
		if e.Converged {
			line += " (converged)"
		}
		if e.Note != "" && !e.Converged {
			line += " [" + e.Note + "]"
		}
		fmt.Fprintln(w, line)
	}
	errs := append([]runner.PointErrorJSON(nil), s.LastErrors...)
	sort.SliceStable(errs, func(i, j int) bool { return errs[i].State == runner.Failed && errs[j].State != runner.Failed })
	for _, e := range errs {
		fmt.Fprintf(w, "error: %s (%s, now %s): %s\n", e.Key, e.Class, e.State, e.Error)
	}
}
