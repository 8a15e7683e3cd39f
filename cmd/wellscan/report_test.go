package main

import (
	"bytes"
	"encoding/json"
	"encoding/xml"
	"errors"
	"flag"
	"fmt"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"wellscan/parsers"
	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/report"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/")

// reportSpec is the model Morse scan of the report goldens (invented
// constants, atomic units; like testdata/examples/morse-model) with one
// point that always fails, so that the failure shows in every output.
var reportSpec = coMorse{Title: "model diatomic for the report goldens", From: "0.95", To: "1.45", Step: "0.05",
	Refine: "target_step = 0.002\ntolerance = 1e-4", Fail: []string{"r=1.35000"}, Queue: "[queue]\nworkers = 2\nattempts = 2"}.String()

// runReportScan runs the golden scan and its report once per test.
func runReportScan(t *testing.T) (dir string) {
	t.Helper()
	root := t.TempDir()
	dir = filepath.Join(root, "morse")
	if err := os.Mkdir(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	writeSpec(t, dir, reportSpec)
	if code, out, errs := wellscan(t, "run", "-q", dir); code != 3 {
		t.Fatalf("run exit %d, want 3 (one point fails by design)\n%s%s", code, out, errs)
	}
	if code, out, errs := wellscan(t, "report", "--date", "2026-12-01", dir); code != 0 {
		t.Fatalf("report exit %d\n%s%s", code, out, errs)
	}
	return dir
}

func golden(t *testing.T, name string, got []byte) []byte {
	t.Helper()
	path := filepath.Join("testdata", name+".golden")
	if *update {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test -run %s -update to create it)", err, t.Name())
	}
	return want
}

