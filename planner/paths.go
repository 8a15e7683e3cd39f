package planner

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// MaxSpecBytes is the largest spec file Load reads (1 MiB): a scan spec is
// a few kilobytes, so anything near this is a mistake (a wrong file named).
const MaxSpecBytes = 1 << 20

// MaxMoleculeBytes is the largest XYZ file molecule.file may name (16 MiB).
const MaxMoleculeBytes = 16 << 20

// WithinDir checks that path (absolute, or relative to dir) stays inside
// dir, after resolving symbolic links of both where they exist. It
// rejects ".." that climbs out, absolute paths elsewhere and symlinks
// that point out. It returns the cleaned path (joined to dir if
// relative). The error names neither key nor file; callers add them.
func WithinDir(dir, path string) (string, error) {
	if !filepath.IsAbs(path) {
		path = filepath.Join(dir, path)
	}
	path = filepath.Clean(path)
	absDir, err := filepath.Abs(dir)
	if err != nil {
		return path, fmt.Errorf("planner: %w", err)
	}
	absPath, err := filepath.Abs(path)
	if err != nil {
		return path, fmt.Errorf("planner: %w", err)
	}
	if !inside(absDir, absPath) {
		return path, fmt.Errorf("planner: %s is outside the scan directory %s; copy the file into it", path, absDir)
	}
	realDir, err := filepath.EvalSymlinks(absDir)
	if err != nil {
		return path, nil // the directory is missing: opening will say so
	}
	realPath, err := filepath.EvalSymlinks(absPath)
	if err != nil {
		if _, serr := os.Lstat(absPath); serr == nil {
			// A dangling or looping link: refuse rather than guess.
			return path, fmt.Errorf("planner: %s is a symbolic link that cannot be resolved: %w", path, err)
		}
		return path, nil // absent: opening will say so
	}
	if !inside(realDir, realPath) {
		return path, fmt.Errorf("planner: %s leads outside the scan directory %s through a symbolic link (to %s); copy the file into it", path, absDir, realPath)
	}
	return path, nil
}

func inside(dir, path string) bool {
	rel, err := filepath.Rel(dir, path)
	return err == nil && (rel == "." || filepath.IsLocal(rel))
}

// CheckRegular fails, naming path, unless it is a regular file (after
// symbolic links): opening a named pipe (FIFO) for reading waits for a
// writer forever, and a device or a directory is never a spec, a molecule,
// a template or a table. A missing file passes (opening it says so).
func CheckRegular(path string) error {
	st, err := os.Stat(path)
	if err != nil {
		return nil
	}
	if !st.Mode().IsRegular() {
		kind := "a " + st.Mode().Type().String()
		switch {
		case st.Mode()&os.ModeNamedPipe != 0:
			kind = "a named pipe (FIFO)"
		case st.IsDir():
			kind = "a directory"
		case st.Mode()&os.ModeDevice != 0:
			kind = "a device"
		case st.Mode()&os.ModeSocket != 0:
			kind = "a socket"
		}
		return fmt.Errorf("planner: %s is %s, not a regular file; wellscan reads only regular files", path, kind)
	}
	return nil
}

// readCapped reads the file at path if it holds at most max bytes; what
// names the kind of file in the error.
func readCapped(path string, max int64, what string) ([]byte, error) {
	if err := CheckRegular(path); err != nil {
		return nil, err
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("planner: %w", err)
	}
	defer f.Close()
	data, err := io.ReadAll(io.LimitReader(f, max+1))
	if err != nil {
		return nil, fmt.Errorf("planner: read %s: %w", path, err)
	}
	if int64(len(data)) > max {
		return nil, fmt.Errorf("planner: %s is larger than the %d bytes %s may have", path, max, what)
	}
	return data, nil
}
