package report

import (
	"bytes"
	"context"
	"encoding/csv"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

func ptr(v float64) *float64 { return &v }

func TestValueErr_Format(t *testing.T) {
	tests := []struct {
		v, se float64
		d     int
		want  string
	}{
		{1.1297933, 2e-8, 6, "1.129793 ± <1e-6"},
		{2168.8391, 0.0015, 3, "2168.839 ± 0.002"},
		{13.0095, 0, 4, "13.0095"},
		{1.5, math.NaN(), 2, "1.50"},
	}
	for _, tc := range tests {
		if got := valueErr(tc.v, tc.se, tc.d); got != tc.want {
			t.Errorf("valueErr(%v, %v, %d) = %q, want %q", tc.v, tc.se, tc.d, got, tc.want)
		}
	}
}

func TestTurningPoint_Parabola(t *testing.T) {
	v := func(x float64) float64 { return x * x }
	// x² = 4 at x = ±2 (exact algebra); bisection to 60 halvings of a
	// 0.02-wide bracket is good to far below 1e-12.
	for _, c := range []struct{ a, b, want float64 }{{-3, 0, -2}, {0, 3, 2}} {
		got, ok := turningPoint(v, 4, c.a, c.b)
		if !ok || !scalar.EqualWithinAbsOrRel(got, c.want, 1e-12, 0) {
			t.Errorf("turningPoint(x², 4, %v, %v) = %v, %v; want %v", c.a, c.b, got, ok, c.want)
		}
	}
	if _, ok := turningPoint(v, 100, -3, 0); ok {
		t.Error("turningPoint found a crossing above the range")
	}
}

func TestWriteCSV_Units(t *testing.T) {
	tests := []struct {
		name   string
		axis   Axis
		x      float64
		header string
		want   float64 // second column
	}{
		// CODATA 2018: a0 = 0.529177210903 Å.
		{"bohr spec", Axis{Name: "r", Kind: "distance", Unit: "bohr", Digits: 4}, 2.0, "r [angstrom]", 2 * 0.529177210903},
		{"angstrom spec", Axis{Name: "r", Kind: "distance", Unit: "angstrom", Digits: 4}, 0.529177210903, "r [bohr]", 1},
		{"angle", Axis{Name: "theta", Kind: "angle", Unit: "degree", Digits: 2}, 90, "theta [radian]", math.Pi / 2},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			in := Input{Axes: []Axis{tc.axis}, Points: []Point{
				{Key: "a", Values: []float64{tc.x}, State: "done", Energy: ptr(-1)},
				{Key: "b", Values: []float64{tc.x + 1}, State: "done", Energy: ptr(-1 + 1/219474.6313632)},
				{Key: "c", Values: []float64{tc.x + 2}, State: "failed"},
			}}
			var b bytes.Buffer
			if err := WriteCSV(&b, in); err != nil {
				t.Fatal(err)
			}
			rows, err := csv.NewReader(&b).ReadAll()
			if err != nil {
				t.Fatal(err)
			}
			if rows[0][2] != tc.header {
				t.Errorf("header %q, want %q", rows[0][2], tc.header)
			}
			got, _ := strconv.ParseFloat(rows[1][2], 64)
			// Written with Digits+2 decimals.
			if !scalar.EqualWithinAbsOrRel(got, tc.want, math.Pow(10, -float64(tc.axis.Digits+2)), 0) {
				t.Errorf("second unit = %v, want %v", got, tc.want)
			}
			// 1 cm⁻¹ above the lowest point (CODATA 2018 E_h = 219474.6313632 cm⁻¹).
			if rows[2][4] != "1.0000" {
				t.Errorf("relative energy %q cm-1, want 1.0000", rows[2][4])
			}
			if rows[3][3] != "" || rows[3][6] != "failed" {
				t.Errorf("failed row %v: want no energy and state failed", rows[3])
			}
		})
	}
}

