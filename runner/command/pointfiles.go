package command

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"time"
)

// pointFiles creates and reads the files of one point inside its
// directory only: every name is resolved through an [os.Root] (nothing
// outside the directory can be reached), a symbolic link where wellscan
// writes is refused by name, and only regular files are read.
type pointFiles struct {
	root *os.Root
	dir  string
}

func openPointFiles(dir string) (*pointFiles, error) {
	st, err := os.Lstat(dir)
	if err != nil {
		return nil, err
	}
	if st.Mode()&fs.ModeSymlink != 0 {
		return nil, fmt.Errorf("point directory %s is a symbolic link; wellscan runs programs only in real directories inside the scan directory", dir)
	}
	r, err := os.OpenRoot(dir)
	if err != nil {
		return nil, err
	}
	return &pointFiles{root: r, dir: dir}, nil
}

func (p *pointFiles) Close() error { return p.root.Close() }

// create creates or truncates name (0600), refusing a symbolic link or a
// non-regular file there.
func (p *pointFiles) create(name string) (*os.File, error) {
	st, err := p.root.Lstat(name)
	switch {
	case errors.Is(err, fs.ErrNotExist):
	case err != nil:
		return nil, err
	case st.Mode()&fs.ModeSymlink != 0:
		return nil, fmt.Errorf("%s is a symbolic link; wellscan writes nothing through a link (remove it)", filepath.Join(p.dir, name))
	case !st.Mode().IsRegular():
		return nil, fmt.Errorf("%s is not a regular file (%s); wellscan writes only regular files", filepath.Join(p.dir, name), st.Mode().Type())
	}
	return p.root.OpenFile(name, os.O_RDWR|os.O_CREATE|os.O_TRUNC, 0o600)
}

func (p *pointFiles) writeFile(name string, data []byte) error {
	f, err := p.create(name)
	if err != nil {
		return err
	}
	_, werr := f.Write(data)
	return errors.Join(werr, f.Close())
}

// openOutput opens the regular file name for reading an energy or a
// gradient; a link leading outside the directory or a FIFO is an error.
func (p *pointFiles) openOutput(name string) (*os.File, error) {
	st, err := p.root.Stat(name)
	if err != nil {
		return nil, err
	}
	if !st.Mode().IsRegular() {
		return nil, fmt.Errorf("%s is not a regular file (%s); the energy is read only from regular files", name, st.Mode().Type())
	}
	return p.root.Open(name)
}

// writeStatus records how the run ended; a failure to write it is not
// reported, as the outcome is returned anyway. Text from the program (an
// error quoting its stderr) is written with control characters escaped.
func (p *pointFiles) writeStatus(out Outcome, err error) {
	class := string(out.Class)
	if class == "" {
		class = "ok"
	}
	var b strings.Builder
	fmt.Fprintf(&b, "exit_code = %d\nclass = %s\nelapsed = %s\n", out.ExitCode, class, out.Elapsed.Round(time.Millisecond))
	if out.Class == "" {
		fmt.Fprintf(&b, "energy_hartree = %.12f\n", out.Energy)
	}
	if err != nil {
		first, _, _ := strings.Cut(err.Error(), "\n")
		fmt.Fprintf(&b, "error = %s\n", escapeControls(first))
	}
	_ = p.writeFile(ExitStatusFile, []byte(b.String()))
}

// escapeControls shows control characters (other than tab) as \xNN.
func escapeControls(s string) string {
	var b strings.Builder
	for _, r := range s {
		if (r < 0x20 && r != '\t') || r == 0x7f || (r >= 0x80 && r < 0xa0) {
			fmt.Fprintf(&b, "\\x%02x", r)
			continue
		}
		b.WriteRune(r)
	}
	return b.String()
}
