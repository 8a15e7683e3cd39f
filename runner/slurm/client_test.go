package slurm

import (
	"context"
	"errors"
	"fmt"
	"reflect"
	"strings"
	"sync"
	"testing"
)

// fakeRunner answers scheduler commands from a function and records them.
type fakeRunner struct {
	mu      sync.Mutex
	calls   []Cmd
	respond func(Cmd) (Output, error)
}

func (f *fakeRunner) Run(_ context.Context, c Cmd) (Output, error) {
	f.mu.Lock()
	f.calls = append(f.calls, c)
	f.mu.Unlock()
	return f.respond(c)
}

func (f *fakeRunner) programs() []string {
	f.mu.Lock()
	defer f.mu.Unlock()
	var out []string
	for _, c := range f.calls {
		out = append(out, c.Argv[0])
	}
	return out
}

func mustClient(t testing.TB, p *Profile, r Runner) *Client {
	t.Helper()
	c, err := NewClient(p, r)
	if err != nil {
		t.Fatal(err)
	}
	return c
}

func TestClient_Submit_ParsesID(t *testing.T) {
	tests := []struct {
		p      *Profile
		stdout string
		want   string
	}{
		{Slurm(), "123\n", "123"},
		{Slurm(), "4567;cluster-a\n", "4567"}, // --parsable with a cluster name (sbatch man)
		{torqueProfile(), "123[].server.example\n", "123"},
		{torqueProfile(), "124.server\n", "124"},
		{lsfProfile(), "Job <8812> is submitted to queue <normal>.\n", "8812"},
		{sgeProfile(), "551.1-10:1\n", "551"},
		{sgeProfile(), "552\n", "552"},
	}
	for _, tc := range tests {
		t.Run(tc.p.Name+"/"+strings.TrimSpace(tc.stdout), func(t *testing.T) {
			r := &fakeRunner{respond: func(Cmd) (Output, error) { return Output{Stdout: []byte(tc.stdout)}, nil }}
			id, err := mustClient(t, tc.p, r).submit(t.Context(), "/scan/jobs/r1-1/submit.sh")
			if err != nil || id != tc.want {
				t.Errorf("Submit = %q, %v; want %q", id, err, tc.want)
			}
		})
	}
}

func TestClient_Submit_ArgvNoShell(t *testing.T) {
	r := &fakeRunner{respond: func(Cmd) (Output, error) { return Output{Stdout: []byte("1\n")}, nil }}
	path := "/scan dir/it's/submit.sh"
	if _, err := mustClient(t, Slurm(), r).submit(t.Context(), path); err != nil {
		t.Fatal(err)
	}
	want := Cmd{Argv: []string{"sbatch", "--parsable", path}}
	if !reflect.DeepEqual(r.calls, []Cmd{want}) {
		t.Errorf("calls = %q, want %q", r.calls, want)
	}
	r.calls = nil
	if _, err := mustClient(t, lsfProfile(), &fakeRunner{respond: func(c Cmd) (Output, error) {
		r.calls = append(r.calls, c)
		return Output{Stdout: []byte("Job <1> is submitted to default queue <normal>.")}, nil
	}}).submit(t.Context(), path); err != nil {
		t.Fatal(err)
	}
	if want := (Cmd{Argv: []string{"bsub"}, Stdin: path}); !reflect.DeepEqual(r.calls, []Cmd{want}) {
		t.Errorf("LSF calls = %q, want %q (script on stdin)", r.calls, want)
	}
}

