package basis

import (
	"io"
	"slices"
	"strconv"

	"wellscan/planner"
	"wellscan/runner/hf/basis/internal/format"
	"wellscan/runner/hf/integral"
)

// Shells builds the basis of a molecule: for every atom, in atom order,
// and every shell of its element, in the set's order, one integral.Shell
// per contracted function column. The columns of a general contraction
// share one Exps slice (do not modify it). Center is the atom's position
// (bohr), Atom its index. Pure is set for l ≥ 2 from conv, or from the
// set's convention for the element when conv is ConventionAsSet; l ≤ 1
// shells are never Pure. Primitives whose coefficient in a column is
// exactly zero (the free-primitive columns of general contractions) are
// left out of that column's shell: they contribute nothing, and dropping
// them makes such columns as cheap as the single primitive they are.
//
// An element the set lacks gives a *[MissingElementError].
func (s *Set) Shells(mol planner.Molecule, conv Convention) ([]integral.Shell, error) {
	if err := conv.valid(); err != nil {
		return nil, err
	}
	var out []integral.Shell
	for i, a := range mol.Atoms {
		el, err := s.element(a.Element)
		if err != nil {
			return nil, err
		}
		pure := s.pure(el, conv)
		for _, sh := range el.Shells {
			allExps := values(sh.Exps)
			for _, col := range sh.Coefs {
				var exps, coefs []float64
				for k, c := range values(col) {
					if c != 0 {
						exps = append(exps, allExps[k])
						coefs = append(coefs, c)
					}
				}
				out = append(out, integral.Shell{
					L:      sh.L,
					Center: a.Pos,
					Atom:   i,
					Exps:   exps,
					Coefs:  coefs,
					Pure:   sh.L >= 2 && pure,
				})
			}
		}
	}
	return out, nil
}

func (s *Set) pure(el *format.Element, conv Convention) bool {
	switch conv {
	case ConventionCartesian:
		return false
	case ConventionSpherical:
		return true
	}
	return s.elementConvention(el) == ConventionSpherical
}

// NumFunctions is the number of contracted basis functions Shells would
// give for mol, without building the shells.
func (s *Set) NumFunctions(mol planner.Molecule, conv Convention) (int, error) {
	if err := conv.valid(); err != nil {
		return 0, err
	}
	n := 0
	for _, a := range mol.Atoms {
		el, err := s.element(a.Element)
		if err != nil {
			return 0, err
		}
		pure := s.pure(el, conv)
		for _, sh := range el.Shells {
			per := (sh.L + 1) * (sh.L + 2) / 2
			if sh.L >= 2 && pure {
				per = 2*sh.L + 1
			}
			n += per * len(sh.Coefs)
		}
	}
	return n, nil
}

// Write writes the set in wellscan's basis format (FORMAT.md), every number
// in its original text. With element symbols given it writes only those
// elements (in the set's order) and only the references they cite; an
// element the set lacks gives a *[MissingElementError].
func (s *Set) Write(w io.Writer, elements ...string) error {
	f, err := s.subset(elements)
	if err != nil {
		return err
	}
	return format.Write(w, f)
}

// WritePlain is [Set.Write] for people: every number as a plain decimal
// (the shortest that reads back to the same float64, never in exponent
// notation), and the about line holding [Set.Description]. Read back, it
// gives the same set.
func (s *Set) WritePlain(w io.Writer, elements ...string) error {
	f, err := s.subset(elements)
	if err != nil {
		return err
	}
	f.About = s.Description()
	plain := func(ns []format.Number) []format.Number {
		out := make([]format.Number, len(ns))
		for i, n := range ns {
			out[i] = format.Number{Text: strconv.FormatFloat(n.Value, 'f', -1, 64), Value: n.Value}
		}
		return out
	}
	els := make([]format.Element, len(f.Elements))
	for i, el := range f.Elements {
		el.Shells = slices.Clone(el.Shells)
		for k, sh := range el.Shells {
			sh.Exps = plain(sh.Exps)
			cols := make([][]format.Number, len(sh.Coefs))
			for c, col := range sh.Coefs {
				cols[c] = plain(col)
			}
			sh.Coefs = cols
			el.Shells[k] = sh
		}
		els[i] = el
	}
	f.Elements = els
	return format.Write(w, f)
}

// subset is a shallow copy of the set's file with only the given
// elements (all when none is given) and the references they cite.
func (s *Set) subset(elements []string) (*format.File, error) {
	f := *s.f
	if len(elements) > 0 {
		want := map[int]bool{}
		for _, sym := range elements {
			el, err := s.elementBySymbol(sym)
			if err != nil {
				return nil, err
			}
			want[el.Z] = true
		}
		f.Elements = nil
		used := map[string]bool{}
		for _, el := range s.f.Elements {
			if want[el.Z] {
				f.Elements = append(f.Elements, el)
				for _, k := range el.Cites {
					used[k] = true
				}
			}
		}
		f.Cites = nil
		for _, c := range s.f.Cites {
			if used[c.Key] {
				f.Cites = append(f.Cites, c)
			}
		}
	}
	return &f, nil
}
