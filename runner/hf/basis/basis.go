package basis

import (
	"bytes"
	"embed"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"wellscan/planner"
	"wellscan/runner/hf/basis/internal/format"
)

//go:embed data/*
var data embed.FS

// Set is one basis set: its name, description, literature, and for each
// element its shells and its convention for shells with l ≥ 2. Build a Set
// with [Lookup], [Parse] or [LoadFile]; the zero value is not usable. A Set
// is immutable and safe for concurrent use.
type Set struct {
	f     *format.File
	index map[int]int // atomic number → index in f.Elements
	// own is wellscan's description of an embedded set (descriptions);
	// empty for a user file.
	own string
}

// Reference is one literature reference of a set: the key element blocks
// use and the formatted citation.
type Reference struct {
	Key      string
	Citation string
}

// Info describes one embedded set, as [List] returns it.
type Info struct {
	Name        string // e.g. "6-31G*"
	Description string
	Coverage    string // elements covered, e.g. "H–Kr"
	Convention  string // d/f convention, e.g. "spherical", "mixed: Li–Ne spherical, Na–Ar Cartesian"
}

// SyntaxError is a problem at one line of a basis file; Parse, LoadFile
// and Lookup return it (wrapped or not) for malformed files.
type SyntaxError = format.SyntaxError

// MissingElementError is returned when a set has no data for an element of
// the molecule.
type MissingElementError struct {
	Set      string // name of the set
	Element  string // symbol of the missing element
	Coverage string // what the set covers, e.g. "H–Ar"
}

func (e *MissingElementError) Error() string {
	return fmt.Sprintf("basis: %s has no data for %s (it covers %s)", e.Set, e.Element, e.Coverage)
}

// UnknownSetError is returned by [Lookup] for a name that is not in the
// embedded library.
type UnknownSetError struct {
	Name      string
	Available []string // names of the embedded sets
}

func (e *UnknownSetError) Error() string {
	return fmt.Sprintf("basis: unknown basis set %q (available: %s)", e.Name, strings.Join(e.Available, ", "))
}

// Slug is the lookup key of a set name: lower case, with '*' written as
// 's', '+' as 'p' and blanks or underscores as '-', so that "6-31G*",
// "6-31g*" and "6-31gs" share the slug "6-31gs". The polarisation
// notation "(d)" and "(d,p)" counts as "*" and "**" (common practice:
// 6-31G(d) is 6-31G*). Embedded files are named by their set's slug.
func Slug(name string) string {
	n := strings.ToLower(strings.TrimSpace(name))
	n = strings.ReplaceAll(n, "(d,p)", "**")
	n = strings.ReplaceAll(n, "(d)", "*")
	var b strings.Builder
	for _, r := range n {
		switch {
		case r == ' ' || r == '\t' || r == '_':
			b.WriteByte('-')
		case r == '*':
			b.WriteByte('s')
		case r == '+':
			b.WriteByte('p')
		case r >= 'A' && r <= 'Z':
			b.WriteRune(r + 'a' - 'A')
		default:
			b.WriteRune(r)
		}
	}
	return b.String()
}

func validSlug(s string) bool {
	if s == "" {
		return false
	}
	for _, r := range s {
		if !(r >= 'a' && r <= 'z' || r >= '0' && r <= '9' || r == '-' || r == '_' || r == '.') {
			return false
		}
	}
	return !strings.Contains(s, "..")
}

// Lookup returns the embedded set with the given name, compared through
// [Slug] (case-insensitive; "6-31G*" == "6-31g*" == "6-31gs"). An unknown
// name gives an *[UnknownSetError] listing the available names.
func Lookup(name string) (*Set, error) {
	slug := Slug(name)
	if validSlug(slug) {
		b, err := data.ReadFile("data/" + slug + ".basis")
		if err == nil {
			s, err := parse(bytes.NewReader(b), "embedded "+slug+".basis", slug)
			if err != nil {
				return nil, err
			}
			if Slug(s.Name()) != slug {
				return nil, fmt.Errorf("basis: embedded %s.basis holds the set %q", slug, s.Name())
			}
			s.own = descriptions[slug]
			return s, nil
		}
		if !errors.Is(err, fs.ErrNotExist) {
			return nil, fmt.Errorf("basis: embedded data: %w", err)
		}
	}
	var names []string
	for _, in := range List() {
		names = append(names, in.Name)
	}
	return nil, &UnknownSetError{Name: name, Available: names}
}

