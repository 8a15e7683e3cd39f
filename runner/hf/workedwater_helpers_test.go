package hf

import (
	"bufio"
	"context"
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// Readers for the published worked example in testdata/worked-water (see
// its README.md for source, formats and conventions). Test-only.

const workedDir = "testdata/worked-water"

// workedCase is one molecule/basis of the worked example.
type workedCase struct {
	name           string
	atomOfFunction []int // AO → atom, from the AO order in testdata/worked-water/README.md
}

func repeatAtom(counts ...int) []int {
	var r []int
	for a, c := range counts {
		for range c {
			r = append(r, a)
		}
	}
	return r
}

// AO orders from testdata/worked-water/README.md ("AO order").
var workedCases = []workedCase{
	{name: "STO-3G", atomOfFunction: repeatAtom(5, 1, 1)},
	{name: "DZ", atomOfFunction: repeatAtom(10, 2, 2)},
	{name: "DZP", atomOfFunction: repeatAtom(16, 5, 5)},
	{name: "ch4-STO-3G", atomOfFunction: repeatAtom(5, 1, 1, 1, 1)},
}

// workedData is the parsed input of one case.
type workedData struct {
	n                    int
	s, t, v, h           *mat.SymDense
	mu                   [3]*mat.SymDense // ⟨μ|−x|ν⟩ etc. as published (electron charge included)
	enuc                 float64
	charges              []float64
	positions            [][3]float64
	eri                  []float64 // full n⁴ array (ij|kl), chemists' notation
	dir                  string
	publishedIterations  []publishedRow
	publishedDipole      [3]float64
	publishedChargesAtom []float64
}

type publishedRow struct {
	iter        int
	elec, total float64
	rmsD        float64 // the RMS(D) column; absent (0) in row 00
}

func readFields(t testing.TB, path string, want int, fn func(line int, f []string)) {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	for i, line := range strings.Split(string(data), "\n") {
		f := strings.Fields(line)
		if len(f) == 0 {
			continue
		}
		if len(f) != want {
			t.Fatalf("%s:%d: %d fields, want %d", path, i+1, len(f), want)
		}
		fn(i+1, f)
	}
}

func atof(t testing.TB, s, where string) float64 {
	t.Helper()
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		t.Fatalf("%s: %v", where, err)
	}
	return v
}

func atoi(t testing.TB, s, where string) int {
	t.Helper()
	v, err := strconv.Atoi(s)
	if err != nil {
		t.Fatalf("%s: %v", where, err)
	}
	return v
}

// readLowerTriangle reads "i j value" lines (1-based, i ≥ j) into a symmetric matrix.
func readLowerTriangle(t testing.TB, path string, n int) *mat.SymDense {
	t.Helper()
	m := mat.NewSymDense(n, nil)
	count := 0
	readFields(t, path, 3, func(line int, f []string) {
		where := fmt.Sprintf("%s:%d", path, line)
		i, j := atoi(t, f[0], where), atoi(t, f[1], where)
		if i < 1 || j < 1 || i > n || j > n {
			t.Fatalf("%s: index (%d, %d) outside 1…%d", where, i, j, n)
		}
		m.SetSym(i-1, j-1, atof(t, f[2], where))
		count++
	})
	if count != n*(n+1)/2 {
		t.Fatalf("%s: %d entries, want %d", path, count, n*(n+1)/2)
	}
	return m
}

func loadWorked(t testing.TB, c workedCase) *workedData {
	t.Helper()
	dir := filepath.Join(workedDir, c.name)
	n := len(c.atomOfFunction)
	w := &workedData{n: n, dir: dir}
	w.s = readLowerTriangle(t, filepath.Join(dir, "s.dat"), n)
	w.t = readLowerTriangle(t, filepath.Join(dir, "t.dat"), n)
	w.v = readLowerTriangle(t, filepath.Join(dir, "v.dat"), n)
	w.h = mat.NewSymDense(n, nil)
	w.h.AddSym(w.t, w.v) // H = T + V (README)
	for i, name := range []string{"mux.dat", "muy.dat", "muz.dat"} {
		w.mu[i] = readLowerTriangle(t, filepath.Join(dir, name), n)
	}
	readFields(t, filepath.Join(dir, "enuc.dat"), 1, func(line int, f []string) {
		w.enuc = atof(t, f[0], "enuc.dat")
	})
	geom, err := os.ReadFile(filepath.Join(dir, "geom.dat"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(geom)), "\n")
	for _, line := range lines[1:] {
		f := strings.Fields(line)
		w.charges = append(w.charges, atof(t, f[0], "geom.dat"))
		w.positions = append(w.positions, [3]float64{atof(t, f[1], "geom.dat"), atof(t, f[2], "geom.dat"), atof(t, f[3], "geom.dat")})
	}
	w.eri = make([]float64, n*n*n*n)
	idx := func(i, j, k, l int) int { return ((i*n+j)*n+k)*n + l }
	readFields(t, filepath.Join(dir, "eri.dat"), 5, func(line int, f []string) {
		where := fmt.Sprintf("%s:%d", filepath.Join(dir, "eri.dat"), line)
		i, j := atoi(t, f[0], where)-1, atoi(t, f[1], where)-1
		k, l := atoi(t, f[2], where)-1, atoi(t, f[3], where)-1
		v := atof(t, f[4], where)
		// 8-fold permutational symmetry of real (ij|kl) (README).
		for _, p := range [][4]int{{i, j, k, l}, {j, i, k, l}, {i, j, l, k}, {j, i, l, k}, {k, l, i, j}, {l, k, i, j}, {k, l, j, i}, {l, k, j, i}} {
			w.eri[idx(p[0], p[1], p[2], p[3])] = v
		}
	})
	w.readPublishedOutput(t)
	return w
}

