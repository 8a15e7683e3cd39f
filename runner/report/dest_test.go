package report

import (
	"context"
	"errors"
	"io/fs"
	"os"
	"path/filepath"
)

// osDest is a test [Dest] over a plain directory. The program itself
// writes reports only through the runner's confined writer
// (runner.ReportDest, runner.OpenDirDest).
type osDest string

func (d osDest) WriteFile(name string, data []byte) error {
	return os.WriteFile(filepath.Join(string(d), name), data, 0o600)
}

func (d osDest) Remove(name string) error {
	if err := os.Remove(filepath.Join(string(d), name)); err != nil && !errors.Is(err, fs.ErrNotExist) {
		return err
	}
	return nil
}

// Write renders every report file into dir (made if needed).
func Write(ctx context.Context, dir string, in Input) error {
	if err := os.MkdirAll(dir, 0o700); err != nil {
		return err
	}
	return WriteTo(ctx, osDest(dir), in)
}
