package slurm

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"testing"

	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/model"
)

// fakeBatch answers the submit and status commands of the Torque, LSF and
// SGE presets in the output formats those profiles are written for (the
// schedulers' documented formats, as in the profile tests' invented samples;
// no real scheduler of these kinds runs here), and runs the compute-node
// side in process. Each status call moves every task one step: pending →
// running → finished (the node side runs then). Finished Torque tasks stay
// listed as C, LSF tasks as DONE; SGE tasks leave the listing, as SGE's
// qstat does. With hold set, tasks stay pending.
type fakeBatch struct {
	t       *testing.T
	profile string
	mu      sync.Mutex
	hold    bool
	subs    int
	tasks   []*fakeBatchTask
	calls   map[string]int
}

type fakeBatchTask struct {
	array, index int
	name, jobDir string
	step         int // 0 pending, 1 running, 2 finished
}

var (
	torqueArrayRE = regexp.MustCompile(`(?m)^#PBS -t (\d+)-(\d+)%\d+$`)
	torqueNameRE  = regexp.MustCompile(`(?m)^#PBS -N (\S+)$`)
	lsfArrayRE    = regexp.MustCompile(`(?m)^#BSUB -J "(\S+)\[(\d+)-(\d+)\]%\d+"$`)
	sgeArrayRE    = regexp.MustCompile(`(?m)^#\$ -t (\d+)-(\d+)$`)
	sgeNameRE     = regexp.MustCompile(`(?m)^#\$ -N (\S+)$`)
)

func (f *fakeBatch) Run(ctx context.Context, c Cmd) (Output, error) {
	f.mu.Lock()
	defer f.mu.Unlock()
	if f.calls == nil {
		f.calls = map[string]int{}
	}
	f.calls[c.Argv[0]]++
	switch c.Argv[0] {
	case "qsub", "bsub":
		path := c.Stdin
		if path == "" {
			path = c.Argv[len(c.Argv)-1]
		}
		b, err := os.ReadFile(path)
		if err != nil {
			return Output{}, err
		}
		var name string
		var lo, hi int
		switch f.profile {
		case "torque":
			m, n := torqueArrayRE.FindSubmatch(b), torqueNameRE.FindSubmatch(b)
			if m == nil || n == nil {
				f.t.Errorf("torque script without -t or -N:\n%s", b)
				return Output{ExitCode: 1}, nil
			}
			name, lo, hi = string(n[1]), atoi(m[1]), atoi(m[2])
		case "lsf":
			m := lsfArrayRE.FindSubmatch(b)
			if m == nil {
				f.t.Errorf("lsf script without -J name[range]:\n%s", b)
				return Output{ExitCode: 1}, nil
			}
			name, lo, hi = string(m[1]), atoi(m[2]), atoi(m[3])
		case "sge":
			m, n := sgeArrayRE.FindSubmatch(b), sgeNameRE.FindSubmatch(b)
			if m == nil || n == nil {
				f.t.Errorf("sge script without -t or -N:\n%s", b)
				return Output{ExitCode: 1}, nil
			}
			name, lo, hi = string(n[1]), atoi(m[1]), atoi(m[2])
		}
		f.subs++
		id := 500 + f.subs
		for i := lo; i <= hi; i++ {
			f.tasks = append(f.tasks, &fakeBatchTask{array: id, index: i, name: name, jobDir: filepath.Dir(path)})
		}
		switch f.profile {
		case "torque":
			return Output{Stdout: []byte(fmt.Sprintf("%d[].fakehost\n", id))}, nil
		case "lsf":
			return Output{Stdout: []byte(fmt.Sprintf("Job <%d> is submitted to default queue <normal>.\n", id))}, nil
		}
		return Output{Stdout: []byte(fmt.Sprintf("%d.%d-%d:1\n", id, lo, hi))}, nil
	case "qstat", "bjobs":
		var b strings.Builder
		if f.profile != "lsf" {
			b.WriteString("Job ID   Name   User   Time Use S Queue\n---------- ------ ---- -------- - -----\n")
		}
		for _, t := range f.tasks {
			if !f.hold && t.step < 2 {
				t.step++
				if t.step == 2 {
					err := NodeTask{JobDir: t.jobDir, Task: t.index, NewBackend: func(s *planner.Spec) (runner.Backend, error) {
						return model.New(s)
					}}.Run(ctx)
					if err != nil {
						f.t.Errorf("node task %d[%d]: %v", t.array, t.index, err)
					}
				}
			}
			switch f.profile {
			case "torque":
				fmt.Fprintf(&b, "%d[%d].fakehost  %s-%d  someone  00:00:01 %s batch\n", t.array, t.index, t.name, t.index, [...]string{"Q", "R", "C"}[t.step])
			case "lsf":
				fmt.Fprintf(&b, "%d|%d|%s\n", t.array, t.index, [...]string{"PEND", "RUN", "DONE"}[t.step])
			case "sge":
				short := t.name[:min(10, len(t.name))]
				switch t.step {
				case 0:
					fmt.Fprintf(&b, "  %d 0.00000 %s someone  qw  12/02/2026 10:00:00  1 %d\n", t.array, short, t.index)
				case 1:
					fmt.Fprintf(&b, "  %d 0.55500 %s someone  r  12/02/2026 10:00:01 all.q@node1  1 %d\n", t.array, short, t.index)
				}
			}
		}
		return Output{Stdout: []byte(b.String())}, nil
	}
	f.t.Errorf("unexpected command %q for profile %s", c.Argv, f.profile)
	return Output{ExitCode: 1}, nil
}

