package slurm

import (
	"bytes"
	"fmt"
	"path/filepath"
	"slices"
	"text/template"
	"time"
)

// Resources is what each array task asks the scheduler for. The zero value
// asks for nothing beyond the site defaults, with no requeue.
type Resources struct {
	// Partition (Slurm), queue (others). Validated with validateValue.
	Partition string
	// Time is the walltime per array task; 0 means the partition default.
	// Rendered in whole minutes, rounded up (Slurm has minute resolution).
	Time time.Duration
	// CPUsPerTask is the number of CPUs per array task; 0 means the default.
	CPUsPerTask int
	// MemMB is the memory per node in MiB; 0 means the default.
	MemMB int
	// Account and QOS are validated with validateValue.
	Account, QOS string
	// Export is the value of --export; "" means "NONE", so the login shell's
	// environment does not leak into the job.
	Export string
	// Requeue lets the scheduler requeue the task after a node failure
	// (--requeue); false gives a final NODE_FAIL instead (--no-requeue).
	Requeue bool
	// SignalBefore asks for SIGUSR1 to the batch shell (the worker, which
	// replaces it by exec) this long before the time limit; 0 means none.
	SignalBefore time.Duration
	// Extra directives in the scheduler's own syntax ("--gres=gpu:1"),
	// checked by Profile.checkExtra; they may not set options wellscan owns.
	Extra []string
	// Setup lines run before the worker, verbatim, as shell — for example
	// "module purge" and "module load gcc/12". They are the user's own shell
	// code by intent; each must be one line.
	Setup []string
}

// ScriptSpec is everything one job-array script needs.
type ScriptSpec struct {
	// JobName is the scan-unique job name ([JobNameFor]).
	JobName string
	// Token identifies this submission (for example "<scan8>-r3-1"); it goes
	// into --comment as "ws:<token>" so an interrupted submit can be adopted.
	Token string
	// Tasks is the number of array tasks (manifest lines); Throttle caps how
	// many run at once (0 means 100, ours, SOURCES.md §2).
	Tasks, Throttle int
	// JobDir is the directory of this submission (jobs/<id>/); the script,
	// the manifest and the scheduler's output files live there.
	JobDir string
	// Worker is the argv of the compute-node side: the wellscan binary (an
	// absolute path) and its worker subcommand words. The script appends
	// --job-dir JOBDIR --task "$<task index variable>".
	Worker []string
	// Resources of each array task.
	Resources Resources
}

// defaultThrottle is the %N throttle used when a ScriptSpec gives none
// (ours, SOURCES.md §2).
const defaultThrottle = 100

// scriptData feeds the directive templates; every field is already
// validated or numeric when it is built.
type scriptData struct {
	JobName                  string
	First, Last, Throttle    int
	Comment                  string
	Partition, Account, QOS  string
	Export                   string
	TimeDHMS, TimeHMS        string
	TimeMinutes              int
	CPUs, MemMB              int
	Requeue                  bool
	SignalSecs               int
	Output, Error            string
	set                      map[string]bool
	directivePrefix, shebang string
}

// ceilMinutes rounds a duration up to whole minutes.
func ceilMinutes(d time.Duration) int {
	return int((d + time.Minute - 1) / time.Minute)
}

func (s *ScriptSpec) data(p *Profile) (*scriptData, error) {
	if err := validateValue("job name", s.JobName); err != nil {
		return nil, err
	}
	if s.Token != "" {
		if err := validateValue("submission token", s.Token); err != nil {
			return nil, err
		}
	}
	if s.Tasks < 1 {
		return nil, fmt.Errorf("slurm: job %s: %d array tasks; need at least 1", s.JobName, s.Tasks)
	}
	throttle := s.Throttle
	if throttle == 0 {
		throttle = defaultThrottle
	}
	if throttle < 0 {
		return nil, fmt.Errorf("slurm: job %s: throttle %d is negative", s.JobName, throttle)
	}
	if !filepath.IsAbs(s.JobDir) {
		return nil, fmt.Errorf("slurm: job %s: job directory %q is not absolute", s.JobName, s.JobDir)
	}
	if err := validatePathForDirective("job directory", s.JobDir); err != nil {
		return nil, err
	}
	if len(s.Worker) == 0 || !filepath.IsAbs(s.Worker[0]) {
		return nil, fmt.Errorf("slurm: job %s: worker command must start with an absolute path to the wellscan binary, got %q", s.JobName, s.Worker)
	}
	for _, w := range s.Worker {
		if err := noNewline("worker argument", w); err != nil {
			return nil, err
		}
	}
	r := s.Resources
	d := &scriptData{
		JobName: s.JobName, First: p.FirstIndex, Last: p.FirstIndex + s.Tasks - 1, Throttle: throttle,
		Partition: r.Partition, Account: r.Account, QOS: r.QOS, Export: r.Export,
		CPUs: r.CPUsPerTask, MemMB: r.MemMB, Requeue: r.Requeue,
		set: map[string]bool{}, directivePrefix: p.DirectivePrefix, shebang: p.Shebang,
	}
	if s.Token != "" {
		d.Comment = "ws:" + s.Token
		d.set["comment"] = true
	}
	for what, v := range map[string]string{"partition": r.Partition, "account": r.Account, "qos": r.QOS} {
		if v == "" {
			continue
		}
		if err := validateValue(what, v); err != nil {
			return nil, err
		}
		d.set[what] = true
	}
	if d.Export == "" {
		d.Export = "NONE"
	}
	if err := validateValue("export", d.Export); err != nil {
		return nil, err
	}
	d.set["export"] = true
	if r.Time < 0 || r.CPUsPerTask < 0 || r.MemMB < 0 || r.SignalBefore < 0 {
		return nil, fmt.Errorf("slurm: job %s: time, CPUs, memory and signal lead time may not be negative", s.JobName)
	}
	if r.Time > 0 {
		m := ceilMinutes(r.Time)
		d.TimeMinutes = m
		d.TimeDHMS = fmt.Sprintf("%d-%02d:%02d:00", m/(24*60), m/60%24, m%60)
		d.TimeHMS = fmt.Sprintf("%02d:%02d:00", m/60, m%60)
		d.set["time"] = true
	}
	if r.CPUsPerTask > 0 {
		d.set["cpus"] = true
	}
	if r.MemMB > 0 {
		d.set["mem"] = true
	}
	if r.SignalBefore > 0 {
		d.SignalSecs = int((r.SignalBefore + time.Second - 1) / time.Second)
		d.set["signal"] = true
	}
	d.Output = s.JobDir
	if p.OutputPattern != "" {
		d.Output = s.JobDir + "/" + p.OutputPattern
	}
	d.Error = s.JobDir
	if p.ErrorPattern != "" {
		d.Error = s.JobDir + "/" + p.ErrorPattern
	}
	return d, nil
}