// listOrder is the order List reports the embedded sets in: smallest
// first, by family. Sets not named here follow in file-name order.
func listOrder() []string {
	return []string{"sto-3g", "sto-3g-v0", "3-21g", "6-31g", "6-31gs", "6-31gss", "6-311gss", "cc-pvdz", "cc-pvtz", "cc-pvqz", "aug-cc-pvdz", "aug-cc-pvtz", "cc-pcvtz"}
}

// List describes every embedded set.
func List() []Info {
	entries, err := data.ReadDir("data")
	if err != nil {
		panic("basis: embedded data directory unreadable: " + err.Error())
	}
	var slugs []string
	for _, e := range entries {
		if slug, ok := strings.CutSuffix(e.Name(), ".basis"); ok {
			slugs = append(slugs, slug)
		}
	}
	order := listOrder()
	rank := func(s string) int {
		if i := slices.Index(order, s); i >= 0 {
			return i
		}
		return len(order)
	}
	slices.SortStableFunc(slugs, func(a, b string) int {
		if d := rank(a) - rank(b); d != 0 {
			return d
		}
		return strings.Compare(a, b)
	})
	infos := make([]Info, 0, len(slugs))
	for _, slug := range slugs {
		s, err := Lookup(slug)
		if err != nil {
			// The embedded files are checked by the package tests; a
			// failure here is a build with corrupt data.
			panic("basis: embedded data: " + err.Error())
		}
		infos = append(infos, Info{
			Name:        s.Name(),
			Description: s.Description(),
			Coverage:    s.Coverage(),
			Convention:  s.conventionSummary(),
		})
	}
	return infos
}

// Parse reads a basis set in wellscan's format (FORMAT.md) from r. name is
// the file name used in error messages; when the file has no title line
// the set is named after it (without directory and extension).
func Parse(r io.Reader, name string) (*Set, error) {
	base := filepath.Base(name)
	return parse(r, name, strings.TrimSuffix(base, filepath.Ext(base)))
}

func parse(r io.Reader, name, defaultTitle string) (*Set, error) {
	f, err := format.Parse(r, name)
	if err != nil {
		return nil, err
	}
	if f.Title == "" {
		if defaultTitle == "" || defaultTitle == "." {
			return nil, &SyntaxError{File: name, Msg: "no \"title\" line and no file name to name the set after"}
		}
		f.Title = defaultTitle
	}
	return newSet(f), nil
}

func newSet(f *format.File) *Set {
	s := &Set{f: f, index: make(map[int]int, len(f.Elements))}
	for i, el := range f.Elements {
		s.index[el.Z] = i
	}
	return s
}

// LoadFile reads a user basis file (see [Parse]).
func LoadFile(path string) (*Set, error) {
	fh, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("basis: %w", err)
	}
	defer fh.Close()
	return Parse(fh, path)
}

// Name is the set's name, e.g. "cc-pVDZ".
func (s *Set) Name() string { return s.f.Title }

// Description is the set's one-line description: wellscan's own for an
// embedded set, the file's "about" line for a user file (may be empty).
func (s *Set) Description() string {
	if s.own != "" {
		return s.own
	}
	return s.f.About
}

// References lists the set's literature in the order of the file.
func (s *Set) References() []Reference {
	out := make([]Reference, len(s.f.Cites))
	for i, c := range s.f.Cites {
		out[i] = Reference{Key: c.Key, Citation: c.Text}
	}
	return out
}

// Origins says where the numbers come from, one line per entry.
func (s *Set) Origins() []string { return slices.Clone(s.f.Origins) }

// Remarks are the file's free notes (conventions, known quirks of the data).
func (s *Set) Remarks() []string { return slices.Clone(s.f.Remarks) }

// Elements lists the symbols of the elements the set covers, in file order
// (by atomic number for the embedded sets).
func (s *Set) Elements() []string {
	out := make([]string, len(s.f.Elements))
	for i, el := range s.f.Elements {
		out[i] = el.Symbol
	}
	return out
}

// Coverage is a compact list of the elements covered, as ranges of
// consecutive atomic numbers: "H–Kr", "H, Li–Ne".
func (s *Set) Coverage() string {
	zs := make([]int, 0, len(s.f.Elements))
	for _, el := range s.f.Elements {
		zs = append(zs, el.Z)
	}
	return coverage(zs)
}