func readFile(t *testing.T, path string) []byte {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func TestReport_ModelMorse_Goldens(t *testing.T) {
	dir := runReportScan(t)
	for _, name := range []string{"curve.csv", "summary.md"} {
		t.Run(name, func(t *testing.T) {
			// The version is stamped at build time; the golden carries a
			// placeholder.
			got := bytes.ReplaceAll(readFile(t, filepath.Join(dir, "report", name)), []byte("wellscan "+version), []byte("wellscan VERSION"))
			if want := golden(t, "report_"+name, got); !bytes.Equal(got, want) {
				t.Errorf("%s differs from testdata/report_%s.golden (rerun with -update if the change is intended):\n%s", name, name, got)
			}
		})
	}
	t.Run("fit.json", func(t *testing.T) {
		got := readFile(t, filepath.Join(dir, "report", "fit.json"))
		want := golden(t, "report_fit.json", got)
		var g, w any
		if err := json.Unmarshal(got, &g); err != nil {
			t.Fatalf("fit.json: %v", err)
		}
		if err := json.Unmarshal(want, &w); err != nil {
			t.Fatalf("golden fit.json: %v", err)
		}
		// Full-precision least-squares numbers may differ in their last
		// bits between platforms (fused multiply-add); 1e-6 relative or
		// 1e-9 absolute (round-off-size standard errors) is far looser
		// than that and far tighter than any real change.
		compareJSON(t, "fit", g, w, 1e-9, 1e-6)
	})
}

func compareJSON(t *testing.T, path string, got, want any, abs, rel float64) {
	t.Helper()
	switch w := want.(type) {
	case map[string]any:
		g, ok := got.(map[string]any)
		if !ok {
			t.Errorf("%s: got %T, want an object", path, got)
			return
		}
		for k := range w {
			if _, ok := g[k]; !ok {
				t.Errorf("%s.%s: missing", path, k)
			}
		}
		for k, gv := range g {
			wv, ok := w[k]
			if !ok {
				t.Errorf("%s.%s: not in the golden", path, k)
				continue
			}
			compareJSON(t, path+"."+k, gv, wv, abs, rel)
		}
	case []any:
		g, ok := got.([]any)
		if !ok || len(g) != len(w) {
			t.Errorf("%s: got %v, want %d elements", path, got, len(w))
			return
		}
		for i := range w {
			compareJSON(t, fmt.Sprintf("%s[%d]", path, i), g[i], w[i], abs, rel)
		}
	case float64:
		g, ok := got.(float64)
		if !ok || !scalar.EqualWithinAbsOrRel(g, w, abs, rel) {
			t.Errorf("%s = %v, want %v", path, got, w)
		}
	default:
		if got != want {
			t.Errorf("%s = %v, want %v", path, got, want)
		}
	}
}

func TestReport_ModelMorse_Pictures(t *testing.T) {
	dir := runReportScan(t)
	t.Run("png", func(t *testing.T) {
		img, err := png.Decode(bytes.NewReader(readFile(t, filepath.Join(dir, "report", "curve.png"))))
		if err != nil {
			t.Fatalf("curve.png does not decode: %v", err)
		}
		w, h := report.PNGSize()
		if b := img.Bounds(); b.Dx() != w || b.Dy() != h {
			t.Errorf("curve.png is %dx%d, want %dx%d", b.Dx(), b.Dy(), w, h)
		}
		colours := map[[3]uint32]int{}
		b := img.Bounds()
		for y := b.Min.Y; y < b.Max.Y; y++ {
			for x := b.Min.X; x < b.Max.X; x++ {
				r, g, bl, _ := img.At(x, y).RGBA()
				colours[[3]uint32{r >> 8, g >> 8, bl >> 8}]++
			}
		}
		// A blank or one-colour image has 1; text, anti-aliased lines and
		// the state colours give hundreds.
		if len(colours) < 50 {
			t.Errorf("curve.png has %d distinct colours; it looks blank", len(colours))
		}
		for name, c := range map[string][3]uint32{"done points (blue)": {0, 114, 178}, "failed point (vermilion)": {213, 94, 0}, "levels (green)": {0, 158, 115}} {
			// Thin strokes are anti-aliased, so accept pixels near the
			// colour (distance below 60 of 441 in RGB).
			n := 0
			for k, cnt := range colours {
				dr, dg, db := float64(k[0])-float64(c[0]), float64(k[1])-float64(c[1]), float64(k[2])-float64(c[2])
				if math.Sqrt(dr*dr+dg*dg+db*db) < 60 {
					n += cnt
				}
			}
			if n < 10 {
				t.Errorf("curve.png has %d pixels near the %s colour %v", n, name, c)
			}
		}
	})
	t.Run("svg", func(t *testing.T) {
		b := readFile(t, filepath.Join(dir, "report", "curve.svg"))
		dec := xml.NewDecoder(bytes.NewReader(b))
		longest := 0
		for {
			tok, err := dec.Token()
			if errors.Is(err, io.EOF) {
				break
			}
			if err != nil {
				t.Fatalf("curve.svg is not well-formed XML: %v", err)
			}
			if se, ok := tok.(xml.StartElement); ok && se.Name.Local == "path" {
				for _, a := range se.Attr {
					if a.Name.Local == "d" {
						longest = max(longest, strings.Count(a.Value, "L"))
					}
				}
			}
		}
		// The fitted curve is drawn through 400 samples: one path with
		// hundreds of segments.
		if longest < 300 {
			t.Errorf("curve.svg: longest path has %d segments; the fitted curve is missing", longest)
		}
	})
	t.Run("html", func(t *testing.T) {
		h := string(readFile(t, filepath.Join(dir, "report", "summary.html")))
		for _, want := range []string{"<svg", "</svg>", "<table>", "¹²C¹⁶O", "r=1.35000", "Failed points (1)"} {
			if !strings.Contains(h, want) {
				t.Errorf("summary.html lacks %q", want)
			}
		}
		// A failed point and a note on the levels cannot mislead: no
		// alarm box, but both at the top, before the conditions.
		if strings.Contains(h, `class="alert"`) {
			t.Error("summary.html raises the alarm for benign warnings")
		}
		if w, f, c := strings.Index(h, "Warnings ("), strings.Index(h, "Failed points (1)"), strings.Index(h, "Conditions"); w < 0 || f < w || c < f {
			t.Errorf("summary.html: warnings at %d, failed points at %d, conditions at %d; want warnings and failures first", w, f, c)
		}
		if strings.Contains(h, "<?xml") {
			t.Error("summary.html embeds the SVG with its XML declaration")
		}
	})
}

func TestExport_Formats(t *testing.T) {
	dir := runReportScan(t)
	t.Run("csv is report's curve.csv", func(t *testing.T) {
		code, out, errs := wellscan(t, "export", dir)
		if code != 0 {
			t.Fatalf("export exit %d: %s", code, errs)
		}
		if want := string(readFile(t, filepath.Join(dir, "report", "curve.csv"))); out != want {
			t.Errorf("export csv differs from curve.csv:\n%s\nwant\n%s", out, want)
		}
	})
	t.Run("json", func(t *testing.T) {
		code, out, errs := wellscan(t, "export", "--format", "json", dir)
		if code != 0 {
			t.Fatalf("export exit %d: %s", code, errs)
		}
		// JSON Lines: one object per point, one per line.
		var v struct {
			Units  map[string]string
			Points []exportPoint
		}
		for i, line := range strings.Split(strings.TrimSuffix(out, "\n"), "\n") {
			var p exportPoint
			if err := json.Unmarshal([]byte(line), &p); err != nil {
				t.Fatalf("export json line %d: %v\n%s", i+1, err, line)
			}
			v.Units = p.Units
			v.Points = append(v.Points, p)
		}
		failed := 0
		for _, p := range v.Points {
			if p.State == "failed" {
				failed++
				if p.EnergyHartree != nil || !strings.Contains(p.LastError, "engine.model.fail") {
					t.Errorf("failed point %+v: want no energy and the model's error", p)
				}
			}
		}
		if v.Units["r"] != "angstrom" || failed != 1 || len(v.Points) < 10 {
			t.Errorf("export json: units %v, %d points, %d failed; want angstrom, ≥ 10, 1", v.Units, len(v.Points), failed)
		}
	})
	t.Run("xyz", func(t *testing.T) {
		code, out, errs := wellscan(t, "export", "--format", "xyz", dir)
		if code != 0 {
			t.Fatalf("export exit %d: %s", code, errs)
		}
		frames, err := parsers.ReadXYZ(strings.NewReader(out), "export.xyz")
		if err != nil {
			t.Fatalf("export xyz does not read back: %v", err)
		}
		csvRows := strings.Count(string(readFile(t, filepath.Join(dir, "report", "curve.csv"))), ",done,")
		if len(frames) != csvRows {
			t.Errorf("%d frames, want one per done point (%d)", len(frames), csvRows)
		}
		keyRE := regexp.MustCompile(`^r=([0-9.]+)$`)
		for _, f := range frames {
			key, e, ok, err := parsers.ParseXYZComment(f.Comment)
			if err != nil || !ok {
				t.Fatalf("comment %q: %v (has energy %v)", f.Comment, err, ok)
			}
			m := keyRE.FindStringSubmatch(key)
			if m == nil {
				t.Fatalf("comment key %q", key)
			}
			var r float64
			fmt.Sscan(m[1], &r)
			// The frame's C–O distance is the key's r; XYZ carries 10
			// decimals in Å.
			if d := planner.Distance3(f.Coords[0], f.Coords[1]); !scalar.EqualWithinAbsOrRel(d, r, 1e-9, 0) {
				t.Errorf("%s: C–O distance %.10f Å, want %.5f", key, d, r)
			}
			// Morse model energy at r (planner's CODATA 2018 bohr; the
			// model's own constants from reportSpec).
			s := 1 - math.Exp(-1.22*(r*planner.AngstromInBohr-2.135))
			if want := -112.7 + 0.41*s*s; !scalar.EqualWithinAbsOrRel(e, want, 1e-12, 0) {
				t.Errorf("%s: energy %.12f, want the model's %.12f", key, e, want)
			}
		}
	})
	t.Run("bad format", func(t *testing.T) {
		code, _, errs := wellscan(t, "export", "--format", "pdb", dir)
		if code != 1 || !strings.Contains(errs, "expected csv, json or xyz") {
			t.Errorf("exit %d, stderr %q; want 1 and the accepted formats", code, errs)
		}
	})
}

func TestReport_BadInput_Errors(t *testing.T) {
	dir := t.TempDir()
	writeSpec(t, dir, reportSpec)
	tests := []struct {
		name string
		args []string
		want string
	}{
		{"not run", []string{"report", dir}, "has not been run yet"},
		{"bad date", []string{"report", "--date", "1.12.2026", dir}, "expected YYYY-MM-DD"},
		{"no spec", []string{"report", t.TempDir()}, "scan.toml"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			code, _, errs := wellscan(t, tc.args...)
			if code == 0 || !strings.Contains(errs, tc.want) {
				t.Errorf("exit %d, stderr %q; want failure mentioning %q", code, errs, tc.want)
			}
		})
	}
}

// While a run holds the store, report works from status.json and says so.
func TestReport_WhileRunning_UsesSnapshot(t *testing.T) {
	dir := runReportScan(t)
	spec, err := planner.Load(filepath.Join(dir, "scan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	st, err := runner.OpenScan(dir, spec, runner.OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	out := filepath.Join(t.TempDir(), "rep")
	if code, o, errs := wellscan(t, "report", "--out", out, "--date", "2026-12-01", dir); code != 0 {
		t.Fatalf("report exit %d\n%s%s", code, o, errs)
	}
	md := string(readFile(t, filepath.Join(out, "summary.md")))
	if !strings.Contains(md, "the scan is still running") {
		t.Errorf("summary.md does not say the scan is running:\n%s", md)
	}
	// The points and energies are the same as from the store.
	if got, want := readFile(t, filepath.Join(out, "curve.csv")), readFile(t, filepath.Join(dir, "report", "curve.csv")); !bytes.Equal(got, want) {
		t.Errorf("curve.csv from the snapshot differs from the store's:\n%s\nwant\n%s", got, want)
	}
}
