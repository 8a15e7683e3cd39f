package slurm

import (
	"context"
	"fmt"
	"strings"
	"testing"
	"time"
)

var testTime = time.Date(2026, 5, 1, 10, 0, 0, 0, time.UTC)

func TestPollPolicy_Next_DefaultSchedule(t *testing.T) {
	// SOURCES.md §1: 30 s first, 60 s, ×1.5 while unchanged, cap 300 s,
	// reset to 60 s on a change.
	p := defaultPollPolicy()
	if err := p.Validate(); err != nil {
		t.Fatal(err)
	}
	steps := []struct {
		changed bool
		want    time.Duration
	}{
		{false, 30 * time.Second}, // first poll after a submit
		{true, 60 * time.Second},
		{false, 90 * time.Second},
		{false, 135 * time.Second},
		{false, 202500 * time.Millisecond},
		{false, 300 * time.Second},
		{false, 300 * time.Second},
		{true, 60 * time.Second},
	}
	var d time.Duration
	for i, s := range steps {
		d = p.Next(d, s.changed)
		if d != s.want {
			t.Fatalf("step %d: Next = %s, want %s", i, d, s.want)
		}
	}
}

func TestPollPolicy_Validate_Rejects(t *testing.T) {
	tests := []struct {
		name   string
		modify func(*pollPolicy)
	}{
		{"interval below floor", func(p *pollPolicy) { p.Interval = 5 * time.Second }},
		{"first below floor", func(p *pollPolicy) { p.FirstDelay = time.Second }},
		{"max below interval", func(p *pollPolicy) { p.Max = 30 * time.Second }},
		{"backoff below one", func(p *pollPolicy) { p.Backoff = 0.5 }},
		{"zero floor", func(p *pollPolicy) { p.Floor = 0 }},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			p := defaultPollPolicy()
			tc.modify(&p)
			if err := p.Validate(); err == nil {
				t.Error("Validate = nil, want an error")
			}
		})
	}
}

func TestPollPolicy_WithoutAccounting_CapsAtHalfMinJobAge(t *testing.T) {
	p := defaultPollPolicy().WithoutAccounting(300 * time.Second)
	if p.Max != 150*time.Second || p.Validate() != nil {
		t.Errorf("Max = %s (valid: %v), want 150 s for MinJobAge 300 s", p.Max, p.Validate())
	}
	p = defaultPollPolicy().WithoutAccounting(10 * time.Second)
	if p.Max != p.Floor || p.Interval != p.Floor || p.Validate() != nil {
		t.Errorf("tiny MinJobAge: %+v, want everything at the floor", p)
	}
}

// scheduler is a fake Slurm: it prints squeue lines for its tasks and
// answers sacct from a history table.
type scheduler struct {
	squeue     map[taskRef]string // ref → state, listed by squeue
	history    map[taskRef]string // ref → state, known to sacct
	accounting bool
}

func (s *scheduler) respond(c Cmd) (Output, error) {
	var b strings.Builder
	switch c.Argv[0] {
	case "squeue":
		for ref, st := range s.squeue {
			fmt.Fprintf(&b, "%s_%d|%s|%s|%d|%s|None\n", ref.Array, ref.Index, ref.Array, ref.Array, ref.Index, st)
		}
	case "sacct":
		if !s.accounting {
			return Output{Stderr: []byte("Slurm accounting storage is disabled\n"), ExitCode: 1}, nil
		}
		for ref, st := range s.history {
			fmt.Fprintf(&b, "%s|%s_%d|%s|0:0\n", ref.Array, ref.Array, ref.Index, st)
		}
	default:
		return Output{}, fmt.Errorf("unexpected command %q", c.Argv)
	}
	return Output{Stdout: []byte(b.String())}, nil
}

func newTestPoller(t *testing.T, s *scheduler, now *time.Time) (*poller, *CountingRunner) {
	t.Helper()
	cr := &CountingRunner{Next: &fakeRunner{respond: s.respond}}
	p, err := newPoller(mustClient(t, Slurm(), cr), "ws-1a2b3c4d", func() time.Time { return *now })
	if err != nil {
		t.Fatal(err)
	}
	return p, cr
}

