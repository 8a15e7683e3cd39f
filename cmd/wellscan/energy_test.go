package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

func runCLI(t *testing.T, stdin string, args ...string) (int, string, string) {
	t.Helper()
	var out, errb bytes.Buffer
	code := run(args, strings.NewReader(stdin), &out, &errb)
	return code, out.String(), errb.String()
}

func writeFile(t *testing.T, name, text string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(p, []byte(text), 0o600); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestEnergyCommand_JSON(t *testing.T) {
	// H2 at 1.4 bohr in STO-3G: −1.1167 Eh (Szabo & Ostlund, Modern Quantum
	// Chemistry, §3.5.2; 4 decimals printed).
	code, out, errs := runCLI(t, "2\nH2\nH 0 0 0\nH 0 0 1.4\n", "energy", "-", "--units", "bohr", "--basis", "sto-3g", "--json")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var rep map[string]any
	if err := json.Unmarshal([]byte(out), &rep); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"energy_hartree", "electronic_energy_hartree", "nuclear_repulsion_hartree", "converged", "iterations", "basis_functions", "method", "method_label", "basis"} {
		if _, ok := rep[k]; !ok {
			t.Errorf("JSON lacks %q", k)
		}
	}
	if e := rep["energy_hartree"].(float64); e > -1.11665 || e < -1.11675 {
		t.Errorf("energy_hartree = %v, want −1.1167", e)
	}
	if _, ok := rep["s_squared"]; ok {
		t.Error("RHF output carries s_squared")
	}
	code, out, _ = runCLI(t, "2\nH2+\nH 0 0 0\nH 0 0 2\n", "energy", "-", "--units", "bohr", "--charge", "1", "--json")
	if code != 0 || !strings.Contains(out, `"s_squared"`) || !strings.Contains(out, `"method": "uhf"`) {
		t.Errorf("H2⁺: exit %d, output %s; want UHF with s_squared", code, out)
	}
}

func TestEnergyCommand_BadInput(t *testing.T) {
	cases := []struct {
		name, xyz string
		args      []string
		want      string
	}{
		{"unknown element", "1\n\nXx 0 0 0\n", nil, `unknown element "Xx"`},
		{"atoms on top of each other", "2\n\nH 0 0 0\nH 0 0 0.01\n", nil, "atoms too close: atom 1 (H) and atom 2 (H)"},
		{"impossible multiplicity", "2\n\nH 0 0 0\nH 0 0 0.74\n", []string{"--multiplicity", "2"}, "2 electrons (charge +0) cannot have multiplicity 2"},
		{"no electrons", "1\n\nH 0 0 0\n", []string{"--charge", "1"}, "charge +1 leaves 0 electrons"},
		{"basis lacks element", "1\n\nK 0 0 0\n", []string{"--basis", "cc-pVDZ"}, "cc-pVDZ has no data for K"},
		{"unknown basis", "1\n\nH 0 0 0\n", []string{"--basis", "nope-3G"}, "nope-3G"},
		{"bad count line", "two\n\nH 0 0 0\n", nil, `water.xyz:1: expected "element x y z", got "two"`},
		{"count too large", "3\n\nH 0 0 0\n", nil, "water.xyz:3: file ends after 1 of 3 atoms"},
		{"bad coordinate", "1\n\nH 0 zero 0\n", nil, "water.xyz:3: coordinate y of H"},
		{"bad units", "1\n\nH 0 0 0\n", []string{"--units", "furlong"}, `unknown unit "furlong"`},
		{"bad method", "1\n\nH 0 0 0\n", []string{"--method", "ccsdt"}, `unknown method "ccsdt"`},
		{"frozen core without mp2", "1\n\nH 0 0 0\n", []string{"--all-electron"}, "apply to the correlated methods (mp2, ccsd, ccsd(t)) only"},
		{"ccsd open shell", "1\n\nH 0 0 0\n", []string{"--method", "ccsd(t)"}, "ccsd(t): only closed-shell molecules (RHF reference) are supported"},
		{"one basis for a limit", "2\n\nH 0 0 0\nH 0 0 0.74\n", []string{"--method", "ccsd", "--basis-limit", "cc-pVTZ"}, "--basis-limit: 1 sets given, expected two"},
		{"limit of rhf", "2\n\nH 0 0 0\nH 0 0 0.74\n", []string{"--basis-limit", "cc-pVDZ,cc-pVTZ"}, "has no correlation energy to extrapolate"},
		{"limit and basis", "2\n\nH 0 0 0\nH 0 0 0.74\n", []string{"--method", "ccsd", "--basis", "cc-pVDZ", "--basis-limit", "cc-pVDZ,cc-pVTZ"}, "replaces --basis"},
		{"core without limit", "2\n\nH 0 0 0\nH 0 0 0.74\n", []string{"--method", "ccsd", "--core-correction", "cc-pCVTZ"}, "--core-correction applies to --basis-limit only"},
		{"contradicting mp2 flags", "1\n\nH 0 0 0\n", []string{"--method", "mp2", "--all-electron", "--frozen-core", "1"}, "contradict"},
		{"negative frozen core", "1\n\nH 0 0 0\n", []string{"--method", "mp2", "--frozen-core", "-3"}, "expected a count ≥ 0"},
		{"too many frozen", "1\n\nHe 0 0 0\n", []string{"--method", "mp2", "--frozen-core", "2"}, "only 1 β electrons"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			p := filepath.Join(t.TempDir(), "water.xyz")
			if err := os.WriteFile(p, []byte(tc.xyz), 0o600); err != nil {
				t.Fatal(err)
			}
			code, _, errs := runCLI(t, "", append([]string{"energy", p}, tc.args...)...)
			if code != 1 || !strings.Contains(errs, tc.want) {
				t.Errorf("exit %d, stderr %q; want exit 1 and %q", code, errs, tc.want)
			}
		})
	}
}

