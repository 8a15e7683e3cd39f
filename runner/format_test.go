package runner

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"testing"
	"time"
	"wellscan/planner"
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

// flagBackend returns a fixed Outcome.
type flagBackend struct{ o Outcome }

func (b flagBackend) Name() string { return "flags" }
func (b flagBackend) Compute(context.Context, Task) (Outcome, error) {
	return b.o, nil
}

// TestResult_OutcomeToRecord follows one Outcome through its only
// conversions: into the result file (orbitals made relative to the point
// directory, the flags kept) and into the store's record; a failure's
// error names the backend.
func TestResult_OutcomeToRecord(t *testing.T) {
	dir := t.TempDir()
	task := Task{Key: "r=1.000", Dir: PointDir(dir, "r=1.000"), Attempt: 1}
	s2 := 0.75
	o := Outcome{Energy: -1.5, Converged: true, Iterations: 7, SSquared: &s2, Orbitals: filepath.Join(task.Dir, "orb.bin"),
		Extra: map[string]float64{"basis_functions": 10}, Flags: PointFlags{FromNeighbour: true, Relaxed: true},
		Class: ClassError, Error: "ignored on success"}
	pc := pointComputer{dir: dir, fp: "fp", backend: flagBackend{o}, now: time.Now, spec: &planner.Spec{}}
	c := pc.work(t.Context(), task)
	res, ok := ReadResult(dir, task.Key, "fp")
	if !ok {
		t.Fatalf("no result file after work: %+v", c)
	}
	if res.Status != ResultDone || res.Orbitals != "orb.bin" || !res.Flags.FromNeighbour || !res.Flags.Relaxed || res.Class != "" || res.Error != "" {
		t.Errorf("result = %+v, want done, orbitals orb.bin, both flags, no class or error", res)
	}
	var rec PointRecord
	rec.Key = task.Key
	rec.setDone(res, storedOrbitals(dir, rec.Key, res.Orbitals))
	if rec.State != Done || *rec.Energy != -1.5 || rec.Iterations != 7 || *rec.SSquared != 0.75 || rec.Flags != res.Flags ||
		rec.Orbitals != "points/r=1.000/orb.bin" || rec.Extra["basis_functions"] != 10 {
		t.Errorf("record = %+v, want the result's energy, diagnostics, flags and orbitals points/r=1.000/orb.bin", rec)
	}
	back := rec.doneResult("fp", "host", "orb.bin")
	if back.Outcome.Energy != res.Energy || back.Flags != res.Flags || back.Orbitals != res.Orbitals || back.Status != ResultDone {
		t.Errorf("doneResult = %+v, want the result's outcome back", back)
	}

	fail := Outcome{Class: ClassSCFNotConverged, Error: "no convergence after 50 iterations", Permanent: true}
	pc.backend = flagBackend{fail}
	task.Key, task.Dir = "r=2.000", PointDir(dir, "r=2.000")
	c = pc.work(t.Context(), task)
	if c.Result.Status != ResultFailed || c.Result.Class != ClassSCFNotConverged || !c.Result.Permanent ||
		c.Result.Error != "backend flags: no convergence after 50 iterations" {
		t.Errorf("failed result = %+v, want scf-not-converged, permanent, error naming the backend", c.Result)
	}
	rec = PointRecord{Key: task.Key}
	rec.setFailure(c.Result)
	if rec.Class != ClassSCFNotConverged || rec.LastError != c.Result.Error {
		t.Errorf("failed record class %q error %q, want the result's", rec.Class, rec.LastError)
	}
}
