package basis_test

import (
	"bufio"
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strconv"
	"strings"
	"testing"

	"wellscan/planner"
	"wellscan/runner/hf/basis"
)

// molecule builds a molecule from symbols at arbitrary, distinct positions
// (bohr); the basis does not depend on the geometry.
func molecule(t testing.TB, symbols ...string) planner.Molecule {
	t.Helper()
	var atoms []planner.Atom
	for i, s := range symbols {
		e, err := planner.ElementBySymbol(s)
		if err != nil {
			t.Fatal(err)
		}
		atoms = append(atoms, planner.NewAtom(e, [3]float64{0, 0, 2 * float64(i)}))
	}
	return planner.Molecule{Atoms: atoms}
}

func lookup(t *testing.T, name string) *basis.Set {
	t.Helper()
	s, err := basis.Lookup(name)
	if err != nil {
		t.Fatalf("Lookup(%q): %v", name, err)
	}
	return s
}

// TestSet_NumFunctions_Water checks the H2O (O + 2 H) function counts.
// Source of the Cartesian/spherical columns: the table "H2O basis
// functions, Cartesian / spherical" of the README of the neutral JSON
// extracts of the Basis Set Exchange data library (commit 4adaf13), copied
// here. The as-set column follows from the per-element conventions of the
// data: Pople sets Cartesian; cc sets spherical; 6-311G** O spherical (the
// library marks Li–Ne spherical), H has no d shell.
func TestSet_NumFunctions_Water(t *testing.T) {
	tests := []struct {
		set              string
		cart, sph, asSet int
	}{
		{"STO-3G", 7, 7, 7},          // README table: 7 / 7
		{"STO-3G-v0", 7, 7, 7},       // README table: 7 / 7
		{"3-21G", 13, 13, 13},        // README table: 13 / 13
		{"6-31G", 13, 13, 13},        // README table: 13 / 13
		{"6-31G*", 19, 18, 19},       // README table: 19 / 18
		{"6-31G**", 25, 24, 25},      // README table: 25 / 24
		{"6-311G**", 31, 30, 30},     // README table: 31 / 30; O spherical in the data
		{"cc-pVDZ", 25, 24, 24},      // README table: 25 / 24
		{"cc-pVTZ", 65, 58, 58},      // README table: 65 / 58
		{"aug-cc-pVDZ", 43, 41, 41},  // README table: 43 / 41
		{"cc-pVQZ", 140, 115, 115},   // nbf_cartesian / nbf_spherical of the JSON extract: O 70 / 55, H 35 / 30
		{"aug-cc-pVTZ", 105, 92, 92}, // JSON extract: O 55 / 46, H 25 / 23
		{"cc-pCVTZ", 79, 71, 71},     // JSON extracts: O (cc-pCVTZ) 49 / 43, H (cc-pVTZ) 15 / 14
	}
	water := molecule(t, "O", "H", "H")
	for _, tc := range tests {
		t.Run(tc.set, func(t *testing.T) {
			s := lookup(t, tc.set)
			for _, c := range []struct {
				conv basis.Convention
				want int
			}{{basis.ConventionCartesian, tc.cart}, {basis.ConventionSpherical, tc.sph}, {basis.ConventionAsSet, tc.asSet}} {
				n, err := s.NumFunctions(water, c.conv)
				if err != nil {
					t.Fatal(err)
				}
				if n != c.want {
					t.Errorf("NumFunctions(H2O, %v) = %d, want %d", c.conv, n, c.want)
				}
				sh, err := s.Shells(water, c.conv)
				if err != nil {
					t.Fatal(err)
				}
				sum := 0
				for _, x := range sh {
					sum += x.NumFunctions()
				}
				if sum != c.want {
					t.Errorf("Σ Shells(H2O, %v).NumFunctions() = %d, want %d", c.conv, sum, c.want)
				}
			}
		})
	}
}

