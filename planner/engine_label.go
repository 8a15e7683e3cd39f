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

// Label says what the built-in engine computes, as a method ("CCSD(T)")
// and a basis part that includes the frozen-core choice and any
// basis-set-limit recipe ("cc-pVQZ (frozen core)", "limit from cc-pVTZ
// and cc-pVQZ (frozen core) + core–valence correction in cc-pCVTZ"), so
// that "method/basis" names the calculation exactly. Other engine kinds
// give their kind and "".
func (e EngineSpec) Label() (method, basis string) {
	if e.Kind != "builtin" {
		return e.Kind, ""
	}
	method = strings.ToUpper(strings.TrimSpace(e.Method))
	basis = e.Basis
	if len(e.BasisLimit) == 2 {
		basis = fmt.Sprintf("limit from %s and %s", e.BasisLimit[0], e.BasisLimit[1])
	}
	if IsCorrelated(e.Method) {
		if e.FrozenCore != nil && !*e.FrozenCore {
			basis += " (all electrons)"
		} else {
			basis += " (frozen core)"
		}
	}
	if e.CoreCorrection != "" {
		basis += " + core–valence correction in " + e.CoreCorrection
	}
	return method, basis
}
