package main

import (
	"encoding/json"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"wellscan/runner"
)

// Bad-input matrix: each row damages one input of a scan that has
// already run once (its spec, molecule file, basis choice, input
// template, a table for `fit --table`, or the external command), runs one
// command in-process, and requires the exit code, an error text naming
// the file, key or point, and a store left byte for byte as it was (or,
// for rows that add points, one whose earlier point records are intact).

// badModelSpec, badHFSpec and badCommandSpec are the three scans the rows
// damage (invented Morse constants for the model, atomic units).
// badModelSpec is cmd_test.go's model scan under another title.
var badModelSpec = strings.Replace(modelSpec, `title = "cmd test"`, `title = "bad input model"`, 1)

const badHFSpec = `title = "bad input hf"
[molecule]
geometry = """
H 0 0 0
H 0 0 0.74
"""
[[scan]]
name = "r"
bond = [1, 2]
from = 0.60
to = 0.90
step = 0.10
[refine]
adaptive = false
[engine]
kind = "builtin"
method = "rhf"
basis = "STO-3G"
`

// badCommandSpec runs `cat` on the rendered input, so the template itself
// writes the "energy = …" line the label extractor reads. Its template
// (badTemplate) misbehaves only for r=1.00000, a point outside the grid
// until a row extends it.
const badCommandSpec = `title = "bad input command"
[molecule]
geometry = """
H 0 0 0
H 0 0 0.74
"""
[[scan]]
name = "r"
bond = [1, 2]
from = 0.60
to = 0.90
step = 0.10
[refine]
adaptive = false
[engine]
kind = "command"
[engine.command]
template = "point.tmpl"
input = "point.in"
command = ["cat", "point.in"]
energy = { label = "energy", unit = "hartree" }
`

const badTemplate = `{{if eq .Key "r=1.00000"}}%s{{else}}energy = -1.0{{end}}
`

// goodTableHeader heads a valid curve for `fit --table` (invented numbers).
const goodTableHeader = "r [angstrom], energy [hartree]\n"

type badInput struct {
	name  string
	base  string            // "model", "hf" or "command"
	edits [][2]string       // replacements in scan.toml, in order
	files map[string]string // files written into the scan directory
	args  []string          // the command; DIR is replaced by the scan directory; default run -q DIR
	code  int
	want  []string // every one must appear in stdout+stderr
	// setup runs after the files are written (symlinks, files outside).
	setup func(t *testing.T, dir string)
	// grows: the row adds points, so the store may change, but every
	// point record of the first run must stay as it was.
	grows bool
}