func TestPoller_Poll_CommandsPerCycleConstant(t *testing.T) {
	for _, n := range []int{1, 10, 1000} {
		t.Run(fmt.Sprintf("tasks=%d", n), func(t *testing.T) {
			s := &scheduler{squeue: map[taskRef]string{}, history: map[taskRef]string{}, accounting: true}
			now := testTime
			p, cr := newTestPoller(t, s, &now)
			for j := 0; j < 3; j++ { // three arrays of the scan
				array := fmt.Sprint(100 + j)
				p.Track(array, 0, n, testTime)
				for i := 0; i < n; i++ {
					s.squeue[taskRef{array, i}] = "RUNNING"
				}
			}
			snap, err := p.Poll(t.Context())
			if err != nil {
				t.Fatal(err)
			}
			if snap.Commands != 1 || cr.Total() != 1 {
				t.Errorf("all listed: %d commands (%v), want 1 squeue", snap.Commands, cr.Counts())
			}
			// Every task leaves squeue at once: still one squeue and one sacct.
			for ref := range s.squeue {
				s.history[ref] = "COMPLETED"
			}
			s.squeue = map[taskRef]string{}
			snap, err = p.Poll(t.Context())
			if err != nil {
				t.Fatal(err)
			}
			if c := cr.Counts(); snap.Commands != 2 || c["squeue"] != 2 || c["sacct"] != 1 {
				t.Errorf("after all left: %d commands (%v), want one squeue plus one sacct", snap.Commands, c)
			}
			if got := snap.Counts()[classCompleted]; got != 3*n {
				t.Errorf("completed = %d, want %d", got, 3*n)
			}
			// Final states known: no more sacct.
			snap, _ = p.Poll(t.Context())
			if snap.Commands != 1 {
				t.Errorf("after final states known: %d commands, want 1", snap.Commands)
			}
		})
	}
}

func TestPoller_Poll_AccountingDisabledStopsAsking(t *testing.T) {
	s := &scheduler{squeue: map[taskRef]string{{"7", 0}: "RUNNING", {"7", 1}: "RUNNING"}}
	now := testTime
	p, cr := newTestPoller(t, s, &now)
	p.Track("7", 0, 2, testTime)
	if _, err := p.Poll(t.Context()); err != nil {
		t.Fatal(err)
	}
	delete(s.squeue, taskRef{"7", 1}) // vanished with no final state
	now = now.Add(time.Minute)
	snap, err := p.Poll(t.Context())
	if err != nil {
		t.Fatal(err)
	}
	if snap.Accounting != accountingOff || snap.Commands != 2 {
		t.Errorf("first vanish: accounting %s, %d commands; want off after one sacct", snap.Accounting, snap.Commands)
	}
	lostAt := now
	gone := snap.Tasks[taskRef{"7", 1}]
	if gone.Seen || !gone.MissingSince.Equal(lostAt) || gone.Class() != classActive {
		t.Errorf("vanished task = %+v, want unseen, missing since %s, last known RUNNING", gone, lostAt)
	}
	now = now.Add(4 * time.Minute)
	snap, _ = p.Poll(t.Context())
	if snap.Commands != 1 || cr.Counts()["sacct"] != 1 {
		t.Errorf("accounting off: %d commands this cycle, %d sacct in total; want 1 and 1", snap.Commands, cr.Counts()["sacct"])
	}
	gone = snap.Tasks[taskRef{"7", 1}]
	if gone.Lost(now, 5*time.Minute) {
		t.Error("Lost after 4 min with a 5 min grace = true")
	}
	if !gone.Lost(now.Add(time.Minute), 5*time.Minute) {
		t.Error("Lost after 5 min with a 5 min grace = false")
	}
}

func TestPoller_Poll_FinishedThenPurgedKeepsFinalState(t *testing.T) {
	s := &scheduler{squeue: map[taskRef]string{{"7", 0}: "TIMEOUT"}, accounting: true}
	now := testTime
	p, cr := newTestPoller(t, s, &now)
	p.Track("7", 0, 1, testTime)
	if _, err := p.Poll(t.Context()); err != nil {
		t.Fatal(err)
	}
	s.squeue = map[taskRef]string{} // purged after MinJobAge
	snap, _ := p.Poll(t.Context())
	got := snap.Tasks[taskRef{"7", 0}]
	if got.State != "TIMEOUT" || !got.MissingSince.IsZero() || cr.Counts()["sacct"] != 0 {
		t.Errorf("purged task = %+v with %d sacct; want TIMEOUT kept, not missing, no sacct", got, cr.Counts()["sacct"])
	}
}

