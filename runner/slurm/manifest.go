package slurm

import (
	"bufio"
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

// manifestName is the file in a job directory that lists, for each array
// task, the point keys it runs.
const manifestName = "tasks.tsv"

// manifestHeader is the first line of every manifest; the version lets a
// later wellscan refuse a format it does not know.
const manifestHeader = "# wellscan tasks v1"

// A Manifest maps array task indexes to the point keys each task runs, in
// the order the task runs them. The point data itself stays in points/<key>/.
type Manifest struct {
	// First is the index of the first task (the profile's FirstIndex).
	First int
	// Tasks[i] are the keys of task First+i.
	Tasks [][]string
}

// Task returns the point keys of array task index, or an error naming the
// valid range.
func (m *Manifest) Task(index int) ([]string, error) {
	i := index - m.First
	if i < 0 || i >= len(m.Tasks) {
		return nil, fmt.Errorf("slurm: task %d is outside the manifest (tasks %d-%d)", index, m.First, m.First+len(m.Tasks)-1)
	}
	return m.Tasks[i], nil
}

// checkKey refuses keys that would break the line format.
func checkKey(k string) error {
	if k == "" || strings.ContainsAny(k, "\t\n\r\x00") || strings.HasPrefix(k, "#") {
		return fmt.Errorf("slurm: point key %q: keys must be non-empty, must not start with # and must not contain tabs or newlines", k)
	}
	return nil
}

// marshal returns the manifest text: a header line, then one line per task,
// "INDEX<TAB>KEY<TAB>KEY…".
func (m *Manifest) marshal() ([]byte, error) {
	var b bytes.Buffer
	b.WriteString(manifestHeader + "\n")
	for i, keys := range m.Tasks {
		if len(keys) == 0 {
			return nil, fmt.Errorf("slurm: manifest task %d has no points", m.First+i)
		}
		b.WriteString(strconv.Itoa(m.First + i))
		for _, k := range keys {
			if err := checkKey(k); err != nil {
				return nil, err
			}
			b.WriteByte('\t')
			b.WriteString(k)
		}
		b.WriteByte('\n')
	}
	return b.Bytes(), nil
}

// writeManifest writes tasks.tsv into the job directory jobDir
// (<scan>/jobs/<token>) atomically and never through a symbolic link
// (see writeJobFile).
func writeManifest(jobDir string, m *Manifest) error {
	data, err := m.marshal()
	if err != nil {
		return err
	}
	return writeJobFile(jobDir, manifestName, data)
}

// readManifest reads dir/tasks.tsv. Errors name the file and line.
func readManifest(dir string) (*Manifest, error) {
	path := filepath.Join(dir, manifestName)
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("slurm: read manifest: %w", err)
	}
	return parseManifest(path, data)
}

// parseManifest parses manifest text; name is used in errors.
func parseManifest(name string, data []byte) (*Manifest, error) {
	sc := bufio.NewScanner(bytes.NewReader(data))
	sc.Buffer(make([]byte, 0, 64<<10), 16<<20)
	m := &Manifest{}
	line := 0
	for sc.Scan() {
		line++
		text := sc.Text()
		if line == 1 {
			if text != manifestHeader {
				return nil, fmt.Errorf("slurm: %s:1: want header %q, got %q", name, manifestHeader, text)
			}
			continue
		}
		if text == "" {
			continue
		}
		fields := strings.Split(text, "\t")
		idx, err := strconv.Atoi(fields[0])
		if err != nil {
			return nil, fmt.Errorf("slurm: %s:%d: task index %q is not an integer", name, line, fields[0])
		}
		if len(m.Tasks) == 0 {
			m.First = idx
		} else if want := m.First + len(m.Tasks); idx != want {
			return nil, fmt.Errorf("slurm: %s:%d: task index %d, want %d (indexes are consecutive)", name, line, idx, want)
		}
		if len(fields) < 2 {
			return nil, fmt.Errorf("slurm: %s:%d: task %d lists no point keys", name, line, idx)
		}
		for _, k := range fields[1:] {
			if err := checkKey(k); err != nil {
				return nil, fmt.Errorf("%s:%d: %w", name, line, err)
			}
		}
		m.Tasks = append(m.Tasks, fields[1:])
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("slurm: %s: %w", name, err)
	}
	if line == 0 {
		return nil, fmt.Errorf("slurm: %s: empty manifest", name)
	}
	return m, nil
}

// PrepareJob creates spec.JobDir (<scan>/jobs/<token>), writes the
// manifest and the rendered script (submit.sh) into it, and returns the
// script path. The manifest must have one entry per array task and start
// at the profile's first index. Every write goes through the scan
// directory and refuses a symbolic link by name (see mkdirJob,
// writeJobFile).
func PrepareJob(p *Profile, spec ScriptSpec, m *Manifest) (string, error) {
	if len(m.Tasks) != spec.Tasks || m.First != p.FirstIndex {
		return "", fmt.Errorf("slurm: job %s: manifest has tasks %d..%d, script wants %d tasks from %d",
			spec.JobName, m.First, m.First+len(m.Tasks)-1, spec.Tasks, p.FirstIndex)
	}
	script, err := Render(p, spec)
	if err != nil {
		return "", err
	}
	if err := mkdirJob(spec.JobDir); err != nil {
		return "", err
	}
	if err := writeManifest(spec.JobDir, m); err != nil {
		return "", err
	}
	if err := writeJobFile(spec.JobDir, "submit.sh", script); err != nil {
		return "", err
	}
	return filepath.Join(spec.JobDir, "submit.sh"), nil
}
