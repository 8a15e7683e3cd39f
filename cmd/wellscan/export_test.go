package main

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestExport_Diagnostics: a built-in scan's exports carry what the engine
// reported besides the energy — ⟨S²⟩ and SCF iterations for UHF, the MP2
// parts for MP2, the dipole — and the report shows a ⟨S²⟩ table for UHF
// and the MP2 label with its frozen core.
func TestExport_Diagnostics(t *testing.T) {
	scan := func(t *testing.T, engine string) string {
		dir := filepath.Join(t.TempDir(), "s")
		if err := os.Mkdir(dir, 0o755); err != nil {
			t.Fatal(err)
		}
		writeSpec(t, dir, `[molecule]
geometry = """
O 0 0 0
H 0 0 0.97
"""
[[scan]]
name = "r"
bond = [1, 2]
from = 0.9
to = 1.0
step = 0.05
[refine]
adaptive = false
[engine]
kind = "builtin"
basis = "STO-3G"
`+engine)
		if code, out, errs := wellscan(t, "run", "-q", dir); code != 0 {
			t.Fatalf("run: exit %d\n%s%s", code, out, errs)
		}
		return dir
	}
	lines := func(t *testing.T, dir string) []map[string]any {
		code, out, errs := wellscan(t, "export", "--format", "json", dir)
		if code != 0 {
			t.Fatalf("export: exit %d: %s", code, errs)
		}
		var ps []map[string]any
		for _, l := range strings.Split(strings.TrimSpace(out), "\n") {
			var p map[string]any
			if err := json.Unmarshal([]byte(l), &p); err != nil {
				t.Fatalf("%v: %q", err, l)
			}
			ps = append(ps, p)
		}
		if len(ps) != 3 {
			t.Fatalf("%d lines, want 3 points", len(ps))
		}
		return ps
	}
	t.Run("uhf", func(t *testing.T) {
		dir := scan(t, "") // OH: a doublet, so UHF by default
		for _, p := range lines(t, dir) {
			s2, ok := p["s_squared"].(float64)
			// ⟨S²⟩ of a doublet is 0.75 when pure; UHF contamination of OH
			// near equilibrium is a few thousandths (common practice), so
			// 0.75–0.8.
			if !ok || s2 < 0.75-1e-9 || s2 > 0.8 || p["scf_iterations"] == nil || p["dipole_debye"] == nil {
				t.Errorf("point %v: want s_squared in [0.75, 0.8], scf_iterations and dipole_debye", p)
			}
		}
		code, out, errs := wellscan(t, "export", dir)
		if code != 0 || !strings.Contains(out, ",scf iterations,<S^2>,dipole [debye]\n") {
			t.Errorf("csv: exit %d %s\n%s", code, errs, out)
		}
		if code, _, errs := wellscan(t, "report", "--date", "2026-12-01", dir); code != 0 {
			t.Fatalf("report: exit %d %s", code, errs)
		}
		md, _ := os.ReadFile(filepath.Join(dir, "report", "summary.md"))
		for _, want := range []string{"## Spin (⟨S²⟩ of the UHF reference)", "| exact S(S+1) for multiplicity 2 | 0.7500 |", "| method | UHF/STO-3G |", "SCF convergence"} {
			if !strings.Contains(string(md), want) {
				t.Errorf("summary.md lacks %q:\n%s", want, md)
			}
		}
	})
	t.Run("mp2", func(t *testing.T) {
		dir := scan(t, "method = \"mp2\"\n")
		for _, p := range lines(t, dir) {
			e, _ := p["energy_hartree"].(float64)
			ref, _ := p["mp2_reference_hartree"].(float64)
			corr, _ := p["mp2_correlation_hartree"].(float64)
			ss, _ := p["mp2_same_spin_hartree"].(float64)
			os, _ := p["mp2_opposite_spin_hartree"].(float64)
			// The parts add up (definition of the MP2 energy); 1e-10 Eh is
			// the round-off of the 10-decimal-free JSON floats.
			if corr >= 0 || math.Abs(ref+corr-e) > 1e-10 || math.Abs(ss+os-corr) > 1e-10 {
				t.Errorf("point %v: MP2 parts do not add up", p)
			}
		}
		if code, _, errs := wellscan(t, "report", "--date", "2026-12-01", dir); code != 0 {
			t.Fatalf("report: exit %d %s", code, errs)
		}
		md, _ := os.ReadFile(filepath.Join(dir, "report", "summary.md"))
		for _, want := range []string{"| method | UMP2(fc)/STO-3G |", "| frozen core | yes:"} {
			if !strings.Contains(string(md), want) {
				t.Errorf("summary.md lacks %q", want)
			}
		}
	})
}
