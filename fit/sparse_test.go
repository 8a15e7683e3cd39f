package fit

import (
	"bufio"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"
)

// readCurve reads a two-column CSV (r in Å, E in hartree, one header line)
// from testdata and returns r in bohr.
func readCurve(t *testing.T, name string) (r, e []float64) {
	t.Helper()
	f, err := os.Open("testdata/" + name)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for line := 1; sc.Scan(); line++ {
		if line == 1 || strings.TrimSpace(sc.Text()) == "" {
			continue
		}
		cols := strings.Split(sc.Text(), ",")
		if len(cols) != 2 {
			t.Fatalf("%s:%d: want 2 columns, got %d", name, line, len(cols))
		}
		x, err1 := strconv.ParseFloat(strings.TrimSpace(cols[0]), 64)
		y, err2 := strconv.ParseFloat(strings.TrimSpace(cols[1]), 64)
		if err1 != nil || err2 != nil {
			t.Fatalf("%s:%d: not two numbers: %q", name, line, sc.Text())
		}
		r = append(r, x/BohrInAngstrom)
		e = append(e, y)
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	return r, e
}

// The demo scan of CO stops at 1.00 Å, 10 211 cm⁻¹ up the inner wall,
// where v = 0 still has a tail: a hard wall there (the old level grid)
// raised G(0) by ~2 cm⁻¹ and G(3) by ~250 cm⁻¹, and the one-point wall
// test then rejected every level.
func TestCurve_SparseCOScan_LevelsDetermined(t *testing.T) {
	iso := []MassSet{{Name: "12C16O", Masses: []float64{mass12C, mass16O}}}
	r, e := readCurve(t, "co_demo_points.csv")
	res, err := Curve(t.Context(), r, e, Options{Isotopologues: iso})
	if err != nil {
		t.Fatal(err)
	}
	mn := res.Minima[0]
	if len(mn.Levels) < 4 {
		t.Fatalf("%d levels, want at least 4 below the 10 211 cm⁻¹ inner edge; warnings: %v", len(mn.Levels), mn.Warnings)
	}
	for v, s := range mn.LevelsWallShift {
		if !(s <= 1) {
			t.Errorf("level %d listed with edge shift %.3g cm⁻¹ > the 1 cm⁻¹ cut", v, s)
		}
	}
	// G(0) against the perturbative ZPE ω_e/2 − ω_e x_e/4 + Y00 (common
	// practice): the neglected higher-order terms are ≪ 1 cm⁻¹ for a well
	// this harmonic (ω_e x_e/ω_e ≈ 0.5 %).
	near(t, "G(0) vs perturbative ZPE (cm⁻¹)", mn.Levels[0], mn.OmegaE/2-mn.OmegaExe/4+mn.Y00, 1, 0)
	// Fundamental against the perturbative ω_e − 2ω_e x_e (common practice);
	// 2 cm⁻¹ allows for the neglected Y30-type terms.
	if !mn.FundamentalGrid {
		t.Fatal("fundamental not taken from the grid")
	}
	near(t, "fundamental vs ω_e − 2ω_e x_e (cm⁻¹)", mn.Fundamental, mn.OmegaE-2*mn.OmegaExe, 2, 0)

	if testing.Short() {
		return
	}
	// The same curve sampled densely (0.005 Å steps, 0.80–1.60 Å, far past
	// every tail): the sparse scan must give the same levels. Not an external
	// reference but the dense-sampling limit of the same method; 0.05 cm⁻¹
	// is about ten times the largest difference observed (0.004 cm⁻¹, v = 3).
	rd, ed := readCurve(t, "co_dense_points.csv")
	dense, err := Curve(t.Context(), rd, ed, Options{Isotopologues: iso})
	if err != nil {
		t.Fatal(err)
	}
	dl := dense.Minima[0].Levels
	if len(dl) < len(mn.Levels) {
		t.Fatalf("dense scan has %d levels, fewer than the sparse scan's %d", len(dl), len(mn.Levels))
	}
	for v := range mn.Levels {
		// Compare G(v) − G(0)-free quantities: both E_min come from local fits.
		got := mn.Levels[v] + mn.EMin*HartreeInCm1
		want := dl[v] + dense.Minima[0].EMin*HartreeInCm1
		near(t, "E_"+itoa(v)+" sparse vs dense scan (cm⁻¹)", got, want, 0.05, 0)
	}
}

// Analytic Morse check of the continuation past the data: a scan of only
// ±0.2 bohr around r_e (the well rises 4726 cm⁻¹ on its low side) still
// gives v = 0 because the curve is continued past the data instead of
// walled off there.
func TestCurve_NarrowMorseScan_MatchesAnalyticV0(t *testing.T) {
	m := coLike
	r := linspace(1.95, 2.35, 30)
	tests := []struct {
		name     string
		noGlobal bool
		tol      float64
	}{
		// Without a global fit the Taylor continuation is used: observed
		// error 0.007 cm⁻¹ with a reported edge shift of 0.21 cm⁻¹; the
		// tolerance is the 1 cm⁻¹ cut itself.
		{"spline with Taylor continuation", true, 1},
		// With the Morse fit (exact for these data) as the reference form:
		// observed 4e-7 cm⁻¹; 1e-3 cm⁻¹ allows for the DVR and the fit.
		{"Morse reference", false, 1e-3},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			res, err := Curve(t.Context(), r, sampleAt(m.v, r), Options{Isotopologues: []MassSet{{Masses: []float64{mass12C, mass16O}}}, NoGlobal: tc.noGlobal})
			if err != nil {
				t.Fatal(err)
			}
			mn := res.Minima[0]
			if len(mn.Levels) == 0 {
				t.Fatalf("no levels: %v", mn.Warnings)
			}
			// Reference: the analytic Morse term value (Morse 1929).
			near(t, "G(0) (cm⁻¹)", mn.Levels[0], m.level(0), tc.tol, 0)
			if mn.LevelsWallShift[0] > 1 || math.IsNaN(mn.LevelsWallShift[0]) {
				t.Errorf("edge shift of v = 0 is %g cm⁻¹", mn.LevelsWallShift[0])
			}
		})
	}
}