func atoi(b []byte) int {
	n, _ := strconv.Atoi(string(b))
	return n
}

// batchSpec is fakeSpec on [queue] kind = "batch" with the given scheduler.
func batchSpec(scheduler string) string {
	s := strings.Replace(fakeSpec, `kind = "slurm"`, `kind = "batch"`, 1)
	return strings.Replace(s, "[queue.slurm]\n", "[queue.batch]\nscheduler = \""+scheduler+"\"\n", 1)
}

// The Torque, LSF and SGE presets drive a whole scan through the queue:
// scripts in their syntax, job ids from their submit output, states from
// their status listings, points adopted after a detached run by the job ids
// recorded on disk (their listings show no comment). Every point computed
// once, one submission.
func TestQueue_OtherSchedulers_DetachAdoptFinish(t *testing.T) {
	for _, sched := range []string{"torque", "lsf", "sge"} {
		t.Run(sched, func(t *testing.T) {
			dir := t.TempDir()
			if err := os.WriteFile(filepath.Join(dir, "scan.toml"), []byte(batchSpec(sched)), 0o644); err != nil {
				t.Fatal(err)
			}
			fake := &fakeBatch{t: t, profile: sched, hold: true}
			fr := runFakeIn(t, dir, fake, true)
			if fr.err != nil || !fr.sum.Detached {
				t.Fatalf("detached run: %v (detached %v)", fr.err, fr.sum.Detached)
			}
			if c := countStates(fr.recs); c[runner.Submitted] != 10 || fake.subs != 1 {
				t.Fatalf("after detaching: %v, %d submissions; want 10 submitted, 1 submission", c, fake.subs)
			}
			fake.mu.Lock()
			fake.hold = false
			fake.mu.Unlock()
			fr = runFakeIn(t, dir, fake, false)
			if fr.err != nil {
				t.Fatalf("attached run: %v", fr.err)
			}
			for k, rec := range fr.recs {
				if rec.State != runner.Done || rec.Attempts != 1 {
					t.Errorf("%s: %s after %d attempts, want done after 1", k, rec.State, rec.Attempts)
				}
			}
			if fake.subs != 1 || fr.stats.Adopted != 4 {
				t.Errorf("%d submissions, %d tasks adopted; want 1 and 4", fake.subs, fr.stats.Adopted)
			}
			if fr.stats.MaxPerCycle != 1 {
				t.Errorf("max %d scheduler commands per cycle, want 1", fr.stats.MaxPerCycle)
			}
		})
	}
}

func decodeBatch(t *testing.T, table string) (config, error) {
	t.Helper()
	text := strings.SplitN(fakeSpec, "[queue]", 2)[0] + "[queue]\nkind = \"batch\"\n" + table
	spec, err := planner.Decode([]byte(text), "scan.toml")
	if err != nil {
		t.Fatal(err)
	}
	return decodeConfig(spec)
}

