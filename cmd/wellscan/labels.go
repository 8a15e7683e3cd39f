package main

import (
	"fmt"
	"strings"

	"wellscan/planner"
)

// methodName is how wellscan labels a built-in method: "RHF", "UHF", and
// for MP2 its reference and whether the cores were frozen — "MP2(fc)" and
// "MP2(full)" on an RHF reference, "UMP2(fc)" and "UMP2(full)" on a UHF
// one; "CCSD(fc)", "CCSD(T)(fc)", "CCSD(T)(full)" likewise — so that two
// energies that differ are never labelled alike.
func methodName(method string, multiplicity int, frozenCore bool) string {
	m := strings.ToLower(method)
	if m == "" {
		m = planner.DefaultMethod(multiplicity)
	}
	if !planner.IsCorrelated(m) {
		return strings.ToUpper(m)
	}
	name := strings.ToUpper(m)
	if m == "mp2" && multiplicity != 1 {
		name = "UMP2"
	}
	if frozenCore {
		return name + "(fc)"
	}
	return name + "(full)"
}

// specMethod is the method label of a spec's engine: methodName for the
// built-in engine, "model potential" or "external program" otherwise.
func specMethod(spec *planner.Spec, mol planner.Molecule) string {
	e := spec.Engine
	switch e.Kind {
	case "builtin":
		return methodName(e.Method, mol.Multiplicity, e.FrozenCore == nil || *e.FrozenCore)
	case "model":
		return "model potential"
	case "command":
		return "external program"
	}
	return e.Kind
}

// scanKind says how the coordinates not scanned are treated: "rigid"
// (they stay at the reference geometry) or "relaxed" (optimised at every
// point).
func scanKind(spec *planner.Spec) string { return spec.ScanMode() }

// scanLabel is the one-line label of a scan: isotopologue, method and
// basis, and rigid or relaxed — "HDO · UHF/6-31G* · rigid scan".
func scanLabel(spec *planner.Spec, mol planner.Molecule) string {
	m := specMethod(spec, mol)
	if b := spec.Engine.BasisLabel(); spec.Engine.Kind == "builtin" && b != "" {
		m += "/" + b
	}
	if spec.ForceField() != nil {
		return fmt.Sprintf("%s · %s · force field", mol.Isotopologue(), m)
	}
	return fmt.Sprintf("%s · %s · %s scan", mol.Isotopologue(), m, scanKind(spec))
}

// multiplicityNote says where the multiplicity came from when the user
// gave none: "(default: Hund's rules for …)"; empty when it was given.
func multiplicityNote(given bool, mol planner.Molecule) string {
	if given {
		return ""
	}
	_, why := planner.DefaultMultiplicity(mol.Atoms, mol.Charge)
	return " (default: " + why + ")"
}

// specDefaults names the defaults a spec relied on for the molecule's
// state and the method, e.g. "multiplicity 4 (Hund's rules for the ground
// configuration of N); method UHF (default for multiplicity 4)"; empty
// when the spec gave both.
func specDefaults(spec *planner.Spec, mol planner.Molecule) string {
	var parts []string
	if !spec.IsDefined("molecule", "multiplicity") || spec.MoleculeInput.Multiplicity == 0 {
		_, why := planner.DefaultMultiplicity(mol.Atoms, mol.Charge)
		parts = append(parts, fmt.Sprintf("multiplicity %d (%s)", mol.Multiplicity, why))
	}
	if spec.Engine.Kind == "builtin" && !spec.IsDefined("engine", "method") {
		parts = append(parts, fmt.Sprintf("method %s (default for multiplicity %d)", specMethod(spec, mol), mol.Multiplicity))
	}
	return strings.Join(parts, "; ")
}

// plural writes a count with its noun: "1 atom", "3 atoms".
func plural(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}

// signed writes a charge as chemists do: 0, +1, −1 (ASCII minus).
func signed(q int) string {
	if q == 0 {
		return "0"
	}
	return fmt.Sprintf("%+d", q)
}