func TestPoller_Watch_BacksOffAndStops(t *testing.T) {
	s := &scheduler{squeue: map[taskRef]string{{"7", 0}: "RUNNING"}}
	now := testTime
	p, _ := newTestPoller(t, s, &now)
	var waits []time.Duration
	polls := 0
	sleep := func(_ context.Context, d time.Duration) error {
		waits = append(waits, d)
		now = now.Add(d)
		return nil
	}
	snap, err := p.Watch(t.Context(), defaultPollPolicy(), sleep, func(s2 pollSnapshot) bool {
		polls++
		if polls == 4 {
			s.squeue[taskRef{"7", 0}] = "COMPLETED"
		}
		return s2.Counts()[classCompleted] == 1
	})
	if err != nil {
		t.Fatal(err)
	}
	// Poll 1 sees a new task (change → 60 s), then no change (90, 135), then
	// the completion is seen at poll 5.
	want := []time.Duration{30 * time.Second, 60 * time.Second, 90 * time.Second, 135 * time.Second, 202500 * time.Millisecond}
	if fmt.Sprint(waits) != fmt.Sprint(want) || snap.Counts()[classCompleted] != 1 {
		t.Errorf("waits = %v, want %v; final %v", waits, want, snap.Counts())
	}
}

func TestPoller_Watch_GivesUpWhenUnreachable(t *testing.T) {
	r := &fakeRunner{respond: func(Cmd) (Output, error) {
		return Output{Stderr: []byte("squeue: error: Unable to contact slurm controller (connect failure)"), ExitCode: 1}, nil
	}}
	p, err := newPoller(mustClient(t, Slurm(), r), "ws-1a2b3c4d", nil)
	if err != nil {
		t.Fatal(err)
	}
	_, err = p.Watch(t.Context(), defaultPollPolicy(), func(context.Context, time.Duration) error { return nil },
		func(pollSnapshot) bool { return false })
	if err == nil || !strings.Contains(err.Error(), "unreachable") || len(r.calls) != maxPollFailures {
		t.Errorf("Watch error = %v after %d calls, want unreachable after %d", err, len(r.calls), maxPollFailures)
	}
}

func TestPoller_Poll_WholeArrayRecordCoversTasks(t *testing.T) {
	// An array cancelled before any task started is one squeue record with
	// no task index ("16|16|16|N/A|CANCELLED|None", seen on the local Slurm
	// 22.05); it stands for every tracked task of that array.
	r := &fakeRunner{respond: func(Cmd) (Output, error) {
		return Output{Stdout: []byte("16|16|16|N/A|CANCELLED|None\n15_0|18|15|0|RUNNING|None\n")}, nil
	}}
	p, err := newPoller(mustClient(t, Slurm(), r), "ws-1a2b3c4d", nil)
	if err != nil {
		t.Fatal(err)
	}
	p.Track("16", 0, 2, testTime)
	p.Track("15", 0, 2, testTime)
	snap, err := p.Poll(t.Context())
	if err != nil {
		t.Fatal(err)
	}
	for _, ref := range []taskRef{{"16", 0}, {"16", 1}} {
		if got := snap.Tasks[ref]; got.State != "CANCELLED" || !got.Seen {
			t.Errorf("%s = %+v, want CANCELLED and seen", ref, got)
		}
	}
	if _, ok := snap.Tasks[taskRef{"16", noTask}]; ok {
		t.Error("the whole-array record was kept as a task of its own")
	}
	// A plain job record does not stand for another array's tasks.
	if got := snap.Tasks[taskRef{"15", 1}]; got.Seen || got.MissingSince.IsZero() {
		t.Errorf("15_1 = %+v, want unseen and missing", got)
	}
}

func TestParseSlurmLimits(t *testing.T) {
	// Lines as printed by `scontrol show config` on the local Slurm 22.05.
	text := "Configuration data as of 2026-12-01T23:40:00\nMaxArraySize            = 1001\nMaxJobCount             = 10000\nMinJobAge               = 300 sec\n"
	got, err := parseSlurmLimits([]byte(text))
	if err != nil || got.MaxArraySize != 1001 || got.MinJobAge != 300*time.Second {
		t.Errorf("ParseSlurmLimits = %+v, %v; want 1001 and 300 s", got, err)
	}
	for _, bad := range []string{"MaxArraySize = 1001\n", "MaxArraySize = x\nMinJobAge = 5 sec\n", "MaxArraySize = 10\nMinJobAge = 5 min\n"} {
		if _, err := parseSlurmLimits([]byte(bad)); err == nil {
			t.Errorf("ParseSlurmLimits(%q) = nil error", bad)
		}
	}
}
