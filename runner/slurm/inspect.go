package slurm

import (
	"context"
	"fmt"
	"sort"
	"time"

	"wellscan/runner"
)

// Verdicts of [Inspect] for a point in flight.
const (
	// VerdictFinished: a done result file is on disk; the next run records it.
	VerdictFinished = "finished"
	// VerdictFailedOnNode: the node wrote a failed result; the next run
	// records it (and retries while attempts last).
	VerdictFailedOnNode = "failed-on-node"
	// VerdictQueued: its task waits in the queue.
	VerdictQueued = "queued"
	// VerdictRunning: its task runs (or is being requeued by the scheduler).
	VerdictRunning = "running"
	// VerdictHeld: its task is held and needs a person (see the scheduler).
	VerdictHeld = "held"
	// VerdictEnded: its task ended without a result; State says how.
	VerdictEnded = "ended"
	// VerdictUnlisted: no task of the scan's jobs lists it any more (the
	// scheduler forgot a finished job, or it was never submitted).
	VerdictUnlisted = "unlisted"
)

// PointView is what [Inspect] found about one point in flight.
type PointView struct {
	Key     string `json:"key"`
	Verdict string `json:"verdict"`
	// Task is the array task ("123_4") and State its scheduler state as
	// shown, when one is listed.
	Task  string `json:"task,omitempty"`
	State string `json:"scheduler_state,omitempty"`
}

// View is a reconciliation of a scan's points in flight with the queue
// and the result files, made without touching the store.
type View struct {
	Scheduler string    `json:"scheduler"`
	JobName   string    `json:"job_name"`
	Checked   time.Time `json:"checked"`
	// Commands is the number of scheduler commands the check ran (1).
	Commands int `json:"scheduler_commands"`
	// Error is set when the status command failed; the verdicts then come
	// from the result files only.
	Error string `json:"error,omitempty"`
	// Tasks counts the scan's listed array tasks by class ("waiting",
	// "active", "completed", "cancelled", …).
	Tasks map[string]int `json:"tasks"`
	// Verdicts counts Points by verdict.
	Verdicts map[string]int `json:"verdicts"`
	Points   []PointView    `json:"points"`
}

// Inspect asks the scheduler once (one status command for the whole scan)
// and reads the result files of keys (the points the store has in flight)
// to tell, for each, whether it finished on a node, waits, runs, or ended
// without a result. It never opens the store and never submits or cancels.
func Inspect(ctx context.Context, c *Client, scanDir string, fingerprint string, keys []string) View {
	name := JobNameFor(scanDir)
	v := View{Scheduler: c.Profile().Name, JobName: name, Checked: time.Now(), Commands: 1,
		Tasks: map[string]int{}, Verdicts: map[string]int{}}
	tasks, err := c.listStatus(ctx, name)
	if err != nil {
		v.Error = err.Error()
	}
	seen := map[taskRef]bool{}
	for _, t := range tasks {
		if t.Index == noTask || seen[t.ref()] {
			continue
		}
		seen[t.ref()] = true
		v.Tasks[Classify(t.State).String()]++
	}
	latest := latestTasks(scanDir, tasks, false)
	keys = append([]string(nil), keys...)
	sort.Strings(keys)
	for _, k := range keys {
		pv := PointView{Key: k}
		if pt, ok := latest[k]; ok {
			pv.Task, pv.State = pt.Ref.String(), pt.State.Native
		}
		res, hasRes := runner.ReadResult(scanDir, k, fingerprint)
		switch {
		case hasRes && res.Status == runner.ResultDone:
			pv.Verdict = VerdictFinished
		case pv.Task == "" && hasRes:
			pv.Verdict = VerdictFailedOnNode
		case pv.Task == "":
			pv.Verdict = VerdictUnlisted
		default:
			switch cl := latest[k].Class(); {
			case cl == classWaiting:
				pv.Verdict = VerdictQueued
			case cl == classActive || cl == classRequeued:
				pv.Verdict = VerdictRunning
			case cl == classHeld:
				pv.Verdict = VerdictHeld
			case hasRes:
				pv.Verdict = VerdictFailedOnNode
			default:
				pv.Verdict = VerdictEnded
			}
		}
		v.Verdicts[pv.Verdict]++
		v.Points = append(v.Points, pv)
	}
	return v
}

// Summary is a one-line account of the verdicts, for status output.
func (v View) Summary() string {
	order := []string{VerdictFinished, VerdictFailedOnNode, VerdictQueued, VerdictRunning, VerdictHeld, VerdictEnded, VerdictUnlisted}
	words := map[string]string{
		VerdictFinished: "finished on the nodes (not yet recorded)", VerdictFailedOnNode: "failed on the nodes (not yet recorded)",
		VerdictQueued: "waiting in the queue", VerdictRunning: "running", VerdictHeld: "held by the scheduler",
		VerdictEnded: "ended without a result", VerdictUnlisted: "not listed by the scheduler",
	}
	s := ""
	for _, o := range order {
		if n := v.Verdicts[o]; n > 0 {
			if s != "" {
				s += ", "
			}
			s += fmt.Sprintf("%d %s", n, words[o])
		}
	}
	if s == "" {
		s = "none"
	}
	return s
}
