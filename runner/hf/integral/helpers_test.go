package integral

import (
	"bufio"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// basisFile is the neutral basis JSON schema of the reference curators
// (documented in testdata/README.md): per element, shells with string
// exponents and one string column per contracted function.
type basisFile struct {
	Elements map[string]struct {
		Z      int `json:"Z"`
		Shells []struct {
			L            int        `json:"l"`
			Exponents    []string   `json:"exponents"`
			Coefficients [][]string `json:"coefficients"`
		} `json:"shells"`
	} `json:"elements"`
}

// elementBasis is one element's shells with parsed numbers.
type elementBasis []struct {
	l     int
	exps  []float64
	coefs [][]float64
}

func readBasis(t testing.TB, path string) map[int]elementBasis {
	t.Helper()
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var bf basisFile
	if err := json.Unmarshal(raw, &bf); err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	out := map[int]elementBasis{}
	for sym, el := range bf.Elements {
		var eb elementBasis
		for si, sh := range el.Shells {
			exps, err := parseFloats(sh.Exponents)
			if err != nil {
				t.Fatalf("%s: %s shell %d exponents: %v", path, sym, si, err)
			}
			var cols [][]float64
			for _, c := range sh.Coefficients {
				col, err := parseFloats(c)
				if err != nil {
					t.Fatalf("%s: %s shell %d coefficients: %v", path, sym, si, err)
				}
				if len(col) != len(exps) {
					t.Fatalf("%s: %s shell %d: %d coefficients for %d exponents", path, sym, si, len(col), len(exps))
				}
				cols = append(cols, col)
			}
			eb = append(eb, struct {
				l     int
				exps  []float64
				coefs [][]float64
			}{sh.L, exps, cols})
		}
		out[el.Z] = eb
	}
	return out
}

func parseFloats(ss []string) ([]float64, error) {
	out := make([]float64, len(ss))
	for i, s := range ss {
		v, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
		if err != nil {
			return nil, err
		}
		out[i] = v
	}
	return out, nil
}

type atom struct {
	Z   float64
	Pos [3]float64
}

// readGeom reads the worked example's geom.dat: a count line, then
// "Z x y z" in bohr.
func readGeom(t testing.TB, path string) []atom {
	t.Helper()
	rows := readRows(t, path)
	if len(rows) < 1 || len(rows[0]) != 1 {
		t.Fatalf("%s: first line must be the atom count", path)
	}
	n := int(rows[0][0])
	if len(rows) != n+1 {
		t.Fatalf("%s: %d atom lines, want %d", path, len(rows)-1, n)
	}
	var out []atom
	for i, r := range rows[1:] {
		if len(r) != 4 {
			t.Fatalf("%s:%d: want 4 fields", path, i+2)
		}
		out = append(out, atom{r[0], [3]float64{r[1], r[2], r[3]}})
	}
	return out
}

func readRows(t testing.TB, path string) [][]float64 {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var rows [][]float64
	sc := bufio.NewScanner(f)
	line := 0
	for sc.Scan() {
		line++
		fs := strings.Fields(sc.Text())
		if len(fs) == 0 {
			continue
		}
		r, err := parseFloats(fs)
		if err != nil {
			t.Fatalf("%s:%d: %v", path, line, err)
		}
		rows = append(rows, r)
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	return rows
}

// buildShells places each atom's shells (general contractions split into
// one shell per column) in atom order.
func buildShells(atoms []atom, basis map[int]elementBasis, pure bool) ([]Shell, error) {
	var out []Shell
	for ai, a := range atoms {
		eb, ok := basis[int(a.Z)]
		if !ok {
			return nil, fmt.Errorf("no basis for Z=%v", a.Z)
		}
		for _, sh := range eb {
			for _, col := range sh.coefs {
				out = append(out, Shell{L: sh.l, Center: a.Pos, Atom: ai, Exps: sh.exps, Coefs: col, Pure: pure && sh.l >= 2})
			}
		}
	}
	return out, nil
}

func charges(atoms []atom) []PointCharge {
	var out []PointCharge
	for _, a := range atoms {
		out = append(out, PointCharge(a))
	}
	return out
}

type workedCase struct {
	name   string
	dir    string
	norm   CartNorm
	shells []Shell
	atoms  []atom
	nbf    int
}

// loadWorked loads one worked-example case from testdata.
func loadWorked(t testing.TB, name string, norm CartNorm) workedCase {
	t.Helper()
	dir := filepath.Join("..", "testdata", "worked-water", name)
	atoms := readGeom(t, filepath.Join(dir, "geom.dat"))
	basis := readBasis(t, filepath.Join(dir, "basis.json"))
	shells, err := buildShells(atoms, basis, false)
	if err != nil {
		t.Fatalf("%s: %v", dir, err)
	}
	return workedCase{name: name, dir: dir, norm: norm, shells: shells, atoms: atoms, nbf: NumFunctions(shells)}
}

// readLower reads "i j value" lines (1-based, lower triangle) into a
// full symmetric n×n slice.
func readLower(t testing.TB, path string, n int) [][]float64 {
	t.Helper()
	m := make([][]float64, n)
	for i := range m {
		m[i] = make([]float64, n)
	}
	seen := 0
	for li, r := range readRows(t, path) {
		if len(r) != 3 {
			t.Fatalf("%s:%d: want 3 fields", path, li+1)
		}
		i, j := int(r[0])-1, int(r[1])-1
		if i < 0 || j < 0 || i >= n || j >= n {
			t.Fatalf("%s:%d: index out of range 1..%d", path, li+1, n)
		}
		m[i][j], m[j][i] = r[2], r[2]
		seen++
	}
	if seen != n*(n+1)/2 {
		t.Fatalf("%s: %d entries, want %d", path, seen, n*(n+1)/2)
	}
	return m
}
