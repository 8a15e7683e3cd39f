package slurm

import (
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

func testSpec(dir string) ScriptSpec {
	return ScriptSpec{
		JobName:  "ws-1a2b3c4d",
		Token:    "1a2b3c4d-r1-1",
		Tasks:    3,
		Throttle: 2,
		JobDir:   dir,
		Worker:   []string{"/opt/wellscan/bin/wellscan", "node-run"},
		Resources: Resources{
			Partition:    "debug",
			Time:         90 * time.Second,
			CPUsPerTask:  2,
			MemMB:        512,
			Account:      "chem-lab",
			QOS:          "normal",
			SignalBefore: 300 * time.Second,
			Extra:        []string{"--constraint=avx2", "--exclude=node[01-02]"},
			Setup:        []string{"module purge", "module load gcc/12"},
		},
	}
}

func TestRender_Slurm_FullSpec(t *testing.T) {
	got, err := Render(Slurm(), testSpec("/scans/co/jobs/r1-1"))
	if err != nil {
		t.Fatal(err)
	}
	want := `#!/bin/bash
# Job-array script written by wellscan (profile slurm); the point keys of
# each task are in tasks.tsv next to this file.
#SBATCH --job-name=ws-1a2b3c4d
#SBATCH --array=0-2%2
#SBATCH --comment=ws:1a2b3c4d-r1-1
#SBATCH --partition=debug
#SBATCH --time=0-00:02:00
#SBATCH --cpus-per-task=2
#SBATCH --mem=512M
#SBATCH --account=chem-lab
#SBATCH --qos=normal
#SBATCH --export=NONE
#SBATCH --no-requeue
#SBATCH --signal=B:USR1@300
#SBATCH --output=/scans/co/jobs/r1-1/slurm-%A_%a.out
#SBATCH --error=/scans/co/jobs/r1-1/slurm-%A_%a.err
#SBATCH --constraint=avx2
#SBATCH --exclude=node[01-02]
set -euo pipefail
module purge
module load gcc/12
exec '/opt/wellscan/bin/wellscan' 'node-run' --job-dir '/scans/co/jobs/r1-1' --task "$SLURM_ARRAY_TASK_ID"
`
	if string(got) != want {
		t.Errorf("Render =\n%s\nwant\n%s", got, want)
	}
}

func TestRender_Slurm_MinimalSpec(t *testing.T) {
	spec := ScriptSpec{JobName: "ws-00000000", Tasks: 1, JobDir: "/j", Worker: []string{"/w"}, Resources: Resources{Requeue: true}}
	got, err := Render(Slurm(), spec)
	if err != nil {
		t.Fatal(err)
	}
	s := string(got)
	for _, want := range []string{"--array=0-0%100\n", "--requeue\n", "--export=NONE\n"} {
		if !strings.Contains(s, want) {
			t.Errorf("minimal script lacks %q:\n%s", want, s)
		}
	}
	for _, absent := range []string{"--partition", "--time", "--mem", "--comment", "--signal", "--no-requeue"} {
		if strings.Contains(s, absent) {
			t.Errorf("minimal script has %q:\n%s", absent, s)
		}
	}
}

func TestRender_Time_Formatting(t *testing.T) {
	tests := []struct {
		d          time.Duration
		dhms, hms  string
		minutesLSF string
	}{
		{30 * time.Second, "0-00:01:00", "00:01:00", "1"}, // Slurm rounds up to whole minutes (SOURCES.md §11)
		{time.Minute, "0-00:01:00", "00:01:00", "1"},
		{61 * time.Second, "0-00:02:00", "00:02:00", "2"},
		{25*time.Hour + 30*time.Minute, "1-01:30:00", "25:30:00", "1530"},
	}
	for _, tc := range tests {
		spec := ScriptSpec{JobName: "ws-00000000", Tasks: 1, JobDir: "/j", Worker: []string{"/w"}, Resources: Resources{Time: tc.d}}
		for _, c := range []struct {
			p    *Profile
			want string
		}{
			{Slurm(), "--time=" + tc.dhms + "\n"},
			{torqueProfile(), "-l walltime=" + tc.hms + "\n"},
			{sgeProfile(), "-l h_rt=" + tc.hms + "\n"},
			{lsfProfile(), "-W " + tc.minutesLSF + "\n"},
		} {
			got, err := Render(c.p, spec)
			if err != nil {
				t.Fatal(err)
			}
			if !strings.Contains(string(got), c.want) {
				t.Errorf("%s time %s: script lacks %q:\n%s", c.p.Name, tc.d, c.want, got)
			}
		}
	}
}

// The rendered body is run by bash with a hostile worker argument and job
// directory: the worker must receive exactly the argv we meant.
func TestRender_Body_QuotingSurvivesBash(t *testing.T) {
	bash, err := exec.LookPath("bash")
	if err != nil {
		t.Skip("bash not found")
	}
	dir := t.TempDir()
	argsFile := filepath.Join(dir, "args")
	worker := filepath.Join(dir, "worker.sh")
	// The fake worker writes each argument on its own line.
	if err := os.WriteFile(worker, []byte("#!/bin/sh\nfor a in \"$@\"; do printf '%s\\n' \"$a\"; done > \""+argsFile+"\"\n"), 0o755); err != nil {
		t.Fatal(err)
	}
	hostile := `it's $(touch pwned) "q" ` + "`x` \\ ; | & $HOME"
	spec := ScriptSpec{JobName: "ws-00000000", Tasks: 1, JobDir: dir, Worker: []string{worker, hostile}}
	script, err := Render(Slurm(), spec)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, "submit.sh")
	if err := os.WriteFile(path, script, 0o644); err != nil {
		t.Fatal(err)
	}
	cmd := exec.CommandContext(t.Context(), bash, path)
	cmd.Dir = dir
	cmd.Env = append(os.Environ(), "SLURM_ARRAY_TASK_ID=2")
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("bash submit.sh: %v\n%s", err, out)
	}
	got, err := os.ReadFile(argsFile)
	if err != nil {
		t.Fatal(err)
	}
	want := hostile + "\n--job-dir\n" + dir + "\n--task\n2\n"
	if string(got) != want {
		t.Errorf("worker argv =\n%q\nwant\n%q", got, want)
	}
	if _, err := os.Stat(filepath.Join(dir, "pwned")); err == nil {
		t.Error("command substitution in a worker argument was executed")
	}
}