// TestSet_NumFunctions_PerElement compares every (set, element) against
// nbf_cartesian / nbf_spherical of the JSON extracts (testdata/nbf.txt,
// copied from them; see testdata/README.md).
func TestSet_NumFunctions_PerElement(t *testing.T) {
	rows := readTable(t, "testdata/nbf.txt", 4)
	// STO-3G, STO-3G-v0 and 3-21G cover H–Kr, the other 7 sets H–Ar
	// (README of the extracts).
	if len(rows) != 3*36+7*18 {
		t.Fatalf("testdata/nbf.txt has %d rows, want %d", len(rows), 3*36+7*18)
	}
	for _, r := range rows {
		s := lookup(t, r[0])
		cart, _ := strconv.Atoi(r[2])
		sph, _ := strconv.Atoi(r[3])
		mol := molecule(t, r[1])
		for _, c := range []struct {
			conv basis.Convention
			want int
		}{{basis.ConventionCartesian, cart}, {basis.ConventionSpherical, sph}} {
			n, err := s.NumFunctions(mol, c.conv)
			if err != nil {
				t.Fatal(err)
			}
			if n != c.want {
				t.Errorf("%s %s: NumFunctions(%v) = %d, want %d", r[0], r[1], c.conv, n, c.want)
			}
		}
	}
}

// readTable reads whitespace-separated rows with n fields, skipping #
// comments.
func readTable(t *testing.T, path string, n int) [][]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var rows [][]string
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := strings.TrimSpace(sc.Text())
		if line == "" || line[0] == '#' {
			continue
		}
		fs := strings.Fields(line)
		if len(fs) != n {
			t.Fatalf("%s: %q has %d fields, want %d", path, line, len(fs), n)
		}
		rows = append(rows, fs)
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	return rows
}

// TestSet_Contractions_NumbersUnchanged checks that the float64 values the
// library hands out are exactly strconv.ParseFloat of the source strings
// (testdata/numbers.txt, copied from the JSON extracts). Exact comparison is
// deliberate: the conversion must not re-round anything.
func TestSet_Contractions_NumbersUnchanged(t *testing.T) {
	rows := readTable(t, "testdata/numbers.txt", 7)
	seen := map[string]bool{}
	sets := map[string]*basis.Set{}
	for _, r := range rows {
		slug, sym := r[0], r[1]
		shell, _ := strconv.Atoi(r[2])
		l, _ := strconv.Atoi(r[3])
		prim, _ := strconv.Atoi(r[5])
		want, err := strconv.ParseFloat(r[6], 64)
		if err != nil {
			t.Fatalf("testdata: %v", err)
		}
		if sets[slug] == nil {
			sets[slug] = lookup(t, slug)
		}
		cs, err := sets[slug].Contractions(sym)
		if err != nil {
			t.Fatal(err)
		}
		seen[slug+" "+sym] = true
		if shell > len(cs) {
			t.Fatalf("%s %s has %d shells, testdata names shell %d", slug, sym, len(cs), shell)
		}
		c := cs[shell-1]
		if c.L != l {
			t.Errorf("%s %s shell %d: L = %d, want %d", slug, sym, shell, c.L, l)
		}
		var got float64
		if r[4] == "e" {
			got = c.Exps[prim-1]
		} else {
			k, _ := strconv.Atoi(r[4][1:])
			got = c.Coefs[k-1][prim-1]
		}
		if got != want {
			t.Errorf("%s %s shell %d %s %d = %v, want %v (%s)", slug, sym, shell, r[4], prim, got, want, r[6])
		}
	}
	if len(seen) < 10 {
		t.Errorf("testdata/numbers.txt covers only %d (set, element) pairs", len(seen))
	}
}

func TestLookup_Name_CaseInsensitive(t *testing.T) {
	tests := []struct{ in, want string }{
		{"6-31G*", "6-31G*"},
		{"6-31g*", "6-31G*"},
		{"6-31gs", "6-31G*"},
		{"6-31GS", "6-31G*"},
		{"6-31g**", "6-31G**"},
		{"6-31gss", "6-31G**"},
		{"6-311g**", "6-311G**"},
		{" cc-pvdz ", "cc-pVDZ"},
		{"CC-PVTZ", "cc-pVTZ"},
		{"Aug-CC-pVDZ", "aug-cc-pVDZ"},
		{"sto-3g", "STO-3G"},
		{"sto-3g-v0", "STO-3G-v0"},
		{"3-21g", "3-21G"},
		{"6-31G(d)", "6-31G*"},
		{"6-31G(d,p)", "6-31G**"},
		{"6-311G(d,p)", "6-311G**"},
		{"STO-3G v0", "STO-3G-v0"},
		{"sto_3g_v0", "STO-3G-v0"},
	}
	for _, tc := range tests {
		if got := lookup(t, tc.in).Name(); got != tc.want {
			t.Errorf("Lookup(%q).Name() = %q, want %q", tc.in, got, tc.want)
		}
	}
}