func TestEnergyCommand_NotConverged(t *testing.T) {
	p := writeFile(t, "w.xyz", "3\n\nO 0 0 0.1173\nH 0 0.7572 -0.4692\nH 0 -0.7572 -0.4692\n")
	code, out, _ := runCLI(t, "", "energy", p, "--max-iterations", "2")
	if code != 1 || !strings.Contains(out, "NOT CONVERGED") {
		t.Errorf("exit %d, output %q; want exit 1 and a NOT CONVERGED banner", code, out)
	}
	if _, _, errs := runCLI(t, "", "energy", p, "--max-iterations", "2"); strings.Count(errs, "not converged") != 1 || strings.Contains(errs, " Eh") {
		t.Errorf("stderr %q: want \"not converged\" once and no energy", errs)
	}
	// The unconverged energy, dipole and charges are not shown as results.
	for _, no := range []string{"E(RHF)", " Eh\n", "dipole", "Mulliken"} {
		if strings.Contains(out, no) {
			t.Errorf("not-converged output shows %q:\n%s", no, out)
		}
	}
}

// TestEnergyCommand_Defaults: a lone N atom defaults to its Hund's-rule
// quartet and UHF, and the output says so; bare "element x y z" lines
// are read as in a spec. Energy: −54.38544 Eh (UHF/6-31G* quartet, the
// value issue 19 quotes from this engine; an independent check is the
// doublet it replaced, −54.32398 Eh, 61 mEh higher, so 1e-4 Eh separates
// them safely).
func TestEnergyCommand_Defaults(t *testing.T) {
	code, out, errs := runCLI(t, "N 0 0 0\n", "energy", "-", "--basis", "6-31G*")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	for _, want := range []string{"N · UHF/6-31G* · single point", "multiplicity 4 (default: Hund's rules for the ground configuration of N)", "UHF (default for multiplicity 4)", "1 atom,"} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}
	var e float64
	if i := strings.Index(out, "E(UHF)"); i < 0 {
		t.Fatalf("no E(UHF) line:\n%s", out)
	} else if _, err := fmt.Sscanf(strings.TrimSpace(out[i+len("E(UHF)"):]), "%g", &e); err != nil || math.Abs(e+54.38544) > 1e-4 {
		t.Errorf("E(UHF) = %v (%v), want −54.38544 (quartet)", e, err)
	}
	if strings.Contains(out, "eV") || strings.Contains(out, "e·bohr") {
		t.Errorf("conversions shown without --also-units:\n%s", out)
	}
	code, out, _ = runCLI(t, "N 0 0 0\n", "energy", "-", "--basis", "6-31G*", "--also-units", "eV,au")
	if code != 0 || !strings.Contains(out, " eV\n") || !strings.Contains(out, "e·bohr") {
		t.Errorf("--also-units eV,au: exit %d:\n%s", code, out)
	}
	if code, _, errs = runCLI(t, "N 0 0 0\n", "energy", "-", "--also-units", "furlong"); code != 1 || !strings.Contains(errs, `unknown unit "furlong"`) {
		t.Errorf("--also-units furlong: exit %d, %q", code, errs)
	}
}

// workedWaterXYZ is the geometry of the published worked water example
// (runner/hf/testdata/bases/h2o-geom.dat, bohr).
const workedWaterXYZ = "3\nworked water\nO 0.000000000000 -0.143225816552 0.000000000000\n" +
	"H 1.638036840407 1.136548822547 -0.000000000000\nH -1.638036840407 1.136548822547 -0.000000000000\n"