// Render returns the job-array script for spec under profile p: shebang,
// directive lines, `set -euo pipefail`, the setup lines, and
// `exec WORKER... --job-dir DIR --task "$INDEXVAR"`. Every value is validated
// before it reaches the script, every body word is shell-quoted, and a
// setting the profile cannot express is an error.
func Render(p *Profile, spec ScriptSpec) ([]byte, error) {
	d, err := spec.data(p)
	if err != nil {
		return nil, err
	}
	used := map[string]bool{}
	var lines []string
	for _, dir := range p.Directives {
		used[dir.When] = true
		if dir.When != "" && !d.set[dir.When] {
			continue
		}
		t, err := newTemplate("directive", dir.Text)
		if err != nil {
			return nil, fmt.Errorf("slurm: profile %s: directive %q: %w", p.Name, dir.Text, err)
		}
		var b bytes.Buffer
		if err := t.Execute(&b, d); err != nil {
			return nil, fmt.Errorf("slurm: profile %s: directive %q: %w", p.Name, dir.Text, err)
		}
		lines = append(lines, b.String())
	}
	for _, s := range userSettings {
		if d.set[s] && !used[s] {
			return nil, fmt.Errorf("slurm: profile %s cannot express the %s setting; remove it or add a directive to the profile", p.Name, s)
		}
	}
	for _, x := range spec.Resources.Extra {
		if err := p.checkExtra(x); err != nil {
			return nil, err
		}
		lines = append(lines, x)
	}
	for _, l := range spec.Resources.Setup {
		if err := noNewline("setup line", l); err != nil {
			return nil, err
		}
	}
	var b bytes.Buffer
	err = scriptTemplate.Execute(&b, map[string]any{
		"Shebang":    p.Shebang,
		"Prefix":     p.DirectivePrefix,
		"Directives": lines,
		"Setup":      spec.Resources.Setup,
		"Worker":     spec.Worker,
		"JobDir":     spec.JobDir,
		"IndexVar":   p.TaskIndexVar,
		"Profile":    p.Name,
	})
	if err != nil {
		return nil, fmt.Errorf("slurm: render script for %s: %w", spec.JobName, err)
	}
	return b.Bytes(), nil
}

// checkExtra checks one user extra directive for this profile: the syntax of
// validateExtraSyntax, and no option that wellscan owns (job name, array,
// comment, output and error files, export): overriding them would lose the
// scan's jobs, tasks or logs.
func (p *Profile) checkExtra(d string) error {
	name, err := validateExtraSyntax(d)
	if err != nil {
		return err
	}
	if slices.Contains(p.OwnedOptions, name) {
		return fmt.Errorf("slurm: extra directive %q sets %s, which wellscan owns (profile %s)", d, name, p.Name)
	}
	return nil
}

// scriptTemplate is parsed once; it is read-only after that.
var scriptTemplate = template.Must(template.New("script").Option("missingkey=error").
	Funcs(template.FuncMap{"shq": shq}).Parse(`{{.Shebang}}
# Job-array script written by wellscan (profile {{.Profile}}); the point keys of
# each task are in tasks.tsv next to this file.
{{range .Directives}}{{$.Prefix}} {{.}}
{{end -}}
set -euo pipefail
{{range .Setup}}{{.}}
{{end -}}
exec{{range .Worker}} {{shq .}}{{end}} --job-dir {{shq .JobDir}} --task "${{.IndexVar}}"
`))
