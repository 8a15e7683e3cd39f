package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"wellscan/planner"
	"wellscan/runner"
)

type runOptions struct {
	workers int
	quiet   bool
	json    bool
	detach  bool
}

func (o *runOptions) AddFlags(fs *pflag.FlagSet) {
	fs.IntVar(&o.workers, "workers", 0, "points computed at once (default: queue.workers, or all CPUs)")
	fs.BoolVarP(&o.quiet, "quiet", "q", false, "no progress on stderr")
	fs.BoolVar(&o.detach, "detach", false, "batch queues: submit the round's points, record them and exit without waiting; run again (with or without --detach) to collect results and go on")
	fs.BoolVar(&o.json, "json", false, "print one JSON object per event on stdout (for scripts), ending with a \"summary\" event, instead of the text summary")
}

func newRunCommand(a *app) *cobra.Command {
	var o runOptions
	cmd := &cobra.Command{
		Use:   "run DIR",
		Short: "Run (or resume) the scan in DIR",
		Long: `Run the scan described by DIR/scan.toml: compute every planned point,
refine around each minimum, round after round, until refinement converges
or a budget stops it. Progress goes to stderr, the summary to stdout.

A scan that was killed resumes where it stopped: rerun the same command.
On a batch queue, --detach submits the current round and exits; every later
'wellscan run DIR --detach' collects what finished, refines and submits the
next round, so a scan can advance from cron or a login shell without a
process waiting on the login node. Ctrl-C in an attached batch run also
detaches: the jobs keep running.
Changes to the grid, [refine] or [queue] are applied; changes to the
molecule, coordinates or [engine] are refused.

` + exitCodeTable,
		Example: `  wellscan run co-stretch
  wellscan run co-stretch --workers 1 --json > events.jsonl
  nohup wellscan run co-stretch > run.log 2>&1 &   # resume later with the same command
  wellscan run hf-cluster --detach && wellscan status hf-cluster   # batch queue: submit and return`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			if o.workers < 0 {
				return usageError{fmt.Errorf("--workers must not be negative")}
			}
			spec, err := planner.Load(filepath.Join(args[0], "scan.toml"))
			if err != nil {
				return err
			}
			if o.detach && !isBatchQueue(spec) {
				return usageError{fmt.Errorf("--detach needs a batch queue: %s has queue.kind = %q, whose points run inside this process", filepath.Join(args[0], "scan.toml"), spec.Queue.Kind)}
			}
			queueName := spec.Queue.Kind
			sum, err := runScan(cmd.Context(), a, args[0], spec, o)
			if sum != nil && o.json {
				_ = json.NewEncoder(a.stdout).Encode(summaryEvent(spec, *sum, err))
				return err
			}
			if sum != nil {
				printSummary(a.stdout, spec, args[0], *sum)
				if sum.Detached {
					printDetached(a.stdout, args[0], *sum, queueName)
					return err
				}
				printEndFit(cmd.Context(), a.stdout, args[0], spec, sum.Points)
			}
			return err
		},
	}
	o.AddFlags(cmd.Flags())
	return cmd
}

// runScan opens the scan's store and runs it to the end.
func runScan(ctx context.Context, a *app, dir string, spec *planner.Spec, o runOptions) (*runner.Summary, error) {
	backend, err := newBackend(spec)
	if err != nil {
		return nil, err
	}
	queue, err := newQueue(spec, o.workers)
	if err != nil {
		return nil, err
	}
	// A held scan is reported within a second: bbolt's lock is not
	// waited for longer than half of that.
	st, err := runner.OpenScan(dir, spec, runner.OpenOptions{Timeout: 500 * time.Millisecond})
	if err != nil {
		if errors.Is(err, runner.ErrLocked) {
			return nil, fmt.Errorf("%w: %w", errScanLocked, err)
		}
		return nil, err
	}
	defer st.Close()
	if li := st.StaleLock(); li != nil {
		fmt.Fprintf(a.stderr, "wellscan: note: %s; resuming\n", runner.StaleLockMessage(dir, li))
	}
	for _, n := range spec.Notes() {
		fmt.Fprintf(a.stderr, "wellscan: note: %s\n", n)
	}
	for _, n := range st.Notes() {
		fmt.Fprintf(a.stderr, "wellscan: note: %s\n", n)
	}
	r := &runner.Runner{Spec: spec, Dir: dir, Store: st, Backend: backend, Queue: queue, Detach: o.detach}
	switch {
	case o.json:
		enc := json.NewEncoder(a.stdout)
		r.OnEvent = func(e runner.Event) {
			if e.Kind != runner.EventNotice { // not part of the --json stream
				_ = enc.Encode(jsonEvent(e))
			}
		}
	case !o.quiet:
		w := a.rawStderr
		if w == nil {
			w = a.stderr
		}
		progress := newProgressPrinter(w, spec).event
		r.OnEvent = func(e runner.Event) {
			if e.Kind == runner.EventNotice {
				// A queue's notice (a scheduler that stopped answering):
				// its own line, with the time, on a terminal too.
				fmt.Fprintf(a.stderr, "%swellscan: %s\n", e.Time.Format("2006-01-02 15:04:05 "), e.Message)
				return
			}
			progress(e)
		}
	}
	sum, err := r.Run(ctx)
	switch {
	case err == nil:
	case errors.Is(err, runner.ErrPointsFailed):
		// "some points failed: 1 of 16", not the runner's words twice.
		err = fmt.Errorf("%w: %s", errSomePointsFailed, strings.TrimPrefix(err.Error(), runner.ErrPointsFailed.Error()+": "))
	case ctx.Err() != nil:
		fmt.Fprintf(a.stderr, "wellscan: interrupted; the store is intact, rerun `wellscan run %s` to resume\n", dir)
		if sum.QueueNote != "" {
			fmt.Fprintf(a.stderr, "wellscan: %s\n", sum.QueueNote)
		}
	}
	return &sum, err
}

