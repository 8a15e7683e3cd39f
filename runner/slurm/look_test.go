package slurm

import (
	"context"
	"slices"
	"strings"
	"testing"
	"time"

	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/model"
)

func TestLookPolicy_Next(t *testing.T) {
	p := defaultLookPolicy() // first 500 ms, 250 ms – 30 s
	ms := time.Millisecond
	for _, tc := range []struct {
		name             string
		first            bool
		age, point, cost time.Duration
		want             time.Duration
	}{
		{"first look, nothing measured", true, 0, 0, 0, 500 * ms},
		{"first look, fast points", true, 0, 10 * ms, 0, 250 * ms},
		{"first look, slow points", true, 0, time.Hour, 0, 500 * ms},
		{"unmeasured: an eighth of the age", false, 8 * time.Second, 0, 0, time.Second},
		{"unmeasured, young: the minimum", false, 400 * ms, 0, 0, 250 * ms},
		{"unmeasured, old: the ceiling", false, time.Hour, 0, 0, 30 * time.Second},
		{"measured: half a point", false, time.Hour, 20 * time.Second, 0, 10 * time.Second},
		{"measured fast points: the minimum", false, time.Hour, 10 * ms, 0, 250 * ms},
		{"hour-long points: the ceiling", false, 0, time.Hour, 0, 30 * time.Second},
		{"slow looks: 20 × their cost", false, 0, 10 * ms, 100 * ms, 2 * time.Second},
	} {
		if got := p.Next(tc.first, tc.age, tc.point, tc.cost); got != tc.want {
			t.Errorf("%s: Next(%v, %s, %s, %s) = %s, want %s", tc.name, tc.first, tc.age, tc.point, tc.cost, got, tc.want)
		}
	}
}

func TestPollPolicy_NextFor(t *testing.T) {
	p := defaultPollPolicy() // first 30 s, 60 s, ×1.5, ≤ 300 s, floor 15 s
	for _, tc := range []struct {
		prev    time.Duration
		changed bool
		task    time.Duration
		want    time.Duration
	}{
		{0, true, 0, 30 * time.Second},                // not measured: the defaults
		{0, true, time.Second, 15 * time.Second},      // short tasks: the floor
		{0, true, 20 * time.Second, 20 * time.Second}, // the expected task time
		{60 * time.Second, true, time.Hour, 60 * time.Second},
		{60 * time.Second, false, time.Second, 90 * time.Second}, // back-off is Next's
	} {
		if got := p.NextFor(tc.prev, tc.changed, tc.task); got != tc.want {
			t.Errorf("NextFor(%s, %v, %s) = %s, want %s", tc.prev, tc.changed, tc.task, got, tc.want)
		}
	}
}

func TestJobEnv_KeepsOnlyTheListedVariables(t *testing.T) {
	got := jobEnv([]string{"PATH=/usr/bin", "HOME=/home/u", "LD_LIBRARY_PATH=/opt/lib", "OMP_NUM_THREADS=8",
		"LC_ALL=C", "SBATCH_ACCOUNT=chem", "SLURM_CONF=/etc/slurm/slurm.conf", "SLURM_JOB_ID=5", "broken"})
	want := []string{"PATH=/usr/bin", "HOME=/home/u", "LC_ALL=C", "SBATCH_ACCOUNT=chem", "SLURM_CONF=/etc/slurm/slurm.conf"}
	if !slices.Equal(got, want) {
		t.Errorf("JobEnv = %q, want %q", got, want)
	}
}

func TestConfig_JobEnvironment(t *testing.T) {
	for _, tc := range []struct {
		name, table string
		export      string
		minimal     bool
	}{
		{"default: no login shell", "", "ALL", true},
		{"setup lines need the login environment", `setup = ["module load gcc"]`, "NONE", false},
		{"asked for", "login_env = true", "NONE", false},
		{"explicit export wins", `export = "NONE"`, "NONE", false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			text := strings.Replace(fakeSpec, "[queue.slurm]\n", "[queue.slurm]\n"+tc.table+"\n", 1)
			spec, err := planner.Decode([]byte(text), "scan.toml")
			if err != nil {
				t.Fatal(err)
			}
			c, err := decodeConfig(spec)
			if err != nil {
				t.Fatal(err)
			}
			res := c.Resources()
			if res.Export == "" {
				res.Export = "NONE" // as the script renders it
			}
			if res.Export != tc.export {
				t.Errorf("export %q, want %q", res.Export, tc.export)
			}
			if got := c.SubmitEnv([]string{"PATH=/bin", "SECRET=1"}); (got != nil) != tc.minimal {
				t.Errorf("submit environment %q, want minimal %v", got, tc.minimal)
			}
		})
	}
}

// instantSlurm is fakeSlurm whose tasks run on the node at submission and
// are COMPLETED from then on; it records each sbatch environment.
type instantSlurm struct {
	fakeSlurm
	envs [][]string
}

func (f *instantSlurm) Run(ctx context.Context, c Cmd) (Output, error) {
	out, err := f.fakeSlurm.Run(ctx, c)
	if c.Argv[0] != "sbatch" || err != nil || out.ExitCode != 0 {
		return out, err
	}
	f.mu.Lock()
	defer f.mu.Unlock()
	f.envs = append(f.envs, c.Env)
	for _, t := range f.tasks {
		if t.state != "PENDING" {
			continue
		}
		err := NodeTask{JobDir: t.jobDir, Task: t.index, NewBackend: func(s *planner.Spec) (runner.Backend, error) {
			return model.New(s)
		}}.Run(ctx)
		if err != nil {
			f.t.Errorf("node task %d_%d: %v", t.array, t.index, err)
		}
		t.state = "COMPLETED"
	}
	return out, nil
}

// TestQueue_Run_ResultsFoundByLooking: with scheduler polls an hour apart,
// the points are recorded from their result files alone (no poll cycle;
// the one listing is the adoption check at the start), and sbatch ran in
// the minimal job environment.
func TestQueue_Run_ResultsFoundByLooking(t *testing.T) {
	t.Setenv("WELLSCAN_TEST_LEAK", "1")
	fake := &instantSlurm{fakeSlurm: fakeSlurm{t: t, fate: func(int, int) string { return "COMPLETED" }}}
	start := time.Now()
	fr := runFakeIn(t, fakeScanDir(t), fake, false, func(q *Queue) {
		q.policy = pollPolicy{FirstDelay: time.Hour, Interval: time.Hour, Backoff: 1.5, Max: time.Hour, Floor: time.Second}
	})
	if fr.err != nil {
		t.Fatal(fr.err)
	}
	for k, rec := range fr.recs {
		if rec.State != runner.Done {
			t.Errorf("%s: %s", k, rec.State)
		}
	}
	if fr.stats.Cycles != 0 || fake.calls["squeue"] != 1 {
		t.Errorf("%d poll cycles, %d squeue calls; want 0 and 1 (the adoption listing)", fr.stats.Cycles, fake.calls["squeue"])
	}
	t.Logf("10 points in %s", time.Since(start))
	for _, env := range fake.envs {
		if env == nil || slices.ContainsFunc(env, func(e string) bool { return strings.HasPrefix(e, "WELLSCAN_TEST_LEAK=") }) {
			t.Errorf("sbatch environment %q: want the minimal one, without WELLSCAN_TEST_LEAK", env)
		}
	}
}