func TestLookup_Name_Unknown(t *testing.T) {
	for _, name := range []string{"6-31x", "", "../data/README", "data/cc-pvdz", "README"} {
		_, err := basis.Lookup(name)
		var ue *basis.UnknownSetError
		if !errors.As(err, &ue) {
			t.Fatalf("Lookup(%q) error = %v, want *UnknownSetError", name, err)
		}
		want := `basis: unknown basis set "` + name + `" (available: STO-3G, STO-3G-v0, 3-21G, 6-31G, 6-31G*, 6-31G**, 6-311G**, cc-pVDZ, cc-pVTZ, cc-pVQZ, aug-cc-pVDZ, aug-cc-pVTZ, cc-pCVTZ)`
		if err.Error() != want {
			t.Errorf("Lookup(%q) error = %q, want %q", name, err, want)
		}
	}
}

func TestSet_Shells_MissingElement(t *testing.T) {
	tests := []struct {
		set, want string
		atoms     []string
	}{
		{"cc-pVDZ", "basis: cc-pVDZ has no data for K (it covers H–Ar)", []string{"H", "K"}},
		{"6-31G*", "basis: 6-31G* has no data for Br (it covers H–Ar)", []string{"Br"}},
	}
	for _, tc := range tests {
		s := lookup(t, tc.set)
		mol := molecule(t, tc.atoms...)
		_, err := s.Shells(mol, basis.ConventionAsSet)
		var me *basis.MissingElementError
		if !errors.As(err, &me) || err.Error() != tc.want {
			t.Errorf("%s Shells error = %v, want %q", tc.set, err, tc.want)
		}
		if _, err := s.NumFunctions(mol, basis.ConventionAsSet); err == nil || err.Error() != tc.want {
			t.Errorf("%s NumFunctions error = %v, want %q", tc.set, err, tc.want)
		}
		if err := s.Write(new(bytes.Buffer), tc.atoms...); err == nil || err.Error() != tc.want {
			t.Errorf("%s Write error = %v, want %q", tc.set, err, tc.want)
		}
	}
}

func TestSet_Shells_Convention(t *testing.T) {
	// 6-311G**: O (Li–Ne) spherical and Cl (Na–Ar) Cartesian in the data.
	s := lookup(t, "6-311G**")
	mol := molecule(t, "O", "Cl", "H")
	for _, tc := range []struct {
		conv     basis.Convention
		wantPure map[int]bool // atom index → Pure of its d shells
	}{
		{basis.ConventionAsSet, map[int]bool{0: true, 1: false}},
		{basis.ConventionCartesian, map[int]bool{0: false, 1: false}},
		{basis.ConventionSpherical, map[int]bool{0: true, 1: true}},
	} {
		shells, err := s.Shells(mol, tc.conv)
		if err != nil {
			t.Fatal(err)
		}
		nd := 0
		for _, sh := range shells {
			if sh.L <= 1 && sh.Pure {
				t.Errorf("%v: l=%d shell on atom %d is Pure", tc.conv, sh.L, sh.Atom)
			}
			if sh.L >= 2 {
				nd++
				if sh.Pure != tc.wantPure[sh.Atom] {
					t.Errorf("%v: d shell on atom %d Pure = %v, want %v", tc.conv, sh.Atom, sh.Pure, tc.wantPure[sh.Atom])
				}
			}
			if sh.Center != mol.Atoms[sh.Atom].Pos {
				t.Errorf("shell on atom %d centred at %v, want %v", sh.Atom, sh.Center, mol.Atoms[sh.Atom].Pos)
			}
		}
		if nd != 2 { // one d shell each on O and Cl in 6-311G**; H has p only
			t.Errorf("%v: %d d shells, want 2", tc.conv, nd)
		}
	}
	if _, err := s.Shells(mol, basis.Convention(7)); err == nil {
		t.Error("Shells(Convention(7)) gave no error")
	}
}