// Iteration rows of output.txt: " NN   E(elec)   E(tot)   [Delta(E)   RMS(D)]",
// numbers with 12 decimals (matrix elements have 7, so they never match).
var iterRow = regexp.MustCompile(`^ (\d{2,3}) +(-?\d+\.\d{12}) +(-?\d+\.\d{12})(?: +(-?\d+\.\d{12}) +(-?\d+\.\d{12}))?\s*$`)

func (w *workedData) readPublishedOutput(t testing.TB) {
	t.Helper()
	path := filepath.Join(w.dir, "output", "project03-scf", "output.txt")
	w.publishedIterations = readIterationRows(t, path)
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := sc.Text()
		for c, key := range []string{"Mu-X =", "Mu-Y =", "Mu-Z ="} {
			if strings.HasPrefix(line, key) {
				w.publishedDipole[c] = atof(t, strings.TrimSpace(strings.TrimPrefix(line, key)), path)
			}
		}
		if strings.HasPrefix(line, "Charge on atom") {
			_, v, _ := strings.Cut(line, ":")
			w.publishedChargesAtom = append(w.publishedChargesAtom, atof(t, strings.TrimSpace(v), path))
		}
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	if len(w.publishedChargesAtom) != len(w.charges) {
		t.Fatalf("%s: %d Mulliken charges, want %d", path, len(w.publishedChargesAtom), len(w.charges))
	}
}

func readIterationRows(t testing.TB, path string) []publishedRow {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var rows []publishedRow
	for _, line := range strings.Split(string(data), "\n") {
		m := iterRow.FindStringSubmatch(line)
		if m == nil {
			continue
		}
		r := publishedRow{iter: atoi(t, m[1], path), elec: atof(t, m[2], path), total: atof(t, m[3], path)}
		if m[5] != "" {
			r.rmsD = atof(t, m[5], path)
		}
		if r.iter != len(rows) {
			t.Fatalf("%s: iteration row %d out of sequence (want %d)", path, r.iter, len(rows))
		}
		rows = append(rows, r)
	}
	if len(rows) < 2 {
		t.Fatalf("%s: found %d iteration rows", path, len(rows))
	}
	return rows
}

// incoreJK is a test-only JKBuilder over a full n⁴ ERI array:
// J_μν = Σ_λσ (μν|λσ) D_λσ, K_μν = Σ_λσ (μλ|νσ) D_λσ.
type incoreJK struct {
	n     int
	eri   []float64
	calls int
	scale float64 // multiplies J and K (1 if zero); used to make hard test problems
}

func (b *incoreJK) JK(ctx context.Context, dens []*mat.SymDense, j, k []*mat.SymDense) error {
	b.calls++
	n := b.n
	sc := b.scale
	if sc == 0 {
		sc = 1
	}
	for d, dm := range dens {
		if err := ctx.Err(); err != nil {
			return err
		}
		raw := dm.RawSymmetric()
		full := make([]float64, n*n)
		for l := range n {
			for s := range n {
				full[l*n+s] = raw.Data[min(l, s)*raw.Stride+max(l, s)]
			}
		}
		for mu := range n {
			for nu := mu; nu < n; nu++ {
				var jv, kv float64
				for l := range n {
					rowJ := b.eri[((mu*n+nu)*n+l)*n:]
					rowK := b.eri[((mu*n+l)*n+nu)*n:]
					for s := range n {
						ds := full[l*n+s]
						jv += rowJ[s] * ds
						kv += rowK[s] * ds
					}
				}
				j[d].SetSym(mu, nu, sc*jv)
				k[d].SetSym(mu, nu, sc*kv)
			}
		}
	}
	return nil
}

func (w *workedData) input(restricted bool, opts SCFOptions) SCFInput {
	return SCFInput{
		S: w.s, Hcore: w.h, JK: &incoreJK{n: w.n, eri: w.eri}, ENuc: w.enuc,
		NAlpha: 5, NBeta: 5, // 10 electrons in H2O and CH4
		Restricted: restricted, Options: opts,
	}
}
