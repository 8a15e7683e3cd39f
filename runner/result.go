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
// computed the point.
type Result struct {
	V           int                `json:"v"`
	Key         string             `json:"key"`
	Fingerprint string             `json:"fingerprint"`
	Attempt     int                `json:"attempt"`
	Status      ResultStatus       `json:"status"`
	Energy      float64            `json:"energy_hartree"`
	Converged   bool               `json:"converged"`
	Iterations  int                `json:"iterations,omitempty"`
	SSquared    *float64           `json:"s_squared,omitempty"`
	Orbitals    string             `json:"orbitals,omitempty"` // relative to the point directory
	Extra       map[string]float64 `json:"extra,omitempty"`
	Class       FailureClass       `json:"class,omitempty"`
	Error       string             `json:"error,omitempty"`
	// Permanent: the failure would recur on another try; not retried.
	Permanent bool      `json:"permanent,omitempty"`
	Backend   string    `json:"backend"`
	Host      string    `json:"host"`
	PID       int       `json:"pid"`
	Started   time.Time `json:"started"`
	Finished  time.Time `json:"finished"`
	// Sum is the file's checksum (see resultSum); a file whose content
	// does not match it is treated as absent. Files of an earlier
	// wellscan have none and are not checked.
	Sum string `json:"sum,omitempty"`
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