// TestSet_Shells_GeneralContraction checks the layout for cc-pVDZ O, whose
// s shell has 9 primitives and 3 columns (JSON extract: 3 coefficient
// lists over one exponent list): three shells in atom order then shell
// order, each keeping only the primitives whose coefficient is non-zero.
func TestSet_Shells_GeneralContraction(t *testing.T) {
	s := lookup(t, "cc-pVDZ")
	mol := molecule(t, "H", "O")
	shells, err := s.Shells(mol, basis.ConventionAsSet)
	if err != nil {
		t.Fatal(err)
	}
	// cc-pVDZ H: s (4 prims, the second column a free primitive), p;
	// O: s (9, 9, and a free primitive), p (4, free), d.
	var got []string
	for _, sh := range shells {
		got = append(got, strconv.Itoa(sh.Atom)+":"+"spdf"[sh.L:sh.L+1]+strconv.Itoa(len(sh.Exps)))
	}
	want := []string{"0:s4", "0:s1", "0:p1", "1:s9", "1:s9", "1:s1", "1:p4", "1:p1", "1:d1"}
	if !slices.Equal(got, want) {
		t.Fatalf("shell layout = %v, want %v", got, want)
	}
	// The third column is the free primitive 0.3023 (JSON: 1.000000E+00 in
	// the last row, zeros elsewhere).
	if c, e := shells[5].Coefs, shells[5].Exps; c[0] != 1 || e[0] != 0.3023 {
		t.Errorf("O s column 3 = %v × %v, want the single primitive 0.3023 with coefficient 1", c, e)
	}
	if !shells[8].Pure {
		t.Error("cc-pVDZ O d shell not Pure under the set's convention")
	}
	// Copies: changing a returned slice must not change the set.
	shells[0].Exps[0] = -1
	again, _ := s.Shells(mol, basis.ConventionAsSet)
	if again[0].Exps[0] == -1 {
		t.Error("Shells returned the set's own storage")
	}
}

func TestList_All_Described(t *testing.T) {
	want := []basis.Info{
		{"STO-3G", "", "H–Kr", "spherical"},
		{"STO-3G-v0", "", "H–Kr", "spherical"},
		{"3-21G", "", "H–Kr", "Cartesian"},
		{"6-31G", "", "H–Ar", "Cartesian (no d or f shells)"},
		{"6-31G*", "", "H–Ar", "Cartesian"},
		{"6-31G**", "", "H–Ar", "Cartesian"},
		{"6-311G**", "", "H–Ar", "mixed: Li–Ne spherical, Na–Ar Cartesian"},
		{"cc-pVDZ", "", "H–Ar", "spherical"},
		{"cc-pVTZ", "", "H–Ar", "spherical"},
		{"cc-pVQZ", "", "H–Ar", "spherical"},
		{"aug-cc-pVDZ", "", "H–Ar", "spherical"},
		{"aug-cc-pVTZ", "", "H–Ar", "spherical"},
		{"cc-pCVTZ", "", "H–Ar", "spherical"},
	}
	got := basis.List()
	if len(got) != len(want) {
		t.Fatalf("List() has %d sets, want %d", len(got), len(want))
	}
	for i, w := range want {
		g := got[i]
		if g.Name != w.Name || g.Coverage != w.Coverage || g.Convention != w.Convention || g.Description == "" {
			t.Errorf("List()[%d] = %+v, want name %q, coverage %q, convention %q and a description", i, g, w.Name, w.Coverage, w.Convention)
		}
	}
}

