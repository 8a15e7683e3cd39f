package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
)

// outsideState snapshots everything beside the scan directory: the
// victim file's content and the victim directory's listing.
func outsideState(t *testing.T, root string) string {
	t.Helper()
	var b strings.Builder
	_ = filepath.WalkDir(root, func(p string, d os.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(root, p)
		if rel == "scan" || strings.HasPrefix(rel, "scan"+string(filepath.Separator)) {
			return filepath.SkipDir
		}
		b.WriteString(rel)
		if d.Type().IsRegular() {
			c, _ := os.ReadFile(p)
			b.WriteString("=" + string(c))
		}
		b.WriteByte('\n')
		return nil
	})
	return b.String()
}

// TestCLI_SymlinkedWritesRefused is issue 15 item 1: a symbolic link
// planted where wellscan creates or truncates a file or a directory is
// refused by name, and nothing outside the scan directory changes.
func TestCLI_SymlinkedWritesRefused(t *testing.T) {
	cmdTemplate := strings.Replace(badTemplate, "%s", "energy = -1.0", 1)
	type row struct {
		name string
		base string   // "command" or "model"
		pre  []string // commands run before the link is planted
		link string   // path in the scan directory made a link
		dir  bool     // the link points to the victim directory (else the victim file)
		args []string // DIR replaced
		// warn: a convenience file (the status snapshot, the backup); the
		// run succeeds and warns instead of failing.
		warn bool
	}
	p := "points/r=0.60000/"
	m := "points/r=1.00000/"
	rows := []row{
		{"stdout", "command", nil, p + "stdout", false, []string{"run", "-q", "DIR"}, false},
		{"stderr", "command", nil, p + "stderr", false, []string{"run", "-q", "DIR"}, false},
		{"rendered input", "command", nil, p + "point.in", false, []string{"run", "-q", "DIR"}, false},
		{"point geometry", "command", nil, p + "point.xyz", false, []string{"run", "-q", "DIR"}, false},
		{"result file", "command", nil, p + "result.json", false, []string{"run", "-q", "DIR"}, false},
		{"model state file", "model", nil, m + "model-state.json", false, []string{"run", "-q", "DIR"}, false},
		{"points directory", "command", nil, "points", true, []string{"run", "-q", "DIR"}, false},
		{"a point directory", "command", nil, "points/r=0.70000", true, []string{"run", "-q", "DIR"}, false},
		{"status snapshot", "model", nil, "status.json", false, []string{"run", "DIR"}, true},
		{"lock file", "model", nil, "wellscan.lock", false, []string{"run", "-q", "DIR"}, false},
		{"store", "model", nil, "wellscan.db", false, []string{"run", "-q", "DIR"}, false},
		{"plan-inputs directory", "command", nil, "plan-inputs", true, []string{"plan", "DIR"}, false},
		{"a plan input", "command", nil, "plan-inputs/r=0.60000.in", false, []string{"plan", "DIR"}, false},
		{"report directory", "model", []string{"run", "-q", "DIR"}, "report", true, []string{"report", "DIR"}, false},
		{"a report file", "model", []string{"run", "-q", "DIR"}, "report/summary.md", false, []string{"report", "DIR"}, false},
		{"store backup", "model", nil, "wellscan.db.bak", false, []string{"run", "DIR"}, true},
	}
	for _, tc := range rows {
		t.Run(tc.name, func(t *testing.T) {
			root := t.TempDir()
			dir := filepath.Join(root, "scan")
			if err := os.MkdirAll(dir, 0o700); err != nil {
				t.Fatal(err)
			}
			victim := filepath.Join(root, "victim")
			victimDir := filepath.Join(root, "victimdir")
			if err := os.WriteFile(victim, []byte("precious\n"), 0o600); err != nil {
				t.Fatal(err)
			}
			if err := os.Mkdir(victimDir, 0o700); err != nil {
				t.Fatal(err)
			}
			if tc.base == "command" {
				writeSpec(t, dir, badCommandSpec)
				if err := os.WriteFile(filepath.Join(dir, "point.tmpl"), []byte(cmdTemplate), 0o600); err != nil {
					t.Fatal(err)
				}
			} else {
				writeSpec(t, dir, modelSpec)
			}
			args := func(a []string) []string {
				out := append([]string(nil), a...)
				for i := range out {
					if out[i] == "DIR" {
						out[i] = dir
					}
				}
				return out
			}
			if tc.pre != nil {
				if code, out, errs := wellscan(t, args(tc.pre)...); code != 0 {
					t.Fatalf("%v: exit %d\n%s%s", tc.pre, code, out, errs)
				}
			}
			link := filepath.Join(dir, filepath.FromSlash(tc.link))
			if err := os.MkdirAll(filepath.Dir(link), 0o700); err != nil {
				t.Fatal(err)
			}
			os.RemoveAll(link)
			target := victim
			if tc.dir {
				target = victimDir
			}
			if err := os.Symlink(target, link); err != nil {
				t.Fatal(err)
			}
			before := outsideState(t, root)
			code, out, errs := wellscan(t, args(tc.args)...)
			if code == 0 && !tc.warn {
				t.Errorf("%v: exit 0, want a refusal\n%s%s", tc.args, out, errs)
			}
			all := out + errs
			if tc.name == "a point directory" || tc.name == "points directory" || tc.name == "result file" {
				// The run goes on with the other points; the link is
				// named in the point's error.
				code2, st, _ := wellscan(t, "status", dir)
				all += st
				_ = code2
			}
			if !strings.Contains(all, "symbolic link") || !strings.Contains(all, filepath.Base(tc.link)) {
				t.Errorf("output does not name the link %s:\n%s", tc.link, all)
			}
			if after := outsideState(t, root); after != before {
				t.Errorf("something outside the scan directory changed:\nbefore:\n%s\nafter:\n%s", before, after)
			}
		})
	}
}

