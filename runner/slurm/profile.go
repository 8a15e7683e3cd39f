package slurm

import (
	"bytes"
	"fmt"
	"regexp"
	"strings"
	"text/template"
)

// A Profile describes one batch system as data: how to write the directive
// lines of a job-array script, and which argv lists submit, query and cancel
// jobs, with the patterns that read their output. [Slurm] is the preset
// tested against a real scheduler; torqueProfile, lsfProfile and sgeProfile are written from
// the schedulers' documented syntax and checked only on sample outputs.
//
// A Profile is plain data; after it is built it must not be modified while a
// [Client] uses it. Use [Profile.Validate] after editing a copy.
type Profile struct {
	// Name identifies the profile in messages ("slurm", "lsf").
	Name string
	// Shebang is the script's first line, normally "#!/bin/bash" (environment
	// modules need bash).
	Shebang string
	// DirectivePrefix starts every directive line ("#SBATCH", "#PBS", "#BSUB", "#$").
	DirectivePrefix string
	// Directives are rendered in order; see [Directive].
	Directives []Directive
	// OwnedOptions are option names that user extra directives may not set.
	OwnedOptions []string
	// TaskIndexVar is the environment variable holding the array task index.
	TaskIndexVar string
	// FirstIndex is the first array index (0 for Slurm and Torque, 1 for LSF and SGE).
	FirstIndex int
	// OutputPattern and ErrorPattern are file names (with the scheduler's own
	// placeholders) placed in the job directory; empty means "the job
	// directory itself", for schedulers that name the files themselves.
	OutputPattern, ErrorPattern string

	// Submit is the argv template of a submission; {{.Script}} is the path.
	Submit []string
	// SubmitStdin passes the script on standard input (LSF's bsub reads
	// directives only from a script on stdin).
	SubmitStdin bool
	// JobID extracts the job id from the submit command's stdout; it must
	// have a named group "id".
	JobID string

	// Status is the argv template of the batched status query for a whole
	// scan; {{.JobName}} is the scan's job name.
	Status []string
	// StatusLine matches one line of status output. Named groups: "state"
	// (required), "id" (the task's own id), "array" (array job id), "index"
	// (task index), "reason", "name", "comment" (the submission's comment,
	// which carries the token).
	StatusLine string
	// StatusSkipUnmatched ignores lines that do not match StatusLine (headers);
	// otherwise such a line is an error.
	StatusSkipUnmatched bool
	// StatusNotFound lists texts in the status command's stderr that mean
	// "no such jobs" rather than a failure.
	StatusNotFound []string
	// NameFilter drops status lines whose "name" group does not belong to the
	// scan, for status commands that cannot filter by name themselves.
	// NameTruncate is the column width at which the scheduler cuts names (0: none).
	NameFilter   bool
	NameTruncate int
	// IndexRanges expands an index field such as "1-10:1" or "3,5" (a
	// scheduler listing pending tasks folded together).
	IndexRanges bool
	// NoIndex lists index values meaning "not an array task".
	NoIndex []string
	// States maps the scheduler's state words to Slurm's base state names,
	// which [Classify] understands. Words not in the map are "unknown".
	States map[string]string

	// Cancel is the argv template cancelling all jobs of a scan by name; nil
	// when the scheduler cannot cancel by name (then CancelByID is used).
	Cancel []string
	// CancelByID is the argv template cancelling listed jobs; the element
	// "{{.IDs}}" is replaced by the ids, at most CancelBatch of them per call.
	CancelByID  []string
	CancelBatch int

	// History is the optional argv template of a bounded accounting query
	// ({{.JobName}}, {{.Since}}); nil when the profile has none.
	History []string
	// HistoryLine matches one line of history output, groups as StatusLine
	// plus "exit". Non-matching lines are skipped.
	HistoryLine string
	// HistoryDisabled is a text in stderr meaning "this site keeps no
	// accounting": the poller then stops asking for the rest of the run.
	HistoryDisabled string
}

// A Directive is one directive line template, rendered after DirectivePrefix
// and a space. When names the setting that must be present for the line to
// appear: "" (always), or one of partition, time, cpus, mem, account, qos,
// comment, export, signal. A setting the user gave that no directive of the
// profile uses is an error, so a value is never dropped silently; comment,
// export and signal are policy settings of wellscan and are skipped quietly
// by profiles that lack them.
type Directive struct {
	When string
	Text string
}