// TestSet_References_Kept checks that the literature survives conversion
// (DOIs from the source lists of the JSON extracts).
func TestSet_References_Kept(t *testing.T) {
	tests := []struct{ set, doi string }{
		{"cc-pVDZ", "doi:10.1063/1.456153"},     // Dunning 1989
		{"aug-cc-pVDZ", "doi:10.1063/1.462569"}, // Kendall, Dunning, Harrison 1992
		{"6-31G*", "doi:10.1063/1.444267"},      // Francl et al. 1982
		{"6-311G**", "doi:10.1063/1.438955"},    // Krishnan et al. 1980
		{"cc-pVQZ", "doi:10.1063/1.456153"},     // Dunning 1989
		{"aug-cc-pVTZ", "doi:10.1063/1.462569"}, // Kendall, Dunning, Harrison 1992
		{"cc-pCVTZ", "doi:10.1063/1.470645"},    // Woon, Dunning 1995 (core-valence, B–Ne)
		{"cc-pCVTZ", "doi:10.1063/1.456153"},    // Dunning 1989 (H, filled from cc-pVTZ)
	}
	for _, tc := range tests {
		refs := lookup(t, tc.set).References()
		if !slices.ContainsFunc(refs, func(r basis.Reference) bool { return strings.Contains(r.Citation, tc.doi) }) {
			t.Errorf("%s references %v lack %s", tc.set, refs, tc.doi)
		}
	}
}

const userFile = `# a user basis (numbers invented for the test)
wellscan-basis 1
about two elements typed by hand
harmonics cartesian
cite me2031 Someone, A. Notes. (2031).

element h
cites me2031
shell s
  3.0  0.5
  0.5D+00  0.6
shell p
  1.0  1.0

element O
harmonics spherical
shell s
  100.0   0.3  -0.1
    1.0   0.7   1.0
shell d
  1.2  1.0
`

func TestParse_UserFile_RoundTrip(t *testing.T) {
	s, err := basis.Parse(strings.NewReader(userFile), "dir/mine.basis")
	if err != nil {
		t.Fatal(err)
	}
	if s.Name() != "mine" {
		t.Errorf("Name() = %q, want the file stem %q", s.Name(), "mine")
	}
	var a bytes.Buffer
	if err := s.Write(&a); err != nil {
		t.Fatal(err)
	}
	s2, err := basis.Parse(bytes.NewReader(a.Bytes()), "again")
	if err != nil {
		t.Fatalf("written file does not parse: %v\n%s", err, a.String())
	}
	var b bytes.Buffer
	if err := s2.Write(&b); err != nil {
		t.Fatal(err)
	}
	if a.String() != b.String() {
		t.Errorf("write → parse → write differs:\n%s\n---\n%s", a.String(), b.String())
	}
	if !strings.Contains(a.String(), "  0.5D+00  0.6\n") {
		t.Errorf("number text not kept:\n%s", a.String())
	}
	mol := molecule(t, "H", "O")
	for _, tc := range []struct {
		conv basis.Convention
		want int
	}{
		{basis.ConventionAsSet, 1 + 3 + 2 + 5}, // H s+p Cartesian; O 2 s columns, spherical d
		{basis.ConventionCartesian, 1 + 3 + 2 + 6},
		{basis.ConventionSpherical, 1 + 3 + 2 + 5},
	} {
		n, err := s2.NumFunctions(mol, tc.conv)
		if err != nil || n != tc.want {
			t.Errorf("NumFunctions(%v) = %d, %v; want %d", tc.conv, n, err, tc.want)
		}
	}
	cs, err := s2.Contractions("H")
	if err != nil || cs[0].Exps[1] != 0.5 {
		t.Errorf("H exponents = %v, %v; want 0.5D+00 read as 0.5", cs, err)
	}
}

// TestSet_Write_Embedded checks that writing an embedded set reproduces
// its file byte for byte (after the generated-code comment lines), and that
// the written text parses back to the same set.
func TestSet_Write_Embedded(t *testing.T) {
	for _, in := range basis.List() {
		s := lookup(t, in.Name)
		var buf bytes.Buffer
		if err := s.Write(&buf); err != nil {
			t.Fatal(err)
		}
		raw, err := os.ReadFile(filepath.Join("data", basis.Slug(in.Name)+".basis"))
		if err != nil {
			t.Fatal(err)
		}
		var body []string
		for _, line := range strings.SplitAfter(string(raw), "\n") {
			if !strings.HasPrefix(line, "#") {
				body = append(body, line)
			}
		}
		if got, want := buf.String(), strings.Join(body, ""); got != want {
			t.Errorf("%s: Write output differs from the embedded file", in.Name)
		}
	}
}

