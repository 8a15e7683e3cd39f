package main

import (
	"context"
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
	"wellscan/runner/slurm"
)

type statusOptions struct {
	json    bool
	noQueue bool
}

func (o *statusOptions) AddFlags(fs *pflag.FlagSet) {
	fs.BoolVar(&o.noQueue, "no-queue", false, "batch queues: do not ask the scheduler about points in flight (store and snapshot only)")
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
few seconds.

For a scan on a batch queue with points in flight (a detached run, or one
that was stopped), status also asks the scheduler once (one status command
for all of the scan's jobs) and reads the points' result files, and says for
each point in flight whether it finished on a node (the next run records
it), waits, runs, or ended without a result (the next run resubmits it or
fails it by the scheduler's verdict). It never changes the store.`,
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
			mismatch := errors.Is(err, runner.ErrSpecChanged)
			if err != nil && !mismatch {
				return err
			}
			if mismatch {
				// Shown, but loudly marked, and the exit code says so.
				fmt.Fprintf(a.stdout, "WARNING: %s\n", sanitizeLine(err.Error()))
				if o.json {
					enc := json.NewEncoder(a.stdout)
					enc.SetIndent("", "  ")
					_ = enc.Encode(statusJSON{Snapshot: snap, SpecMismatch: err.Error()})
					return err
				}
				printStatus(a.stdout, spec, snap, source)
				return err
			}
			var view *slurm.View
			if isBatchQueue(spec) && !o.noQueue {
				view, err = inspectQueue(cmd.Context(), dir, spec, snap)
				if err != nil {
					return err
				}
			}
			if o.json {
				enc := json.NewEncoder(a.stdout)
				enc.SetIndent("", "  ")
				return enc.Encode(statusJSON{Snapshot: snap, Queue: view})
			}
			printStatus(a.stdout, spec, snap, source)
			if view != nil {
				printQueueView(a.stdout, dir, *view)
			}
			return nil
		},
	}
	o.AddFlags(cmd.Flags())
	return cmd
}

// statusJSON is `status --json`: the snapshot, plus the queue check.
type statusJSON struct {
	runner.Snapshot
	Queue *slurm.View `json:"queue,omitempty"`
	// SpecMismatch says why the stored points do not belong to scan.toml
	// as it is now (see runner.CheckFingerprint).
	SpecMismatch string `json:"spec_mismatch,omitempty"`
}

// inspectQueue reconciles the points in flight with the scheduler and the
// result files; nil when no point is in flight.
func inspectQueue(ctx context.Context, dir string, spec *planner.Spec, snap runner.Snapshot) (*slurm.View, error) {
	var keys []string
	for _, p := range snap.Points {
		if p.State == runner.Submitted || p.State == runner.Running {
			keys = append(keys, p.Key)
		}
	}
	if len(keys) == 0 {
		return nil, nil
	}
	abs, err := filepath.Abs(dir)
	if err != nil {
		return nil, err
	}
	client, err := slurm.ClientFor(spec)
	if err != nil {
		return nil, err
	}
	v := slurm.Inspect(ctx, client, abs, runner.SpecFingerprint(spec), keys)
	return &v, nil
}

