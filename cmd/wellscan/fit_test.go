package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"wellscan/fit"
	"wellscan/planner"
)

// writeMorseTable writes an invented Morse curve (D_e = 0.4 E_h, a = 1.2
// bohr⁻¹, r_e = 2.13 bohr) in Å and eV.
func writeMorseTable(t *testing.T) string {
	t.Helper()
	var b strings.Builder
	b.WriteString("# invented Morse curve for the command test\nr [angstrom], E [eV], converged\n")
	for i := range 90 {
		r := 1.8 + 0.01*float64(i)
		s := 1 - math.Exp(-1.2*(r-2.13))
		e := (0.4*s*s - 100) * planner.HartreeInEV
		fmt.Fprintf(&b, "%.10f, %.12f, true\n", r*planner.BohrInAngstrom, e)
	}
	p := filepath.Join(t.TempDir(), "curve.csv")
	if err := os.WriteFile(p, []byte(b.String()), 0o600); err != nil {
		t.Fatal(err)
	}
	return p
}

func runFit(t *testing.T, args ...string) (string, error) {
	t.Helper()
	var out bytes.Buffer
	a := &app{stdout: &out, stderr: &out}
	cmd := newFitCommand(a)
	cmd.SetArgs(args)
	cmd.SetOut(&out)
	cmd.SetErr(&out)
	err := cmd.ExecuteContext(t.Context())
	return out.String(), err
}

func TestFitCommand_Table_JSON(t *testing.T) {
	p := writeMorseTable(t)
	out, err := runFit(t, "--table", p, "--atoms", "C,O", "--isotopes", "13C,16O", "--json")
	if err != nil {
		t.Fatalf("fit: %v\n%s", err, out)
	}
	var res map[string]any
	if err := json.Unmarshal([]byte(out), &res); err != nil {
		t.Fatalf("output is not JSON: %v\n%s", err, out)
	}
	minima, _ := res["minima"].([]any)
	if len(minima) != 1 {
		t.Fatalf("%d minima in the JSON, want 1", len(minima))
	}
	m := minima[0].(map[string]any)
	for _, k := range []string{"r_e_angstrom", "r_e_stderr_angstrom", "e_min_hartree", "k_hartree_per_bohr2", "omega_e_cm1", "omega_e_x_e_cm1", "b_e_cm1", "alpha_e_cm1", "zpe_cm1", "levels_cm1", "fundamental_cm1", "warnings", "isotopologues"} {
		if _, ok := m[k]; !ok {
			t.Errorf("JSON minimum has no %q", k)
		}
	}
	// r_e = 2.13 bohr in Å (CODATA 2018 a0); the table carries 10 decimals
	// in Å, so 1e-7 Å is ample.
	if got := m["r_e_angstrom"].(float64); !scalar.EqualWithinAbsOrRel(got, 2.13*planner.BohrInAngstrom, 1e-7, 0) {
		t.Errorf("r_e = %v Å, want %v", got, 2.13*planner.BohrInAngstrom)
	}
	iso := m["isotopologues"].([]any)
	if len(iso) != 2 || iso[1].(map[string]any)["name"] != "¹³C¹⁶O" {
		t.Errorf("isotopologues = %v, want ¹²C¹⁶O and ¹³C¹⁶O", iso)
	}
}

func TestFitCommand_Table_Text(t *testing.T) {
	p := writeMorseTable(t)
	out, err := runFit(t, "--table", p, "--atoms", "C,O")
	if err != nil {
		t.Fatalf("fit: %v\n%s", err, out)
	}
	for _, want := range []string{"r_e = 1.1271", "¹²C¹⁶O", "G(v), from the potential's minimum"} {
		if !strings.Contains(out, want) {
			t.Errorf("text output lacks %q:\n%s", want, out)
		}
	}
	// The text prints the JSON's calibrated uncertainties, not other ones.
	js, err := runFit(t, "--table", p, "--atoms", "C,O", "--json")
	if err != nil {
		t.Fatal(err)
	}
	var res fit.Result
	if err := json.Unmarshal([]byte(js), &res); err != nil {
		t.Fatal(err)
	}
	m := res.Minima[0]
	for _, want := range []string{
		"ω_e = " + pm(m.OmegaE, m.OmegaEUnc, 3, false),
		"ω_e x_e = " + pm(m.OmegaExe, m.OmegaExeUnc, 4, false),
		"r_e = " + pm(m.REAngstrom, m.REUncAng, 6, false),
		"G(0) = " + pm(m.ZPEGrid, m.ZPEGridUnc, 2, false),
	} {
		if !strings.Contains(out, want) {
			t.Errorf("text output lacks the JSON's %q:\n%s", want, out)
		}
	}
}

