package planner

import (
	"fmt"
	"strconv"
	"strings"
)

//go:generate go run ./internal/ame2020gen -in testdata/ame2020/mass.mas20.txt -out ame2020_gen.go

// Element is one chemical element as wellscan knows it.
type Element struct {
	Z      int
	Symbol string
	Name   string
	// MassNumber and Mass (amu) of the most abundant isotope, the default
	// mass used for vibrational analysis.
	MassNumber int
	Mass       float64
	// CovalentRadius in Å, used only to find bonds (connectivity).
	CovalentRadius float64
}

// The element table. Masses are filled from the generated AME2020 table
// (ame2020_gen.go, from the evaluation's own file: M. Wang, W. J. Huang,
// F. G. Kondev, G. Audi, S. Naimi, "The AME 2020 atomic mass evaluation
// (II)", Chin. Phys. C 45, 030003 (2021), doi:10.1088/1674-1137/abddaf);
// the mass number given for each element is its most abundant isotope
// (common practice; the AME has no abundances).
//
// Covalent radii: B. Cordero et al., "Covalent radii revisited", Dalton
// Trans. 2008, 2832, doi:10.1039/B801115J (sp3 C; low-spin Mn, Fe, Co),
// transcribed from memory; they only decide connectivity, where a few
// hundredths of an Å do not matter.
var elements = withMasses([...]Element{
	{1, "H", "hydrogen", 1, 0, 0.31},
	{2, "He", "helium", 4, 0, 0.28},
	{3, "Li", "lithium", 7, 0, 1.28},
	{4, "Be", "beryllium", 9, 0, 0.96},
	{5, "B", "boron", 11, 0, 0.84},
	{6, "C", "carbon", 12, 0, 0.76},
	{7, "N", "nitrogen", 14, 0, 0.71},
	{8, "O", "oxygen", 16, 0, 0.66},
	{9, "F", "fluorine", 19, 0, 0.57},
	{10, "Ne", "neon", 20, 0, 0.58},
	{11, "Na", "sodium", 23, 0, 1.66},
	{12, "Mg", "magnesium", 24, 0, 1.41},
	{13, "Al", "aluminium", 27, 0, 1.21},
	{14, "Si", "silicon", 28, 0, 1.11},
	{15, "P", "phosphorus", 31, 0, 1.07},
	{16, "S", "sulfur", 32, 0, 1.05},
	{17, "Cl", "chlorine", 35, 0, 1.02},
	{18, "Ar", "argon", 40, 0, 1.06},
	{19, "K", "potassium", 39, 0, 2.03},
	{20, "Ca", "calcium", 40, 0, 1.76},
	{21, "Sc", "scandium", 45, 0, 1.70},
	{22, "Ti", "titanium", 48, 0, 1.60},
	{23, "V", "vanadium", 51, 0, 1.53},
	{24, "Cr", "chromium", 52, 0, 1.39},
	{25, "Mn", "manganese", 55, 0, 1.39},
	{26, "Fe", "iron", 56, 0, 1.32},
	{27, "Co", "cobalt", 59, 0, 1.26},
	{28, "Ni", "nickel", 58, 0, 1.24},
	{29, "Cu", "copper", 63, 0, 1.32},
	{30, "Zn", "zinc", 64, 0, 1.22},
	{31, "Ga", "gallium", 69, 0, 1.22},
	{32, "Ge", "germanium", 74, 0, 1.20},
	{33, "As", "arsenic", 75, 0, 1.19},
	{34, "Se", "selenium", 80, 0, 1.20},
	{35, "Br", "bromine", 79, 0, 1.20},
	{36, "Kr", "krypton", 84, 0, 1.16},
})

// withMasses fills each element's Mass from the AME2020 table; a missing
// entry is a programming error in the table above.
func withMasses(es [36]Element) [36]Element {
	for i := range es {
		m, ok := ame2020[es[i].Z][es[i].MassNumber]
		if !ok {
			panic(fmt.Sprintf("planner: no AME2020 mass for %d%s", es[i].MassNumber, es[i].Symbol))
		}
		es[i].Mass = m
	}
	return es
}

// MaxZ is the heaviest element wellscan knows (krypton).
const MaxZ = len(elements)

// ElementByZ returns the element with atomic number z.
func ElementByZ(z int) (Element, error) {
	if z < 1 || z > MaxZ {
		return Element{}, fmt.Errorf("planner: unknown element with atomic number %d (wellscan knows Z = 1–%d, H–Kr)", z, MaxZ)
	}
	return elements[z-1], nil
}

// ElementBySymbol looks an element up by symbol, case-insensitively
// ("CL", "cl" and "Cl" all give chlorine). An atomic number written as
// digits is accepted too. D and T are not elements; use an isotope label
// ("2H") or the spec's isotope setting for deuterium and tritium.
func ElementBySymbol(sym string) (Element, error) {
	s := strings.TrimSpace(sym)
	if z, err := strconv.Atoi(s); err == nil {
		return ElementByZ(z)
	}
	for _, e := range elements {
		if strings.EqualFold(e.Symbol, s) {
			return e, nil
		}
	}
	return Element{}, fmt.Errorf("planner: unknown element %q (wellscan knows H–Kr)", sym)
}

// IsotopeMass returns the mass in amu of the isotope with mass number a of
// element z: every isotope whose mass AME2020 gives as measured.
func IsotopeMass(z, a int) (float64, error) {
	e, err := ElementByZ(z)
	if err != nil {
		return 0, err
	}
	if m, ok := ame2020[z][a]; ok {
		return m, nil
	}
	return 0, fmt.Errorf("planner: no measured mass for isotope %d%s in AME2020", a, e.Symbol)
}

// ParseIsotope reads labels such as "13C", "2H", "D", "T" or "C" (most
// abundant isotope) and returns the element, mass number and mass in amu.
func ParseIsotope(label string) (Element, int, float64, error) {
	s := strings.TrimSpace(label)
	switch s {
	case "D":
		s = "2H"
	case "T":
		s = "3H"
	}
	i := 0
	for i < len(s) && s[i] >= '0' && s[i] <= '9' {
		i++
	}
	e, err := ElementBySymbol(s[i:])
	if err != nil {
		return Element{}, 0, 0, fmt.Errorf("planner: isotope %q: %w", label, err)
	}
	if i == 0 {
		return e, e.MassNumber, e.Mass, nil
	}
	a, _ := strconv.Atoi(s[:i])
	m, err := IsotopeMass(e.Z, a)
	if err != nil {
		return Element{}, 0, 0, fmt.Errorf("planner: isotope %q: %w", label, err)
	}
	return e, a, m, nil
}