// TestEnergyCommand_CCSDT: the published worked example (H2O, STO-3G,
// all electrons) through the command, in JSON and as text.
func TestEnergyCommand_CCSDT(t *testing.T) {
	code, out, errs := runCLI(t, workedWaterXYZ, "energy", "-", "--units", "bohr", "--basis", "STO-3G-v0", "--method", "ccsd(t)", "--all-electron", "--json")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var rep map[string]any
	if err := json.Unmarshal([]byte(out), &rep); err != nil {
		t.Fatal(err)
	}
	// CCSD correlation, (T) and CCSD(T) total of the published worked example, STO-3G
	// (CrawfordGroup ProgrammingProjects commit 297fda1, Project #6 output); 1e-9 Eh as in the engine's test.
	for k, want := range map[string]float64{"ccsd_correlation_hartree": -0.070680088376, "triples_hartree": -0.000099877272,
		"energy_hartree": -75.012859893840, "reference_energy_hartree": -74.942079928192, "frozen_core_orbitals": 0} {
		got, ok := rep[k].(float64)
		if !ok || math.Abs(got-want) > 1e-9 {
			t.Errorf("%s = %v, want %v", k, rep[k], want)
		}
	}
	if rep["method"] != "ccsd(t)" || rep["cc_converged"] != true {
		t.Errorf("method %v, cc_converged %v", rep["method"], rep["cc_converged"])
	}
	code, out, errs = runCLI(t, workedWaterXYZ, "energy", "-", "--units", "bohr", "--basis", "STO-3G-v0", "--method", "CCSD")
	if code != 0 || !strings.Contains(out, "frozen core: 1 orbital per spin (O 1s)") || !strings.Contains(out, "E(CCSD(fc))") || strings.Contains(out, "(T)") {
		t.Errorf("text output (exit %d, %s):\n%s", code, errs, out)
	}
}

// TestEnergyCommand_BasisLimit: He, cc-pVDZ/cc-pVTZ limit with the core
// correction (zero for He: no core); the JSON lists the four components
// and the total is the sum of the parts (1e-12 Eh: rounding).
func TestEnergyCommand_BasisLimit(t *testing.T) {
	code, out, errs := runCLI(t, "1\nhelium\nHe 0 0 0\n", "energy", "-", "--method", "ccsd(t)", "--basis-limit", "cc-pVDZ,cc-pVTZ", "--core-correction", "cc-pCVTZ", "--json")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var rep struct {
		Energy     float64 `json:"energy_hartree"`
		HF         float64 `json:"hf_limit_hartree"`
		Corr       float64 `json:"correlation_limit_hartree"`
		Core       float64 `json:"core_correction_hartree"`
		Components []struct {
			Name, Basis string
		} `json:"components"`
	}
	if err := json.Unmarshal([]byte(out), &rep); err != nil {
		t.Fatal(err)
	}
	if len(rep.Components) != 4 || rep.Components[3].Name != "core_frozen" || rep.Components[1].Basis != "cc-pVTZ" {
		t.Errorf("components %+v", rep.Components)
	}
	if math.Abs(rep.HF+rep.Corr+rep.Core-rep.Energy) > 1e-12 || rep.Core != 0 {
		t.Errorf("HF %v + corr %v + core %v ≠ total %v", rep.HF, rep.Corr, rep.Core, rep.Energy)
	}
	code, out, _ = runCLI(t, "1\nhelium\nHe 0 0 0\n", "energy", "-", "--method", "ccsd(t)", "--basis-limit", "cc-pVDZ,cc-pVTZ")
	if code != 0 || !strings.Contains(out, "He · CCSD(T)(full)/cc-pVDZ→cc-pVTZ limit · single point") || !strings.Contains(out, "cc-pVDZ/cc-pVTZ → basis-set limit") {
		t.Errorf("text output (exit %d):\n%s", code, out)
	}
}