func TestRender_Validation_Rejects(t *testing.T) {
	tests := []struct {
		name   string
		modify func(*ScriptSpec)
		want   string
	}{
		{"partition with space", func(s *ScriptSpec) { s.Resources.Partition = "a b" }, "partition"},
		{"partition with semicolon", func(s *ScriptSpec) { s.Resources.Partition = "a;b" }, "partition"},
		{"account with newline", func(s *ScriptSpec) { s.Resources.Account = "a\n#SBATCH --x" }, "account"},
		{"qos with quote", func(s *ScriptSpec) { s.Resources.QOS = `a"b` }, "qos"},
		{"job name with slash", func(s *ScriptSpec) { s.JobName = "ws/x" }, "job name"},
		{"token with space", func(s *ScriptSpec) { s.Token = "t 1" }, "token"},
		{"extra sets job name", func(s *ScriptSpec) { s.Resources.Extra = []string{"--job-name=evil"} }, "owns"},
		{"extra sets array", func(s *ScriptSpec) { s.Resources.Extra = []string{"--array=0-9"} }, "owns"},
		{"extra sets comment", func(s *ScriptSpec) { s.Resources.Extra = []string{"--comment=x"} }, "owns"},
		{"extra short job name", func(s *ScriptSpec) { s.Resources.Extra = []string{"-J evil"} }, "owns"},
		{"extra sets export", func(s *ScriptSpec) { s.Resources.Extra = []string{"--export=ALL"} }, "owns"},
		{"extra with newline", func(s *ScriptSpec) { s.Resources.Extra = []string{"--gres=gpu:1\nrm -rf /"} }, "newline"},
		{"extra not an option", func(s *ScriptSpec) { s.Resources.Extra = []string{"rm"} }, "want --option"},
		{"extra value with space", func(s *ScriptSpec) { s.Resources.Extra = []string{"--constraint=a b"} }, "value"},
		{"setup with newline", func(s *ScriptSpec) { s.Resources.Setup = []string{"module load a\nexit 0"} }, "newline"},
		{"worker argument with newline", func(s *ScriptSpec) { s.Worker = append(s.Worker, "a\nb") }, "newline"},
		{"relative worker", func(s *ScriptSpec) { s.Worker = []string{"wellscan", "node-run"} }, "absolute"},
		{"no worker", func(s *ScriptSpec) { s.Worker = nil }, "absolute"},
		{"relative job dir", func(s *ScriptSpec) { s.JobDir = "jobs/1" }, "not absolute"},
		{"job dir with space", func(s *ScriptSpec) { s.JobDir = "/my scans/jobs/1" }, "whitespace"},
		{"job dir with percent", func(s *ScriptSpec) { s.JobDir = "/scans/%A" }, "%"},
		{"no tasks", func(s *ScriptSpec) { s.Tasks = 0 }, "at least 1"},
		{"negative throttle", func(s *ScriptSpec) { s.Throttle = -1 }, "negative"},
		{"negative memory", func(s *ScriptSpec) { s.Resources.MemMB = -1 }, "negative"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			spec := testSpec("/scans/co/jobs/r1-1")
			tc.modify(&spec)
			_, err := Render(Slurm(), spec)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("Render error = %v, want one containing %q", err, tc.want)
			}
			if err != nil && !strings.HasPrefix(err.Error(), "slurm: ") {
				t.Errorf("error %q lacks the package prefix", err)
			}
		})
	}
}

