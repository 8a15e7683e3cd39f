package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// The energy-jump rule seen from the command line: a model point on
// "another state" (engine.model.spikes) fails loudly in run and status.
func TestCLI_EnergyJumpShownInRunAndStatus(t *testing.T) {
	dir := t.TempDir()
	writeSpec(t, dir, strings.Replace(modelSpec, "offset = -112.7", "offset = -112.7\nspikes = { \"r=1.10000\" = 0.3 }", 1))
	code, out, errs := wellscan(t, "run", dir)
	if code != 3 {
		t.Fatalf("run: exit %d, want 3 (some points failed)\n%s%s", code, out, errs)
	}
	for _, w := range []string{
		"r=1.10000: energy jump at r=1.10000 (r=1.10000 Å)", // the retry, as it happens
		"computing it once more from a fresh guess",
		"failed: r=1.10000 (energy-jump, 2 attempts): energy jump at r=1.10000",
		"[checks] max_jump_hartree = 0.05 hartree",
		"so it stays failed",
	} {
		if !strings.Contains(out+errs, w) {
			t.Errorf("run output lacks %q:\n%s%s", w, out, errs)
		}
	}
	code, out, errs = wellscan(t, "status", dir)
	if code != 0 {
		t.Fatalf("status: exit %d\n%s%s", code, out, errs)
	}
	if !strings.Contains(out, "error: r=1.10000 (energy-jump, now failed): energy jump at r=1.10000") {
		t.Errorf("status output lacks the energy-jump failure:\n%s", out)
	}
}

// The built-in engine's own CO curve (the demo scan, RHF/6-31G*, adaptive
// refinement) and a coarse 0.1 Å scan from far up the repulsive wall
// must pass the rule at its default with no point flagged.
func TestCLI_EnergyJumpNoFalsePositiveOnCO(t *testing.T) {
	if testing.Short() {
		t.Skip("computes two RHF/6-31G* CO scans")
	}
	demo, err := os.ReadFile("demo_co.toml")
	if err != nil {
		t.Fatal(err)
	}
	coarse := strings.NewReplacer("from = 1.00", "from = 0.80", "to = 1.30", "to = 1.60", "step = 0.05", "step = 0.10").Replace(string(demo))
	for name, text := range map[string]string{"demo": string(demo), "coarse wall": coarse} {
		t.Run(name, func(t *testing.T) {
			dir := filepath.Join(t.TempDir(), "co")
			if err := os.MkdirAll(dir, 0o700); err != nil {
				t.Fatal(err)
			}
			writeSpec(t, dir, text)
			code, out, errs := wellscan(t, "run", "-q", dir)
			if code != 0 || strings.Contains(out+errs, "energy jump") {
				t.Fatalf("run: exit %d\n%s%s", code, out, errs)
			}
			recs := pointRecords(t, dir)
			if len(recs) < 7 {
				t.Fatalf("%d points", len(recs))
			}
			for k, r := range recs {
				if strings.Contains(r, `"energy_jumps"`) {
					t.Errorf("%s was flagged: %s", k, r)
				}
			}
		})
	}
}
