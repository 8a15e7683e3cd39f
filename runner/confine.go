package runner

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
)

// ErrSymlink is matched by the error of a write that found a symbolic link
// where wellscan creates or truncates a file or directory of a scan.
var ErrSymlink = errors.New("runner: symbolic link in the scan directory")

// SymlinkError names the link that stopped a write.
type SymlinkError struct {
	Dir  string // the scan directory
	Path string // the link, relative to Dir
}

func (e *SymlinkError) Error() string {
	return fmt.Sprintf("runner: %s is a symbolic link; wellscan writes only real files and directories inside the scan directory %s and writes nothing through a link (remove the link and run again)",
		filepath.Join(e.Dir, e.Path), e.Dir)
}

// Is makes errors.Is(err, ErrSymlink) true.
func (e *SymlinkError) Is(target error) bool { return target == ErrSymlink }

// ScanFS writes inside one scan directory and nowhere else. Every name is
// relative to the directory; every file and directory it creates or
// truncates is reached without following a symbolic link (a link found on
// the way is an error naming it), through an [os.Root] so that not even a
// link swapped in between the check and the open can lead outside.
// Directories are made 0700 and files 0600. A ScanFS is safe for
// concurrent use.
type ScanFS struct {
	root *os.Root
	dir  string
}

// OpenScanFS opens the scan directory dir (which must exist).
func OpenScanFS(dir string) (*ScanFS, error) {
	r, err := os.OpenRoot(dir)
	if err != nil {
		return nil, fmt.Errorf("runner: scan directory: %w", err)
	}
	return &ScanFS{root: r, dir: dir}, nil
}

// Close releases the directory.
func (f *ScanFS) Close() error { return f.root.Close() }

// Dir is the scan directory as given to OpenScanFS.
func (f *ScanFS) Dir() string { return f.dir }

func (f *ScanFS) clean(rel string) (string, error) {
	rel = filepath.Clean(filepath.FromSlash(rel))
	if rel == "." || !filepath.IsLocal(rel) {
		return "", fmt.Errorf("runner: %q is not a name inside the scan directory %s", rel, f.dir)
	}
	return rel, nil
}

// checkNoLink fails if rel exists and is a symbolic link; it reports
// whether rel exists.
func (f *ScanFS) checkNoLink(rel string) (fs.FileInfo, error) {
	st, err := f.root.Lstat(rel)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return nil, nil
	case err != nil:
		return nil, fmt.Errorf("runner: %w", err)
	case st.Mode()&fs.ModeSymlink != 0:
		return nil, &SymlinkError{Dir: f.dir, Path: rel}
	}
	return st, nil
}

// MkdirAll makes directory rel and its parents (0700), refusing a
// symbolic link at any component.
func (f *ScanFS) MkdirAll(rel string) error {
	rel, err := f.clean(rel)
	if err != nil {
		return err
	}
	parts := strings.Split(rel, string(filepath.Separator))
	for i := range parts {
		p := filepath.Join(parts[:i+1]...)
		st, err := f.checkNoLink(p)
		if err != nil {
			return err
		}
		if st == nil {
			if err := f.root.Mkdir(p, 0o700); err != nil && !errors.Is(err, fs.ErrExist) {
				return fmt.Errorf("runner: %w", err)
			}
			if st, err = f.checkNoLink(p); err != nil {
				return err
			}
			if st == nil {
				return fmt.Errorf("runner: %s vanished while it was made", filepath.Join(f.dir, p))
			}
		}
		if !st.IsDir() {
			return fmt.Errorf("runner: %s is not a directory", filepath.Join(f.dir, p))
		}
	}
	return nil
}

// parent makes the directory of rel.
func (f *ScanFS) parent(rel string) error {
	if d := filepath.Dir(rel); d != "." {
		return f.MkdirAll(d)
	}
	return nil
}

// Create creates or truncates the regular file rel (0600) for writing,
// making its directory; a symbolic link or a non-regular file (a FIFO, a
// device) at rel is refused.
func (f *ScanFS) Create(rel string) (*os.File, error) {
	rel, err := f.clean(rel)
	if err != nil {
		return nil, err
	}
	if err := f.parent(rel); err != nil {
		return nil, err
	}
	st, err := f.checkNoLink(rel)
	if err != nil {
		return nil, err
	}
	if st != nil && !st.Mode().IsRegular() {
		return nil, fmt.Errorf("runner: %s is not a regular file (%s); wellscan writes only regular files", filepath.Join(f.dir, rel), st.Mode().Type())
	}
	file, err := f.root.OpenFile(rel, os.O_WRONLY|os.O_CREATE|os.O_TRUNC, 0o600)
	if err != nil {
		return nil, fmt.Errorf("runner: %w", err)
	}
	return file, nil
}

