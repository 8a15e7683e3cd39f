package main

import (
	"encoding/json"
	"strings"
	"testing"
)

// TestEnergyCommand_Guess: `wellscan energy` reports the kept guess and,
// for UHF cold starts, every guess tried; --guess runs one guess only.
// Stretched N2 (2.5 Å, UHF/6-31G): the spin-polarised atoms guess reaches
// the broken-symmetry state −108.7671 Eh, the others stop ≥ 0.5 Eh higher
// (runner/hf/sad_test.go); ⟨S²⟩ → 3 at dissociation (common practice).
func TestEnergyCommand_Guess(t *testing.T) {
	const n2 = "2\nN2 stretched\nN 0 0 0\nN 0 0 2.5\n"
	code, out, errs := runCLI(t, n2, "energy", "-", "--basis", "6-31G", "--method", "uhf", "--json")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var rep struct {
		Energy float64 `json:"energy_hartree"`
		S2     float64 `json:"s_squared"`
		Guess  string  `json:"guess"`
		Trials []struct {
			Guess  string  `json:"guess"`
			Energy float64 `json:"energy_hartree"`
		} `json:"guess_trials"`
	}
	if err := json.Unmarshal([]byte(out), &rep); err != nil {
		t.Fatal(err)
	}
	if rep.Guess != "atoms-spin" || len(rep.Trials) != 5 || rep.Energy > -108.76 || rep.S2 < 2.8 {
		t.Errorf("auto: guess %q, %d trials, E = %.8f, ⟨S²⟩ = %.4f; want atoms-spin of 5, ≤ −108.76 Eh, ⟨S²⟩ ≈ 3", rep.Guess, len(rep.Trials), rep.Energy, rep.S2)
	}
	code, out, errs = runCLI(t, n2, "energy", "-", "--basis", "6-31G", "--method", "uhf", "--guess", "core")
	if code != 0 || !strings.Contains(out, "started from the core guess") || strings.Contains(out, "guesses tried") {
		t.Errorf("--guess core: exit %d, output:\n%s%s", code, out, errs)
	}
	code, _, errs = runCLI(t, n2, "energy", "-", "--guess", "huckel")
	if code == 0 || !strings.Contains(errs, "--guess") || !strings.Contains(errs, "atoms-spin") {
		t.Errorf("--guess huckel: exit %d, stderr %q; want a usage error naming the choices", code, errs)
	}
}