// TestCLI_ForeignOrEditedSpecRefused is issue 15 item 3: fit, report and
// export refuse a store whose points were computed for another spec
// (O changed to S in scan.toml; a store copied from another scan), and
// status marks it.
func TestCLI_ForeignOrEditedSpecRefused(t *testing.T) {
	done := func(t *testing.T, spec string) string {
		dir := t.TempDir()
		writeSpec(t, dir, spec)
		if code, out, errs := wellscan(t, "run", "-q", dir); code != 0 {
			t.Fatalf("run: exit %d\n%s%s", code, out, errs)
		}
		return dir
	}
	cases := map[string]func(t *testing.T) string{
		"O changed to S": func(t *testing.T) string {
			dir := done(t, modelSpec)
			writeSpec(t, dir, strings.Replace(modelSpec, "O 0 0 1.13", "S 0 0 1.13", 1))
			return dir
		},
		"store copied from another scan": func(t *testing.T) string {
			other := done(t, strings.Replace(strings.Replace(modelSpec, "C 0 0 0", "H 0 0 0", 1), "O 0 0 1.13", "H 0 0 1.13", 1))
			dir := t.TempDir()
			writeSpec(t, dir, modelSpec)
			b, err := os.ReadFile(filepath.Join(other, "wellscan.db"))
			if err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(filepath.Join(dir, "wellscan.db"), b, 0o600); err != nil {
				t.Fatal(err)
			}
			return dir
		},
	}
	for name, mk := range cases {
		t.Run(name, func(t *testing.T) {
			dir := mk(t)
			for _, args := range [][]string{{"fit", dir}, {"report", dir}, {"export", dir}, {"export", dir, "--format", "json"}, {"status", dir}, {"run", "-q", dir}} {
				code, out, errs := wellscan(t, args...)
				if code != 1 || !strings.Contains(errs, "molecule (atoms, geometry, charge or multiplicity)") {
					t.Errorf("%v: exit %d, want 1 naming the molecule\n%s%s", args, code, out, errs)
				}
				if args[0] == "fit" && strings.Contains(out, "ω") {
					t.Errorf("fit printed constants for a foreign store:\n%s", out)
				}
				if args[0] == "status" && !strings.HasPrefix(out, "WARNING: ") {
					t.Errorf("status does not start with a warning:\n%s", out)
				}
			}
			if _, err := os.Stat(filepath.Join(dir, "report")); err == nil {
				t.Errorf("report wrote files for a foreign store")
			}
		})
	}
}