// WriteFile writes data to rel through a temporary file named with
// suffix and a rename (a reader sees the old content or the new, never a
// mix). durable adds fsyncs of the file and its directory.
func (f *ScanFS) WriteFile(rel string, data []byte, suffix string, durable bool) error {
	rel, err := f.clean(rel)
	if err != nil {
		return err
	}
	if err := f.parent(rel); err != nil {
		return err
	}
	if _, err := f.checkNoLink(rel); err != nil {
		return err
	}
	tmp := rel + ".tmp." + suffix
	// A leftover (or planted) temporary name is removed, never followed:
	// O_EXCL creates a new file or fails.
	if err := f.root.Remove(tmp); err != nil && !errors.Is(err, fs.ErrNotExist) {
		return fmt.Errorf("runner: %w", err)
	}
	file, err := f.root.OpenFile(tmp, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o600)
	if err != nil {
		return fmt.Errorf("runner: %w", err)
	}
	full := filepath.Join(f.dir, tmp)
	if _, err := file.Write(data); err != nil {
		file.Close()
		f.root.Remove(tmp)
		return fmt.Errorf("runner: write %s: %w", full, err)
	}
	if durable {
		if err := file.Sync(); err != nil {
			file.Close()
			f.root.Remove(tmp)
			return fmt.Errorf("runner: sync %s: %w", full, err)
		}
	}
	if err := file.Close(); err != nil {
		f.root.Remove(tmp)
		return fmt.Errorf("runner: close %s: %w", full, err)
	}
	if err := f.root.Rename(tmp, rel); err != nil {
		// On NFS a retransmitted rename can report ENOENT although it
		// happened: the temporary name is gone and the file is in place.
		_, tmpErr := f.root.Lstat(tmp)
		if st, stErr := f.root.Lstat(rel); !errors.Is(err, fs.ErrNotExist) || !errors.Is(tmpErr, fs.ErrNotExist) || stErr != nil || !st.Mode().IsRegular() {
			f.root.Remove(tmp)
			return fmt.Errorf("runner: rename %s: %w", full, err)
		}
	}
	if !durable {
		return nil
	}
	d, err := f.root.Open(filepath.Dir(rel))
	if err != nil {
		return fmt.Errorf("runner: %w", err)
	}
	defer d.Close()
	if err := d.Sync(); err != nil {
		return fmt.Errorf("runner: sync %s: %w", filepath.Dir(full), err)
	}
	return nil
}

// Rename renames old to new inside the scan directory; a symbolic link at
// new is refused (a link at old is renamed as a link).
func (f *ScanFS) Rename(oldRel, newRel string) error {
	o, err := f.clean(oldRel)
	if err != nil {
		return err
	}
	n, err := f.clean(newRel)
	if err != nil {
		return err
	}
	if _, err := f.checkNoLink(n); err != nil {
		return err
	}
	if err := f.root.Rename(o, n); err != nil {
		return fmt.Errorf("runner: %w", err)
	}
	return nil
}

// Remove removes rel (a link itself, never its target).
func (f *ScanFS) Remove(rel string) error {
	rel, err := f.clean(rel)
	if err != nil {
		return err
	}
	return f.root.Remove(rel)
}

// Lstat describes rel without following a final link.
func (f *ScanFS) Lstat(rel string) (fs.FileInfo, error) { return f.root.Lstat(rel) }

// writeInScan writes rel inside dir through a ScanFS (see
// ScanFS.WriteFile).
func writeInScan(dir, rel string, data []byte, suffix string, durable bool) error {
	f, err := OpenScanFS(dir)
	if err != nil {
		return err
	}
	defer f.Close()
	return f.WriteFile(rel, data, suffix, durable)
}

// WriteScanFile writes data to rel inside the scan directory dir, by
// temporary file and rename, durably, refusing symbolic links (see
// [ScanFS]).
func WriteScanFile(dir, rel string, data []byte) error {
	return writeInScan(dir, rel, data, tmpSuffix(), true)
}

// MkdirScan makes directory rel (and its parents) inside the scan
// directory dir, 0700, refusing symbolic links.
func MkdirScan(dir, rel string) error {
	f, err := OpenScanFS(dir)
	if err != nil {
		return err
	}
	defer f.Close()
	return f.MkdirAll(rel)
}

// ReportDest is a report destination (runner/report's Dest) that writes
// into rel inside the scan directory: files by temporary file and rename,
// 0600, directories 0700, never through a symbolic link.
type ReportDest struct {
	FS  *ScanFS
	Rel string
}

// WriteFile implements the report destination.
func (d ReportDest) WriteFile(name string, data []byte) error {
	return d.FS.WriteFile(filepath.Join(d.Rel, name), data, tmpSuffix(), false)
}

// renameInScan renames inside the scan directory dir (see ScanFS.Rename).
func renameInScan(dir, oldRel, newRel string) error {
	f, err := OpenScanFS(dir)
	if err != nil {
		return err
	}
	defer f.Close()
	return f.Rename(oldRel, newRel)
}

// Remove implements the report destination: it removes name, if present.
func (d ReportDest) Remove(name string) error {
	if err := d.FS.Remove(filepath.Join(d.Rel, name)); err != nil && !errors.Is(err, fs.ErrNotExist) {
		return err
	}
	return nil
}
