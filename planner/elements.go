package planner

import (
	"fmt"
	"strconv"
	"strings"
)

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

// Isotope masses: AME2020, M. Wang, W. J. Huang, F. G. Kondev, G. Audi,
// S. Naimi, "The AME 2020 atomic mass evaluation (II)", Chin. Phys. C 45,
// 030003 (2021), doi:10.1088/1674-1137/abddaf. Values transcribed from
// memory of that table (not machine-copied); they agree with the
// evaluation to the digits given for the light elements checked in the
// tests.
//
// Covalent radii: B. Cordero et al., "Covalent radii revisited", Dalton
// Trans. 2008, 2832, doi:10.1039/B801115J (sp3 C; low-spin Mn, Fe, Co),
// transcribed from memory; they only decide connectivity, where a few
// hundredths of an Å do not matter.
var elements = [...]Element{
	{1, "H", "hydrogen", 1, 1.00782503223, 0.31},
	{2, "He", "helium", 4, 4.00260325413, 0.28},
	{3, "Li", "lithium", 7, 7.0160034366, 1.28},
	{4, "Be", "beryllium", 9, 9.012183065, 0.96},
	{5, "B", "boron", 11, 11.00930536, 0.84},
	{6, "C", "carbon", 12, 12.0, 0.76},
	{7, "N", "nitrogen", 14, 14.00307400443, 0.71},
	{8, "O", "oxygen", 16, 15.99491461957, 0.66},
	{9, "F", "fluorine", 19, 18.99840316273, 0.57},
	{10, "Ne", "neon", 20, 19.9924401762, 0.58},
	{11, "Na", "sodium", 23, 22.9897692820, 1.66},
	{12, "Mg", "magnesium", 24, 23.985041697, 1.41},
	{13, "Al", "aluminium", 27, 26.98153853, 1.21},
	{14, "Si", "silicon", 28, 27.97692653465, 1.11},
	{15, "P", "phosphorus", 31, 30.97376199842, 1.07},
	{16, "S", "sulfur", 32, 31.9720711744, 1.05},
	{17, "Cl", "chlorine", 35, 34.968852682, 1.02},
	{18, "Ar", "argon", 40, 39.9623831237, 1.06},
	{19, "K", "potassium", 39, 38.9637064864, 2.03},
	{20, "Ca", "calcium", 40, 39.962590863, 1.76},
	{21, "Sc", "scandium", 45, 44.95590828, 1.70},
	{22, "Ti", "titanium", 48, 47.94794198, 1.60},
	{23, "V", "vanadium", 51, 50.94395704, 1.53},
	{24, "Cr", "chromium", 52, 51.94050623, 1.39},
	{25, "Mn", "manganese", 55, 54.93804391, 1.39},
	{26, "Fe", "iron", 56, 55.93493633, 1.32},
	{27, "Co", "cobalt", 59, 58.93319429, 1.26},
	{28, "Ni", "nickel", 58, 57.93534241, 1.24},
	{29, "Cu", "copper", 63, 62.92959772, 1.32},
	{30, "Zn", "zinc", 64, 63.92914201, 1.22},
	{31, "Ga", "gallium", 69, 68.9255735, 1.22},
	{32, "Ge", "germanium", 74, 73.921177761, 1.20},
	{33, "As", "arsenic", 75, 74.92159457, 1.19},
	{34, "Se", "selenium", 80, 79.9165218, 1.20},
	{35, "Br", "bromine", 79, 78.9183376, 1.20},
	{36, "Kr", "krypton", 84, 83.9114977282, 1.16},
}

// isotopes lists the other isotopes a spectroscopist commonly substitutes
// (same AME2020 source as above, from memory), keyed by Z then mass number.
var isotopes = map[int]map[int]float64{
	1:  {2: 2.01410177812, 3: 3.0160492779},
	2:  {3: 3.0160293201},
	3:  {6: 6.0151228874},
	5:  {10: 10.01293695},
	6:  {13: 13.00335483507, 14: 14.0032419884},
	7:  {15: 15.00010889888},
	8:  {17: 16.99913175650, 18: 17.99915961286},
	14: {29: 28.97649466490, 30: 29.973770136},
	16: {33: 32.9714589098, 34: 33.967867004},
	17: {37: 36.965902602},
	18: {36: 35.967545105},
	35: {81: 80.9162897},
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
// element z. Known isotopes are the most abundant one of every element and
// those in the isotopes table.
func IsotopeMass(z, a int) (float64, error) {
	e, err := ElementByZ(z)
	if err != nil {
		return 0, err
	}
	if a == e.MassNumber {
		return e.Mass, nil
	}
	if m, ok := isotopes[z][a]; ok {
		return m, nil
	}
	return 0, fmt.Errorf("planner: no mass known for isotope %d%s", a, e.Symbol)
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