func TestSet_Write_Elements(t *testing.T) {
	s := lookup(t, "aug-cc-pVDZ")
	var buf bytes.Buffer
	if err := s.Write(&buf, "o", "H"); err != nil {
		t.Fatal(err)
	}
	sub, err := basis.Parse(&buf, "sub")
	if err != nil {
		t.Fatal(err)
	}
	if got := sub.Elements(); !slices.Equal(got, []string{"H", "O"}) {
		t.Errorf("Elements() = %v, want [H O] (set order)", got)
	}
	// H and O cite dunning1989a and kendall1992a only (JSON extract).
	var keys []string
	for _, r := range sub.References() {
		keys = append(keys, r.Key)
	}
	if !slices.Equal(keys, []string{"dunning1989a", "kendall1992a"}) {
		t.Errorf("references of the H, O subset = %v, want [dunning1989a kendall1992a]", keys)
	}
	if err := s.Write(&buf, "Xx"); err == nil {
		t.Error("Write(Xx) gave no error")
	}
}

func TestLoadFile_Errors(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "bad.basis")
	if err := os.WriteFile(path, []byte("wellscan-basis 1\nelement O\nshell d\n  1.0 1.0\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	_, err := basis.LoadFile(path)
	var se *basis.SyntaxError
	if !errors.As(err, &se) || se.Line != 2 {
		t.Fatalf("LoadFile error = %v, want a SyntaxError at line 2", err)
	}
	want := "basis: " + path + `:2: element O has a d shell (line 3) but neither the element nor the header has a "harmonics cartesian|spherical" line`
	if err.Error() != want {
		t.Errorf("error = %q, want %q", err, want)
	}
	if _, err := basis.LoadFile(filepath.Join(dir, "missing.basis")); err == nil || !errors.Is(err, os.ErrNotExist) {
		t.Errorf("LoadFile(missing) error = %v, want os.ErrNotExist", err)
	}
}

func TestParseConvention_Names(t *testing.T) {
	tests := []struct {
		in   string
		want basis.Convention
		ok   bool
	}{
		{"", basis.ConventionAsSet, true},
		{"as-set", basis.ConventionAsSet, true},
		{"Cartesian", basis.ConventionCartesian, true},
		{"6D", 0, false},
		{"spherical", basis.ConventionSpherical, true},
		{"5d", 0, false}, // no shorthand tokens: the names are ours
		{"pure", basis.ConventionSpherical, true},
		{"cubic", 0, false},
	}
	for _, tc := range tests {
		got, err := basis.ParseConvention(tc.in)
		if (err == nil) != tc.ok || got != tc.want {
			t.Errorf("ParseConvention(%q) = %v, %v; want %v, ok=%v", tc.in, got, err, tc.want, tc.ok)
		}
		if tc.ok && tc.in != "" {
			if back, _ := basis.ParseConvention(got.String()); back != got {
				t.Errorf("ParseConvention(%v.String()) = %v", got, back)
			}
		}
	}
}

// TestSet_WritePlain: plain decimals, no exponent notation, our
// description, and the same numbers read back (bit for bit: the text is
// the shortest that parses to the same float64).
func TestSet_WritePlain(t *testing.T) {
	for _, in := range basis.List() {
		s := lookup(t, in.Name)
		var buf bytes.Buffer
		if err := s.WritePlain(&buf); err != nil {
			t.Fatal(err)
		}
		text := buf.String()
		if !strings.Contains(text, "\nabout "+in.Description+"\n") {
			t.Errorf("%s: about line is not the set's description %q", in.Name, in.Description)
		}
		shellLines := false
		for _, line := range strings.Split(text, "\n") {
			if strings.HasPrefix(line, "shell ") {
				shellLines = true
				continue
			}
			if strings.HasPrefix(line, "element ") || line == "" {
				shellLines = false
			}
			if shellLines && strings.ContainsAny(line, "eEdD") {
				t.Fatalf("%s: number in exponent notation: %q", in.Name, line)
			}
		}
		back, err := basis.Parse(strings.NewReader(text), "plain")
		if err != nil {
			t.Fatalf("%s: %v", in.Name, err)
		}
		for _, el := range s.Elements() {
			a, _ := s.Contractions(el)
			b, _ := back.Contractions(el)
			if !reflect.DeepEqual(a, b) {
				t.Fatalf("%s %s: contractions differ after WritePlain", in.Name, el)
			}
		}
	}
}