func TestClient_Submit_ClassifiesRejections(t *testing.T) {
	// Messages and exit codes observed with Slurm 22.05 (SOURCES.md §4),
	// and the limit texts of SOURCES.md §2.
	tests := []struct {
		name   string
		code   int
		stderr string
		want   submitErrorKind
	}{
		{"bad partition", 1, "sbatch: error: Batch job submission failed: Invalid partition name specified", submitRejected},
		{"too much memory", 1, "sbatch: error: Batch job submission failed: Requested node configuration is not available", submitRejected},
		{"array too big", 1, "sbatch: error: Batch job submission failed: Invalid job array specification", submitRejected},
		{"bad time", 255, "sbatch: error: Invalid --time specification", submitRejected},
		{"controller down", 1, "sbatch: error: Batch job submission failed: Unable to contact slurm controller (connect failure)", submitUnreachable},
		{"submit limit", 1, "sbatch: error: AssocMaxSubmitJobLimit\nsbatch: error: Batch job submission failed: Job violates accounting/QOS policy (job submit limit, user's size and/or time limits)", submitLimit},
		{"something else", 1, "sbatch: error: frobnication failed", submitUnknown},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			r := &fakeRunner{respond: func(Cmd) (Output, error) { return Output{Stderr: []byte(tc.stderr + "\n"), ExitCode: tc.code}, nil }}
			_, err := mustClient(t, Slurm(), r).submit(t.Context(), "/j/submit.sh")
			var se *submitError
			if !errors.As(err, &se) {
				t.Fatalf("Submit error = %v, want *SubmitError", err)
			}
			if se.Kind != tc.want || se.ExitCode != tc.code || se.Message != tc.stderr {
				t.Errorf("SubmitError = %+v, want kind %s, exit %d, message %q", se, tc.want, tc.code, tc.stderr)
			}
		})
	}
}

func TestClient_Submit_GarbageOutput(t *testing.T) {
	r := &fakeRunner{respond: func(Cmd) (Output, error) { return Output{Stdout: []byte("Submitted batch job\n")}, nil }}
	_, err := mustClient(t, Slurm(), r).submit(t.Context(), "/j/submit.sh")
	var se *submitError
	if !errors.As(err, &se) || !strings.Contains(err.Error(), "no job id") {
		t.Errorf("Submit error = %v, want a SubmitError about the missing id", err)
	}
}

func TestClient_Status_Slurm(t *testing.T) {
	// Lines in the shape printed by squeue -h -r -t all -o '%i|%A|%F|%K|%T|%r'
	// on the local Slurm 22.05 (array 8: task 2 kept the array's own id, the
	// others got new ids when they started; SOURCES.md §11).
	out := "8_0|9|8|0|COMPLETED|None|ws:1a2b3c4d-r1-1\n8_1|10|8|1|RUNNING|None|ws:1a2b3c4d-r1-1\n8_2|8|8|2|PENDING|JobArrayTaskLimit|ws:1a2b3c4d-r1-1\n4|4|4|N/A|CANCELLED|None|(null)\n"
	r := &fakeRunner{respond: func(c Cmd) (Output, error) { return Output{Stdout: []byte(out)}, nil }}
	c := mustClient(t, Slurm(), r)
	got, err := c.listStatus(t.Context(), "ws-1a2b3c4d")
	if err != nil {
		t.Fatal(err)
	}
	want := []TaskState{
		{ID: "9", Array: "8", Index: 0, State: "COMPLETED", Native: "COMPLETED", Reason: "None", Comment: "ws:1a2b3c4d-r1-1"},
		{ID: "10", Array: "8", Index: 1, State: "RUNNING", Native: "RUNNING", Reason: "None", Comment: "ws:1a2b3c4d-r1-1"},
		{ID: "8", Array: "8", Index: 2, State: "PENDING", Native: "PENDING", Reason: "JobArrayTaskLimit", Comment: "ws:1a2b3c4d-r1-1"},
		{ID: "4", Array: "4", Index: noTask, State: "CANCELLED", Native: "CANCELLED", Reason: "None", Comment: "(null)"},
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("Status =\n%+v\nwant\n%+v", got, want)
	}
	if tok, ok := got[0].token(); !ok || tok != "1a2b3c4d-r1-1" {
		t.Errorf("Token() = %q, %v; want 1a2b3c4d-r1-1", tok, ok)
	}
	if _, ok := got[3].token(); ok {
		t.Error("Token() of a job without our comment = ok")
	}
	wantArgv := []string{"squeue", "--me", "-h", "-r", "-t", "all", "--name=ws-1a2b3c4d", "-o", "%i|%A|%F|%K|%T|%r|%k"}
	if !reflect.DeepEqual(r.calls[0].Argv, wantArgv) {
		t.Errorf("argv = %q, want %q", r.calls[0].Argv, wantArgv)
	}
}