// settings the user sets in Resources; a profile must render these if set.
var userSettings = []string{"partition", "time", "cpus", "mem", "account", "qos"}

// validate checks that the profile's templates parse and its patterns have
// the groups the parsers need.
func (p *Profile) validate() error {
	if p.Name == "" {
		return fmt.Errorf("slurm: profile has no name")
	}
	if p.DirectivePrefix == "" || p.TaskIndexVar == "" {
		return fmt.Errorf("slurm: profile %s: directive prefix and task index variable are required", p.Name)
	}
	if len(p.Submit) == 0 || len(p.Status) == 0 {
		return fmt.Errorf("slurm: profile %s: submit and status commands are required", p.Name)
	}
	if len(p.Cancel) == 0 && len(p.CancelByID) == 0 {
		return fmt.Errorf("slurm: profile %s: a cancel command (by name or by id) is required", p.Name)
	}
	for _, d := range p.Directives {
		if _, err := newTemplate("directive", d.Text); err != nil {
			return fmt.Errorf("slurm: profile %s: directive %q: %w", p.Name, d.Text, err)
		}
	}
	for _, group := range [][]string{p.Submit, p.Status, p.Cancel, p.CancelByID, p.History} {
		for _, a := range group {
			if _, err := newTemplate("argv", a); err != nil {
				return fmt.Errorf("slurm: profile %s: command word %q: %w", p.Name, a, err)
			}
		}
	}
	checks := []struct {
		what, re string
		need     []string
	}{
		{"job id pattern", p.JobID, []string{"id"}},
		{"status line pattern", p.StatusLine, []string{"state"}},
	}
	if len(p.History) > 0 {
		checks = append(checks, struct {
			what, re string
			need     []string
		}{"history line pattern", p.HistoryLine, []string{"state"}})
	}
	for _, c := range checks {
		re, err := regexp.Compile(c.re)
		if err != nil {
			return fmt.Errorf("slurm: profile %s: %s: %w", p.Name, c.what, err)
		}
		for _, g := range c.need {
			if re.SubexpIndex(g) < 0 {
				return fmt.Errorf("slurm: profile %s: %s %q has no group %q", p.Name, c.what, c.re, g)
			}
		}
	}
	if p.NameFilter && regexp.MustCompile(p.StatusLine).SubexpIndex("name") < 0 {
		return fmt.Errorf("slurm: profile %s: name filter needs a \"name\" group in the status line pattern", p.Name)
	}
	return nil
}

func newTemplate(name, text string) (*template.Template, error) {
	return template.New(name).Option("missingkey=error").Parse(text)
}

// expandArgv renders each argv template word with data. A word that is
// exactly "{{.IDs}}" is replaced by the ids, one argv element each.
func expandArgv(words []string, data map[string]any, ids []string) ([]string, error) {
	out := make([]string, 0, len(words)+len(ids))
	for _, w := range words {
		if w == "{{.IDs}}" {
			out = append(out, ids...)
			continue
		}
		t, err := newTemplate("argv", w)
		if err != nil {
			return nil, fmt.Errorf("slurm: command word %q: %w", w, err)
		}
		var b bytes.Buffer
		if err := t.Execute(&b, data); err != nil {
			return nil, fmt.Errorf("slurm: command word %q: %w", w, err)
		}
		out = append(out, b.String())
	}
	return out, nil
}

