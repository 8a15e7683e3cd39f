package planner

import (
	"fmt"
	"strings"
)

// correlatedMethods are the built-in methods with a correlation energy
// (and so a frozen-core choice).
var correlatedMethods = map[string]bool{"mp2": true, "ccsd": true, "ccsd(t)": true}

// IsCorrelated reports whether a built-in method name has a correlation
// treatment on top of Hartree–Fock (mp2, ccsd, ccsd(t)).
func IsCorrelated(method string) bool {
	return correlatedMethods[strings.ToLower(strings.TrimSpace(method))]
}

// BasisLabel is the basis part of the built-in engine's label: the basis
// set, or for a basis-set limit its recipe — "cc-pVTZ→cc-pVQZ limit" and,
// with a core correction, "cc-pVTZ→cc-pVQZ limit + cc-pCVTZ core" — so
// that "method/basis" names the calculation exactly. Other engine kinds
// give "".
func (e EngineSpec) BasisLabel() string {
	if e.Kind != "builtin" {
		return ""
	}
	if len(e.BasisLimit) != 2 {
		return e.Basis
	}
	s := fmt.Sprintf("%s→%s limit", e.BasisLimit[0], e.BasisLimit[1])
	if e.CoreCorrection != "" {
		s += " + " + e.CoreCorrection + " core"
	}
	return s
}