func TestFitCommand_BadInput_Errors(t *testing.T) {
	p := writeMorseTable(t)
	bad := filepath.Join(t.TempDir(), "bad.csv")
	if err := os.WriteFile(bad, []byte("r, e [hartree]\n1, 2\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name string
		args []string
		want string
	}{
		{"no input", nil, "nothing to fit"},
		{"directory", []string{"somescan"}, "scan directory"},
		{"bad atoms", []string{"--table", p, "--atoms", "C"}, "expected two atoms"},
		{"unknown isotope", []string{"--table", p, "--atoms", "C,O", "--isotopes", "99C,16O"}, "99C"},
		{"no coordinate unit", []string{"--table", bad}, "need a coordinate column"},
		{"missing file", []string{"--table", filepath.Join(t.TempDir(), "none.csv")}, "no such file"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := runFit(t, tc.args...)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error = %v, want one mentioning %q", err, tc.want)
			}
		})
	}
}

// fit carries its own copy of a few CODATA 2018 constants (it may not import
// planner); they must be the very same numbers as planner's.
func TestFitConstants_SameAsPlanner(t *testing.T) {
	for _, c := range []struct {
		name      string
		fit, plan float64
	}{
		{"bohr in Å", fit.BohrInAngstrom, planner.BohrInAngstrom},
		{"hartree in cm⁻¹", fit.HartreeInCm1, planner.HartreeInCm1},
		{"hartree in eV", fit.HartreeInEV, planner.HartreeInEV},
		{"hartree in kJ/mol", fit.HartreeInKJPerMol, planner.HartreeInKJPerMol},
		{"m_u/m_e", fit.AmuInElectronMass, planner.AmuInElectronMass},
		{"E_h/a0² in N/m", fit.HartreePerBohr2InNPerM, planner.HartreePerBohr2InNPerM},
	} {
		if c.fit != c.plan {
			t.Errorf("%s: fit has %v, planner %v", c.name, c.fit, c.plan)
		}
	}
}

func TestFitCommand_BadFlagsAndTableValues_Errors(t *testing.T) {
	good := writeMorseTable(t)
	writeTable := func(rows string) string {
		p := filepath.Join(t.TempDir(), "bad.csv")
		if err := os.WriteFile(p, []byte("r [angstrom], E [hartree], weight, converged\n"+rows), 0o600); err != nil {
			t.Fatal(err)
		}
		return p
	}
	rows := "1.0, -1.0, 1, 1\n1.1, -1.1, 1, 1\n1.2, -1.05, 1, 1\n1.3, -1.0, 1, 1\n"
	for _, tc := range []struct {
		name string
		args []string
		want string
	}{
		{"negative window", []string{"--table", good, "--window-hartree", "-0.01"}, "--window-hartree -0.01"},
		{"NaN window", []string{"--table", good, "--window-hartree", "NaN"}, "--window-hartree NaN"},
		{"negative noise", []string{"--table", good, "--noise-hartree", "-1e-6"}, "--noise-hartree"},
		{"infinite noise", []string{"--table", good, "--noise-hartree", "Inf"}, "--noise-hartree"},
		{"zero effective mass", []string{"--table", good, "--effective-mass", "0"}, "--effective-mass 0"},
		{"NaN limit", []string{"--table", good, "--limit-hartree", "NaN"}, "--limit-hartree NaN"},
		// The table's lowest energy is −100 hartree (writeMorseTable).
		{"limit below the minimum", []string{"--table", good, "--atoms", "C,O", "--limit-hartree", "-100.5"}, "--limit-hartree -100.5 lies at or below the lowest energy"},
		{"isotopes of other elements", []string{"--table", good, "--atoms", "C,O", "--isotopes", "2H,16O"}, "--isotopes 2H,16O: the elements H,O do not match --atoms C,O"},
		{"row at r = 0", []string{"--table", writeTable("0, -1.0, 1, 1\n" + rows), "--atoms", "C,O"}, "bad.csv:2: r = 0 angstrom is not a positive distance"},
		{"negative r", []string{"--table", writeTable(rows + "-1.4, -0.9, 1, 1\n"), "--atoms", "C,O"}, "bad.csv:6: r = -1.4 angstrom"},
		{"repeated r", []string{"--table", writeTable(rows + "1.1, -1.1, 1, 1\n"), "--atoms", "C,O"}, "bad.csv:6: r = 1.1 repeats the coordinate of line 3"},
		{"negative weight", []string{"--table", writeTable(rows + "1.4, -0.9, -2, 1\n")}, "bad.csv:6: weight -2 is negative"},
		{"converged flag 2", []string{"--table", writeTable(rows + "1.4, -0.9, 1, 2\n")}, "bad.csv:6: converged = 2"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			out, err := runFit(t, tc.args...)
			if err == nil {
				t.Fatalf("no error; output:\n%s", out)
			}
			if !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %q lacks %q", err, tc.want)
			}
		})
	}
}
