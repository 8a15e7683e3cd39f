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
	// Ten s shells of one function each (ten groups): 55 pairs, 1540
	// blocks of one integral, 8 bytes each plus 12 bytes of index, plus
	// 8 bytes per pair and one: StoreBytes = 1540·20 + 56·8 = 31248
	// (counted here by hand from the storage layout).
	var shells []integral.Shell
	for i := range 10 {
		shells = append(shells, integral.Shell{L: 0, Center: [3]float64{float64(i), 0, 0}, Exps: []float64{1}, Coefs: []float64{1}})
	}
	all := integral.StoreBytes(shells)
	if all != 31248 {
		t.Fatalf("StoreBytes = %d, want 31248", all)
	}
	for _, tc := range []struct {
		budget int64
		mode   string
	}{
		{all, ModeInCore},
		{all - 1, ModeSemiDirect},
		{1000, ModeSemiDirect},
		{-1, ModeDirect},
	} {
		p := planIntegrals(shells, tc.budget)
		if p.mode != tc.mode {
			t.Errorf("budget %d B: %s, want %s", tc.budget, p.mode, tc.mode)
		}
	}
}