func TestValidateValue_Accepts(t *testing.T) {
	for _, v := range []string{"debug", "gpu-a100", "chem_lab.2", "user@site", "a:b+c,d=e%f"} {
		if err := validateValue("partition", v); err != nil {
			t.Errorf("ValidateValue(%q) = %v, want nil", v, err)
		}
	}
}

func TestShq_Quotes(t *testing.T) {
	tests := []struct{ in, want string }{
		{"plain", "'plain'"},
		{"", "''"},
		{"it's", `'it'\''s'`},
		{"$HOME `x`", "'$HOME `x`'"},
	}
	for _, tc := range tests {
		if got := shq(tc.in); got != tc.want {
			t.Errorf("shq(%q) = %s, want %s", tc.in, got, tc.want)
		}
	}
}

func TestJobNameFor_StableAndValid(t *testing.T) {
	a, b := JobNameFor("scan-A"), JobNameFor("scan-A")
	if a != b {
		t.Errorf("JobNameFor not stable: %s vs %s", a, b)
	}
	if a == JobNameFor("scan-B") {
		t.Errorf("JobNameFor gives the same name for different scans: %s", a)
	}
	if len(a) != len("ws-")+8 || validateValue("job name", a) != nil {
		t.Errorf("JobNameFor = %q, want ws-<8 hex>", a)
	}
}

func TestRender_Profiles_Directives(t *testing.T) {
	spec := testSpec("/scans/co/jobs/r1-1")
	spec.Resources.QOS = "" // only Slurm has a QoS directive
	spec.Resources.Extra = nil
	tests := []struct {
		p    *Profile
		want []string
	}{
		{torqueProfile(), []string{"#PBS -N ws-1a2b3c4d\n", "#PBS -t 0-2%2\n", "#PBS -q debug\n", "#PBS -l walltime=00:02:00\n",
			"#PBS -l nodes=1:ppn=2\n", "#PBS -l mem=512mb\n", "#PBS -A chem-lab\n", "#PBS -r n\n",
			"#PBS -o /scans/co/jobs/r1-1\n", `--task "$PBS_ARRAYID"`}},
		{lsfProfile(), []string{`#BSUB -J "ws-1a2b3c4d[1-3]%2"` + "\n", "#BSUB -q debug\n", "#BSUB -W 2\n", "#BSUB -n 2\n",
			"#BSUB -M 512MB\n", "#BSUB -P chem-lab\n", "#BSUB -rn\n", "#BSUB -o /scans/co/jobs/r1-1/task-%J_%I.out\n",
			`--task "$LSB_JOBINDEX"`}},
		{sgeProfile(), []string{"#$ -S /bin/bash\n", "#$ -N ws-1a2b3c4d\n", "#$ -t 1-3\n", "#$ -tc 2\n", "#$ -q debug\n",
			"#$ -l h_rt=00:02:00\n", "#$ -pe smp 2\n", "#$ -l h_vmem=512M\n", "#$ -P chem-lab\n", "#$ -r n\n",
			`--task "$SGE_TASK_ID"`}},
	}
	for _, tc := range tests {
		t.Run(tc.p.Name, func(t *testing.T) {
			if err := tc.p.validate(); err != nil {
				t.Fatal(err)
			}
			got, err := Render(tc.p, spec)
			if err != nil {
				t.Fatal(err)
			}
			for _, w := range tc.want {
				if !strings.Contains(string(got), w) {
					t.Errorf("%s script lacks %q:\n%s", tc.p.Name, w, got)
				}
			}
			if strings.Contains(string(got), "#SBATCH") {
				t.Errorf("%s script has Slurm directives:\n%s", tc.p.Name, got)
			}
		})
	}
}

func TestRender_Profile_UnsupportedSettingIsError(t *testing.T) {
	spec := testSpec("/j")
	spec.Resources.Extra = nil
	_, err := Render(lsfProfile(), spec) // QOS is set; the LSF preset has no QoS directive
	if err == nil || !strings.Contains(err.Error(), "qos") {
		t.Errorf("Render(LSF, qos set) error = %v, want one naming qos", err)
	}
}

func TestProfile_Validate_Rejects(t *testing.T) {
	tests := []struct {
		name   string
		modify func(*Profile)
	}{
		{"no name", func(p *Profile) { p.Name = "" }},
		{"job id without group", func(p *Profile) { p.JobID = `^[0-9]+$` }},
		{"status without state", func(p *Profile) { p.StatusLine = `^(?P<id>.*)$` }},
		{"bad directive template", func(p *Profile) { p.Directives = append(p.Directives, Directive{"", "{{.Nope"}) }},
		{"no cancel", func(p *Profile) { p.Cancel, p.CancelByID = nil, nil }},
		{"bad regexp", func(p *Profile) { p.StatusLine = `(` }},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			p := Slurm()
			tc.modify(p)
			if err := p.validate(); err == nil {
				t.Error("Validate = nil, want an error")
			}
		})
	}
	for name, p := range presets() {
		if err := p.validate(); err != nil {
			t.Errorf("preset %s: %v", name, err)
		}
	}
}