// printDetached says what a detached run left behind and how to go on.
func printDetached(w io.Writer, dir string, s runner.Summary, queue string) {
	left := s.Counts[runner.Submitted] + s.Counts[runner.Running]
	fmt.Fprintf(w, "detached: %d point(s) left with the %s queue (round %d); nothing waits on this machine\n", left, queue, s.Rounds)
	fmt.Fprintf(w, "  check:    wellscan status %s\n", dir)
	fmt.Fprintf(w, "  continue: wellscan run %s --detach   (collects results, refines, submits the next round; without --detach it waits to the end)\n", dir)
	fmt.Fprintf(w, "  cancel:   wellscan cancel %s\n", dir)
}

// progressPrinter renders runner events as progress lines on stderr; on a
// terminal the point counter updates in place.
type progressPrinter struct {
	w    io.Writer
	tty  bool
	last time.Time
	spec *planner.Spec
}

func newProgressPrinter(w io.Writer, spec *planner.Spec) *progressPrinter {
	p := &progressPrinter{w: w, spec: spec}
	if f, ok := w.(*os.File); ok {
		if fi, err := f.Stat(); err == nil && fi.Mode()&os.ModeCharDevice != 0 {
			p.tty = true
		}
	}
	return p
}

func (p *progressPrinter) event(e runner.Event) {
	switch e.Kind {
	case runner.EventRound, runner.EventRefine, runner.EventResume, runner.EventInterrupt, runner.EventDetach, runner.EventRetry, runner.EventRepair, runner.EventWarning, runner.EventFailed:
		if p.tty {
			fmt.Fprint(p.w, "\r\033[K")
		}
		msg := sanitizeLine(e.Message)
		if e.Key != "" {
			msg = e.Key + ": " + msg
		}
		fmt.Fprintf(p.w, "%s%s\n", p.stamp(), msg)
		return
	case runner.EventDone:
	default:
		return
	}
	now := time.Now()
	if !p.tty && now.Sub(p.last) < 2*time.Second {
		return
	}
	p.last = now
	pr := e.Progress
	if pr == nil {
		return
	}
	c := pr.Counts
	line := fmt.Sprintf("round %d · %d/%d done · %d failed · %d running", pr.Round, c[runner.Done], pr.Total, c[runner.Failed], c[runner.Running]+c[runner.Submitted])
	if pr.ETA > 0 {
		line += fmt.Sprintf(" · ETA %s", pr.ETA.Round(time.Second))
	}
	if p.tty {
		fmt.Fprintf(p.w, "\r\033[K%s", line)
	} else {
		fmt.Fprintln(p.w, p.stamp()+line)
	}
}

