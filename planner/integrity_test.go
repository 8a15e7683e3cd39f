package planner

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
	"time"
)

// mutate applies old→new replacements to the Morse example spec.
func mutate(t *testing.T, pairs ...string) string {
	t.Helper()
	s := readExample(t, "morse-model")
	for i := 0; i+1 < len(pairs); i += 2 {
		if !strings.Contains(s, pairs[i]) {
			t.Fatalf("example spec has no %q", pairs[i])
		}
		s = strings.Replace(s, pairs[i], pairs[i+1], 1)
	}
	return s
}

// TestDecode_LateErrorsCaughtEarly is issue 15 items 7, 9 and 15: every
// number that used to pass the plan and fail later (or with a misleading
// message) is refused by Decode, naming the key that holds it.
func TestDecode_LateErrorsCaughtEarly(t *testing.T) {
	tests := []struct {
		name     string
		pairs    []string
		key, msg string
	}{
		{"values with inf", []string{"from = 0.95", "values = [1.0, 1.1, inf]", "to = 1.45", "", "step = 0.05", ""}, "scan[1].values", "value 3 is +Inf"},
		{"values with nan", []string{"from = 0.95", "values = [nan, 1.1]", "to = 1.45", "", "step = 0.05", ""}, "scan[1].values", "value 1 is NaN"},
		{"from nan blames from", []string{"from = 0.95", "from = nan"}, "scan[1].from", "finite"},
		{"to inf", []string{"to = 1.45", "to = inf"}, "scan[1].to", "finite"},
		{"step nan", []string{"step = 0.05", "step = nan"}, "scan[1].step", "finite"},
		{"target_step inf", []string{"target_step = 0.002", "target_step = inf"}, "refine.target_step", "finite"},
		{"tolerance inf", []string{"tolerance = 1e-4", "tolerance = inf"}, "refine.tolerance", "positive"},
		{"model depth nan", []string{"depth = 0.41", "depth = nan"}, "engine.model.term[1].depth", "finite"},
		{"model center inf", []string{"center = 2.135", "center = inf"}, "engine.model.term[1].center", "finite"},
		{"model offset inf", []string{"offset = -112.7", "offset = -inf"}, "engine.model.offset", "finite"},
		{"charge -1000", []string{"units = \"angstrom\"", "units = \"angstrom\"\ncharge = -1000"}, "molecule.charge", "charge -1000 is outside"},
		{"charge strips every electron", []string{"units = \"angstrom\"", "units = \"angstrom\"\ncharge = 14"}, "molecule.charge", "at least one electron"},
		{"values [0.05] too short, not 'not positive'", []string{"from = 0.95", "values = [0.05]", "to = 1.45", "", "step = 0.05", ""}, "scan[1].values", "shorter than the closest approach"},
		{"bond 1e240 in values", []string{"from = 0.95", "values = [1.0, 1e240]", "to = 1.45", "", "step = 0.05", ""}, "scan[1].values", "longer than 10000 Å"},
		{"coordinate 1e240, not 'interfere'", []string{"0.0 0.0 1.13", "0.0 0.0 1e240"}, "molecule.geometry", "atom 2: z coordinate 1e+240"},
		{"coordinate 1e308", []string{"0.0 0.0 1.13", "0.0 1e308 1.13"}, "molecule.geometry", "atom 2: y coordinate 1e+308"},
		{"two count=10000 axes", []string{"[refine]", "[[scan]]\nname = \"q\"\nbond = [1, 2]\nfrom = 1.0\nto = 2.0\ncount = 10000\n\n[refine]\nadaptive = false", "step = 0.05", "count = 10000"}, "scan[2]", "more than the 100000"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			text := mutate(t, tc.pairs...)
			start := time.Now()
			_, err := Decode([]byte(text), "scan.toml")
			if err == nil {
				t.Fatalf("Decode accepted the spec; want an error at %s", tc.key)
			}
			var se *SpecError
			if !errors.As(err, &se) {
				t.Fatalf("Decode error %v is not a *SpecError", err)
			}
			if se.Key != tc.key || !strings.Contains(se.Msg, tc.msg) {
				t.Errorf("Decode error = %v, want key %s and %q", err, tc.key, tc.msg)
			}
			if d := time.Since(start); d > 5*time.Second {
				t.Errorf("Decode took %v; a refusal must be quick", d)
			}
		})
	}
}

