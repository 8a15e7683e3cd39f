package command

import (
	"context"
	"crypto/rand"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"os"
	"strings"
	"syscall"
	"time"

	"wellscan/parsers"
	"wellscan/runner"
)

// runRecord is points/<key>/running.json: which program runs for the
// point, written when it starts and removed when it has ended and its
// processes are cleaned up. A record left behind means the orchestrator
// died while the program ran.
type runRecord struct {
	PID     int       `json:"pid"`   // the program, leader of its process group
	Token   string    `json:"token"` // WELLSCAN_RUN_TOKEN in its environment and its descendants'
	Host    string    `json:"host"`
	BootID  string    `json:"boot_id,omitempty"`
	Started time.Time `json:"started"`
	Key     string    `json:"key"`
	Attempt int       `json:"attempt"`
	// Exited is set once the program has ended and its processes are
	// cleaned up, with its exit code; the record stays until the point's
	// next run, so that a crash between the program's end and the result
	// file does not make the program run again.
	Exited   bool `json:"exited,omitempty"`
	ExitCode int  `json:"exit_code,omitempty"`
}

// newRunToken returns a random token that marks one run's processes.
func newRunToken() (string, error) {
	b := make([]byte, 12)
	if _, err := rand.Read(b); err != nil {
		return "", fmt.Errorf("run token: %w", err)
	}
	return hex.EncodeToString(b), nil
}

func hostName() string {
	h, _ := os.Hostname()
	return h
}

func bootID() string {
	b, _ := os.ReadFile("/proc/sys/kernel/random/boot_id")
	return strings.TrimSpace(string(b))
}

func (p *pointFiles) writeRecord(r runRecord) error {
	b, err := json.Marshal(r)
	if err != nil {
		return err
	}
	// Temporary file and rename: a crash never leaves half a record, which
	// would be ignored while its program still runs.
	tmp := RunRecordFile + ".tmp"
	if err := p.writeFile(tmp, append(b, '\n')); err != nil {
		return err
	}
	return p.root.Rename(tmp, RunRecordFile)
}

// readRecord returns the record left in the point directory; ok is false
// when there is none (an unreadable one is removed and ignored).
func (p *pointFiles) readRecord() (runRecord, bool) {
	var r runRecord
	st, err := p.root.Lstat(RunRecordFile)
	if err != nil || !st.Mode().IsRegular() {
		return r, false
	}
	b, err := p.root.ReadFile(RunRecordFile)
	if err != nil || json.Unmarshal(b, &r) != nil || r.Token == "" {
		_ = p.root.Remove(RunRecordFile)
		return r, false
	}
	return r, true
}

// adoptPoll is how often a left-over program is checked while waiting.
const adoptPoll = 50 * time.Millisecond

// adopt deals with a program that an earlier run started for this point
// and that may still be running (its orchestrator was killed): it waits
// until every process carrying the program's token has ended (killing
// them on cancellation, or when the point's timeout has passed since the
// program started), then takes the program's output if it holds a valid
// energy (ok). Otherwise the caller runs the program again: it is certain
// by then that no earlier copy still runs in the directory. A record from
// another machine or boot cannot be checked from here and is dropped.
func (c Config) adopt(ctx context.Context, pf *pointFiles, x parsers.Extractor, attempt int) (e float64, ok bool, class runner.FailureClass, err error) {
	rec, found := pf.readRecord()
	if !found {
		return 0, false, "", nil
	}
	// The record is not removed here: the program run next (if any)
	// replaces it before it starts, and an adopted result keeps it, so
	// that a crash before the result file is written adopts it again.
	if rec.Host != hostName() || rec.BootID != bootID() {
		return 0, false, "", nil
	}
	for tokenAlive(rec) {
		if c.Timeout > 0 && time.Since(rec.Started) > c.Timeout {
			killToken(rec)
			_ = pf.root.Remove(RunRecordFile)
			return 0, false, runner.ClassTimedOut, fmt.Errorf("the program an earlier run started for this point (PID %d, %s) was still running after the timeout of %v; it was killed", rec.PID, rec.Started.Format(time.RFC3339), c.Timeout)
		}
		select {
		case <-ctx.Done():
			killToken(rec)
			_ = pf.root.Remove(RunRecordFile)
			return 0, false, runner.ClassCancelled, ctx.Err()
		case <-time.After(adoptPoll):
		}
	}
	if rec.Attempt != attempt || (rec.Exited && rec.ExitCode != 0) {
		// Another attempt's program, or one that failed: it is gone now,
		// and this attempt runs the program afresh.
		return 0, false, "", nil
	}
	e, _, cerr := c.collect(pf, x)
	if cerr != nil {
		return 0, false, "", nil
	}
	if !rec.Exited {
		rec.Exited, rec.ExitCode = true, 0
		_ = pf.writeRecord(rec)
	}
	return e, true, "", nil
}

// tokenAlive reports whether a process of the record's run still exists.
func tokenAlive(rec runRecord) bool {
	if len(findToken(rec.Token)) > 0 {
		return true
	}
	// Where processes cannot be listed, the program's own PID decides.
	if !canListProcesses() && rec.PID > 0 {
		return syscall.Kill(rec.PID, 0) == nil
	}
	return false
}

// killToken kills the record's process group and every process that
// carries its token, and waits (up to 5 s) until none is left.
func killToken(rec runRecord) {
	if rec.PID > 0 {
		_ = syscall.Kill(-rec.PID, syscall.SIGKILL)
	}
	sweepToken(rec.Token)
}

// sweepToken kills every process whose environment holds the token: the
// descendants of a program that left its process group (setsid), which a
// signal to the group does not reach. A process that cleared its
// environment, or runs as another user, is not found (see README).
//
// One empty look is not proof: a descendant can escape a single look (a
// process in the middle of an exec shows an empty environment for an
// instant). With one look, a setsid grandchild outlived its point in 3 or
// more of 40 runs of TestRun_SetsidGrandchild_CleanedAfterSuccess on a
// loaded machine; with two empty looks 5 ms apart, in none of 85.
func sweepToken(token string) {
	deadline := time.Now().Add(5 * time.Second)
	empty := 0
	for time.Now().Before(deadline) {
		pids := findToken(token)
		if len(pids) == 0 {
			if empty++; empty == 2 {
				return
			}
			time.Sleep(5 * time.Millisecond)
			continue
		}
		empty = 0
		for _, pid := range pids {
			_ = syscall.Kill(pid, syscall.SIGKILL)
		}
		time.Sleep(10 * time.Millisecond)
	}
}