func TestEnergyCommand_MP2(t *testing.T) {
	code, out, errs := runCLI(t, workedWaterXYZ, "energy", "-", "--units", "bohr", "--basis", "STO-3G-v0", "--method", "mp2", "--all-electron", "--json")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var rep map[string]any
	if err := json.Unmarshal([]byte(out), &rep); err != nil {
		t.Fatal(err)
	}
	// MP2 correlation and total of the published worked example, STO-3G
	// (CrawfordGroup ProgrammingProjects commit 297fda1, Project #4 output,
	// tabulated in runner/hf/testdata/worked-water README); 1e-9 Eh as in
	// the engine's own test.
	for k, want := range map[string]float64{"mp2_correlation_hartree": -0.049149636120, "mp2_total_hartree": -74.991229564312,
		"energy_hartree": -74.991229564312, "reference_energy_hartree": -74.942079928192, "frozen_core_orbitals": 0} {
		got, ok := rep[k].(float64)
		if !ok || math.Abs(got-want) > 1e-9 {
			t.Errorf("%s = %v, want %v", k, rep[k], want)
		}
	}
	ss, os := rep["mp2_same_spin_hartree"].(float64), rep["mp2_opposite_spin_hartree"].(float64)
	if math.Abs(ss+os+0.049149636120) > 1e-9 {
		t.Errorf("same %v + opposite %v ≠ correlation", ss, os)
	}
	code, out, errs = runCLI(t, workedWaterXYZ, "energy", "-", "--units", "bohr", "--basis", "STO-3G-v0", "--method", "mp2")
	if code != 0 || !strings.Contains(out, "frozen core: 1 orbital per spin (O 1s)") || !strings.Contains(out, "E(MP2(fc))") || !strings.Contains(out, "RHF reference") {
		t.Errorf("text output (exit %d, %s):\n%s", code, errs, out)
	}
	// All-electron MP2 is labelled apart from frozen-core MP2.
	code, out, errs = runCLI(t, workedWaterXYZ, "energy", "-", "--units", "bohr", "--basis", "STO-3G-v0", "--method", "mp2", "--all-electron")
	if code != 0 || !strings.Contains(out, "H2O · MP2(full)/STO-3G-v0") || strings.Contains(out, "MP2(fc)") {
		t.Errorf("all-electron text output (exit %d, %s):\n%s", code, errs, out)
	}
}

func TestBasisCommand(t *testing.T) {
	code, out, _ := runCLI(t, "", "basis", "list")
	for _, name := range []string{"STO-3G", "3-21G", "6-31G*", "6-31G**", "6-311G**", "cc-pVDZ", "cc-pVTZ", "aug-cc-pVDZ"} {
		if code != 0 || !strings.Contains(out, name) {
			t.Errorf("basis list lacks %s", name)
		}
	}
	code, out, _ = runCLI(t, "", "basis", "show", "6-31g*", "O")
	if code != 0 || !strings.Contains(out, "element O") || strings.Contains(out, "element H") {
		t.Errorf("basis show 6-31g* O: exit %d, output %.200q", code, out)
	}
}

// TestDemo_COMinimum runs the README's demo (CO stretch, RHF/6-31G*,
// adaptive) and checks the minimum it locates. Reference: r_e(CO) =
// 1.114 Å at RHF/6-31G* (W. J. Hehre, L. Radom, P. v. R. Schleyer and
// J. A. Pople, Ab Initio Molecular Orbital Theory (Wiley 1986), table of
// HF/6-31G* bond lengths; from memory), printed to 3 decimals, so the
// tolerance is 1e-3 Å.
func TestDemo_COMinimum(t *testing.T) {
	if testing.Short() {
		t.Skip("runs a 12-point RHF scan")
	}
	code, out, errs := runCLI(t, "", "demo", "--dir", filepath.Join(t.TempDir(), "co"))
	if code != 0 {
		t.Fatalf("demo exit %d: %s", code, errs)
	}
	i := strings.Index(out, "located minimum: r = ")
	if i < 0 {
		t.Fatalf("demo printed no minimum:\n%s", out)
	}
	var r float64
	if _, err := fmt.Sscanf(out[i:], "located minimum: r = %g", &r); err != nil {
		t.Fatal(err)
	}
	if math.Abs(r-1.114) > 1e-3 {
		t.Errorf("CO RHF/6-31G* minimum at %.5f Å, want 1.114 ± 0.001", r)
	}
}

// decimalsRE matches numbers with more than 6 decimals; their last digits
// vary with the order of parallel sums.
var decimalsRE = regexp.MustCompile(`-?\d+\.\d{7,}`)

// TestEnergyCommand_Golden: the text layout of `wellscan energy`, numbers
// cut to 6 decimals (the Fock builds sum in parallel, so the 12th decimal
// of the energy can differ between runs). Water at the README's geometry,
// UHF triplet so that ⟨S²⟩ and both spins' orbitals show.
func TestEnergyCommand_Golden(t *testing.T) {
	const water = "O  0.000000  0.000000  0.117300\nH  0.000000  0.757200 -0.469200\nH  0.000000 -0.757200 -0.469200\n"
	code, out, errs := runCLI(t, water, "energy", "-", "--basis", "STO-3G", "--multiplicity", "3", "--guess", "core", "--also-units", "eV,au", "--memory", "64") // a fixed budget: the default depends on the machine
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	got := decimalsRE.ReplaceAllStringFunc(out, func(s string) string {
		v, _ := strconv.ParseFloat(s, 64)
		return strconv.FormatFloat(v, 'f', 6, 64)
	})
	if want := golden(t, "energy_water_triplet", []byte(got)); got != string(want) {
		t.Errorf("energy output differs from testdata/energy_water_triplet.golden (rerun with -update if intended):\n%s", got)
	}
}
