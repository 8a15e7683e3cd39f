package hf

import (
	"os"
	"path/filepath"
	"testing"

	"wellscan/runner/hf/integral"
)

func TestMemAvailable_Parse(t *testing.T) {
	dir := t.TempDir()
	for _, tc := range []struct {
		name, text string
		want       int64
		ok         bool
	}{
		{"kernel layout", "MemTotal:       24576000 kB\nMemFree:         1000 kB\nMemAvailable:   20000000 kB\n", 20000000 << 10, true},
		{"missing", "MemTotal:       24576000 kB\n", 0, false},
		{"bad unit", "MemAvailable:   20000 MB\n", 0, false},
	} {
		p := filepath.Join(dir, tc.name)
		if err := os.WriteFile(p, []byte(tc.text), 0o600); err != nil {
			t.Fatal(err)
		}
		got, err := memAvailable(p)
		if (err == nil) != tc.ok || got != tc.want {
			t.Errorf("%s: memAvailable = %d, %v; want %d (ok %v)", tc.name, got, err, tc.want, tc.ok)
		}
	}
}

func TestPlanIntegrals_Modes(t *testing.T) {
	// Ten s shells of one function each: InCoreBytes(n) = n⁴ bytes
	// (n(n+1)/2 pairs, packed pairs of pairs, 8 bytes each; ≈ n⁴ for large n).
	var shells []integral.Shell
	for i := range 10 {
		shells = append(shells, integral.Shell{L: 0, Center: [3]float64{float64(i), 0, 0}, Exps: []float64{1}, Coefs: []float64{1}})
	}
	all := integral.InCoreBytes(10)
	for _, tc := range []struct {
		budget int64
		mode   string
		split  int
	}{
		{all, ModeInCore, 10},
		{integral.InCoreBytes(9), ModeSemiDirect, 9},
		{integral.InCoreBytes(5), ModeDirect, 0}, // 5 of 10 functions hold 1/16 of the integrals: not worth it
		{-1, ModeDirect, 0},
	} {
		p := planIntegrals(shells, tc.budget)
		if p.mode != tc.mode || p.split != tc.split {
			t.Errorf("budget %d B: %s with %d shells kept, want %s with %d", tc.budget, p.mode, p.split, tc.mode, tc.split)
		}
	}
}
