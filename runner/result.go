package runner

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"time"
)

// resultVersion is the schema version of result files.
const resultVersion = 1

// ResultStatus says how a point's computation ended; the strings are
// what result files hold.
type ResultStatus string

// Result statuses.
const (
	// ResultDone: an energy was computed and converged.
	ResultDone ResultStatus = "done"
	// ResultFailed: no usable energy; the Result's Class says why.
	ResultFailed ResultStatus = "failed"
)

// Result is the content of points/<key>/result.json, written by whoever
// computed the point: which point and attempt, the backend's [Outcome],
// and who computed it when.
type Result struct {
	V           int          `json:"v"`
	Key         string       `json:"key"`
	Fingerprint string       `json:"fingerprint"`
	Attempt     int          `json:"attempt"`
	Status      ResultStatus `json:"status"`
	// Outcome is what was computed (its orbitals file relative to the
	// point directory; its error, for a failure, starting with the
	// backend's name). Its fields come here in the file.
	Outcome
	Backend  string    `json:"backend"`
	Host     string    `json:"host"`
	PID      int       `json:"pid"`
	Started  time.Time `json:"started"`
	Finished time.Time `json:"finished"`
	// Sum is the file's checksum (see resultSum); a file whose content
	// does not match it is treated as absent. Files of an earlier
	// wellscan have none and are not checked.
	Sum string `json:"sum,omitempty"`
}

// FailedResult is the Result of task t that failed where no backend
// computed it (a batch queue whose submission failed, a compute node that
// cannot build the geometry): attempt t.Attempt failed with class and
// msg between start and end, on this host, reported by the named backend
// or queue. permanent: the failure would come back on another try.
func FailedResult(t Task, fingerprint, backend string, class FailureClass, permanent bool, msg string, start, end time.Time) Result {
	host, _ := os.Hostname()
	return failedResult(t, fingerprint, backend, host, class, permanent, msg, start, end)
}

func failedResult(t Task, fingerprint, backend, host string, class FailureClass, permanent bool, msg string, start, end time.Time) Result {
	return Result{Key: t.Key, Fingerprint: fingerprint, Attempt: t.Attempt, Status: ResultFailed,
		Outcome: Outcome{Class: class, Error: msg, Permanent: permanent},
		Backend: backend, Host: host, PID: os.Getpid(), Started: start, Finished: end}
}

// The one conversion between a Result (what a worker wrote) and a
// PointRecord (what the store keeps): the record holds the Outcome of a
// done point, and the class and error of a failed one.

// setDone records the done result res on rec; orbitals is res's orbitals
// file in the store's form (slash-separated, relative to the scan
// directory), "" to keep rec's.
func (rec *PointRecord) setDone(res Result, orbitals string) {
	e := res.Energy
	rec.State, rec.Energy, rec.Converged = Done, &e, true
	rec.Iterations, rec.SSquared, rec.Extra, rec.Flags = res.Iterations, res.SSquared, res.Extra, res.Flags
	rec.Class, rec.LastError = "", ""
	rec.Seconds = res.Finished.Sub(res.Started).Seconds()
	if orbitals != "" {
		rec.Orbitals = orbitals
	}
}

// setFailure records the class and error of the failed result res on
// rec (its state is the caller's to decide: planned again or failed).
func (rec *PointRecord) setFailure(res Result) {
	rec.Class, rec.LastError = res.Class, res.Error
}

// doneResult is the Result a done record stands for, as its result file
// held it: fingerprint fp, written by host; orbitals is the record's
// orbitals file relative to the point directory ("" for none).
func (rec *PointRecord) doneResult(fp, host, orbitals string) Result {
	return Result{Key: rec.Key, Fingerprint: fp, Attempt: rec.Attempts, Status: ResultDone,
		Outcome: Outcome{Energy: *rec.Energy, Converged: rec.Converged, Iterations: rec.Iterations, SSquared: rec.SSquared,
			Orbitals: orbitals, Extra: rec.Extra, Flags: rec.Flags},
		Backend: rec.Backend, Host: host, PID: os.Getpid(), Started: rec.Started, Finished: rec.Finished}
}

// PointDir is the work directory of the point with key in scan dir.
func PointDir(dir, key string) string { return filepath.Join(dir, PointsDir, key) }

// WriteResult writes r to points/<key>/result.json atomically and
// durably (temporary file, fsync, rename, fsync of the directory): the
// file is the proof of work of a point computed where the store is not
// open, as on a compute node.
func WriteResult(dir string, r Result) error {
	return writeResult(dir, r, tmpSuffix(), true)
}

// writeResult writes r's result file through a temporary file named with
// suffix and a rename; durable adds the fsyncs. Without them a crash of
// the machine (not of the process: the page cache survives that) can
// leave the file missing or empty, which ReadResult treats as absent.
func writeResult(dir string, r Result, suffix string, durable bool) error {
	r.V = resultVersion
	r.Sum = resultSum(r)
	b, err := json.MarshalIndent(r, "", "  ")
	if err != nil {
		return fmt.Errorf("runner: result %s: %w", r.Key, err)
	}
	return writeInScan(dir, filepath.Join(PointsDir, r.Key, ResultFile), append(b, '\n'), suffix, durable)
}

// ReadResult reads the result file of key. ok is false when the file is
// absent, empty, half-written, or belongs to another key or fingerprint:
// "not visible yet", never an error.
func ReadResult(dir, key, fingerprint string) (Result, bool) {
	b, err := os.ReadFile(filepath.Join(PointDir(dir, key), ResultFile))
	if err != nil || len(b) == 0 {
		return Result{}, false
	}
	var r Result
	if json.Unmarshal(b, &r) != nil || r.V != resultVersion || r.Key != key || r.Fingerprint != fingerprint {
		return Result{}, false
	}
	if r.Status != ResultDone && r.Status != ResultFailed {
		return Result{}, false
	}
	if r.Sum != "" && r.Sum != resultSum(r) {
		return Result{}, false
	}
	return r, true
}

// tmpSuffix names this process's temporary files: host and PID, so that
// writers on several machines sharing a filesystem never collide.
func tmpSuffix() string {
	host, _ := os.Hostname()
	return fmt.Sprintf("%s.%d", strings.ReplaceAll(host, "/", "_"), os.Getpid())
}
