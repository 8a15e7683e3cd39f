package slurm

import (
	"crypto/sha256"
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"wellscan/runner"
)

// treeSum is a digest of every name, mode and content under dir, to show
// that nothing there changed.
func treeSum(t *testing.T, dir string) [32]byte {
	t.Helper()
	h := sha256.New()
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		st, err := os.Lstat(p)
		if err != nil {
			return err
		}
		h.Write([]byte(p + "\x00" + st.Mode().String() + "\x00"))
		if st.Mode().IsRegular() {
			b, err := os.ReadFile(p)
			if err != nil {
				return err
			}
			h.Write(b)
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	var sum [32]byte
	copy(sum[:], h.Sum(nil))
	return sum
}

// victim is a directory outside the scan with one file in it.
func victim(t *testing.T) (dir, file string) {
	t.Helper()
	dir = t.TempDir()
	file = filepath.Join(dir, "victim")
	if err := os.WriteFile(file, []byte("keep me\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	return dir, file
}

// TestPrepareJob_SymlinksRefused is issue 15 item 1 for the batch queue: a
// symbolic link planted at jobs/, at jobs/<token>/ or at a file wellscan
// writes there (submit.sh, tasks.tsv, job.json, jobid) is refused by name,
// and nothing outside the scan directory changes.
func TestPrepareJob_SymlinksRefused(t *testing.T) {
	for _, tc := range []struct {
		link  string // relative to the scan directory
		toDir bool   // the link leads to the outside directory (else to its file)
		write func(jobDir string) error
	}{
		{link: "jobs", toDir: true},
		{link: "jobs/tok-1", toDir: true},
		{link: "jobs/tok-1/submit.sh"},
		{link: "jobs/tok-1/" + manifestName},
		{link: "jobs/tok-1/" + JobMetaFile, write: func(d string) error { return writeJobFile(d, JobMetaFile, []byte("{}\n")) }},
		{link: "jobs/tok-1/" + jobIDFile, write: func(d string) error { return writeJobFile(d, jobIDFile, []byte("1000\n")) }},
	} {
		t.Run(strings.ReplaceAll(tc.link, "/", "_"), func(t *testing.T) {
			scan := t.TempDir()
			out, file := victim(t)
			before := treeSum(t, out)
			target := file
			if tc.toDir {
				target = out
			}
			link := filepath.Join(scan, filepath.FromSlash(tc.link))
			if err := os.MkdirAll(filepath.Dir(link), 0o700); err != nil {
				t.Fatal(err)
			}
			if err := os.Symlink(target, link); err != nil {
				t.Fatal(err)
			}
			jobDir := filepath.Join(scan, JobsDir, "tok-1")
			write := tc.write
			if write == nil {
				write = func(d string) error {
					_, err := PrepareJob(Slurm(), testSpec(d), &Manifest{Tasks: [][]string{{"a"}, {"b"}, {"c"}}})
					return err
				}
			}
			err := write(jobDir)
			var se *runner.SymlinkError
			if !errors.Is(err, runner.ErrSymlink) || !errors.As(err, &se) || filepath.Join(se.Dir, se.Path) != link {
				t.Errorf("error = %v, want a refusal naming %s", err, link)
			}
			if treeSum(t, out) != before {
				t.Errorf("the directory outside the scan changed")
			}
			if b, _ := os.ReadFile(file); string(b) != "keep me\n" {
				t.Errorf("the outside file now holds %q", b)
			}
		})
	}
}

// TestPrepareJob_JobDirShape: the job directory must be SCAN/jobs/TOKEN,
// so that the writes can be confined to SCAN.
func TestPrepareJob_JobDirShape(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "elsewhere", "tok-1")
	_, err := PrepareJob(Slurm(), testSpec(dir), &Manifest{Tasks: [][]string{{"a"}, {"b"}, {"c"}}})
	if err == nil || !strings.Contains(err.Error(), "SCAN/jobs/TOKEN") {
		t.Errorf("PrepareJob(%s) = %v, want an error naming the expected shape", dir, err)
	}
	if _, err := os.Stat(dir); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("%s was made: %v", dir, err)
	}
}

// TestQueue_Run_SymlinkedJobsRefused: with jobs/ a link to a directory
// outside the scan, the batch queue submits nothing; every point fails
// with an error naming the link, and the outside directory is unchanged.
func TestQueue_Run_SymlinkedJobsRefused(t *testing.T) {
	dir := fakeScanDir(t)
	out, _ := victim(t)
	before := treeSum(t, out)
	link := filepath.Join(dir, JobsDir)
	if err := os.Symlink(out, link); err != nil {
		t.Fatal(err)
	}
	fake := &fakeSlurm{t: t, fate: func(int, int) string { return "COMPLETED" }}
	fr := runFakeIn(t, dir, fake, false)
	if !errors.Is(fr.err, runner.ErrPointsFailed) {
		t.Fatalf("run = %v, want ErrPointsFailed", fr.err)
	}
	if len(fr.recs) != 10 {
		t.Fatalf("%d points, want 10", len(fr.recs))
	}
	for k, rec := range fr.recs {
		if rec.State != runner.Failed || !strings.Contains(rec.LastError, link+" is a symbolic link") {
			t.Errorf("%s: %s, %q; want failed naming %s", k, rec.State, rec.LastError, link)
		}
	}
	if n := fake.calls["sbatch"]; n != 0 {
		t.Errorf("sbatch ran %d times, want never", n)
	}
	if treeSum(t, out) != before {
		t.Errorf("the directory outside the scan changed")
	}
}
