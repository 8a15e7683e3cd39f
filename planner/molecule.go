package planner

import (
	"errors"
	"fmt"
	"math"
)

// Atom is one nucleus of a molecule. Pos is in bohr.
type Atom struct {
	Element    Element
	Pos        [3]float64
	MassNumber int
	Mass       float64 // amu
}

// Molecule is a set of atoms with a total charge and spin multiplicity
// 2S+1. Positions are in bohr. The zero value is an empty molecule; build
// molecules with NewMolecule so that the charge and multiplicity are
// checked.
type Molecule struct {
	Atoms        []Atom
	Charge       int
	Multiplicity int
}

// MinSeparation is the smallest distance (bohr) two nuclei may have; closer
// atoms are almost always a typing error in the input.
const MinSeparation = 0.1

// Errors that NewMolecule returns, wrapped with detail.
var (
	ErrNoAtoms          = errors.New("planner: molecule has no atoms")
	ErrAtomsTooClose    = errors.New("planner: atoms too close")
	ErrChargeMultiplicy = errors.New("planner: impossible charge and multiplicity")
)

// NewAtom makes an atom of element e at pos (bohr) with the most abundant
// isotope's mass.
func NewAtom(e Element, pos [3]float64) Atom {
	return Atom{Element: e, Pos: pos, MassNumber: e.MassNumber, Mass: e.Mass}
}

// NewMolecule checks the atoms, charge and multiplicity and returns the
// molecule. multiplicity 0 means the default of [DefaultMultiplicity]:
// Hund's rules for a lone atom, the lowest consistent with the electron
// count (singlet for an even count, doublet for an odd one) otherwise.
func NewMolecule(atoms []Atom, charge, multiplicity int) (Molecule, error) {
	if len(atoms) == 0 {
		return Molecule{}, ErrNoAtoms
	}
	for i := range atoms {
		for j := 0; j < i; j++ {
			if d := Distance(atoms[i].Pos, atoms[j].Pos); d < MinSeparation {
				return Molecule{}, fmt.Errorf("%w: atom %d (%s) and atom %d (%s) are %.4g bohr apart (minimum %g bohr)",
					ErrAtomsTooClose, j+1, atoms[j].Element.Symbol, i+1, atoms[i].Element.Symbol, d, MinSeparation)
			}
		}
	}
	m := Molecule{Atoms: atoms, Charge: charge}
	n := m.NuclearCharge() - charge
	if n < 1 {
		return Molecule{}, fmt.Errorf("%w: charge %+d leaves %d electrons", ErrChargeMultiplicy, charge, n)
	}
	if multiplicity == 0 {
		multiplicity, _ = DefaultMultiplicity(atoms, charge)
	}
	if multiplicity < 1 {
		return Molecule{}, fmt.Errorf("%w: multiplicity %d must be at least 1", ErrChargeMultiplicy, multiplicity)
	}
	unpaired := multiplicity - 1
	if unpaired > n || (n-unpaired)%2 != 0 {
		return Molecule{}, fmt.Errorf("%w: %d electrons (charge %+d) cannot have multiplicity %d (allowed: %s)",
			ErrChargeMultiplicy, n, charge, multiplicity, allowedMultiplicities(n))
	}
	m.Multiplicity = multiplicity
	return m, nil
}

func allowedMultiplicities(n int) string {
	s := ""
	for mult := 1 + n%2; mult <= n+1 && mult <= 1+n%2+6; mult += 2 {
		if s != "" {
			s += ", "
		}
		s += fmt.Sprint(mult)
	}
	if n+1 > 1+n%2+6 {
		s += ", …"
	}
	return s
}

// NuclearCharge is the sum of the atomic numbers.
func (m Molecule) NuclearCharge() int {
	z := 0
	for _, a := range m.Atoms {
		z += a.Element.Z
	}
	return z
}

// Electrons is the number of electrons.
func (m Molecule) Electrons() int { return m.NuclearCharge() - m.Charge }

// AlphaBeta returns the numbers of α and β electrons.
func (m Molecule) AlphaBeta() (na, nb int) {
	n := m.Electrons()
	u := m.Multiplicity - 1
	return (n + u) / 2, (n - u) / 2
}

// NuclearRepulsion is Σ_{A<B} Z_A Z_B / R_AB in hartree.
func (m Molecule) NuclearRepulsion() float64 {
	e := 0.0
	for i := range m.Atoms {
		for j := 0; j < i; j++ {
			e += float64(m.Atoms[i].Element.Z*m.Atoms[j].Element.Z) / Distance(m.Atoms[i].Pos, m.Atoms[j].Pos)
		}
	}
	return e
}

// Clone returns a deep copy whose atoms can be moved independently.
func (m Molecule) Clone() Molecule {
	c := m
	c.Atoms = append([]Atom(nil), m.Atoms...)
	return c
}

// Distance is the Euclidean distance between two points.
func Distance(a, b [3]float64) float64 {
	dx, dy, dz := a[0]-b[0], a[1]-b[1], a[2]-b[2]
	return math.Sqrt(dx*dx + dy*dy + dz*dz)
}