func badInputs() []badInput {
	tmpl := func(body string) map[string]string {
		return map[string]string{"point.tmpl": strings.Replace(badTemplate, "%s", body, 1)}
	}
	extend := [2]string{"to = 0.90", "to = 1.00"}
	fit := func() []string {
		return []string{"fit", "--table", "DIR/tb.csv", "--atoms", "H,H"}
	}
	table := func(body string) map[string]string { return map[string]string{"tb.csv": body} }
	return []badInput{
		// spec
		{name: "spec/toml syntax", base: "model", edits: [][2]string{{"step = 0.05", "step = = 0.05"}}, code: 1,
			want: []string{"scan.toml:12: scan.step: expected value but found '=' instead"}},
		{name: "spec/unknown table", base: "model", edits: [][2]string{{"[engine]", "[enginex]"}}, code: 1,
			want: []string{"scan.toml:13: enginex: unknown key (allowed here: title, molecule, scan, refine, engine, queue, checks)"}},
		{name: "spec/unknown engine", base: "model", edits: [][2]string{{`kind = "model"`, `kind = "quantum"`}}, code: 1,
			want: []string{`scan.toml:14: engine.kind: unknown engine "quantum"`}},
		{name: "spec/zero step", base: "model", edits: [][2]string{{"step = 0.05", "step = 0"}}, code: 1,
			want: []string{"scan.toml:12: scan[1].step: must be positive, got 0"}},
		{name: "spec/negative workers", base: "model", edits: [][2]string{{"workers = 2", "workers = -1"}}, code: 1,
			want: []string{"scan.toml:23: queue.workers: must be between 0 (all CPUs) and 4096, got -1"}},
		{name: "spec/unknown queue", base: "model", edits: [][2]string{{"workers = 2", "workers = 2\nkind = \"cloud\""}}, code: 1,
			want: []string{`scan.toml:24: queue.kind: unknown queue "cloud"`}},
		{name: "spec/duplicate scan name", base: "model", edits: [][2]string{{"[engine]", "[[scan]]\nname = \"r\"\nbond = [1, 2]\nfrom = 1.0\nto = 1.2\nstep = 0.1\n[engine]"}}, code: 1,
			want: []string{`scan.toml:14: scan[2].name: name "r" is used by two [[scan]] blocks`}},
		{name: "spec/unknown model shape", base: "model", edits: [][2]string{{`shape = "morse"`, `shape = "spline"`}}, code: 1,
			want: []string{`scan.toml:18: engine.model.term[1].shape: unknown shape "spline"`}},
		{name: "spec/negative max_rounds", base: "model", edits: [][2]string{{"[engine]", "[refine]\nmax_rounds = -3\n[engine]"}}, code: 1,
			want: []string{"scan.toml:14: refine.max_rounds: must be between 1 and 100000, got -3"}},
		{name: "spec/negative max_jump_hartree", base: "model", edits: [][2]string{{"[queue]", "[checks]\nmax_jump_hartree = -0.1\n[queue]"}}, code: 1,
			want: []string{"scan.toml:23: checks.max_jump_hartree: must be between 0 (off) and 100 hartree, got -0.1"}},
		{name: "spec/max_jump_hartree not a number", base: "model", edits: [][2]string{{"[queue]", "[checks]\nmax_jump_hartree = \"big\"\n[queue]"}}, code: 1,
			want: []string{"scan.toml:23: checks.max_jump_hartree: incompatible types: TOML value has type string; destination has type float"}},
		{name: "spec/unknown checks key", base: "model", edits: [][2]string{{"[queue]", "[checks]\nmax_jump = 0.1\n[queue]"}}, code: 1,
			want: []string{"scan.toml:23: checks.max_jump: unknown key (allowed here: max_jump_hartree)"}},
		{name: "spec/negative bond length", base: "model", edits: [][2]string{{"from = 1.00", "from = -1.00"}}, code: 1,
			want: []string{"scan.toml:10: scan[1].from: bond length -1 Å is not positive"}},
		{name: "spec/angle atom out of range", base: "model", edits: [][2]string{{"bond = [1, 2]", "angle = [1, 2, 3]"}}, code: 1,
			want: []string{"scan.toml:9: scan[1].angle: atom 3 is out of range (the molecule has 2 atoms)"}},
		// molecule
		{name: "molecule/unknown element", base: "model", edits: [][2]string{{"O 0 0 1.13", "Xq 0 0 1.13"}}, code: 1,
			want: []string{`scan.toml:3: molecule.geometry: atom 2: isotope "Xq": planner: unknown element "Xq"`}},
		{name: "molecule/coordinate not a number", base: "model", edits: [][2]string{{"O 0 0 1.13", "O 0 0 abc"}}, code: 1,
			want: []string{"molecule.geometry:", `scan.toml:5: coordinate z of O is not a finite number: "abc"`}},
		{name: "molecule/missing coordinate", base: "model", edits: [][2]string{{"O 0 0 1.13", "O 0 1.13"}}, code: 1,
			want: []string{`scan.toml:5: expected "element x y z", got "O 0 1.13"`}},
		{name: "molecule/atoms on top of each other", base: "model", edits: [][2]string{{"O 0 0 1.13", "O 0 0 0"}}, code: 1,
			want: []string{"molecule.geometry: atoms too close: atom 1 (C) and atom 2 (O) are 0 bohr apart"}},
		{name: "molecule/impossible multiplicity", base: "model", edits: [][2]string{{"[molecule]", "[molecule]\nmultiplicity = 2"}}, code: 1,
			want: []string{"molecule.multiplicity: impossible charge and multiplicity: 14 electrons (charge +0) cannot have multiplicity 2"}},
		{name: "molecule/impossible charge", base: "model", edits: [][2]string{{"[molecule]", "[molecule]\ncharge = 20"}}, code: 1,
			want: []string{"molecule.charge: charge +20 is outside the range wellscan accepts for this molecule, -10 to +13"}},
		{name: "molecule/unknown unit", base: "model", edits: [][2]string{{"[molecule]", "[molecule]\nunits = \"furlong\""}}, code: 1,
			want: []string{`molecule.units: unknown unit "furlong" (use "angstrom" or "bohr")`}},
		{name: "molecule/file missing", base: "model", edits: [][2]string{{"geometry = \"\"\"\nC 0 0 0\nO 0 0 1.13\n\"\"\"", `file = "nope.xyz"`}}, code: 1,
			want: []string{"scan.toml:3: molecule.file: open ", "nope.xyz: no such file or directory"}},
		{name: "molecule/file truncated", base: "model", edits: [][2]string{{"geometry = \"\"\"\nC 0 0 0\nO 0 0 1.13\n\"\"\"", `file = "mol.xyz"`}},
			files: map[string]string{"mol.xyz": "2\nCO\nC 0 0 0\n"}, code: 1,
			want: []string{"scan.toml:3: molecule.file: ", "mol.xyz:3: file ends after 1 of 2 atoms"}},
		{name: "molecule/geometry and file", base: "model", edits: [][2]string{{"[molecule]", "[molecule]\nfile = \"mol.xyz\""}}, code: 1,
			want: []string{"molecule.file: give geometry or file, not both"}},
		// basis and method
		{name: "basis/unknown name", base: "hf", edits: [][2]string{{`basis = "STO-3G"`, `basis = "6-31G#"`}}, code: 1,
			want: []string{`scan.toml: engine.basis: basis: unknown basis set "6-31G#"`}},
		{name: "basis/element not covered", base: "hf", edits: [][2]string{{"H 0 0 0\nH 0 0 0.74", "K 0 0 0\nH 0 0 2.2"}, {`basis = "STO-3G"`, `basis = "6-31G*"`}}, code: 1,
			want: []string{"engine.basis", "6-31G* has no data for K (it covers H–Ar)"}},
		{name: "basis/unknown method", base: "hf", edits: [][2]string{{`method = "rhf"`, `method = "ccsdt"`}}, code: 1,
			want: []string{`scan.toml:17: engine.method: unknown method "ccsdt"`}},
		{name: "basis/rhf on an open shell", base: "hf", edits: [][2]string{{"[molecule]", "[molecule]\ncharge = 1"}}, code: 1,
			want: []string{"engine.method: rhf needs a closed-shell molecule (multiplicity 1), this one has multiplicity 2"}},
		{name: "basis/negative convergence", base: "hf", edits: [][2]string{{`basis = "STO-3G"`, "basis = \"STO-3G\"\nconvergence = -1"}}, code: 1,
			want: []string{"scan.toml:19: engine.convergence: must be between 0 and 1 hartree, got -1"}},
		{name: "basis/show unknown", base: "hf", args: []string{"basis", "show", "NOPE"}, code: 1,
			want: []string{`basis: unknown basis set "NOPE"`}},
		// template
		{name: "template/file missing", base: "command", edits: [][2]string{{`template = "point.tmpl"`, `template = "nope.tmpl"`}}, code: 1,
			want: []string{"engine.command", "input template: open ", "nope.tmpl: no such file or directory"}},
		{name: "template/unclosed action", base: "command", files: map[string]string{"point.tmpl": "line 1\nenergy = {{.Key\n"}, code: 1,
			want: []string{"point.tmpl:3: unclosed action started at ", "point.tmpl:2"}},
		// Issue 15 item 10: these hung plan and run, or wrote gigabytes.
		{name: "template/empty loop of 1e11", base: "command", files: map[string]string{"point.tmpl": "{{range 100000000000}}{{end}}energy = -1\n"}, args: []string{"plan", "DIR"}, code: 1,
			want: []string{"point.tmpl:1:", "more than the 1000000 a template may loop over a constant"}},
		{name: "template/loop of 1e8 writing", base: "command", files: map[string]string{"point.tmpl": "{{range 100000000}}x{{end}}\n"}, args: []string{"plan", "DIR"}, code: 1,
			want: []string{"point.tmpl:1:", "runs 1e+08 times"}},
		{name: "template/edited, then a new point", base: "command", edits: [][2]string{extend}, files: tmpl("{{.Nope}}"), code: 1,
			// Issue 15 item 4: the template is part of the fingerprint, so
			// editing it and extending the grid is refused, not mixed.
			want: []string{"spec changed since this scan started", "the contents of the engine's files (input template"}},
		{name: "template/edited unit, then a new point", base: "command", edits: [][2]string{extend}, files: tmpl(`{{.XYZ "parsec"}}`), code: 1,
			// Issue 15 item 4: the template is part of the fingerprint, so
			// editing it and extending the grid is refused, not mixed.
			want: []string{"spec changed since this scan started", "the contents of the engine's files (input template"}},
		// table
		{name: "table/no units", base: "model", files: table("r,energy\n1.0,-1.1\n1.1,-1.2\n1.2,-1.15\n"), args: fit(), code: 1,
			want: []string{"tb.csv: need a coordinate column with a length or angle unit", "got r (no unit), energy (no unit)"}},
		{name: "table/unknown unit", base: "model", files: table("r [furlong], energy [hartree]\n1.0,-1.1\n1.1,-1.2\n1.2,-1.15\n"), args: fit(), code: 1,
			want: []string{`tb.csv:1:1: column "r": unknown unit "furlong"`}},
		{name: "table/not a number", base: "model", files: table(goodTableHeader + "1.0,-1.1\n1.1,abc\n1.2,-1.15\n"), args: fit(), code: 1,
			want: []string{`tb.csv:3:5: column "energy": expected a finite number, got "abc"`}},
		{name: "table/NaN", base: "model", files: table(goodTableHeader + "1.0,-1.1\n1.1,NaN\n1.2,-1.15\n"), args: fit(), code: 1,
			want: []string{`tb.csv:3:5: column "energy": expected a finite number, got "NaN"`}},
		{name: "table/short row", base: "model", files: table(goodTableHeader + "1.0,-1.1\n1.1\n1.2,-1.15\n"), args: fit(), code: 1,
			want: []string{"tb.csv:3:1: 1 value(s) but the header names 2 column(s) (r, energy)"}},
		{name: "table/too few points", base: "model", files: table(goodTableHeader + "1.0,-1.1\n"), args: fit(), code: 1,
			want: []string{"tb.csv: fit: 1 usable points; a minimum needs at least 3"}},
		{name: "table/repeated coordinate", base: "model", files: table(goodTableHeader + "1.0,-1.1\n1.0,-1.2\n1.2,-1.15\n1.3,-1.1\n"), args: fit(), code: 1,
			want: []string{"tb.csv:3: r = 1 repeats the coordinate of line 2"}},
		{name: "table/file missing", base: "model", args: fit(), code: 1,
			want: []string{"fit: open ", "tb.csv: no such file or directory"}},
		// paths that leave the scan directory, and size limits
		{name: "security/molecule file above the scan", base: "model", edits: [][2]string{{"geometry = \"\"\"\nC 0 0 0\nO 0 0 1.13\n\"\"\"", `file = "../outside.xyz"`}},
			setup: outside("outside.xyz", "2\nCO\nC 0 0 0\nO 0 0 1.13\n"), code: 1,
			want: []string{"scan.toml:3: molecule.file: ", "outside.xyz is outside the scan directory"}},
		{name: "security/molecule file absolute", base: "model", edits: [][2]string{{"geometry = \"\"\"\nC 0 0 0\nO 0 0 1.13\n\"\"\"", `file = "/etc/hostname"`}}, code: 1,
			want: []string{"scan.toml:3: molecule.file: /etc/hostname is outside the scan directory"}},
		{name: "security/molecule file symlink out", base: "model", edits: [][2]string{{"geometry = \"\"\"\nC 0 0 0\nO 0 0 1.13\n\"\"\"", `file = "mol.xyz"`}},
			setup: symlinkOut("mol.xyz", "2\nCO\nC 0 0 0\nO 0 0 1.13\n"), code: 1,
			want: []string{"scan.toml:3: molecule.file: ", "mol.xyz leads outside the scan directory", "through a symbolic link"}},
		{name: "security/template above the scan", base: "command", edits: [][2]string{{`template = "point.tmpl"`, `template = "../point.tmpl"`}},
			setup: outside("point.tmpl", "energy = -1.0\n"), code: 1,
			want: []string{"scan.toml: engine.command.template: planner: ", "point.tmpl is outside the scan directory"}},
		{name: "security/template symlink out", base: "command", edits: [][2]string{{`template = "point.tmpl"`, `template = "link.tmpl"`}},
			setup: symlinkOut("link.tmpl", "energy = -1.0\n"), code: 1,
			want: []string{"engine.command.template: ", "link.tmpl leads outside the scan directory"}},
		{name: "security/script absolute", base: "command", edits: [][2]string{{`command = ["cat", "point.in"]`, "shell = true\nscript = \"/bin/true\""}}, code: 1,
			want: []string{"scan.toml: engine.command.script: planner: /bin/true is outside the scan directory"}},
		{name: "security/spec over 1 MiB", base: "model", edits: [][2]string{{"[queue]", "# " + strings.Repeat("x", 1<<20) + "\n[queue]"}}, code: 1,
			want: []string{"scan.toml is larger than the 1048576 bytes a spec may have"}},
		// command
		{name: "command/program not found", base: "command", edits: [][2]string{{`command = ["cat", "point.in"]`, `command = ["no-such-prog-xyz", "point.in"]`}}, code: 1,
			want: []string{"engine.command", `program "no-such-prog-xyz": exec: "no-such-prog-xyz": executable file not found in $PATH`}},
		{name: "command/empty", base: "command", edits: [][2]string{{`command = ["cat", "point.in"]`, `command = []`}}, code: 1,
			want: []string{"scan.toml: [engine.command]: no program"}},
		{name: "command/shell and argv", base: "command", edits: [][2]string{{`command = ["cat", "point.in"]`, "command = [\"cat\", \"point.in\"]\nshell = true\nscript = \"r.sh\""}}, code: 1,
			want: []string{"scan.toml: [engine.command]: shell is set, so command must be empty"}},
		{name: "command/bad timeout", base: "command", edits: [][2]string{{`command = ["cat", "point.in"]`, "command = [\"cat\", \"point.in\"]\ntimeout = \"soon\""}}, code: 1,
			want: []string{`scan.toml: [engine.command] timeout: expected a duration such as "90s", "30m" or "2h", got "soon"`}},
		{name: "command/reserved env", base: "command", edits: [][2]string{{`command = ["cat", "point.in"]`, "command = [\"cat\", \"point.in\"]\nenv = { WELLSCAN_X = \"1\" }"}}, code: 1,
			want: []string{"[engine.command]: environment variable WELLSCAN_X: names starting with WELLSCAN_ are set by wellscan"}},
		{name: "command/bad pattern", base: "command", edits: [][2]string{{`energy = { label = "energy", unit = "hartree" }`, `energy = { pattern = "(", unit = "hartree" }`}}, code: 1,
			want: []string{`[engine.command] energy: parsers: energy pattern "(" is not a valid regular expression`}},
		{name: "command/bad energy unit", base: "command", edits: [][2]string{{`energy = { label = "energy", unit = "hartree" }`, `energy = { label = "energy", unit = "kcal/fortnight" }`}}, code: 1,
			want: []string{`[engine.command] energy: parsers: unknown energy unit "kcal/fortnight"`}},
		{name: "command/template edited to print nothing, then a new point", base: "command", edits: [][2]string{extend}, files: tmpl("nothing"), code: 1,
			// Issue 15 item 4: the template is part of the fingerprint, so
			// editing it and extending the grid is refused, not mixed.
			want: []string{"spec changed since this scan started", "the contents of the engine's files (input template"}},
	}
}