func TestWrite_Surface2D_Map(t *testing.T) {
	var ps []Point
	for i := range 7 {
		for j := range 7 {
			x, y := 0.9+0.05*float64(i), 100+5*float64(j)
			e := -76 + 0.5*(x-1.05)*(x-1.05) + 1e-5*(y-110)*(y-110)
			ps = append(ps, Point{Key: strconv.Itoa(i*7 + j), Values: []float64{x, y}, State: "done", Energy: ptr(e)})
		}
	}
	ps[3].State, ps[3].Energy = "failed", nil
	in := Input{Conditions: Conditions{Formula: "H2O", Engine: "model", Version: "test"},
		Axes: []Axis{{Name: "r", Kind: "distance", Unit: "angstrom", Digits: 3}, {Name: "theta", Kind: "angle", Unit: "degree", Digits: 1}}, Points: ps}
	dir := filepath.Join(t.TempDir(), "report")
	if err := Write(context.Background(), dir, in); err != nil {
		t.Fatal(err)
	}
	for _, f := range Files() {
		if st, err := os.Stat(filepath.Join(dir, f)); err != nil || st.Size() == 0 {
			t.Errorf("%s: %v", f, err)
		}
	}
	f, err := os.Open(filepath.Join(dir, "curve.png"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	if w, h := PNGSize(); img.Bounds().Dx() != w || img.Bounds().Dy() != h {
		t.Errorf("png %v, want %dx%d", img.Bounds(), w, h)
	}
	md, _ := os.ReadFile(filepath.Join(dir, "summary.md"))
	if i, j := strings.Index(string(md), "## Failed points (1)"), strings.Index(string(md), "## Conditions"); i < 0 || i > j {
		t.Errorf("summary.md does not show the failed point at the top:\n%s", md)
	}
}

func TestWrite_BadInput_Errors(t *testing.T) {
	tests := []struct {
		name string
		in   Input
		want string
	}{
		{"no axes", Input{}, "0 scanned coordinates"},
		{"values", Input{Axes: []Axis{{Name: "r"}}, Points: []Point{{Key: "k", Values: []float64{1, 2}}}}, "point k has 2 coordinate values"},
		{"nan", Input{Axes: []Axis{{Name: "r"}}, Points: []Point{{Key: "k", Values: []float64{1}, Energy: ptr(math.NaN())}}}, "non-finite"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			err := Write(context.Background(), t.TempDir(), tc.in)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("Write error = %v, want one mentioning %q", err, tc.want)
			}
		})
	}
}

// Degenerate scans still give a figure (no panic, no error): too few
// points for a spline, a flat curve, a 2-D scan with one value of one
// coordinate, a flat surface.
func TestWrite_DegenerateScans_NoPanic(t *testing.T) {
	r := Axis{Name: "r", Kind: "distance", Unit: "angstrom", Digits: 3}
	th := Axis{Name: "theta", Kind: "angle", Unit: "degree", Digits: 1}
	pts := func(n, m int, e func(i, j int) float64) []Point {
		var ps []Point
		for i := range n {
			for j := range m {
				v := []float64{1 + 0.1*float64(i)}
				if m > 1 {
					v = append(v, 100+float64(j))
				}
				ps = append(ps, Point{Key: strconv.Itoa(i*m + j), Values: v, State: "done", Energy: ptr(e(i, j))})
			}
		}
		return ps
	}
	tests := []struct {
		name string
		in   Input
	}{
		{"two points", Input{Axes: []Axis{r}, Points: pts(2, 1, func(i, _ int) float64 { return -1 + 0.1*float64(i) })}},
		{"flat curve", Input{Axes: []Axis{r}, Points: pts(6, 1, func(int, int) float64 { return -1 })}},
		{"one row", Input{Axes: []Axis{r, th}, Points: pts(5, 1, func(i, _ int) float64 { return -1 + 0.01*float64(i*i) })}},
		{"flat surface", Input{Axes: []Axis{r, th}, Points: pts(4, 4, func(int, int) float64 { return -1 })}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if tc.name == "one row" {
				for i := range tc.in.Points {
					tc.in.Points[i].Values = append(tc.in.Points[i].Values, 104.5)
				}
			}
			if err := Write(context.Background(), t.TempDir(), tc.in); err != nil {
				t.Errorf("Write: %v", err)
			}
		})
	}
}

// TestWrite_AllFailed_ReportsFailures: a scan whose every point failed
// still gets a report: the failures at the top, no figure (and no stale
// one from an earlier report).
func TestWrite_AllFailed_ReportsFailures(t *testing.T) {
	in := Input{Conditions: Conditions{Formula: "CO", Engine: "command", Version: "test"},
		Axes: []Axis{{Name: "r", Kind: "distance", Unit: "angstrom", Digits: 5}},
		Points: []Point{{Key: "r=1.00000", Values: []float64{1}, State: "failed", Attempts: 3, Error: "backend command: awk exited with status 2"},
			{Key: "r=1.10000", Values: []float64{1.1}, State: "failed", Attempts: 3, Error: "backend command: awk exited with status 2"}},
		FitError: "no done points"}
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "curve.svg"), []byte("<svg/>"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := Write(context.Background(), dir, in); err != nil {
		t.Fatalf("Write: %v", err)
	}
	md, err := os.ReadFile(filepath.Join(dir, "summary.md"))
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"## Failed points (2)", "awk exited with status 2", "No figure and no fit"} {
		if !strings.Contains(string(md), want) {
			t.Errorf("summary.md lacks %q:\n%s", want, md)
		}
	}
	if strings.Contains(string(md), "curve.svg") || strings.Contains(string(md), "ATTENTION") {
		t.Errorf("summary.md shows a figure or an alarm for plain failures:\n%s", md)
	}
	if _, err := os.Stat(filepath.Join(dir, "curve.svg")); !os.IsNotExist(err) {
		t.Errorf("a stale curve.svg is left: %v", err)
	}
}

