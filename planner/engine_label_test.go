package planner

import (
	"errors"
	"strings"
	"testing"
)

const builtinHead = "[engine]\nkind = \"builtin\"\n"

// TestDecode_CorrelatedEngineErrors: the coupled-cluster and basis-limit
// keys are checked with the file, line and key named.
func TestDecode_CorrelatedEngineErrors(t *testing.T) {
	triplet := strings.Replace(co, "[molecule]", "[molecule]\nmultiplicity = 3", 1)
	tests := []struct {
		name, spec, want string
	}{
		{"ccsd open shell", triplet + scanR + builtinHead + "method = \"ccsd(t)\"\nbasis = \"cc-pVTZ\"\n", "engine.method: ccsd(t) is implemented for closed-shell molecules (multiplicity 1, RHF reference) only; this one has multiplicity 3"},
		{"unknown method", co + scanR + builtinHead + "method = \"ccsdt\"\nbasis = \"cc-pVTZ\"\n", "engine.method: unknown method \"ccsdt\""},
		{"frozen core with rhf", co + scanR + builtinHead + "method = \"rhf\"\nbasis = \"cc-pVTZ\"\nfrozen_core = false\n", "engine.frozen_core: only applies to the correlated methods"},
		{"limit with one basis", co + scanR + builtinHead + "method = \"ccsd(t)\"\nbasis_limit = [\"cc-pVTZ\"]\n", "test.toml:17: engine.basis_limit: give two basis sets"},
		{"limit and basis", co + scanR + builtinHead + "method = \"ccsd(t)\"\nbasis = \"cc-pVTZ\"\nbasis_limit = [\"cc-pVTZ\", \"cc-pVQZ\"]\n", "engine.basis: give either basis or basis_limit, not both"},
		{"limit of rhf", co + scanR + builtinHead + "method = \"rhf\"\nbasis_limit = [\"cc-pVTZ\", \"cc-pVQZ\"]\n", "engine.basis_limit: extrapolates a correlation energy"},
		{"core without limit", co + scanR + builtinHead + "method = \"ccsd\"\nbasis = \"cc-pVTZ\"\ncore_correction = \"cc-pCVTZ\"\n", "engine.core_correction: applies to a basis-set limit"},
		{"core with all electrons", co + scanR + builtinHead + "method = \"ccsd\"\nbasis_limit = [\"cc-pVTZ\", \"cc-pVQZ\"]\nfrozen_core = false\ncore_correction = \"cc-pCVTZ\"\n", "engine.core_correction: adds all-electron minus frozen-core"},
		{"limit key with model", co + scanR + strings.Replace(goodTail, "kind = \"model\"", "kind = \"model\"\nbasis_limit = [\"cc-pVTZ\", \"cc-pVQZ\"]", 1), "engine.basis_limit: belongs to another engine kind"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Decode([]byte(tc.spec), "test.toml")
			if err == nil || !strings.Contains(err.Error(), tc.want) || !errors.Is(err, ErrSpec) {
				t.Errorf("Decode error = %v, want ErrSpec containing %q", err, tc.want)
			}
		})
	}
}

func TestEngineSpec_BasisLabel(t *testing.T) {
	tests := []struct {
		name string
		e    EngineSpec
		want string
	}{
		{"basis", EngineSpec{Kind: "builtin", Method: "ccsd(t)", Basis: "cc-pVQZ"}, "cc-pVQZ"},
		{"limit", EngineSpec{Kind: "builtin", Method: "ccsd(t)", BasisLimit: []string{"cc-pVTZ", "cc-pVQZ"}}, "cc-pVTZ→cc-pVQZ limit"},
		{"limit and core", EngineSpec{Kind: "builtin", Method: "ccsd(t)", BasisLimit: []string{"cc-pVTZ", "cc-pVQZ"}, CoreCorrection: "cc-pCVTZ"}, "cc-pVTZ→cc-pVQZ limit + cc-pCVTZ core"},
		{"model", EngineSpec{Kind: "model"}, ""},
	}
	for _, tc := range tests {
		if got := tc.e.BasisLabel(); got != tc.want {
			t.Errorf("%s: BasisLabel() = %q, want %q", tc.name, got, tc.want)
		}
	}
	for _, s := range []string{co + scanR + builtinHead + "method = \"ccsd(t)\"\nbasis_limit = [\"cc-pVTZ\", \"cc-pVQZ\"]\ncore_correction = \"cc-pCVTZ\"\n",
		co + scanR + builtinHead + "method = \"CCSD\"\nbasis = \"cc-pVDZ\"\nfrozen_core = false\n"} {
		if _, err := Decode([]byte(s), "test.toml"); err != nil {
			t.Errorf("valid spec refused: %v", err)
		}
	}
}