func TestClient_Status_Errors(t *testing.T) {
	c := mustClient(t, Slurm(), &fakeRunner{respond: func(Cmd) (Output, error) {
		return Output{Stderr: []byte("squeue: error: Unable to contact slurm controller (connect failure)"), ExitCode: 1}, nil
	}})
	_, err := c.listStatus(t.Context(), "ws-1a2b3c4d")
	var ce *commandError
	if !errors.As(err, &ce) || !ce.Unreachable {
		t.Errorf("Status error = %v, want an unreachable CommandError", err)
	}
	c = mustClient(t, Slurm(), &fakeRunner{respond: func(Cmd) (Output, error) {
		return Output{Stderr: []byte("slurm_load_jobs error: Invalid job id specified"), ExitCode: 1}, nil
	}})
	if got, err := c.listStatus(t.Context(), "ws-1a2b3c4d"); err != nil || len(got) != 0 {
		t.Errorf("Status on a purged job = %v, %v; want empty, nil", got, err)
	}
	if _, err := c.parseStatus([]byte("garbage line\n"), "ws-1a2b3c4d"); err == nil || !strings.Contains(err.Error(), "line 1") {
		t.Errorf("ParseStatus(garbage) error = %v, want one naming line 1", err)
	}
	if _, err := c.listStatus(t.Context(), "ws x"); err == nil {
		t.Error("Status with a bad job name = nil error")
	}
}

func TestClient_ParseStatus_FoldedPendingRange(t *testing.T) {
	// Without -r squeue folds pending tasks: "8_[2-4%2]" (SOURCES.md §11).
	p := Slurm()
	p.IndexRanges = true
	c := mustClient(t, p, &fakeRunner{})
	got, err := c.parseStatus([]byte("8_[2-4%2]|8|8|[2-4%2]|PENDING|JobArrayTaskLimit\n"), "ws-1a2b3c4d")
	if err != nil {
		t.Fatal(err)
	}
	var idx []int
	for _, g := range got {
		idx = append(idx, g.Index)
	}
	if !reflect.DeepEqual(idx, []int{2, 3, 4}) {
		t.Errorf("indexes = %v, want [2 3 4]", idx)
	}
}

func TestClient_ParseHistory_Slurm(t *testing.T) {
	// sacct -X -P -n -o JobIDRaw,JobID,State,ExitCode lines; states and exit
	// codes as observed with slurmdbd (SOURCES.md §4 table).
	out := "12|12_0|COMPLETED|0:0\n13|12_1|TIMEOUT|0:0\n14|14|CANCELLED by 0|0:0\n12|12_[2-9%2]|PENDING|0:0\n15|15|FAILED|3:0\n"
	c := mustClient(t, Slurm(), &fakeRunner{})
	got, err := c.parseHistory([]byte(out), "ws-1a2b3c4d")
	if err != nil {
		t.Fatal(err)
	}
	want := []TaskState{
		{ID: "12", Array: "12", Index: 0, State: "COMPLETED", Native: "COMPLETED", ExitCode: "0:0", FromHistory: true},
		{ID: "13", Array: "12", Index: 1, State: "TIMEOUT", Native: "TIMEOUT", ExitCode: "0:0", FromHistory: true},
		{ID: "14", Array: "14", Index: noTask, State: "CANCELLED", Native: "CANCELLED", ExitCode: "0:0", FromHistory: true},
		{ID: "15", Array: "15", Index: noTask, State: "FAILED", Native: "FAILED", ExitCode: "3:0", FromHistory: true},
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("ParseHistory =\n%+v\nwant\n%+v", got, want)
	}
}

func TestClient_History_AccountingDisabled(t *testing.T) {
	c := mustClient(t, Slurm(), &fakeRunner{respond: func(Cmd) (Output, error) {
		// sacct without slurmdbd (SOURCES.md §4): this text on stderr, exit 1.
		return Output{Stderr: []byte("Slurm accounting storage is disabled\n"), ExitCode: 1}, nil
	}})
	if _, err := c.listHistory(t.Context(), "ws-1a2b3c4d", testTime); !errors.Is(err, errNoAccounting) {
		t.Errorf("History error = %v, want ErrNoAccounting", err)
	}
	if _, err := mustClient(t, sgeProfile(), &fakeRunner{}).listHistory(t.Context(), "ws-1a2b3c4d", testTime); !errors.Is(err, errNoAccounting) {
		t.Errorf("SGE History error = %v, want ErrNoAccounting (no history command)", err)
	}
}