// TestSummary_WarningsAtTop_AlarmOnlyForSerious: warnings come first,
// most serious first; the alarm box holds only what could mislead.
func TestSummary_WarningsAtTop_AlarmOnlyForSerious(t *testing.T) {
	base := Input{Conditions: Conditions{Formula: "H2", Engine: "model", Version: "test"},
		Axes:   []Axis{{Name: "r", Kind: "distance", Unit: "bohr", Digits: 5}},
		Points: []Point{{Key: "r=1.40000", Values: []float64{1.4}, State: "done", Energy: ptr(-1.1)}},
		Notes:  []string{"a benign note"}}
	var b strings.Builder
	if err := WriteMarkdown(&b, base); err != nil {
		t.Fatal(err)
	}
	md := b.String()
	if strings.Contains(md, "ATTENTION") || !strings.Contains(md, "- note: a benign note") {
		t.Errorf("benign note: alarm box shown or note missing:\n%s", md)
	}
	base.Warnings = []Warning{{"serious", "r=1.40000: ⟨S²⟩ jumps from 0.000 to 1.000"}, {"caution", "1 point(s) failed"}}
	b.Reset()
	if err := WriteMarkdown(&b, base); err != nil {
		t.Fatal(err)
	}
	md = b.String()
	att, warn, cond := strings.Index(md, "## ⚠ ATTENTION"), strings.Index(md, "## Warnings (2)"), strings.Index(md, "## Conditions")
	if att < 0 || warn < att || cond < warn {
		t.Fatalf("want ATTENTION, then Warnings (2), then Conditions:\n%s", md)
	}
	box := md[att:warn]
	if !strings.Contains(box, "⟨S²⟩ jumps") || strings.Contains(box, "point(s) failed") || strings.Contains(box, "benign") {
		t.Errorf("alarm box holds more or less than the serious warning:\n%s", box)
	}
	if c, n := strings.Index(md, "- caution: 1 point(s) failed"), strings.Index(md, "- note: a benign note"); c < 0 || n < c {
		t.Errorf("cautions must come before notes:\n%s", md)
	}
}

// TestWriteCSV_Diagnostics: ⟨S²⟩, iterations, dipole and MP2 parts are
// exported when the points carry them, and no empty columns otherwise.
func TestWriteCSV_Diagnostics(t *testing.T) {
	ax := []Axis{{Name: "r", Kind: "distance", Unit: "angstrom", Digits: 5}}
	plain := Input{Axes: ax, Points: []Point{{Key: "r=1.00000", Values: []float64{1}, State: "done", Energy: ptr(-1)}}}
	var b strings.Builder
	if err := WriteCSV(&b, plain); err != nil {
		t.Fatal(err)
	}
	if strings.Contains(b.String(), "S^2") || strings.Contains(b.String(), "mp2") {
		t.Errorf("diagnostic columns without data:\n%s", b.String())
	}
	rich := Input{Axes: ax, Points: []Point{{Key: "r=1.00000", Values: []float64{1}, State: "done", Energy: ptr(-1.2),
		Iterations: 12, SSquared: ptr(0.7532), DipoleDebye: ptr(1.5),
		MP2: &MP2Parts{Reference: -1.0, Correlation: -0.2, SameSpin: -0.05, OppositeSpin: -0.15}}}}
	b.Reset()
	if err := WriteCSV(&b, rich); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(b.String()), "\n")
	wantHead := "scf iterations,<S^2>,dipole [debye],mp2 reference [hartree],mp2 correlation [hartree],mp2 same-spin [hartree],mp2 opposite-spin [hartree]"
	if len(lines) != 2 || !strings.HasSuffix(lines[0], wantHead) || !strings.HasSuffix(lines[1], "12,0.753200,1.500000,-1.0000000000,-0.2000000000,-0.0500000000,-0.1500000000") {
		t.Errorf("curve.csv with diagnostics:\n%s", b.String())
	}
}

// TestHeading_NoRepeats: the figure's heading adds the molecule and the
// method only when the title does not already say them.
func TestHeading_NoRepeats(t *testing.T) {
	for _, tc := range []struct {
		c    Conditions
		want string
	}{
		{Conditions{Title: "water stretch at RHF/6-31G*", Formula: "H2O", Method: "RHF", Basis: "6-31G*"}, "water stretch at RHF/6-31G* (H2O)"},
		{Conditions{Title: "HDO stretch", Formula: "HDO", Method: "MP2(fc)", Basis: "cc-pVDZ"}, "HDO stretch (MP2(fc)/cc-pVDZ)"},
		{Conditions{Title: "CO at RHF/6-31G*", Formula: "CO", Method: "RHF", Basis: "6-31G*"}, "CO at RHF/6-31G*"},
		{Conditions{Formula: "CO", Method: "RHF", Basis: "6-31G*"}, "CO · RHF/6-31G*"},
	} {
		if got := heading(tc.c); got != tc.want {
			t.Errorf("heading(%q) = %q, want %q", tc.c.Title, got, tc.want)
		}
	}
}