// Slurm returns the Slurm preset: directives in the script, `sbatch
// --parsable FILE`, one `squeue -h -r -t all --name=…` per cycle, `sacct -X -P`
// for tasks that left the queue, `scancel --name=…`. Tested live against
// Slurm 22.05 (tests behind the build tag `slurm`).
func Slurm() *Profile {
	return &Profile{
		Name:            "slurm",
		Shebang:         "#!/bin/bash",
		DirectivePrefix: "#SBATCH",
		Directives: []Directive{
			{"", "--job-name={{.JobName}}"},
			{"", "--array={{.First}}-{{.Last}}%{{.Throttle}}"},
			{"comment", "--comment={{.Comment}}"},
			{"partition", "--partition={{.Partition}}"},
			{"time", "--time={{.TimeDHMS}}"},
			{"cpus", "--cpus-per-task={{.CPUs}}"},
			{"mem", "--mem={{.MemMB}}M"},
			{"account", "--account={{.Account}}"},
			{"qos", "--qos={{.QOS}}"},
			{"export", "--export={{.Export}}"},
			{"", "{{if .Requeue}}--requeue{{else}}--no-requeue{{end}}"},
			{"signal", "--signal=B:USR1@{{.SignalSecs}}"},
			{"", "--output={{.Output}}"},
			{"", "--error={{.Error}}"},
		},
		OwnedOptions:  []string{"--job-name", "-J", "--array", "-a", "--comment", "--output", "-o", "--error", "-e", "--wrap", "--export"},
		TaskIndexVar:  "SLURM_ARRAY_TASK_ID",
		FirstIndex:    0,
		OutputPattern: "slurm-%A_%a.out",
		ErrorPattern:  "slurm-%A_%a.err",
		Submit:        []string{"sbatch", "--parsable", "{{.Script}}"},
		// "123" or "123;cluster" (sbatch man, --parsable).
		JobID:      `^(?P<id>[0-9]+)(?:;\S+)?$`,
		Status:     []string{"squeue", "--me", "-h", "-r", "-t", "all", "--name={{.JobName}}", "-o", "%i|%A|%F|%K|%T|%r|%k"},
		StatusLine: `^(?P<display>[^|]*)\|(?P<id>[^|]*)\|(?P<array>[^|]*)\|(?P<index>[^|]*)\|(?P<state>[^|]*)\|(?P<reason>[^|]*)(?:\|(?P<comment>.*))?$`,
		// After MinJobAge a job id is unknown to the controller (SOURCES.md §4).
		StatusNotFound: []string{"Invalid job id specified"},
		NoIndex:        []string{"N/A"},
		States:         slurmStates(),
		Cancel:         []string{"scancel", "--me", "--name={{.JobName}}"},
		CancelByID:     []string{"scancel", "{{.IDs}}"},
		CancelBatch:    100,
		History: []string{"sacct", "-X", "-P", "-n", "--name={{.JobName}}", "-S", "{{.Since}}", "-E", "now",
			"-o", "JobIDRaw,JobID,State,ExitCode"},
		// JobID is "A_T" for an array task and "A" for a plain job; pending
		// array ranges ("A_[3-9%2]") do not match and are skipped.
		HistoryLine:     `^(?P<id>[0-9]+)\|(?P<array>[0-9]+)(?:_(?P<index>[0-9]+))?\|(?P<state>[^|]*)\|(?P<exit>[^|]*)$`,
		HistoryDisabled: "accounting storage is disabled",
	}
}

// slurmStates maps Slurm's state names, base states and the flags squeue and
// sacct show in their place (job_state_codes), onto themselves.
func slurmStates() map[string]string {
	m := map[string]string{}
	for _, s := range []string{
		"PENDING", "RUNNING", "SUSPENDED", "COMPLETING", "COMPLETED", "CONFIGURING", "CANCELLED",
		"FAILED", "TIMEOUT", "PREEMPTED", "NODE_FAIL", "BOOT_FAIL", "DEADLINE", "OUT_OF_MEMORY",
		"REQUEUED", "REQUEUE_FED", "REQUEUE_HOLD", "RESIZING", "REVOKED", "SIGNALING", "SPECIAL_EXIT",
		"STAGE_OUT", "STOPPED", "LAUNCH_FAILED", "RECONFIG_FAIL", "POWER_UP_NODE", "RESV_DEL_HOLD",
	} {
		m[s] = s
	}
	return m
}