// TestCLI_ControlCharactersEscaped is issue 15 item 2: terminal escape
// bytes in a title or in a program's stderr never reach run, status, plan
// or the report's summary files raw.
func TestCLI_ControlCharactersEscaped(t *testing.T) {
	dir := t.TempDir()
	evil := `\u001b]0;pwned\u0007\u001b[2J\u009b31m`
	spec := strings.Replace(badCommandSpec, `title = "bad input command"`, `title = "evil `+evil+`"`, 1)
	spec = strings.Replace(spec, `command = ["cat", "point.in"]`, `command = ["sh", "-c", 'cat point.in; printf "\033[31mboom\033]0;x\007" >&2; test $WELLSCAN_KEY != r=0.70000']`, 1)
	writeSpec(t, dir, spec)
	if err := os.WriteFile(filepath.Join(dir, "point.tmpl"), []byte("energy = -1.0\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	var all bytes.Buffer
	for _, args := range [][]string{{"plan", dir}, {"run", dir}, {"status", dir}, {"status", dir, "--json"}, {"report", dir}, {"export", dir}} {
		code, out, errs := wellscan(t, args...)
		all.WriteString(out + errs)
		if args[0] == "run" && code != 3 {
			t.Errorf("run: exit %d, want 3 (one point fails)\n%s%s", code, out, errs)
		}
	}
	for _, f := range []string{"report/summary.md", "report/summary.html", "report/curve.csv", "points/r=0.70000/exit-status"} {
		b, err := os.ReadFile(filepath.Join(dir, f))
		if err != nil {
			t.Logf("%s: %v", f, err)
			continue
		}
		all.Write(b)
	}
	if i := bytes.IndexByte(all.Bytes(), 0x1b); i >= 0 {
		t.Errorf("a raw ESC byte reached the output: …%q…", all.Bytes()[max(0, i-40):min(all.Len(), i+40)])
	}
	if bytes.Contains(all.Bytes(), []byte{0x07}) || bytes.Contains(all.Bytes(), []byte("\u009b")) {
		t.Errorf("a raw BEL or CSI reached the output")
	}
	if !strings.Contains(all.String(), `\x1b`) {
		t.Errorf("the escaped sequences are not shown at all")
	}
}

// TestCLI_FIFOsRefused is issue 15 item 11: a named pipe given as the
// spec, the molecule file, the template or a fit table is refused by name
// instead of blocking forever.
func TestCLI_FIFOsRefused(t *testing.T) {
	type row struct {
		name, fifo string
		spec       string
		args       []string
	}
	rows := []row{
		{"spec", "scan.toml", "", []string{"plan", "DIR"}},
		{"molecule file", "mol.xyz", strings.Replace(modelSpec, "geometry = \"\"\"\nC 0 0 0\nO 0 0 1.13\n\"\"\"", `file = "mol.xyz"`, 1), []string{"plan", "DIR"}},
		{"template", "point.tmpl", badCommandSpec, []string{"plan", "DIR"}},
		{"fit table", "tb.csv", modelSpec, []string{"fit", "--table", "DIR/tb.csv", "--atoms", "C,O"}},
		{"energy geometry", "in.xyz", modelSpec, []string{"energy", "DIR/in.xyz", "--basis", "STO-3G"}},
	}
	for _, tc := range rows {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			if tc.spec != "" {
				writeSpec(t, dir, tc.spec)
			}
			if err := syscall.Mkfifo(filepath.Join(dir, tc.fifo), 0o600); err != nil {
				t.Skipf("no FIFOs here: %v", err)
			}
			args := make([]string, len(tc.args))
			for i, a := range tc.args {
				args[i] = strings.ReplaceAll(a, "DIR", dir)
			}
			type res struct {
				code      int
				out, errs string
			}
			ch := make(chan res, 1)
			go func() {
				c, o, e := wellscan(t, args...)
				ch <- res{c, o, e}
			}()
			select {
			case r := <-ch:
				if r.code == 0 || !strings.Contains(r.errs, "named pipe (FIFO)") || !strings.Contains(r.errs, tc.fifo) {
					t.Errorf("%v: exit %d, want an error naming %s as a named pipe\n%s%s", args, r.code, tc.fifo, r.out, r.errs)
				}
			case <-time.After(20 * time.Second):
				// Unblock the reader so the test binary can end.
				if f, err := os.OpenFile(filepath.Join(dir, tc.fifo), os.O_WRONLY, 0); err == nil {
					f.Close()
				}
				t.Fatalf("%v blocked on the FIFO", args)
			}
		})
	}
}