// outside writes name with body next to the scan directory (outside it).
func outside(name, body string) func(t *testing.T, dir string) {
	return func(t *testing.T, dir string) {
		t.Helper()
		if err := os.WriteFile(filepath.Join(filepath.Dir(dir), name), []byte(body), 0o600); err != nil {
			t.Fatal(err)
		}
	}
}

// symlinkOut makes dir/name a symbolic link to a file with body outside
// the scan directory.
func symlinkOut(name, body string) func(t *testing.T, dir string) {
	return func(t *testing.T, dir string) {
		t.Helper()
		target := filepath.Join(t.TempDir(), "target-"+name)
		if err := os.WriteFile(target, []byte(body), 0o600); err != nil {
			t.Fatal(err)
		}
		if err := os.Symlink(target, filepath.Join(dir, name)); err != nil {
			t.Skipf("no symlinks here: %v", err)
		}
	}
}

// copyTree copies the scan directory src to dst.
func copyTree(t *testing.T, src, dst string) {
	t.Helper()
	err := filepath.WalkDir(src, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(src, p)
		to := filepath.Join(dst, rel)
		if d.IsDir() {
			return os.MkdirAll(to, 0o700)
		}
		b, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		return os.WriteFile(to, b, 0o600)
	})
	if err != nil {
		t.Fatal(err)
	}
}