// Sample outputs below are invented for the tests, in the layouts the
// schedulers document; no real PBS/Torque, LSF or SGE was available.
func TestClient_Status_OtherProfiles(t *testing.T) {
	tests := []struct {
		p    *Profile
		out  string
		want []string // "ref state"
	}{
		{torqueProfile(), `Job ID                    Name             User            Time Use S Queue
------------------------- ---------------- --------------- -------- - -----
123[0].server             ws-1a2b3c4d-0    alice           00:00:05 C batch
123[1].server             ws-1a2b3c4d-1    alice           00:00:01 R batch
123[2].server             ws-1a2b3c4d-2    alice                  0 Q batch
124.server                other-job        alice                  0 R batch
`, []string{"123_0 COMPLETED", "123_1 RUNNING", "123_2 PENDING"}},
		{lsfProfile(), "8812|1|DONE\n8812|2|EXIT\n8812|3|RUN\n8812|4|PEND\n", []string{"8812_1 COMPLETED", "8812_2 FAILED", "8812_3 RUNNING", "8812_4 PENDING"}},
		{sgeProfile(), `job-ID  prior   name       user         state submit/start at     queue                          slots ja-task-ID
-----------------------------------------------------------------------------------------------------------------
    551 0.55500 ws-1a2b3c4 alice        r     05/01/2026 10:00:00 all.q@node1                        1 1
    551 0.55500 ws-1a2b3c4 alice        r     05/01/2026 10:00:00 all.q@node2                        1 2
    551 0.00000 ws-1a2b3c4 alice        qw    05/01/2026 09:59:58                                    1 3-5:1
    552 0.00000 otherjob   alice        qw    05/01/2026 09:59:58                                    1
`, []string{"551_1 RUNNING", "551_2 RUNNING", "551_3 PENDING", "551_4 PENDING", "551_5 PENDING"}},
	}
	for _, tc := range tests {
		t.Run(tc.p.Name, func(t *testing.T) {
			c := mustClient(t, tc.p, &fakeRunner{})
			got, err := c.parseStatus([]byte(tc.out), "ws-1a2b3c4d")
			if err != nil {
				t.Fatal(err)
			}
			var refs []string
			for _, g := range got {
				refs = append(refs, g.ref().String()+" "+g.State)
			}
			if !reflect.DeepEqual(refs, tc.want) {
				t.Errorf("ParseStatus = %q, want %q", refs, tc.want)
			}
		})
	}
}

func TestClient_Status_LSFNotFoundIsEmpty(t *testing.T) {
	c := mustClient(t, lsfProfile(), &fakeRunner{respond: func(Cmd) (Output, error) {
		return Output{Stderr: []byte("Job <ws-1a2b3c4d> is not found\n"), ExitCode: 255}, nil
	}})
	if got, err := c.listStatus(t.Context(), "ws-1a2b3c4d"); err != nil || len(got) != 0 {
		t.Errorf("Status = %v, %v; want empty, nil", got, err)
	}
}

func TestClient_Cancel_ByName(t *testing.T) {
	r := &fakeRunner{respond: func(Cmd) (Output, error) { return Output{}, nil }}
	if err := mustClient(t, Slurm(), r).Cancel(t.Context(), "ws-1a2b3c4d"); err != nil {
		t.Fatal(err)
	}
	want := []string{"scancel", "--me", "--name=ws-1a2b3c4d"}
	if len(r.calls) != 1 || !reflect.DeepEqual(r.calls[0].Argv, want) {
		t.Errorf("calls = %q, want one %q", r.calls, want)
	}
}