func TestDecodeConfig_Batch_Errors(t *testing.T) {
	tests := []struct{ table, wantKey, wantText string }{
		{"[queue.batch]\npartition = \"short\"\n", "queue.batch.scheduler", "missing"},
		{"[queue.batch]\nscheduler = \"moab\"\n", "queue.batch.scheduler", "unknown batch system"},
		{"[queue.batch]\nscheduler = \"sge\"\nextra = [\"-N other\"]\n", "queue.batch.extra", "wellscan owns"},
		{"[queue.batch]\nscheduler = \"torque\"\n[queue.batch.profile]\nstates = { Z = \"ZOMBIE\" }\n", "queue.batch.profile.states.Z", "not a state"},
		{"[queue.batch]\nscheduler = \"torque\"\n[queue.batch.profile]\nstatus_line_pattern = \"^(?P<array>[0-9]+)$\"\n", "queue.batch.profile", `no group "state"`},
		{"[queue.batch]\nscheduler = \"lsf\"\n[queue.batch.profile]\nsubmit = [\"{{.Script}}\"]\n", "queue.batch.profile.submit", "program name"},
		{"[queue.batch]\nscheduler = \"lsf\"\n[queue.batch.profile]\ntask_index_variable = \"LSB JOBINDEX\"\n", "queue.batch.profile.task_index_variable", "environment variable"},
		{"[queue.batch]\nscheduler = \"torque\"\n[[queue.batch.profile.directive]]\nwhen = \"gpus\"\ntext = \"-l gpus=1\"\n", "queue.batch.profile.directive[1].when", "unknown setting"},
		{"[queue.batch]\nscheduler = \"torque\"\n[queue.batch.profile]\nsubmitt = [\"qsub\"]\n", "queue.batch.profile.submitt", "unknown key"},
	}
	for _, tc := range tests {
		t.Run(tc.wantKey, func(t *testing.T) {
			_, err := decodeBatch(t, tc.table)
			if err == nil || !strings.Contains(err.Error(), tc.wantKey) || !strings.Contains(err.Error(), tc.wantText) || !strings.Contains(err.Error(), "scan.toml") {
				t.Errorf("DecodeConfig(%q) = %v, want an error naming scan.toml, %s and %q", tc.table, err, tc.wantKey, tc.wantText)
			}
		})
	}
	// [queue.slurm] names no other scheduler.
	text := strings.SplitN(fakeSpec, "[queue.slurm]", 2)[0] + "[queue.slurm]\nscheduler = \"lsf\"\n"
	spec, err := planner.Decode([]byte(text), "scan.toml")
	if err != nil {
		t.Fatal(err)
	}
	if _, err := decodeConfig(spec); err == nil || !strings.Contains(err.Error(), `kind = "batch"`) {
		t.Errorf("scheduler = lsf under [queue.slurm]: %v, want a pointer to kind = \"batch\"", err)
	}
}

// A site profile: Torque with its submit command behind a site wrapper,
// another queue directive and one more state word. The changed fields
// reach the script and the commands; the rest stays the preset's.
func TestDecodeConfig_Batch_SiteProfile(t *testing.T) {
	c, err := decodeBatch(t, `[queue.batch]
scheduler = "torque"
partition = "long"
[queue.batch.profile]
name = "torque-site"
submit = ["site-qsub", "--quiet", "{{.Script}}"]
states = { Q = "PENDING", R = "RUNNING", C = "COMPLETED", X = "FAILED" }
[[queue.batch.profile.directive]]
text = "-N {{.JobName}}"
[[queue.batch.profile.directive]]
text = "-t {{.First}}-{{.Last}}%{{.Throttle}}"
[[queue.batch.profile.directive]]
when = "partition"
text = "-q {{.Partition}}@site"
`)
	if err != nil {
		t.Fatal(err)
	}
	p := c.SchedulerProfile()
	if p.Name != "torque-site" || p.Submit[0] != "site-qsub" || p.TaskIndexVar != "PBS_ARRAYID" || p.States["X"] != "FAILED" {
		t.Fatalf("profile %+v", p)
	}
	if torqueProfile().Submit[0] != "qsub" {
		t.Fatal("the preset was modified")
	}
	script, err := Render(p, ScriptSpec{JobName: "ws-00000000", Token: "t1", Tasks: 3, Throttle: 2, JobDir: "/scan/jobs/t1",
		Worker: []string{"/bin/wellscan", NodeSubcommand}, Resources: c.Resources()})
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"#PBS -N ws-00000000\n", "#PBS -t 0-2%2\n", "#PBS -q long@site\n", `--task "$PBS_ARRAYID"`} {
		if !strings.Contains(string(script), want) {
			t.Errorf("script lacks %q:\n%s", want, script)
		}
	}
	cl := mustClient(t, p, &CountingRunner{Next: ExecRunner{}})
	argv, err := expandArgv(cl.Profile().Submit, map[string]any{"Script": "/scan/jobs/t1/submit.sh"}, nil)
	if err != nil || strings.Join(argv, " ") != "site-qsub --quiet /scan/jobs/t1/submit.sh" {
		t.Errorf("submit argv %q, %v", argv, err)
	}
}
