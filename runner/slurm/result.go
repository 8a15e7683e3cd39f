package slurm

import (
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
)

// errNotVisible reports that a result file is missing, empty, half-written or
// not valid JSON yet. On a shared filesystem that is normal for a while after
// a task ends; it is not a failure class of its own. Callers re-read it on a
// later cycle and give up only after a grace period.
var errNotVisible = errors.New("slurm: result not visible yet")

// writeResultAtomic writes data to dir/name so that a reader sees either no
// file or the whole file: a temporary file in the same directory, fsync,
// close, rename over name, then fsync of the directory so the rename itself
// is durable. name must be a plain file name. It follows symbolic links:
// files inside a scan directory are written with writeJobFile or
// [runner.WriteScanFile] instead, which refuse them.
func writeResultAtomic(dir, name string, data []byte) (err error) {
	if name == "" || name != filepath.Base(name) || name == "." || name == ".." {
		return fmt.Errorf("slurm: result name %q must be a plain file name", name)
	}
	host, _ := os.Hostname()
	host = strings.NewReplacer("/", "_", string(filepath.Separator), "_").Replace(host)
	f, err := os.CreateTemp(dir, "."+name+".tmp."+host+"."+fmt.Sprint(os.Getpid())+".*")
	if err != nil {
		return fmt.Errorf("slurm: write %s: %w", filepath.Join(dir, name), err)
	}
	tmp := f.Name()
	defer func() {
		if err != nil {
			_ = os.Remove(tmp)
		}
	}()
	if _, err = f.Write(data); err != nil {
		_ = f.Close()
		return fmt.Errorf("slurm: write %s: %w", tmp, err)
	}
	if err = f.Sync(); err != nil {
		_ = f.Close()
		return fmt.Errorf("slurm: fsync %s: %w", tmp, err)
	}
	if err = f.Close(); err != nil {
		return fmt.Errorf("slurm: close %s: %w", tmp, err)
	}
	if err = os.Chmod(tmp, 0o600); err != nil {
		return fmt.Errorf("slurm: chmod %s: %w", tmp, err)
	}
	final := filepath.Join(dir, name)
	if err = os.Rename(tmp, final); err != nil {
		// On NFS a retransmitted rename can report ENOENT although it
		// happened (SOURCES.md §5): trust the final file if it is there
		// and the temporary one is gone.
		if _, statErr := os.Stat(final); statErr != nil || fileExists(tmp) {
			return fmt.Errorf("slurm: rename %s: %w", tmp, err)
		}
		err = nil
	}
	d, err := os.Open(dir)
	if err != nil {
		return fmt.Errorf("slurm: open directory %s for fsync: %w", dir, err)
	}
	defer d.Close()
	if err = d.Sync(); err != nil {
		return fmt.Errorf("slurm: fsync directory %s: %w", dir, err)
	}
	return nil
}

func fileExists(p string) bool {
	_, err := os.Lstat(p)
	return err == nil
}

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
