package slurm

import (
	"fmt"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"wellscan/planner"
)

// config is the [queue.slurm] table of a scan spec ([queue] kind =
// "slurm"), or the [queue.batch] table ([queue] kind = "batch"), which
// adds scheduler (a preset: slurm, torque, lsf, sge) and an optional
// [queue.batch.profile] table that replaces fields of the preset. Every
// other key is optional and means the same under both.
type config struct {
	// Scheduler names the preset profile (presets); required in
	// [queue.batch], "slurm" (or absent) in [queue.slurm].
	Scheduler string `toml:"scheduler"`
	// Profile replaces fields of the preset.
	Profile *profileConfig `toml:"profile"`

	// Partition, Account and QOS are passed to Slurm as they are, after
	// validateValue.
	Partition string `toml:"partition"`
	Account   string `toml:"account"`
	QOS       string `toml:"qos"`
	// Time is the walltime of one array task ("30m", "2h"); 0 leaves the
	// partition default (and a TIMEOUT cannot then be retried with more).
	Time planner.Duration `toml:"time"`
	// CPUsPerTask and MemoryMB (MiB per node) of each array task.
	CPUsPerTask int `toml:"cpus_per_task"`
	MemoryMB    int `toml:"memory_mb"`
	// PointsPerTask is how many points one array task computes in turn;
	// 0 means sized by packSize from measured point times.
	PointsPerTask int `toml:"points_per_task"`
	// Throttle caps the array tasks running at once (%N); 0 means
	// defaultThrottle.
	Throttle int `toml:"throttle"`
	// Setup lines run in the job script before the worker, e.g.
	// "module load gcc/12".
	Setup []string `toml:"setup"`
	// Extra directives in Slurm's own syntax, e.g. "--constraint=avx2".
	Extra []string `toml:"extra"`
	// Binary is the wellscan executable as the compute nodes see it
	// (absolute); "" means this process's own executable.
	Binary string `toml:"binary"`
	// Export is the value of --export. "" chooses: with LoginEnv or Setup
	// lines, NONE (Slurm builds the job's environment by running the
	// user's login shell on the node, which setup lines such as "module
	// load" usually need); otherwise ALL, with sbatch run in the minimal
	// environment of jobEnv, so the task starts without a login shell
	// and still without the submitting shell's environment. See the
	// package README for the trade-off.
	Export string `toml:"export"`
	// LoginEnv asks for the login-shell job environment (--export=NONE)
	// even without setup lines.
	LoginEnv bool `toml:"login_env"`
	// ResultCheckMax is the longest wait between two looks at the result
	// files of the points in flight (default 30 s; see lookPolicy).
	ResultCheckMax planner.Duration `toml:"result_check_max"`
	// PollInterval is the poll interval while tasks change (default 60 s;
	// the first poll comes after min(30 s, PollInterval), the interval
	// backs off ×1.5 up to 5× PollInterval, at most 300 s). Values below
	// 15 s are refused unless FastPoll is set (tests, single-user nodes).
	PollInterval planner.Duration `toml:"poll_interval"`
	FastPoll     bool             `toml:"fast_poll"`
	// LostAfter is the grace period before a task that left the queue, or
	// ended, without a result for some point counts as lost; default 3 poll
	// intervals.
	LostAfter planner.Duration `toml:"lost_after"`

	profile *Profile
}

// SchedulerProfile is the profile the config resolved to (the Slurm preset
// for a zero config).
func (c config) SchedulerProfile() *Profile {
	if c.profile == nil {
		return Slurm()
	}
	return c.profile
}

// defaultPointsPerTask is the packing used when the spec gives none: a
// task then runs several points, which keeps submissions per point at
// 0.125 and spreads the job start-up cost (ours).
const defaultPointsPerTask = 8

// fastPollFloor is the lowest poll interval even with fast_poll.
const fastPollFloor = 100 * time.Millisecond