func TestClient_CancelIDs_Batches(t *testing.T) {
	r := &fakeRunner{respond: func(Cmd) (Output, error) { return Output{}, nil }}
	ids := make([]string, 250)
	for i := range ids {
		ids[i] = fmt.Sprint(1000 + i)
	}
	if err := mustClient(t, Slurm(), r).cancelIDs(t.Context(), ids); err != nil {
		t.Fatal(err)
	}
	var sizes []int
	var all []string
	for _, c := range r.calls {
		if c.Argv[0] != "scancel" {
			t.Errorf("program %q, want scancel", c.Argv[0])
		}
		sizes = append(sizes, len(c.Argv)-1)
		all = append(all, c.Argv[1:]...)
	}
	if !reflect.DeepEqual(sizes, []int{100, 100, 50}) || !reflect.DeepEqual(all, ids) {
		t.Errorf("batches of %v ids, want [100 100 50] covering all ids in order", sizes)
	}
}

func TestClient_Cancel_ByIDWhenNoNameCancel(t *testing.T) {
	// Torque cannot cancel by name: the client lists the scan's live jobs and
	// cancels their array ids.
	listing := "123[0].server  ws-1a2b3c4d-0  alice  0 R batch\n123[1].server  ws-1a2b3c4d-1  alice  0 Q batch\n125.server  ws-1a2b3c4d  alice  0 C batch\n"
	r := &fakeRunner{respond: func(c Cmd) (Output, error) {
		if c.Argv[0] == "qstat" {
			return Output{Stdout: []byte(listing)}, nil
		}
		return Output{}, nil
	}}
	if err := mustClient(t, torqueProfile(), r).Cancel(t.Context(), "ws-1a2b3c4d"); err != nil {
		t.Fatal(err)
	}
	if got := r.programs(); !reflect.DeepEqual(got, []string{"qstat", "qdel"}) {
		t.Fatalf("programs = %v, want [qstat qdel]", got)
	}
	if got := r.calls[1].Argv; !reflect.DeepEqual(got, []string{"qdel", "123"}) {
		t.Errorf("qdel argv = %q, want [qdel 123] (completed job 125 left alone)", got)
	}
}

func TestClient_ConfirmCancelled_WaitsForFinalStates(t *testing.T) {
	calls := 0
	r := &fakeRunner{respond: func(Cmd) (Output, error) {
		calls++
		if calls < 3 {
			return Output{Stdout: []byte("8_0|9|8|0|COMPLETING|None\n")}, nil
		}
		return Output{Stdout: []byte("8_0|9|8|0|CANCELLED|None\n")}, nil
	}}
	got, err := mustClient(t, Slurm(), r).ConfirmCancelled(t.Context(), "ws-1a2b3c4d", 1)
	if err != nil || len(got) != 1 || got[0].State != "CANCELLED" || calls != 3 {
		t.Errorf("ConfirmCancelled = %+v, %v after %d calls; want CANCELLED after 3", got, err, calls)
	}
}

func TestExecRunner_RunsArgvAndExitCode(t *testing.T) {
	r := ExecRunner{}
	out, err := r.Run(t.Context(), Cmd{Argv: []string{"sh", "-c", "echo out; echo err >&2; exit 3"}})
	if err != nil {
		t.Fatal(err)
	}
	if string(out.Stdout) != "out\n" || string(out.Stderr) != "err\n" || out.ExitCode != 3 {
		t.Errorf("Run = %+v, want out/err/3", out)
	}
	if _, err := r.Run(t.Context(), Cmd{Argv: []string{"/nonexistent/sbatch"}}); err == nil {
		t.Error("Run(missing program) = nil error")
	}
}

func TestCleanEnv_StripsSlurmInsideAJob(t *testing.T) {
	in := []string{"PATH=/bin", "SLURM_JOB_ID=7", "SLURM_ARRAY_TASK_ID=1", "HOME=/root"}
	if got, want := cleanEnv(in), []string{"PATH=/bin", "HOME=/root"}; !reflect.DeepEqual(got, want) {
		t.Errorf("cleanEnv = %q, want %q", got, want)
	}
	in = []string{"PATH=/bin", "SLURM_CONF=/etc/slurm/slurm.conf"}
	if got := cleanEnv(in); !reflect.DeepEqual(got, in) {
		t.Errorf("cleanEnv outside a job = %q, want unchanged", got)
	}
}
