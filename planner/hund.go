package planner

import "fmt"

// subshells lists the subshells of H–Kr in the order they fill (aufbau):
// principal quantum number n and angular momentum l.
var subshells = [...]struct{ n, l int }{
	{1, 0}, {2, 0}, {2, 1}, {3, 0}, {3, 1}, {4, 0}, {3, 2}, {4, 1},
}

// groundConfiguration returns the occupation of each subshell (in the
// order of subshells) of the neutral atom with atomic number z in its
// ground configuration: aufbau filling, except chromium (3d⁵ 4s¹) and
// copper (3d¹⁰ 4s¹), whose ground configurations take one 4s electron
// into 3d (NIST Atomic Spectra Database, ground levels of the neutral
// atoms; from memory).
func groundConfiguration(z int) []int {
	occ := make([]int, len(subshells))
	left := z
	for i, s := range subshells {
		c := min(left, 2*(2*s.l+1))
		occ[i] = c
		left -= c
	}
	if z == 24 || z == 29 { // Cr, Cu
		occ[5]--
		occ[6]++
	}
	return occ
}

// ionConfiguration changes a neutral ground configuration by charge: a
// cation loses its electrons from the outermost subshell first (highest
// n, then highest l: 4p, then 4s before 3d), an anion adds them by aufbau
// into the first subshell with room.
func ionConfiguration(occ []int, charge int) []int {
	occ = append([]int(nil), occ...)
	for ; charge > 0; charge-- {
		best := -1
		for i, s := range subshells {
			if occ[i] == 0 {
				continue
			}
			if best < 0 || s.n > subshells[best].n || (s.n == subshells[best].n && s.l > subshells[best].l) {
				best = i
			}
		}
		if best < 0 {
			break
		}
		occ[best]--
	}
	for ; charge < 0; charge++ {
		for i, s := range subshells {
			if occ[i] < 2*(2*s.l+1) {
				occ[i]++
				break
			}
		}
	}
	return occ
}

// AtomMultiplicity is the spin multiplicity 2S+1 of the ground state of a
// lone atom of atomic number z with the given charge, by Hund's first rule
// applied to its ground configuration: every open subshell holds as many
// unpaired electrons as it can (min(k, 2(2l+1)−k) for k electrons in a
// subshell of angular momentum l), all with parallel spins. The neutral
// atoms H–Kr follow their ground configurations (with chromium and copper
// as exceptions to aufbau); ions are the neutral configuration with
// electrons removed from the outermost subshell first or added by aufbau
// (right for main-group ions and for the doubly charged first-row
// transition-metal ions; a few singly charged ones, such as Co⁺ and Ni⁺,
// have a different ground configuration: give their multiplicity).
//
// Reference: F. Hund, "Zur Deutung verwickelter Spektren", Z. Phys. 33,
// 345–371 (1925), doi:10.1007/BF01328319.
func AtomMultiplicity(z, charge int) (int, error) {
	if z < 1 || z > MaxZ {
		return 0, fmt.Errorf("planner: no ground configuration for atomic number %d (wellscan knows H–Kr)", z)
	}
	if charge >= z {
		return 0, fmt.Errorf("planner: charge %+d leaves atom %d without electrons", charge, z)
	}
	occ := ionConfiguration(groundConfiguration(z), charge)
	unpaired := 0
	for i, s := range subshells {
		cap := 2 * (2*s.l + 1)
		unpaired += min(occ[i], cap-occ[i])
	}
	return unpaired + 1, nil
}

// DefaultMultiplicity is the multiplicity wellscan uses when none is
// given, and why: for a lone atom the Hund's-rule ground state
// ([AtomMultiplicity]); for a molecule the lowest consistent with the
// electron count (singlet for an even count, doublet for an odd one),
// which is the ground state of most closed-shell molecules but not of
// all (O₂ is a triplet): the reason says so.
func DefaultMultiplicity(atoms []Atom, charge int) (int, string) {
	n := -charge
	for _, a := range atoms {
		n += a.Element.Z
	}
	if len(atoms) == 1 {
		if m, err := AtomMultiplicity(atoms[0].Element.Z, charge); err == nil {
			return m, fmt.Sprintf("Hund's rules for the ground configuration of %s", ionLabel(atoms[0].Element.Symbol, charge))
		}
	}
	m := 1 + ((n%2)+2)%2
	return m, fmt.Sprintf("the lowest for %d electrons; give the multiplicity if the ground state has more unpaired electrons", n)
}

// ionLabel writes an atom or atomic ion: "N", "O⁻", "Fe²⁺".
func ionLabel(sym string, charge int) string {
	switch {
	case charge == 0:
		return sym
	case charge == 1:
		return sym + "⁺"
	case charge == -1:
		return sym + "⁻"
	case charge > 0:
		return sym + superscript(charge) + "⁺"
	}
	return sym + superscript(-charge) + "⁻"
}

// superscript writes a non-negative integer in superscript digits.
func superscript(n int) string {
	const digits = "⁰¹²³⁴⁵⁶⁷⁸⁹"
	d := []rune(digits)
	s := fmt.Sprint(n)
	out := make([]rune, 0, len(s))
	for _, c := range s {
		out = append(out, d[c-'0'])
	}
	return string(out)
}