func printQueueView(w io.Writer, dir string, v slurm.View) {
	var tasks []string
	for _, c := range sortedCounts(v.Tasks) {
		tasks = append(tasks, fmt.Sprintf("%d %s", v.Tasks[c], c))
	}
	if len(tasks) == 0 {
		tasks = []string{"none listed"}
	}
	fmt.Fprintf(w, "queue: %s jobs named %s, asked at %s: array tasks %s\n", v.Scheduler, v.JobName, v.Checked.Local().Format("15:04:05"), strings.Join(tasks, ", "))
	if v.Error != "" {
		fmt.Fprintf(w, "WARNING: the scheduler did not answer (%s); the points below are judged by their result files only\n", v.Error)
	}
	fmt.Fprintf(w, "in flight (%d points): %s\n", len(v.Points), v.Summary())
	ended := map[string]int{}
	for _, p := range v.Points {
		switch p.Verdict {
		case slurm.VerdictEnded:
			ended[p.State]++
		case slurm.VerdictUnlisted:
			ended["not listed"]++
		case slurm.VerdictHeld:
			fmt.Fprintf(w, "WARNING: %s: task %s is held (%s); release or cancel it with the scheduler's own commands\n", p.Key, p.Task, p.State)
		}
	}
	if len(ended) > 0 {
		var parts []string
		for _, s := range sortedCounts(ended) {
			parts = append(parts, fmt.Sprintf("%s %d", s, ended[s]))
		}
		fmt.Fprintf(w, "WARNING: %d point(s) have no live task and no result (%s): the next 'wellscan run %s' resubmits them, or fails them where the scheduler says cancelled\n",
			v.Verdicts[slurm.VerdictEnded]+v.Verdicts[slurm.VerdictUnlisted], strings.Join(parts, ", "), dir)
	}
	if n := v.Verdicts[slurm.VerdictFinished] + v.Verdicts[slurm.VerdictFailedOnNode]; n > 0 {
		fmt.Fprintf(w, "%d result(s) wait to be recorded: 'wellscan run %s --detach' records them and goes on\n", n, dir)
	}
}

func sortedCounts(m map[string]int) []string {
	ks := make([]string, 0, len(m))
	for k := range m {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	return ks
}

// readStatus reads the store if no run holds it, else the snapshot. When
// the stored points were computed for another spec (scan.toml edited, or
// a store copied from another scan) it returns the snapshot and an error
// wrapping runner.ErrSpecChanged.
func readStatus(dir string, spec *planner.Spec) (runner.Snapshot, string, error) {
	ps, err := runner.ReadPoints(dir, spec)
	if err != nil && !errors.Is(err, runner.ErrSpecChanged) {
		if errors.Is(err, runner.ErrNoStore) {
			return runner.Snapshot{}, "", fmt.Errorf("%s has not been run yet (wellscan run %s)", dir, dir)
		}
		return runner.Snapshot{}, "", err
	}
	if ps.Snapshot != nil {
		return *ps.Snapshot, ps.Source, err
	}
	snap := runner.BuildSnapshot(spec, ps.Records, ps.Rounds, "stored", time.Now())
	snap.PID, snap.Host = 0, ""
	return snap, ps.Source, err
}

func printStatus(w io.Writer, spec *planner.Spec, s runner.Snapshot, source string) {
	if s.Title != "" {
		fmt.Fprintf(w, "scan: %s\n", sanitizeLine(s.Title))
	}
	fmt.Fprintf(w, "source: %s\n", source)
	if spec != nil {
		fmt.Fprintf(w, "%s\n", scanModeLine(spec))
	}
	var parts []string
	for _, st := range runner.States {
		parts = append(parts, fmt.Sprintf("%s %d", st, s.Counts[string(st)]))
	}
	printWarnings(w, s.Warnings)
	fmt.Fprintf(w, "round %d · %d points: %s\n", s.Round, s.Total, strings.Join(parts, ", "))
	if s.Refine != nil {
		fmt.Fprintf(w, "refinement after round %d: %s — %s\n", s.Refine.Round, s.Refine.Status, s.Refine.Reason)
	}
	for _, e := range s.Extrema {
		var cs []string
		for _, c := range spec.Coordinates() {
			cs = append(cs, fmt.Sprintf("%s = %.*f %s", c.Name, c.Digits, e.Coordinates[c.Name], c.UnitLabel(spec.Units())))
		}
		line := fmt.Sprintf("%s: %s, E = %.8f hartree", e.Kind, strings.Join(cs, ", "), e.EnergyHartree)
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
		fmt.Fprintf(w, "error: %s (%s, now %s): %s\n", e.Key, e.Class, e.State, sanitizeLine(e.Error))
	}
}
