package slurm

import (
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

func TestWriteResultAtomic_WritesWholeFileAndNoTemp(t *testing.T) {
	dir := t.TempDir()
	data := []byte(`{"v":1,"key":"r=1.12800","energy_hartree":-112.7}`)
	if err := writeResultAtomic(dir, "result.json", data); err != nil {
		t.Fatal(err)
	}
	// Overwrite: a second attempt replaces the file whole.
	data2 := []byte(`{"v":1,"key":"r=1.12800","energy_hartree":-112.8}`)
	if err := writeResultAtomic(dir, "result.json", data2); err != nil {
		t.Fatal(err)
	}
	got, err := readResult(filepath.Join(dir, "result.json"))
	if err != nil {
		t.Fatal(err)
	}
	if string(got) != string(data2) {
		t.Errorf("ReadResult = %s, want %s", got, data2)
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	if len(entries) != 1 {
		var names []string
		for _, e := range entries {
			names = append(names, e.Name())
		}
		t.Errorf("directory holds %v, want only result.json (no temporary files left)", names)
	}
}

func TestWriteResultAtomic_BadName(t *testing.T) {
	for _, name := range []string{"", "a/b", "..", "."} {
		if err := writeResultAtomic(t.TempDir(), name, []byte("{}")); err == nil {
			t.Errorf("writeResultAtomic(name %q) = nil, want an error", name)
		}
	}
}

func TestWriteResultAtomic_MissingDir(t *testing.T) {
	err := writeResultAtomic(filepath.Join(t.TempDir(), "nope"), "result.json", []byte("{}"))
	if err == nil || !strings.Contains(err.Error(), "nope") {
		t.Errorf("error = %v, want one naming the missing directory", err)
	}
}

func TestReadResult_NotVisibleYet(t *testing.T) {
	dir := t.TempDir()
	whole := `{"v":1,"key":"r=1.12800","energy_hartree":-112.7}`
	tests := []struct {
		name    string
		content *string
	}{
		{"missing", nil},
		{"empty", ptr("")},
		{"whitespace", ptr("  \n")},
		{"half written", ptr(whole[:len(whole)/2])},
		{"not json", ptr("energy = -112.7")},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			path := filepath.Join(dir, strings.ReplaceAll(tc.name, " ", "_")+".json")
			if tc.content != nil {
				if err := os.WriteFile(path, []byte(*tc.content), 0o644); err != nil {
					t.Fatal(err)
				}
			}
			_, err := readResult(path)
			if !errors.Is(err, errNotVisible) {
				t.Errorf("ReadResult error = %v, want ErrNotVisible", err)
			}
		})
	}
}

func TestReadResult_DirectoryIsRealError(t *testing.T) {
	_, err := readResult(t.TempDir())
	if err == nil || errors.Is(err, errNotVisible) {
		t.Errorf("ReadResult(directory) error = %v, want a real error, not ErrNotVisible", err)
	}
}

func ptr(s string) *string { return &s }

func TestManifest_RoundTrip(t *testing.T) {
	dir := filepath.Join(t.TempDir(), JobsDir, "tok-1")
	m := &Manifest{First: 1, Tasks: [][]string{{"r=1.12800", "r=1.13000"}, {"r1=0.95000,theta=104.500"}}}
	if err := writeManifest(dir, m); err != nil {
		t.Fatal(err)
	}
	got, err := readManifest(dir)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got, m) {
		t.Errorf("ReadManifest = %+v, want %+v", got, m)
	}
	keys, err := got.Task(2)
	if err != nil || !reflect.DeepEqual(keys, []string{"r1=0.95000,theta=104.500"}) {
		t.Errorf("Task(2) = %v, %v", keys, err)
	}
	if _, err := got.Task(0); err == nil || !strings.Contains(err.Error(), "tasks 1-2") {
		t.Errorf("Task(0) error = %v, want one naming the range 1-2", err)
	}
}

func TestParseManifest_Errors(t *testing.T) {
	tests := []struct {
		name, text, want string
	}{
		{"no header", "0\tr=1\n", ":1: want header"},
		{"bad index", "# wellscan tasks v1\nx\tr=1\n", ":2: task index"},
		{"gap", "# wellscan tasks v1\n0\tr=1\n2\tr=2\n", ":3: task index 2, want 1"},
		{"no keys", "# wellscan tasks v1\n0\n", ":2: task 0 lists no point keys"},
		{"empty key", "# wellscan tasks v1\n0\t\n", ":2:"},
		{"empty file", "", "empty manifest"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := parseManifest("jobs/x/tasks.tsv", []byte(tc.text))
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("ParseManifest error = %v, want one containing %q", err, tc.want)
			}
		})
	}
}

func TestManifest_Marshal_RejectsBadKeys(t *testing.T) {
	for _, k := range []string{"", "a\tb", "a\nb", "#x"} {
		m := &Manifest{Tasks: [][]string{{k}}}
		if _, err := m.marshal(); err == nil {
			t.Errorf("Marshal(key %q) = nil error, want one", k)
		}
	}
	if _, err := (&Manifest{Tasks: [][]string{{}}}).marshal(); err == nil {
		t.Error("Marshal(task without keys) = nil error, want one")
	}
}

func TestPrepareJob_WritesScriptAndManifest(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "jobs", "r1-1")
	spec := testSpec(dir)
	m := &Manifest{First: 0, Tasks: [][]string{{"a"}, {"b"}, {"c"}}}
	path, err := PrepareJob(Slurm(), spec, m)
	if err != nil {
		t.Fatal(err)
	}
	if path != filepath.Join(dir, "submit.sh") {
		t.Errorf("script path = %s", path)
	}
	if _, err := readManifest(dir); err != nil {
		t.Error(err)
	}
	spec.Tasks = 4
	if _, err := PrepareJob(Slurm(), spec, m); err == nil {
		t.Error("PrepareJob with 4 tasks and a 3-task manifest = nil error, want one")
	}
}