// decodeConfig decodes and checks [queue.slurm] of spec. Errors name the
// spec file and the key.
func decodeConfig(spec *planner.Spec) (config, error) {
	var c config
	table, prim := "queue.slurm", spec.Queue.Slurm
	if spec.Queue.Kind == "batch" {
		table, prim = "queue.batch", spec.Queue.Batch
	}
	if spec.IsDefined(strings.Split(table, ".")...) {
		if err := spec.DecodePrimitive(prim, table, &c); err != nil {
			return config{}, err
		}
	}
	bad := func(key, format string, args ...any) error {
		return fmt.Errorf("slurm: %s: %s.%s: %s", spec.File(), table, key, fmt.Sprintf(format, args...))
	}
	presets := presets()
	names := make([]string, 0, len(presets))
	for n := range presets {
		names = append(names, n)
	}
	sort.Strings(names)
	switch {
	case table == "queue.batch" && c.Scheduler == "":
		return config{}, bad("scheduler", "missing: name the batch system (%s)", strings.Join(names, ", "))
	case table == "queue.slurm" && c.Scheduler != "" && c.Scheduler != "slurm":
		return config{}, bad("scheduler", "%q under [queue.slurm]; for another batch system use [queue] kind = \"batch\" and a [queue.batch] table", c.Scheduler)
	case c.Scheduler == "":
		c.Scheduler = "slurm"
	}
	base, ok := presets[strings.ToLower(c.Scheduler)]
	if !ok {
		return config{}, bad("scheduler", "unknown batch system %q (use one of %s, and a [%s.profile] table for the differences of your site)", c.Scheduler, strings.Join(names, ", "), table)
	}
	c.profile = base
	if c.Profile != nil {
		p, err := c.Profile.Apply(base, table+".profile")
		if err != nil {
			return config{}, fmt.Errorf("slurm: %s: %w", spec.File(), err)
		}
		c.profile = p
	}
	for key, v := range map[string]string{"partition": c.Partition, "account": c.Account, "qos": c.QOS, "export": c.Export} {
		if v == "" {
			continue
		}
		if err := validateValue(key, v); err != nil {
			return config{}, bad(key, "%v", strings.TrimPrefix(err.Error(), "slurm: "))
		}
	}
	for key, v := range map[string]int{"cpus_per_task": c.CPUsPerTask, "memory_mb": c.MemoryMB, "points_per_task": c.PointsPerTask, "throttle": c.Throttle} {
		if v < 0 {
			return config{}, bad(key, "must not be negative, got %d", v)
		}
	}
	if c.PointsPerTask > 10000 {
		return config{}, bad("points_per_task", "%d is more than 10000", c.PointsPerTask)
	}
	for i, l := range c.Setup {
		if strings.ContainsAny(l, "\n\r\x00") {
			return config{}, bad("setup", "line %d contains a newline; give one line per list entry", i+1)
		}
	}
	p := c.profile
	for _, x := range c.Extra {
		if err := p.checkExtra(x); err != nil {
			return config{}, bad("extra", "%v", strings.TrimPrefix(err.Error(), "slurm: "))
		}
	}
	if c.Binary != "" && !filepath.IsAbs(c.Binary) {
		return config{}, bad("binary", "%q is not an absolute path", c.Binary)
	}
	if m := c.ResultCheckMax.Duration; m < 0 {
		return config{}, bad("result_check_max", "must not be negative, got %s", m)
	}
	if iv := c.PollInterval.Duration; iv > 0 {
		floor := defaultPollPolicy().Floor
		if c.FastPoll {
			floor = fastPollFloor
		}
		if iv < floor {
			return config{}, bad("poll_interval", "%s is below %s (set fast_poll = true only on a scheduler you own)", iv, floor)
		}
	}
	return c, nil
}

// Resources returns the per-task resources the config asks for.
func (c config) Resources() Resources {
	export := c.Export
	if c.minimalEnv() {
		export = "ALL"
	}
	return Resources{Partition: c.Partition, Account: c.Account, QOS: c.QOS, Time: c.Time.Duration,
		CPUsPerTask: c.CPUsPerTask, MemMB: c.MemoryMB, Export: export, Extra: c.Extra, Setup: c.Setup}
}

// minimalEnv reports whether jobs take the minimal environment of
// jobEnv from the submission (the default on Slurm, see Export).
func (c config) minimalEnv() bool {
	return c.Export == "" && !c.LoginEnv && len(c.Setup) == 0 && c.SchedulerProfile().Name == "slurm"
}

// SubmitEnv returns the environment the submit command runs with: the
// minimal one of jobEnv from env when jobs take their environment from
// the submission, nil (the runner's default) otherwise.
func (c config) SubmitEnv(env []string) []string {
	if c.minimalEnv() {
		return jobEnv(env)
	}
	return nil
}

// Look returns the result-file look schedule: the defaults, with
// ResultCheckMax as the longest wait when set.
func (c config) Look() lookPolicy {
	p := defaultLookPolicy()
	if m := c.ResultCheckMax.Duration; m > 0 {
		p.Max = max(m, p.Min)
		p.First = min(p.First, p.Max)
	}
	return p
}

// Policy returns the poll policy: the defaults of SOURCES.md §1, or ones
// scaled from PollInterval.
func (c config) Policy() pollPolicy {
	p := defaultPollPolicy()
	if iv := c.PollInterval.Duration; iv > 0 {
		p.Interval = iv
		p.FirstDelay = min(p.FirstDelay, iv)
		p.Max = min(5*iv, 300*time.Second)
		p.Max = max(p.Max, iv)
		if c.FastPoll {
			p.Floor = fastPollFloor
		}
	}
	return p
}

// Grace returns LostAfter, or three poll intervals.
func (c config) Grace() time.Duration {
	if c.LostAfter.Duration > 0 {
		return c.LostAfter.Duration
	}
	return 3 * c.Policy().Interval
}
