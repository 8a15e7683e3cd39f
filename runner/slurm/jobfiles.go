package slurm

import (
	"fmt"
	"path/filepath"

	"wellscan/runner"
)

// jobInScan splits a job directory, <scan>/jobs/<token>, into the scan
// directory and the job directory's name inside it.
func jobInScan(jobDir string) (scan, rel string, err error) {
	abs, err := filepath.Abs(jobDir)
	if err != nil {
		return "", "", fmt.Errorf("slurm: job directory %s: %w", jobDir, err)
	}
	parent := filepath.Dir(abs)
	if filepath.Base(parent) != JobsDir || filepath.Base(abs) == JobsDir {
		return "", "", fmt.Errorf("slurm: job directory %s is not a directory of a scan's %s/ (SCAN/%s/TOKEN)", abs, JobsDir, JobsDir)
	}
	return filepath.Dir(parent), filepath.Join(JobsDir, filepath.Base(abs)), nil
}

// mkdirJob makes the job directory jobDir (<scan>/jobs/<token>, and
// jobs/ itself) inside its scan directory, 0700, through the scan's
// confined writer ([runner.MkdirScan]): a symbolic link at jobs/ or at
// jobs/<token> is refused by name, so neither the files wellscan writes
// there nor the scheduler's output files (the script sends them into the
// job directory) can land outside the scan directory.
func mkdirJob(jobDir string) error {
	scan, rel, err := jobInScan(jobDir)
	if err != nil {
		return err
	}
	if err := runner.MkdirScan(scan, rel); err != nil {
		return fmt.Errorf("slurm: job directory: %w", err)
	}
	return nil
}

// writeJobFile writes name (a plain file name) into the job directory
// jobDir (<scan>/jobs/<token>) through the scan's confined writer
// ([runner.WriteScanFile]): a temporary file, fsync, rename, fsync of
// the directory; 0600; a symbolic link at jobs/, jobs/<token> or the
// file itself is refused by name and nothing is written through it.
func writeJobFile(jobDir, name string, data []byte) error {
	if name == "" || name != filepath.Base(name) || name == "." || name == ".." {
		return fmt.Errorf("slurm: job file name %q must be a plain file name", name)
	}
	scan, rel, err := jobInScan(jobDir)
	if err != nil {
		return err
	}
	if err := runner.WriteScanFile(scan, filepath.Join(rel, name), data); err != nil {
		return fmt.Errorf("slurm: write %s: %w", filepath.Join(jobDir, name), err)
	}
	return nil
}
