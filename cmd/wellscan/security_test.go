package main

import (
	"go/parser"
	"go/token"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"wellscan/runner"
)

// TestRun_ScanFiles_PrivateByDefault: every file a run creates in the
// scan directory is 0600 (no access for group and others) and every
// directory 0700, for the built-in engine's store and for a command
// scan's point directories (inputs, captured output, result files).
func TestRun_ScanFiles_PrivateByDefault(t *testing.T) {
	for name, spec := range map[string]string{"model": badModelSpec, "command": badCommandSpec} {
		t.Run(name, func(t *testing.T) {
			dir := t.TempDir()
			writeSpec(t, dir, spec)
			if name == "command" {
				if err := os.WriteFile(filepath.Join(dir, "point.tmpl"), []byte(strings.Replace(badTemplate, "%s", "energy = -1.0", 1)), 0o600); err != nil {
					t.Fatal(err)
				}
			}
			if code, out, errs := wellscan(t, "run", "-q", dir); code != 0 {
				t.Fatalf("run: exit %d\n%s%s", code, out, errs)
			}
			// Issue 15 item 2: report/ was 0755 with 0644 files.
			if code, out, errs := wellscan(t, "report", dir); code != 0 {
				t.Fatalf("report: exit %d\n%s%s", code, out, errs)
			}
			mine := map[string]bool{"scan.toml": true, "point.tmpl": true, ".": true}
			seen := map[string]bool{}
			err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
				if err != nil {
					return err
				}
				rel, _ := filepath.Rel(dir, p)
				if mine[rel] {
					return nil
				}
				fi, err := d.Info()
				if err != nil {
					return err
				}
				seen[strings.SplitN(rel, string(filepath.Separator), 2)[0]] = true
				want := fs.FileMode(0o600)
				if d.IsDir() {
					want = 0o700
				}
				if got := fi.Mode().Perm(); got != want {
					t.Errorf("%s has mode %#o, want %#o", rel, got, want)
				}
				return nil
			})
			if err != nil {
				t.Fatal(err)
			}
			for _, f := range []string{runner.DBFile, runner.StatusFile, runner.PointsDir, "report"} {
				if !seen[f] {
					t.Errorf("the run left no %s to check", f)
				}
			}
		})
	}
}

// TestModule_NoNetwork: no non-test Go source of the module imports a
// network package or dials out. wellscan computes locally; Slurm is
// driven through its own commands.
func TestModule_NoNetwork(t *testing.T) {
	root, err := filepath.Abs(filepath.Join("..", ".."))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(filepath.Join(root, "go.mod")); err != nil {
		t.Fatalf("module root not at %s: %v", root, err)
	}
	banned := []string{"net", "net/http", "net/rpc", "net/smtp", "net/url", "crypto/tls", "net/http/httputil"}
	files := 0
	err = filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() {
			if name := d.Name(); p != root && (strings.HasPrefix(name, ".") || name == "testdata") {
				return filepath.SkipDir
			}
			return nil
		}
		if !strings.HasSuffix(p, ".go") || strings.HasSuffix(p, "_test.go") {
			return nil
		}
		files++
		src, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		f, err := parser.ParseFile(token.NewFileSet(), p, src, parser.ImportsOnly)
		if err != nil {
			return err
		}
		for _, im := range f.Imports {
			path, _ := strconv.Unquote(im.Path.Value)
			for _, b := range banned {
				if path == b {
					t.Errorf("%s imports %q", p, path)
				}
			}
		}
		for _, w := range []string{"net.Dial", "http.Get", "http.Post", "http.Client", "http.NewRequest", "net.Listen"} {
			if strings.Contains(string(src), w) {
				t.Errorf("%s mentions %s", p, w)
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if files < 50 {
		t.Fatalf("checked only %d Go files under %s", files, root)
	}
	t.Logf("%d non-test Go files checked", files)
}
