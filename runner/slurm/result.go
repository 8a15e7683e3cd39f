package slurm

import (
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"strings"
)

// errNotVisible reports that a result file is missing, empty, half-written or
// not valid JSON yet. On a shared filesystem that is normal for a while after
// a task ends; it is not a failure class of its own. Callers re-read it on a
// later cycle and give up only after a grace period.
var errNotVisible = errors.New("slurm: result not visible yet")

// readResult reads and parses a JSON result file. A missing, empty,
// truncated or otherwise invalid file gives an error wrapping
// errNotVisible: the writer may not be done, or the shared filesystem may
// not show the file yet. Other errors (permission denied, a directory in its
// place) are returned as they are. The bytes returned are valid JSON.
func readResult(path string) ([]byte, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return nil, fmt.Errorf("%w: %s: no file", errNotVisible, path)
		}
		return nil, fmt.Errorf("slurm: read result %s: %w", path, err)
	}
	if len(strings.TrimSpace(string(data))) == 0 {
		return nil, fmt.Errorf("%w: %s: empty", errNotVisible, path)
	}
	if !json.Valid(data) {
		return nil, fmt.Errorf("%w: %s: not complete JSON (%d bytes)", errNotVisible, path, len(data))
	}
	return data, nil
}
