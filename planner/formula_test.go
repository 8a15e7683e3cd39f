package planner

import (
	"strings"
	"testing"
)

// molOf builds a molecule from isotope labels ("H", "2H", "13C"), atoms
// 2 bohr apart on a line; only the labels matter here.
func molOf(t *testing.T, labels ...string) Molecule {
	t.Helper()
	var atoms []Atom
	for i, l := range labels {
		e, a, m, err := ParseIsotope(l)
		if err != nil {
			t.Fatal(err)
		}
		atoms = append(atoms, Atom{Element: e, Pos: [3]float64{0, 0, 2 * float64(i)}, MassNumber: a, Mass: m})
	}
	mol, err := NewMolecule(atoms, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	return mol
}

func TestMolecule_Formula_ChemistsOrder(t *testing.T) {
	// The formulas as chemists write them (common practice; the rule is
	// written down in formula.go), in the input orders that Hill's
	// alphabetical rule gets wrong ("FH", "ClH", "H3N").
	cases := []struct {
		atoms []string
		want  string
	}{
		{[]string{"F", "H"}, "HF"},
		{[]string{"H", "F"}, "HF"},
		{[]string{"Cl", "H"}, "HCl"},
		{[]string{"O", "H", "H"}, "H2O"},
		{[]string{"H", "O", "H"}, "H2O"},
		{[]string{"O", "C", "O"}, "CO2"},
		{[]string{"H", "H", "N", "H"}, "NH3"},
		{[]string{"H", "C", "H", "H", "H"}, "CH4"},
		{[]string{"O", "C"}, "CO"},
		{[]string{"S", "H", "H"}, "H2S"},
		{[]string{"H", "Li"}, "LiH"},
		{[]string{"H", "Si", "H", "H", "H"}, "SiH4"},
		{[]string{"Cl", "Na"}, "NaCl"},
		{[]string{"O", "N"}, "NO"},
		{[]string{"F", "O", "F"}, "OF2"},
		{[]string{"H", "C", "N"}, "CHN"}, // Hill for carbon compounds: HCN is written CHN
		{[]string{"Cl", "C", "H", "Cl", "Cl"}, "CHCl3"},
		{[]string{"N", "N"}, "N2"},
		{[]string{"H", "O"}, "OH"}, // the radical, as spectroscopists write it
		{[]string{"S", "H"}, "SH"},
		{[]string{"H", "O", "O"}, "HO2"},
		{[]string{"H", "O", "Cl"}, "HOCl"},
	}
	for _, tc := range cases {
		t.Run(strings.Join(tc.atoms, ""), func(t *testing.T) {
			if got := molOf(t, tc.atoms...).Formula(); got != tc.want {
				t.Errorf("Formula(%v) = %q, want %q", tc.atoms, got, tc.want)
			}
		})
	}
}

func TestMolecule_Isotopologue(t *testing.T) {
	// Conventional isotopologue names (common practice: D and T for ²H
	// and ³H, superscript mass numbers for the others).
	cases := []struct {
		atoms []string
		want  string
	}{
		{[]string{"O", "H", "H"}, "H2O"},
		{[]string{"O", "H", "2H"}, "HDO"},
		{[]string{"O", "2H", "H"}, "HDO"},
		{[]string{"O", "D", "D"}, "D2O"},
		{[]string{"13C", "O"}, "¹³CO"},
		{[]string{"C", "18O"}, "C¹⁸O"},
		{[]string{"12C", "16O"}, "CO"}, // the most abundant isotopes are written bare
		{[]string{"C", "H", "H", "H", "D"}, "CH3D"},
		{[]string{"H", "T"}, "HT"},
		{[]string{"37Cl", "H"}, "H³⁷Cl"},
		{[]string{"O", "D"}, "OD"},
	}
	for _, tc := range cases {
		t.Run(strings.Join(tc.atoms, ""), func(t *testing.T) {
			if got := molOf(t, tc.atoms...).Isotopologue(); got != tc.want {
				t.Errorf("Isotopologue(%v) = %q, want %q", tc.atoms, got, tc.want)
			}
		})
	}
	m := molOf(t, "O", "H", "2H")
	if got := m.Isotopes(); len(got) != 1 || !strings.HasPrefix(got[0], "atom 3: ²H (D), 2.014102 amu") {
		t.Errorf("Isotopes(HDO) = %q, want one entry for atom 3 (²H, 2.014102 amu, AME2020 as in elements.go)", got)
	}
	if got := molOf(t, "O", "H", "H").Isotopes(); got != nil {
		t.Errorf("Isotopes(H2O) = %q, want none", got)
	}
}