func coverage(zs []int) string {
	zs = slices.Clone(zs)
	slices.Sort(zs)
	sym := func(z int) string {
		e, err := planner.ElementByZ(z)
		if err != nil {
			return fmt.Sprint("Z=", z)
		}
		return e.Symbol
	}
	var parts []string
	for i := 0; i < len(zs); {
		j := i
		for j+1 < len(zs) && zs[j+1] == zs[j]+1 {
			j++
		}
		switch {
		case j == i:
			parts = append(parts, sym(zs[i]))
		case j == i+1:
			parts = append(parts, sym(zs[i]), sym(zs[j]))
		default:
			parts = append(parts, sym(zs[i])+"–"+sym(zs[j]))
		}
		i = j + 1
	}
	return strings.Join(parts, ", ")
}

// Contraction is one shell of an element as the set stores it: Coefs[k]
// is contracted function (column) k over the exponents Exps (bohr⁻²).
type Contraction struct {
	L     int
	Exps  []float64
	Coefs [][]float64
}

// element finds the block of element e or returns a *MissingElementError.
func (s *Set) element(e planner.Element) (*format.Element, error) {
	i, ok := s.index[e.Z]
	if !ok {
		sym := e.Symbol
		if sym == "" {
			sym = fmt.Sprint("Z=", e.Z)
		}
		return nil, &MissingElementError{Set: s.Name(), Element: sym, Coverage: s.Coverage()}
	}
	return &s.f.Elements[i], nil
}

func (s *Set) elementBySymbol(symbol string) (*format.Element, error) {
	e, err := planner.ElementBySymbol(symbol)
	if err != nil {
		return nil, fmt.Errorf("basis: %w", err)
	}
	return s.element(e)
}

// Contractions returns the shells of one element (symbol, any letter case)
// in the set's order, as fresh copies.
func (s *Set) Contractions(symbol string) ([]Contraction, error) {
	el, err := s.elementBySymbol(symbol)
	if err != nil {
		return nil, err
	}
	out := make([]Contraction, len(el.Shells))
	for i, sh := range el.Shells {
		c := Contraction{L: sh.L, Exps: values(sh.Exps)}
		for _, col := range sh.Coefs {
			c.Coefs = append(c.Coefs, values(col))
		}
		out[i] = c
	}
	return out, nil
}

func values(ns []format.Number) []float64 {
	v := make([]float64, len(ns))
	for i, n := range ns {
		v[i] = n.Value
	}
	return v
}

// ElementConvention is the convention the set states for the l ≥ 2 shells
// of an element: [ConventionCartesian] or [ConventionSpherical]. For an
// element without such shells whose file states nothing it is
// [ConventionCartesian], which then changes nothing.
func (s *Set) ElementConvention(symbol string) (Convention, error) {
	el, err := s.elementBySymbol(symbol)
	if err != nil {
		return 0, err
	}
	return s.elementConvention(el), nil
}

func (s *Set) elementConvention(el *format.Element) Convention {
	h := el.Harmonics
	if h == format.Unstated {
		h = s.f.Harmonics
	}
	if h == format.Spherical {
		return ConventionSpherical
	}
	return ConventionCartesian
}

// conventionSummary describes the set's d/f convention for List.
func (s *Set) conventionSummary() string {
	var cart, sph []int
	for i := range s.f.Elements {
		el := &s.f.Elements[i]
		if !slices.ContainsFunc(el.Shells, func(sh format.Shell) bool { return sh.L >= 2 }) {
			continue
		}
		if s.elementConvention(el) == ConventionSpherical {
			sph = append(sph, el.Z)
		} else {
			cart = append(cart, el.Z)
		}
	}
	switch {
	case len(cart) > 0 && len(sph) > 0:
		return fmt.Sprintf("mixed: %s spherical, %s Cartesian", coverage(sph), coverage(cart))
	case len(sph) > 0:
		return "spherical"
	case len(cart) > 0:
		return "Cartesian"
	case s.f.Harmonics == format.Spherical:
		return "spherical (no d or f shells)"
	case s.f.Harmonics == format.Cartesian:
		return "Cartesian (no d or f shells)"
	}
	return "none needed (no d or f shells)"
}