// TestDecode_TOMLShapeLimits is issue 15 item 8: a small spec nested very
// deep, or with a very long dotted key, is refused before decoding, with
// its line, and without the memory the decoder would take.
func TestDecode_TOMLShapeLimits(t *testing.T) {
	deep := "title = \"x\"\nx = " + strings.Repeat("[", 10000) + strings.Repeat("]", 10000) + "\n"
	deepTable := "title = \"x\"\nx = " + strings.Repeat("{a = ", 10000) + "1" + strings.Repeat("}", 10000) + "\n"
	var dotted strings.Builder
	dotted.WriteString("title = \"x\"\n")
	for i := range 20000 {
		if i > 0 {
			dotted.WriteByte('.')
		}
		fmt.Fprintf(&dotted, "k")
	}
	dotted.WriteString(" = 1\n")
	header := "[" + strings.Repeat("a.", 5000) + "b]\n"
	tests := []struct {
		name, text, msg string
		line            int
	}{
		{"arrays 10000 deep", deep, "nested more than 32", 2},
		{"inline tables 10000 deep", deepTable, "nested more than 32", 2},
		{"dotted key of 20000 parts", dotted.String(), "more than 16 dotted parts", 2},
		{"table header of 5001 parts", header, "more than 16 dotted parts", 1},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			var before, after runtime.MemStats
			runtime.GC()
			runtime.ReadMemStats(&before)
			_, err := Decode([]byte(tc.text), "scan.toml")
			runtime.ReadMemStats(&after)
			var se *SpecError
			if !errors.As(err, &se) || !strings.Contains(se.Msg, tc.msg) || se.Line != tc.line {
				t.Fatalf("Decode = %v, want a *SpecError at line %d saying %q", err, tc.line, tc.msg)
			}
			// 64 MiB: generous for scanning a 40 KB text; the decoder took
			// gigabytes on these inputs.
			if grown := after.TotalAlloc - before.TotalAlloc; grown > 64<<20 {
				t.Errorf("Decode allocated %d bytes refusing a %d-byte spec", grown, len(tc.text))
			}
		})
	}
	// Real specs pass the shape check: strings, comments and numbers with
	// dots are not keys.
	for _, ex := range []string{"morse-model", "co-demo", "water-stretch", "water-bend", "water-stretch-bend"} {
		if err := checkTOMLShape([]byte(readExample(t, ex)), ex); err != nil {
			t.Errorf("checkTOMLShape(%s) = %v, want nil", ex, err)
		}
	}
	ok := "a.b.c = \"x.y.z.w.v.u.t.s.r.q.p.o.n.m.l.k.j.i\" # a.b.c.d.e.f.g.h.i.j.k.l.m.n.o.p.q.r\nv = [1.5, 2.5, 3.5, 4.5, 5.5, 6.5, 7.5, 8.5, 9.5, 10.5, 11.5, 12.5, 13.5, 14.5, 15.5, 16.5, 17.5]\nt = { a.b = 1, c = '''x.y.z\n.a.b.c.d.e.f.g.h.i.j.k.l.m.n.o.p.q''' }\n"
	if err := checkTOMLShape([]byte(ok), "ok.toml"); err != nil {
		t.Errorf("checkTOMLShape(strings, comments, numbers) = %v, want nil", err)
	}
}

// TestDecode_MoleculeSizeCap is issue 15 item 11: a molecule far beyond
// any scan is refused at once by its count, before the pairwise
// connectivity search.
func TestDecode_MoleculeSizeCap(t *testing.T) {
	var geo strings.Builder
	for i := range MaxAtoms + 1 {
		fmt.Fprintf(&geo, "H %d.0 %d.0 0.0\n", i%100, i/100)
	}
	text := mutate(t, "C 0.0 0.0 0.0\nO 0.0 0.0 1.13\n", geo.String())
	start := time.Now()
	_, err := Decode([]byte(text), "scan.toml")
	if err == nil || !strings.Contains(err.Error(), "5001 atoms, more than the 5000") {
		t.Fatalf("Decode = %v, want the atom cap", err)
	}
	if d := time.Since(start); d > 5*time.Second {
		t.Errorf("refusing %d atoms took %v", MaxAtoms+1, d)
	}
}

// TestFingerprint_EngineFiles is issue 15 item 4: the contents of the
// template, the script and a file named in the command are part of the
// fingerprint, so an edited template is a changed spec.
func TestFingerprint_EngineFiles(t *testing.T) {
	dir := t.TempDir()
	ex := readExample(t, "morse-model")
	spec := ex[:strings.Index(ex, "[engine]")] + "[engine]\nkind = \"command\"\n[engine.command]\ntemplate = \"p.tmpl\"\ninput = \"p.inp\"\ncommand = [\"awk\", \"-f\", \"prog.awk\", \"p.inp\"]\nenergy = { label = \"e\", unit = \"hartree\" }\n"
	write := func(name, body string) {
		t.Helper()
		if err := os.WriteFile(filepath.Join(dir, name), []byte(body), 0o600); err != nil {
			t.Fatal(err)
		}
	}
	write("scan.toml", spec)
	write("p.tmpl", "point {{.Key}}\n")
	write("prog.awk", "{ print \"e = -1\" }\n")
	load := func() Fingerprint {
		t.Helper()
		s, err := Load(filepath.Join(dir, "scan.toml"))
		if err != nil {
			t.Fatal(err)
		}
		return s.Fingerprint()
	}
	f0 := load()
	if f0.Files == "" {
		t.Fatal("the fingerprint of a command engine has no file hash")
	}
	if f1 := load(); f1 != f0 {
		t.Errorf("fingerprint changed without an edit: %v vs %v", f1, f0)
	}
	write("p.tmpl", "point {{.Key}} edited\n")
	f2 := load()
	if d := f0.Diff(f2); len(d) != 1 || !strings.Contains(d[0], "input template") {
		t.Errorf("Diff after editing the template = %q, want the engine's files", d)
	}
	write("p.tmpl", "point {{.Key}}\n")
	write("prog.awk", "{ print \"e = -2\" }\n")
	if f3 := load(); f3.Files == f0.Files {
		t.Errorf("editing a file named in the command left the fingerprint unchanged")
	}
}
