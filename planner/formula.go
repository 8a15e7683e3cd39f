package planner

import (
	"fmt"
	"sort"
	"strings"
)

// The order in which wellscan writes the elements of a formula, as
// chemists write them (HF, HCl, H2O, NH3, CO2, CH4, SiH4, LiH, SF6):
//
//  1. A formula with carbon follows the Hill system: C first, then H,
//     then the other elements alphabetically (CH4, CO2, CH4O, CHCl3).
//     E. A. Hill, J. Am. Chem. Soc. 22, 478–494 (1900),
//     doi:10.1021/ja02046a005 (from memory).
//  2. Any other formula lists its elements along the electronegativity
//     sequence of IUPAC's nomenclature of inorganic chemistry, the more
//     electropositive first (Recommendations 2005, rule IR-4.4.3.2 and
//     Table VI; from memory): noble gases, alkali metals, alkaline-earth
//     metals, the transition metals by group, then groups 13, 14 and 15,
//     hydrogen, group 16 and group 17, each group from its heaviest
//     member up. So NH3 and PH3 but H2O, H2S, HF and HCl; LiH, BH3,
//     SiH4; NO, SO2, ClF3, OF2.
//  3. One exception, the diatomic chalcogen hydrides: OH, SH and SeH are
//     written chalcogen first, as spectroscopists write these radicals
//     (common practice), where rule 2 would give HO.
//
// Counts are ASCII digits after the symbol ("H2O"); mass numbers of
// substituted isotopes are superscripts before it ("¹³CO", see
// [Molecule.Isotopologue]).
var electronegativitySequence = [...]string{
	"Kr", "Ar", "Ne", "He",
	"K", "Na", "Li",
	"Ca", "Mg", "Be",
	"Sc", "Ti", "V", "Cr", "Mn", "Fe", "Co", "Ni", "Cu", "Zn",
	"Ga", "Al", "B",
	"Ge", "Si", "C",
	"As", "P", "N",
	"H",
	"Se", "S", "O",
	"Br", "Cl", "F",
}

// elementOrder sorts the element symbols of a molecule of nAtoms atoms
// in formula order (see above).
func elementOrder(syms []string, nAtoms int) {
	if nAtoms == 2 && len(syms) == 2 {
		for i, s := range syms {
			if s == "H" && (syms[1-i] == "O" || syms[1-i] == "S" || syms[1-i] == "Se") {
				syms[0], syms[1] = syms[1-i], "H"
				return
			}
		}
	}
	hasC := false
	for _, s := range syms {
		hasC = hasC || s == "C"
	}
	rank := map[string]int{}
	for i, s := range electronegativitySequence {
		rank[s] = i
	}
	sort.SliceStable(syms, func(i, j int) bool {
		a, b := syms[i], syms[j]
		if hasC {
			for _, first := range []string{"C", "H"} {
				if a == first || b == first {
					return a == first && b != first
				}
			}
			return a < b
		}
		return rank[a] < rank[b]
	})
}

// Formula is the molecule's formula in the order chemists write it (see
// the rule above): "HF", "HCl", "H2O", "NH3", "CO2", "CH4". Isotopes are
// not shown; [Molecule.Isotopologue] shows them.
func (m Molecule) Formula() string {
	counts := map[string]int{}
	var syms []string
	for _, a := range m.Atoms {
		if counts[a.Element.Symbol] == 0 {
			syms = append(syms, a.Element.Symbol)
		}
		counts[a.Element.Symbol]++
	}
	elementOrder(syms, len(m.Atoms))
	var b strings.Builder
	for _, s := range syms {
		b.WriteString(s)
		if counts[s] > 1 {
			fmt.Fprint(&b, counts[s])
		}
	}
	return b.String()
}

// Isotopologue is the formula with its substituted isotopes written as
// chemists write them: ²H and ³H as D and T, any other isotope that is
// not the element's most abundant one with its mass number as a
// superscript before the symbol. The most abundant isotope is written
// bare, and within one element it comes first, then the others by mass
// number: "HDO", "D2O", "CH3D", "¹³CO", "C¹⁸O", "H2O" for ordinary water.
func (m Molecule) Isotopologue() string {
	type iso struct {
		sym  string
		a    int
		main bool
	}
	counts := map[iso]int{}
	perElement := map[string][]iso{}
	var syms []string
	for _, at := range m.Atoms {
		k := iso{at.Element.Symbol, at.MassNumber, at.MassNumber == at.Element.MassNumber || at.MassNumber == 0}
		if k.main {
			k.a = at.Element.MassNumber
		}
		if counts[k] == 0 {
			if len(perElement[k.sym]) == 0 {
				syms = append(syms, k.sym)
			}
			perElement[k.sym] = append(perElement[k.sym], k)
		}
		counts[k]++
	}
	elementOrder(syms, len(m.Atoms))
	var b strings.Builder
	for _, s := range syms {
		isos := perElement[s]
		sort.SliceStable(isos, func(i, j int) bool {
			if isos[i].main != isos[j].main {
				return isos[i].main
			}
			return isos[i].a < isos[j].a
		})
		for _, k := range isos {
			b.WriteString(isotopeSymbol(s, k.a, k.main))
			if counts[k] > 1 {
				fmt.Fprint(&b, counts[k])
			}
		}
	}
	return b.String()
}

// isotopeSymbol writes one isotope: the bare symbol for the most abundant
// one, D and T for hydrogen, else the mass number as a superscript.
func isotopeSymbol(sym string, a int, main bool) string {
	switch {
	case main:
		return sym
	case sym == "H" && a == 2:
		return "D"
	case sym == "H" && a == 3:
		return "T"
	}
	return superscript(a) + sym
}

// Isotopes lists the atoms whose isotope is not the element's most
// abundant one, e.g. ["atom 2: ²H (D)", "atom 3: ²H (D)"]; nil when
// every atom has its most abundant isotope.
func (m Molecule) Isotopes() []string {
	var out []string
	for i, at := range m.Atoms {
		if at.MassNumber == 0 || at.MassNumber == at.Element.MassNumber {
			continue
		}
		s := fmt.Sprintf("atom %d: %s%s", i+1, superscript(at.MassNumber), at.Element.Symbol)
		if at.Element.Symbol == "H" && (at.MassNumber == 2 || at.MassNumber == 3) {
			s += " (" + isotopeSymbol("H", at.MassNumber, false) + ")"
		}
		out = append(out, fmt.Sprintf("%s, %.6f amu", s, at.Mass))
	}
	return out
}

// IsotopeLabel writes one isotope with its mass number as a superscript,
// "¹²C", "²H": the explicit form of isotopologue tables ("¹²C¹⁶O",
// "¹³C¹⁶O").
func IsotopeLabel(sym string, a int) string { return superscript(a) + sym }
