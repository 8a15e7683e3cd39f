package fit

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"strconv"
	"strings"
	"testing"
)

// coverageCase is one seeded noisy analytic curve of the calibration.
type coverageCase struct {
	name  string
	m     morse
	r     []float64
	noise float64 // hartree, Gaussian σ
}

// coverageQuantities returns, for one fit of a Morse curve, each printed
// constant with its stated uncertainty and its exact value (Morse,
// Phys. Rev. 34, 57 (1929); Pekeris, Phys. Rev. 45, 98 (1934) for α_e;
// k = 2D_e a², B_e = ħ²/(2μr_e²), Dunham's Y00 = 0 for a Morse well so the
// perturbative ZPE is exactly G(0)).
func coverageQuantities(m morse, mn Minimum, off float64) map[string][3]float64 {
	w, wx := m.omega()
	be, alpha := m.pekeris()
	de := m.de * HartreeInCm1
	q := map[string][3]float64{
		"r_e":       {mn.REAngstrom, mn.REUncAng, m.re * BohrInAngstrom},
		"E_min":     {mn.EMin, mn.EMinUnc, off},
		"k":         {mn.K, mn.KUnc, 2 * m.de * m.a * m.a},
		"ω_e":       {mn.OmegaE, mn.OmegaEUnc, w},
		"ω_e x_e":   {mn.OmegaExe, mn.OmegaExeUnc, wx},
		"B_e":       {mn.Be, mn.BeUnc, be},
		"α_e":       {mn.AlphaE, mn.AlphaEUnc, alpha},
		"ZPE":       {mn.ZPE, mn.ZPEUnc, m.level(0)},
		"D_e":       {mn.DeCm1, mn.DeUnc, de},
		"D_0":       {mn.D0Cm1, mn.D0Unc, de - m.level(0)},
		"G(0) grid": {mn.ZPEGrid, mn.ZPEGridUnc, m.level(0)},
	}
	if len(mn.Levels) > 2 {
		q["G(2) grid"] = [3]float64{mn.Levels[2], mn.LevelsUncertainty[2], m.level(2)}
	}
	if mn.FundamentalGrid {
		q["fundamental"] = [3]float64{mn.Fundamental, mn.FundamentalUnc, m.level(1) - m.level(0)}
	}
	return q
}

var coverageOrder = []string{"r_e", "E_min", "k", "ω_e", "ω_e x_e", "B_e", "α_e", "ZPE", "D_e", "D_0", "G(0) grid", "G(2) grid", "fundamental"}

// runCoverage fits trials noisy copies of c and returns, per quantity, the
// fractions of trials whose ±1σ and ±2σ intervals cover the truth.
func runCoverage(ctx context.Context, c coverageCase, trials int, seed uint64) (map[string][2]float64, map[string]int, error) {
	rng := rand.New(rand.NewPCG(seed, 14))
	in1 := map[string]int{}
	in2 := map[string]int{}
	n := map[string]int{}
	const off = -112.5
	for range trials {
		e := make([]float64, len(c.r))
		for i, x := range c.r {
			e[i] = c.m.v(x) + off + c.noise*rng.NormFloat64()
		}
		lim := off + c.m.de
		res, err := Curve(ctx, c.r, e, Options{
			Isotopologues: []MassSet{{Masses: []float64{2 * c.m.mu, 2 * c.m.mu}}},
			EnergyNoise:   c.noise, Asymptote: &lim,
		})
		if err != nil {
			return nil, nil, err
		}
		if len(res.Minima) != 1 {
			return nil, nil, fmt.Errorf("%d minima: %q", len(res.Minima), res.Warnings)
		}
		for k, v := range coverageQuantities(c.m, res.Minima[0], off) {
			n[k]++
			d := math.Abs(v[0] - v[2])
			if v[1] > 0 && d <= v[1] {
				in1[k]++
			}
			if v[1] > 0 && d <= 2*v[1] {
				in2[k]++
			}
		}
	}
	out := map[string][2]float64{}
	for k, cnt := range n {
		out[k] = [2]float64{float64(in1[k]) / float64(cnt), float64(in2[k]) / float64(cnt)}
	}
	return out, n, nil
}

func coverageCases() []coverageCase {
	var cs []coverageCase
	for _, noise := range []float64{1e-6, 1e-5} {
		cs = append(cs,
			coverageCase{fmt.Sprintf("CO-like, σ = %.0e E_h", noise), coLike, refinedGrid(1.6, coLike.re, 3.6, 0.02, 0.2), noise},
			coverageCase{fmt.Sprintf("H2-like, σ = %.0e E_h", noise), h2Morse, refinedGrid(0.8, h2Morse.re, 3.4, 0.02, 0.2), noise},
		)
	}
	return cs
}

// TestCurve_Coverage is the calibration of the printed uncertainties
// (issue 14): on seeded noisy Morse curves, ±1σ must cover the exact value
// in at least 68 % and ±2σ in at least 95 % of the trials, for every
// constant. It runs 4 × 200 full fits (about a minute), so only when
// WELLSCAN_COVERAGE is set (to the number of trials, or 1 for 200); the
// table it logs is the one in the README.
func TestCurve_Coverage(t *testing.T) {
	v := os.Getenv("WELLSCAN_COVERAGE")
	if v == "" {
		t.Skip("set WELLSCAN_COVERAGE=1 (or a number of trials) to run the calibration")
	}
	trials := 200
	if k, err := strconv.Atoi(v); err == nil && k > 1 {
		trials = k
	}
	const seed = 20261214
	t.Logf("seed %d, %d trials per case", seed, trials)
	var tab strings.Builder
	fmt.Fprintf(&tab, "| quantity |")
	cases := coverageCases()
	for _, c := range cases {
		fmt.Fprintf(&tab, " %s |", c.name)
	}
	tab.WriteString("\n|---|" + strings.Repeat("---|", len(cases)) + "\n")
	results := make([]map[string][2]float64, len(cases))
	for i, c := range cases {
		res, _, err := runCoverage(t.Context(), c, trials, seed+uint64(i))
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		results[i] = res
	}
	for _, q := range coverageOrder {
		fmt.Fprintf(&tab, "| %s |", q)
		for i, c := range cases {
			f, ok := results[i][q]
			if !ok {
				tab.WriteString(" — |")
				continue
			}
			fmt.Fprintf(&tab, " %.0f %% / %.0f %% |", 100*f[0], 100*f[1])
			// The requirement; with 200 trials one binomial standard
			// deviation is 3.3 % at 68 % and 1.5 % at 95 %.
			if f[0] < 0.68 || f[1] < 0.95 {
				t.Errorf("%s, %s: ±1σ covers %.1f %%, ±2σ %.1f %% (want ≥ 68 %% and ≥ 95 %%)", c.name, q, 100*f[0], 100*f[1])
			}
		}
		tab.WriteString("\n")
	}
	t.Logf("coverage (±1σ / ±2σ):\n%s", tab.String())
}