// torqueProfile returns a PBS/Torque-like preset (`#PBS`, `qsub FILE`, `-t 0-N%T`
// arrays, `qstat -t` table filtered by name, `qdel` by id). Not tested against
// a real scheduler: only its rendering and parsing of invented sample outputs
// are tested. PBS Pro differs (`-J 0-N` arrays without a throttle, `qstat -x`
// for finished jobs); copy and edit the profile for it.
func torqueProfile() *Profile {
	return &Profile{
		Name:            "torque",
		Shebang:         "#!/bin/bash",
		DirectivePrefix: "#PBS",
		Directives: []Directive{
			{"", "-N {{.JobName}}"},
			{"", "-t {{.First}}-{{.Last}}%{{.Throttle}}"},
			{"partition", "-q {{.Partition}}"},
			{"time", "-l walltime={{.TimeHMS}}"},
			{"cpus", "-l nodes=1:ppn={{.CPUs}}"},
			{"mem", "-l mem={{.MemMB}}mb"},
			{"account", "-A {{.Account}}"},
			{"", "-r {{if .Requeue}}y{{else}}n{{end}}"},
			{"", "-o {{.Output}}"},
			{"", "-e {{.Error}}"},
		},
		OwnedOptions: []string{"-N", "-t", "-o", "-e", "-J"},
		TaskIndexVar: "PBS_ARRAYID",
		FirstIndex:   0,
		Submit:       []string{"qsub", "{{.Script}}"},
		// "123[].server" for an array.
		JobID:  `^(?P<id>[0-9]+)(?:\[\])?(?:\.\S*)?$`,
		Status: []string{"qstat", "-t"},
		// "123[4].server  ws-1a2b3c4d-4  user  00:00:01 R batch"
		StatusLine:          `^(?P<array>[0-9]+)(?:\[(?P<index>[0-9]+)\])?(?:\.\S*)?\s+(?P<name>\S+)\s+\S+\s+\S+\s+(?P<state>[A-Z])\s+\S+\s*$`,
		StatusSkipUnmatched: true,
		StatusNotFound:      []string{"Unknown Job Id"},
		NameFilter:          true,
		NameTruncate:        16,
		States: map[string]string{
			"Q": "PENDING", "W": "PENDING", "T": "PENDING", "H": "PENDING", "M": "PENDING",
			"R": "RUNNING", "B": "RUNNING", "E": "COMPLETING", "S": "SUSPENDED",
			"C": "COMPLETED", "F": "COMPLETED", "X": "COMPLETED",
		},
		CancelByID:  []string{"qdel", "{{.IDs}}"},
		CancelBatch: 100,
	}
}

// lsfProfile returns an LSF-like preset (`#BSUB`, `bsub < FILE`, `-J "name[1-N]%T"`
// arrays, `bjobs -o` with a delimiter, `bkill -J`). Not tested against a real
// scheduler: only its rendering and parsing of invented sample outputs are
// tested. Memory is given with an explicit unit because LSF's default unit is
// site configuration (LSF_UNIT_FOR_LIMITS).
func lsfProfile() *Profile {
	return &Profile{
		Name:            "lsf",
		Shebang:         "#!/bin/bash",
		DirectivePrefix: "#BSUB",
		Directives: []Directive{
			{"", `-J "{{.JobName}}[{{.First}}-{{.Last}}]%{{.Throttle}}"`},
			{"partition", "-q {{.Partition}}"},
			{"time", "-W {{.TimeMinutes}}"},
			{"cpus", "-n {{.CPUs}}"},
			{"mem", "-M {{.MemMB}}MB"},
			{"account", "-P {{.Account}}"},
			{"", "{{if .Requeue}}-r{{else}}-rn{{end}}"},
			{"", "-o {{.Output}}"},
			{"", "-e {{.Error}}"},
		},
		OwnedOptions:  []string{"-J", "-o", "-e", "-oo", "-eo"},
		TaskIndexVar:  "LSB_JOBINDEX",
		FirstIndex:    1,
		OutputPattern: "task-%J_%I.out",
		ErrorPattern:  "task-%J_%I.err",
		Submit:        []string{"bsub"},
		SubmitStdin:   true,
		JobID:         `Job <(?P<id>[0-9]+)> is submitted`,
		Status:        []string{"bjobs", "-a", "-noheader", "-J", "{{.JobName}}", "-o", "jobid jobindex stat delimiter='|'"},
		StatusLine:    `^(?P<array>[0-9]+)\|(?P<index>[0-9]+)\|(?P<state>[A-Z]+)$`,
		// "Job <name> is not found" goes to stderr (SOURCES.md §10).
		StatusNotFound: []string{"is not found", "No matching job found"},
		NoIndex:        []string{"0"},
		States: map[string]string{
			"PEND": "PENDING", "WAIT": "PENDING", "PROV": "PENDING",
			"RUN": "RUNNING", "PSUSP": "SUSPENDED", "USUSP": "SUSPENDED", "SSUSP": "SUSPENDED",
			"DONE": "COMPLETED", "EXIT": "FAILED",
		},
		Cancel:      []string{"bkill", "-J", "{{.JobName}}", "0"},
		CancelByID:  []string{"bkill", "{{.IDs}}"},
		CancelBatch: 100,
	}
}