func printSummary(w io.Writer, spec *planner.Spec, dir string, s runner.Summary) {
	if spec.Title != "" {
		fmt.Fprintf(w, "scan: %s (%s)\n", sanitizeLine(spec.Title), dir)
	}
	if mol, err := spec.Molecule(); err == nil {
		fmt.Fprintf(w, "label: %s\n", scanLabel(spec, mol))
		if d := specDefaults(spec, mol); d != "" {
			fmt.Fprintf(w, "defaults used: %s\n", d)
		}
	}
	printWarnings(w, s.Warnings)
	dropped := ""
	if n := s.Counts[runner.Dropped]; n > 0 {
		dropped = fmt.Sprintf(", %d dropped", n)
	}
	fmt.Fprintf(w, "rounds: %d · points: %d done, %d failed%s, %d not run · computed now %d, from earlier runs %d · %s\n",
		s.Rounds, s.Counts[runner.Done], s.Counts[runner.Failed], dropped, s.Counts[runner.Planned]+s.Counts[runner.Running]+s.Counts[runner.Submitted],
		s.Computed, s.Earlier+s.Reused, s.Elapsed.Round(time.Millisecond))
	if s.Status != "" {
		fmt.Fprintf(w, "refinement: %s — %s\n", s.Status, s.Reason)
	}
	for _, e := range s.Extrema {
		fmt.Fprintf(w, "%s: %s  E = %.8f hartree", e.Kind, spec.Describe(e.Values), e.Energy)
		if e.Note != "" {
			fmt.Fprintf(w, "  [%s]", e.Note)
		}
		fmt.Fprintln(w)
	}
	if len(s.Failed) > 0 {
		fmt.Fprintf(w, "retry them: wellscan retry %s --all (or by key, or --class CLASS); take them out: wellscan drop %s KEY...\n", dir, dir)
	}
	for i, f := range s.Failed {
		if i == 5 {
			fmt.Fprintf(w, "… and %d more failed points (wellscan status %s)\n", len(s.Failed)-5, dir)
			break
		}
		fmt.Fprintf(w, "failed: %s (%s, %s): %s\n", f.Key, f.Class, plural(f.Attempts, "attempt"), sanitizeLine(strings.TrimSpace(f.LastError)))
	}
}

// printWarnings lists a scan's warnings, most serious first (the order
// runner.ScanWarnings gives), as `status` and `run` show them.
func printWarnings(w io.Writer, ws []runner.Warning) {
	if len(ws) == 0 {
		return
	}
	fmt.Fprintf(w, "warnings (%d, most serious first):\n", len(ws))
	for _, x := range ws {
		fmt.Fprintf(w, "  %s\n", x)
	}
}

// eventJSON is one line of `run --json`.
type eventJSON struct {
	Seq     uint64         `json:"seq"`
	Time    time.Time      `json:"time"`
	Kind    string         `json:"kind"`
	Key     string         `json:"key,omitempty"`
	Round   int            `json:"round,omitempty"`
	Message string         `json:"message,omitempty"`
	Counts  map[string]int `json:"counts,omitempty"`
	Total   int            `json:"total,omitempty"`
	ETASecs float64        `json:"eta_seconds,omitempty"`
	Status  string         `json:"refinement,omitempty"`
	Extrema []extremumJSON `json:"extrema,omitempty"`
	Error   string         `json:"error,omitempty"`
	// Detached is set on the summary of a `run --detach` that left points
	// with the batch queue.
	Detached bool `json:"detached,omitempty"`
	// On the summary: the points computed by this run and by earlier
	// ones, and the scan's warnings, most serious first.
	Computed *int             `json:"computed,omitempty"`
	Earlier  *int             `json:"from_earlier_runs,omitempty"`
	Warnings []runner.Warning `json:"warnings,omitempty"`
}

type extremumJSON struct {
	Kind          string             `json:"kind"`
	Coordinates   map[string]float64 `json:"coordinates"`
	EnergyHartree float64            `json:"energy_hartree"`
}

func jsonEvent(e runner.Event) eventJSON {
	out := eventJSON{Seq: e.Seq, Time: e.Time, Kind: string(e.Kind), Key: e.Key, Round: e.Round, Message: e.Message}
	if p := e.Progress; p != nil {
		out.Counts = map[string]int{}
		for st, n := range p.Counts {
			out.Counts[string(st)] = n
		}
		out.Total = p.Total
		out.ETASecs = p.ETA.Seconds()
	}
	return out
}

func summaryEvent(spec *planner.Spec, s runner.Summary, err error) eventJSON {
	computed, earlier := s.Computed, s.Earlier+s.Reused
	out := eventJSON{Time: time.Now(), Kind: "summary", Round: s.Rounds, Counts: map[string]int{}, Status: string(s.Status), Message: s.Reason, Detached: s.Detached,
		Computed: &computed, Earlier: &earlier, Warnings: s.Warnings}
	for st, n := range s.Counts {
		out.Counts[string(st)] = n
		out.Total += n
	}
	coords := spec.Coordinates()
	for _, e := range s.Extrema {
		x := extremumJSON{Kind: e.Kind, Coordinates: map[string]float64{}, EnergyHartree: e.Energy}
		for i, c := range coords {
			x.Coordinates[c.Name] = c.Display(e.Values[i], spec.Units())
		}
		out.Extrema = append(out.Extrema, x)
	}
	if err != nil {
		out.Error = err.Error()
	}
	return out
}

// stamp prefixes log lines with the time when stderr is not a terminal
// (batch logs); a terminal gets the live line without it.
func (p *progressPrinter) stamp() string {
	if p.tty {
		return ""
	}
	return time.Now().Format("2006-01-02 15:04:05 ")
}
