package runner

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"testing"
)

// TestFormat_ResultFilesOfEarlierVersion reads result files written before
// the runner was split by concern: each must be accepted (key,
// fingerprint, checksum) and be written back byte for byte.
func TestFormat_ResultFilesOfEarlierVersion(t *testing.T) {
	for _, tc := range []struct {
		file, key string
		status    ResultStatus
	}{
		{"result-done.json", "r=1.100", "done"},
		{"result-failed.json", "r=0.700", "failed"},
	} {
		t.Run(tc.file, func(t *testing.T) {
			want, err := os.ReadFile(filepath.Join("testdata", "format", tc.file))
			if err != nil {
				t.Fatal(err)
			}
			dir := t.TempDir()
			if err := os.MkdirAll(PointDir(dir, tc.key), 0o700); err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(filepath.Join(PointDir(dir, tc.key), ResultFile), want, 0o600); err != nil {
				t.Fatal(err)
			}
			res, ok := ReadResult(dir, tc.key, `{"molecule":"x"}`)
			if !ok {
				t.Fatalf("ReadResult(%s) not accepted: the layout or the checksum changed", tc.file)
			}
			if res.Status != tc.status || res.Key != tc.key {
				t.Errorf("ReadResult(%s) = status %q key %q, want %q %q", tc.file, res.Status, res.Key, tc.status, tc.key)
			}
			out := t.TempDir()
			if err := WriteResult(out, res); err != nil {
				t.Fatal(err)
			}
			got, err := os.ReadFile(filepath.Join(PointDir(out, tc.key), ResultFile))
			if err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(got, want) {
				t.Errorf("rewritten %s differs:\n%s\nwant\n%s", tc.file, got, want)
			}
		})
	}
}

// TestFormat_RecordsOfEarlierVersion checks that point records and events
// stored before the split decode, keep their checksum, and encode to the
// same bytes.
func TestFormat_RecordsOfEarlierVersion(t *testing.T) {
	for _, file := range []string{"record-done.json", "record-failed.json"} {
		t.Run(file, func(t *testing.T) {
			want, err := os.ReadFile(filepath.Join("testdata", "format", file))
			if err != nil {
				t.Fatal(err)
			}
			var rec PointRecord
			if err := json.Unmarshal(want, &rec); err != nil {
				t.Fatal(err)
			}
			if got := recordSum(rec); got != rec.Sum {
				t.Errorf("recordSum(%s) = %s, want %s: stores of earlier versions would read as damaged", file, got, rec.Sum)
			}
			got, _ := json.Marshal(rec)
			if !bytes.Equal(append(got, '\n'), want) {
				t.Errorf("re-encoded %s differs:\n%s\nwant\n%s", file, got, want)
			}
		})
	}
	want, err := os.ReadFile(filepath.Join("testdata", "format", "event.json"))
	if err != nil {
		t.Fatal(err)
	}
	var ev Event
	if err := json.Unmarshal(want, &ev); err != nil {
		t.Fatal(err)
	}
	if ev.Kind != "retry" {
		t.Errorf("event kind %q, want retry", ev.Kind)
	}
	got, _ := json.Marshal(ev)
	if !bytes.Equal(append(got, '\n'), want) {
		t.Errorf("re-encoded event differs:\n%s\nwant\n%s", got, want)
	}
}
