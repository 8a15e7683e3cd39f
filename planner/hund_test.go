package planner

import (
	"strings"
	"testing"
)

// groundMultiplicity is 2S+1 of the ground term of each neutral atom
// H–Kr: NIST Atomic Spectra Database, "Ground levels and ionization
// energies for the neutral atoms" (A. Kramida, Yu. Ralchenko, J. Reader
// and the NIST ASD Team), ground-state term column; values from memory of
// that table. Terms: H ²S, He ¹S, Li ²S, Be ¹S, B ²P, C ³P, N ⁴S, O ³P,
// F ²P, Ne ¹S, Na ²S, Mg ¹S, Al ²P, Si ³P, P ⁴S, S ³P, Cl ²P, Ar ¹S,
// K ²S, Ca ¹S, Sc ²D, Ti ³F, V ⁴F, Cr ⁷S, Mn ⁶S, Fe ⁵D, Co ⁴F, Ni ³F,
// Cu ²S, Zn ¹S, Ga ²P, Ge ³P, As ⁴S, Se ³P, Br ²P, Kr ¹S.
var groundMultiplicity = [...]int{
	2, 1, // H He
	2, 1, 2, 3, 4, 3, 2, 1, // Li–Ne
	2, 1, 2, 3, 4, 3, 2, 1, // Na–Ar
	2, 1, 2, 3, 4, 7, 6, 5, 4, 3, 2, 1, // K–Zn
	2, 3, 4, 3, 2, 1, // Ga–Kr
}

func TestAtomMultiplicity_NeutralAtomsMatchNISTGroundTerms(t *testing.T) {
	for z := 1; z <= MaxZ; z++ {
		e, _ := ElementByZ(z)
		got, err := AtomMultiplicity(z, 0)
		if err != nil || got != groundMultiplicity[z-1] {
			t.Errorf("AtomMultiplicity(%s) = %d (%v), want %d (NIST ASD ground term)", e.Symbol, got, err, groundMultiplicity[z-1])
		}
	}
}

func TestAtomMultiplicity_Ions(t *testing.T) {
	// Ground terms of atomic ions: NIST Atomic Spectra Database ground
	// levels (from memory): O⁻ ²P (isoelectronic with F), N⁺ ³P, C⁻ ⁴S,
	// Na⁺ ¹S, Cl⁻ ¹S, Fe²⁺ ⁵D (3d⁶), Fe³⁺ ⁶S (3d⁵), Cu²⁺ ²D (3d⁹), Ti⁺ ⁴F
	// (3d² 4s).
	cases := []struct {
		sym    string
		charge int
		want   int
	}{
		{"O", -1, 2}, {"N", 1, 3}, {"C", -1, 4}, {"Na", 1, 1}, {"Cl", -1, 1},
		{"Fe", 2, 5}, {"Fe", 3, 6}, {"Cu", 2, 2}, {"Ti", 1, 4},
	}
	for _, tc := range cases {
		e, _ := ElementBySymbol(tc.sym)
		if got, err := AtomMultiplicity(e.Z, tc.charge); err != nil || got != tc.want {
			t.Errorf("AtomMultiplicity(%s, %+d) = %d (%v), want %d", tc.sym, tc.charge, got, err, tc.want)
		}
	}
	if _, err := AtomMultiplicity(1, 1); err == nil {
		t.Error("H⁺ has no electrons; want an error")
	}
}

func TestNewMolecule_DefaultMultiplicity(t *testing.T) {
	n, _ := ElementBySymbol("N")
	atom, err := NewMolecule([]Atom{NewAtom(n, [3]float64{})}, 0, 0)
	if err != nil || atom.Multiplicity != 4 {
		t.Errorf("lone N atom: multiplicity %d (%v), want 4 (NIST ASD ground term ⁴S)", atom.Multiplicity, err)
	}
	// A molecule keeps the lowest multiplicity: N2 is a singlet, NO a
	// doublet (common practice: ground states X ¹Σg⁺ and X ²Π).
	o, _ := ElementBySymbol("O")
	for _, tc := range []struct {
		b    Element
		want int
	}{{n, 1}, {o, 2}} {
		mol, err := NewMolecule([]Atom{NewAtom(n, [3]float64{}), NewAtom(tc.b, [3]float64{0, 0, 2.1})}, 0, 0)
		if err != nil || mol.Multiplicity != tc.want {
			t.Errorf("N%s: multiplicity %d (%v), want %d", tc.b.Symbol, mol.Multiplicity, err, tc.want)
		}
	}
	m, why := DefaultMultiplicity([]Atom{NewAtom(n, [3]float64{})}, 0)
	if m != 4 || !strings.Contains(why, "Hund") {
		t.Errorf("DefaultMultiplicity(N) = %d, %q; want 4 and a reason naming Hund's rules", m, why)
	}
	m, why = DefaultMultiplicity([]Atom{NewAtom(o, [3]float64{}), NewAtom(o, [3]float64{0, 0, 2.3})}, 0)
	if m != 1 || !strings.Contains(why, "lowest for 16 electrons") {
		t.Errorf("DefaultMultiplicity(O2) = %d, %q; want 1 and a reason saying it is the lowest", m, why)
	}
}

func TestDecode_DefaultMethod(t *testing.T) {
	// One default everywhere: RHF for a singlet, UHF otherwise, as in
	// `wellscan energy` (DefaultMethod).
	for _, tc := range []struct {
		mult string
		want string
	}{{"", "rhf"}, {"multiplicity = 3\n", "uhf"}} {
		s, err := Decode([]byte(strings.Replace(co, "[molecule]\n", "[molecule]\n"+tc.mult, 1)+scanR+"[engine]\nkind = \"builtin\"\nbasis = \"STO-3G\"\n"), "test.toml")
		if err != nil {
			t.Fatal(err)
		}
		if s.Engine.Method != tc.want || s.IsDefined("engine", "method") {
			t.Errorf("%q: method %q (defined %v), want the default %q", tc.mult, s.Engine.Method, s.IsDefined("engine", "method"), tc.want)
		}
	}
}