// sgeProfile returns an SGE-like preset (`#$`, `qsub -terse FILE`, `-t 1-N` with
// `-tc T`, the `qstat` table filtered by name, `qdel NAME`). Not tested
// against a real scheduler: only its rendering and parsing of invented sample
// outputs are tested. The parallel environment name ("smp") and whether
// h_vmem is per slot are site configuration; edit a copy of the profile.
// Finished jobs leave qstat at once, so only result files tell the outcome.
func sgeProfile() *Profile {
	return &Profile{
		Name:            "sge",
		Shebang:         "#!/bin/bash",
		DirectivePrefix: "#$",
		Directives: []Directive{
			{"", "-S /bin/bash"},
			{"", "-N {{.JobName}}"},
			{"", "-t {{.First}}-{{.Last}}"},
			{"", "-tc {{.Throttle}}"},
			{"partition", "-q {{.Partition}}"},
			{"time", "-l h_rt={{.TimeHMS}}"},
			{"cpus", "-pe smp {{.CPUs}}"},
			{"mem", "-l h_vmem={{.MemMB}}M"},
			{"account", "-P {{.Account}}"},
			{"", "-r {{if .Requeue}}y{{else}}n{{end}}"},
			{"", "-o {{.Output}}"},
			{"", "-e {{.Error}}"},
		},
		OwnedOptions: []string{"-N", "-t", "-tc", "-o", "-e", "-S"},
		TaskIndexVar: "SGE_TASK_ID",
		FirstIndex:   1,
		Submit:       []string{"qsub", "-terse", "{{.Script}}"},
		// -terse prints "123.1-10:1" for an array.
		JobID:  `^(?P<id>[0-9]+)(?:\.\S+)?$`,
		Status: []string{"qstat"},
		// "  123 0.55500 ws-1a2b3c4 user  r  05/01/2026 10:00:00 all.q@node1  1 4"
		// Pending lines have no queue, and fold their indexes ("1-10:1").
		StatusLine:          `^\s*(?P<array>[0-9]+)\s+[0-9.]+\s+(?P<name>\S+)\s+\S+\s+(?P<state>[A-Za-z]+)\s+[0-9/]+\s+[0-9:]+\s+(?:\S+@\S+\s+)?[0-9]+(?:\s+(?P<index>[0-9,:-]+))?\s*$`,
		StatusSkipUnmatched: true,
		NameFilter:          true,
		NameTruncate:        10,
		IndexRanges:         true,
		States: map[string]string{
			"qw": "PENDING", "hqw": "PENDING", "hRwq": "PENDING", "Rq": "PENDING",
			"r": "RUNNING", "t": "RUNNING", "Rr": "RUNNING", "Rt": "RUNNING",
			"s": "SUSPENDED", "S": "SUSPENDED", "T": "SUSPENDED", "ts": "SUSPENDED",
			"dr": "COMPLETING", "dt": "COMPLETING", "dqw": "CANCELLED",
			"Eqw": "REQUEUE_HOLD",
		},
		Cancel:      []string{"qdel", "{{.JobName}}"},
		CancelByID:  []string{"qdel", "{{.IDs}}"},
		CancelBatch: 100,
	}
}

// presets returns the built-in profiles by name.
func presets() map[string]*Profile {
	return map[string]*Profile{"slurm": Slurm(), "torque": torqueProfile(), "lsf": lsfProfile(), "sge": sgeProfile()}
}

// nameBelongs reports whether a name shown by a status command belongs to the
// scan's job name, allowing for schedulers that cut names at a column width
// or append an index ("ws-1a2b3c4d-4").
func (p *Profile) nameBelongs(shown, jobName string) bool {
	if shown == jobName || strings.HasPrefix(shown, jobName+"-") || strings.HasPrefix(shown, jobName+"[") {
		return true
	}
	if p.NameTruncate > 0 && len(shown) >= p.NameTruncate && strings.HasPrefix(jobName, shown) {
		return true
	}
	return false
}

// DisplayName is how messages name the scheduler of profile name: the
// presets as their vendors write them, other profiles by their own name.
func DisplayName(name string) string {
	if d, ok := map[string]string{"slurm": "Slurm", "torque": "Torque", "lsf": "LSF", "sge": "SGE"}[name]; ok {
		return d
	}
	return name
}