// pointRecords reads the raw point records of the store in dir as JSON
// text per key (the store's own encoding).
func pointRecords(t *testing.T, dir string) map[string]string {
	t.Helper()
	st, err := runner.Open(dir, runner.OpenOptions{ReadOnly: true, Timeout: 5 * time.Second})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	recs, err := st.Points()
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]string{}
	for _, r := range recs {
		b, err := json.Marshal(r)
		if err != nil {
			t.Fatal(err)
		}
		out[r.Key] = string(b)
	}
	return out
}

func TestCLI_BadInputMatrix(t *testing.T) {
	root := t.TempDir()
	bases := map[string]string{}
	for name, spec := range map[string]string{"model": badModelSpec, "hf": badHFSpec, "command": badCommandSpec} {
		dir := filepath.Join(root, "base-"+name)
		if err := os.MkdirAll(dir, 0o700); err != nil {
			t.Fatal(err)
		}
		writeSpec(t, dir, spec)
		if name == "command" {
			if err := os.WriteFile(filepath.Join(dir, "point.tmpl"), []byte(strings.Replace(badTemplate, "%s", "energy = -1.0", 1)), 0o600); err != nil {
				t.Fatal(err)
			}
		}
		if code, out, errs := wellscan(t, "run", "-q", dir); code != 0 {
			t.Fatalf("base %s: exit %d\n%s%s", name, code, out, errs)
		}
		bases[name] = dir
	}
	cases := badInputs()
	if len(cases) < 25 {
		t.Fatalf("%d bad inputs, want at least 25", len(cases))
	}
	t.Logf("%d bad inputs", len(cases))
	for i, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			dir := filepath.Join(root, "case", strings.NewReplacer("/", "-", " ", "-").Replace(tc.name))
			copyTree(t, bases[tc.base], dir)
			text, err := os.ReadFile(filepath.Join(dir, "scan.toml"))
			if err != nil {
				t.Fatal(err)
			}
			spec := string(text)
			for _, e := range tc.edits {
				if !strings.Contains(spec, e[0]) {
					t.Fatalf("row %d: %q not in the %s spec", i, e[0], tc.base)
				}
				spec = strings.Replace(spec, e[0], e[1], 1)
			}
			writeSpec(t, dir, spec)
			for name, body := range tc.files {
				if err := os.WriteFile(filepath.Join(dir, name), []byte(body), 0o600); err != nil {
					t.Fatal(err)
				}
			}
			if tc.setup != nil {
				tc.setup(t, dir)
			}
			db := filepath.Join(dir, runner.DBFile)
			before := hashFile(t, db)
			recsBefore := pointRecords(t, dir)
			args := tc.args
			if args == nil {
				args = []string{"run", "-q", "DIR"}
			}
			args = append([]string(nil), args...)
			for k := range args {
				args[k] = strings.ReplaceAll(args[k], "DIR", dir)
			}
			code, out, errs := wellscan(t, args...)
			if code != tc.code {
				t.Errorf("wellscan %s: exit %d, want %d\n%s%s", strings.Join(args, " "), code, tc.code, out, errs)
			}
			for _, w := range tc.want {
				if !strings.Contains(out+errs, w) {
					t.Errorf("output lacks %q:\n%s%s", w, out, errs)
				}
			}
			if strings.Contains(errs, "panic") || strings.Contains(errs, "goroutine ") {
				t.Errorf("panic on bad input:\n%s", errs)
			}
			if !tc.grows {
				if hashFile(t, db) != before {
					t.Errorf("%s changed", runner.DBFile)
				}
				return
			}
			after := pointRecords(t, dir)
			for k, r := range recsBefore {
				if after[k] != r {
					t.Errorf("point %s changed:\n%s\nwas\n%s", k, after[k], r)
				}
			}
			if len(after) <= len(recsBefore) {
				t.Errorf("%d points after, %d before: the row was meant to add one", len(after), len(recsBefore))
			}
		})
	}
}
