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
	if !strings.Contains(string(md), "FAILED POINTS (1)") {
		t.Errorf("summary.md does not show the failed point loudly:\n%s", md)
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
		{"no energies", Input{Axes: []Axis{{Name: "r", Kind: "distance", Unit: "bohr"}}, Points: []Point{{Key: "k", Values: []float64{1}, State: "planned"}}}, "no point has an energy"},
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
