package integral

import (
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
)

// workedCases are the published worked example's four cases
// (testdata/worked-water/README.md: CrawfordGroup ProgrammingProjects,
// commit 297fda1, Project #3 input files). The DZP d shell is Cartesian
// with the axial normalisation (⟨xy|xy⟩ = 1/3 in its s.dat).
var workedCases = []struct {
	name string
	norm CartNorm
	nbf  int // README.md "AO order"
}{
	{"STO-3G", NormPerComponent, 7},
	{"DZ", NormPerComponent, 14},
	{"DZP", NormAxial, 26},
	{"ch4-STO-3G", NormPerComponent, 9},
}

// workedTol: the README states that these bases reproduce the files to
// about 1e-12; 1e-10 leaves room for the 15-digit printing.
const workedTol = 1e-10

func compareMatrix(t *testing.T, what string, got mat.Symmetric, want [][]float64, sign float64) {
	t.Helper()
	n := got.SymmetricDim()
	if n != len(want) {
		t.Fatalf("%s: dimension %d, want %d", what, n, len(want))
	}
	bad := 0
	for i := range n {
		for j := 0; j <= i; j++ {
			g, w := got.At(i, j), sign*want[i][j]
			if !scalar.EqualWithinAbsOrRel(g, w, workedTol, workedTol) {
				if bad < 5 {
					t.Errorf("%s[%d,%d] = %.15g, want %.15g", what, i+1, j+1, g, w)
				}
				bad++
			}
		}
	}
	if bad > 0 {
		t.Errorf("%s: %d elements differ", what, bad)
	}
}

func TestOneBody_WorkedExample(t *testing.T) {
	for _, tc := range workedCases {
		t.Run(tc.name, func(t *testing.T) {
			wc := loadWorked(t, tc.name, tc.norm)
			if wc.nbf != tc.nbf {
				t.Fatalf("NumFunctions = %d, want %d", wc.nbf, tc.nbf)
			}
			n := wc.nbf
			compareMatrix(t, "S", Overlap(wc.shells, tc.norm), readLower(t, filepath.Join(wc.dir, "s.dat"), n), 1)
			compareMatrix(t, "T", Kinetic(wc.shells, tc.norm), readLower(t, filepath.Join(wc.dir, "t.dat"), n), 1)
			compareMatrix(t, "V", Nuclear(wc.shells, tc.norm, charges(wc.atoms)), readLower(t, filepath.Join(wc.dir, "v.dat"), n), 1)
			// mu?.dat hold ⟨μ|−r_k|ν⟩ about the origin of geom.dat (README).
			dip := Dipole(wc.shells, tc.norm, [3]float64{})
			for k, f := range []string{"mux.dat", "muy.dat", "muz.dat"} {
				compareMatrix(t, f, dip[k], readLower(t, filepath.Join(wc.dir, f), n), -1)
			}
		})
	}
}

func TestComputeERI_WorkedExample(t *testing.T) {
	for _, tc := range workedCases {
		t.Run(tc.name, func(t *testing.T) {
			wc := loadWorked(t, tc.name, tc.norm)
			n := wc.nbf
			eri, err := ComputeERI(t.Context(), wc.shells, tc.norm, 2)
			if err != nil {
				t.Fatal(err)
			}
			// eri.dat: "i j k l (ij|kl)", 1-based, each unique integral
			// once; integrals that vanish by symmetry are omitted (README).
			path := filepath.Join(wc.dir, "eri.dat")
			want := map[int]float64{}
			for li, r := range readRows(t, path) {
				if len(r) != 5 {
					t.Fatalf("%s:%d: want 5 fields", path, li+1)
				}
				i, j, k, l := int(r[0])-1, int(r[1])-1, int(r[2])-1, int(r[3])-1
				want[pidx(pidx(i, j), pidx(k, l))] = r[4]
			}
			bad, omitted := 0, 0
			for i := range n {
				for j := 0; j <= i; j++ {
					for k := range n {
						for l := 0; l <= k; l++ {
							if pidx(k, l) > pidx(i, j) {
								continue
							}
							w, ok := want[pidx(pidx(i, j), pidx(k, l))]
							if !ok {
								omitted++
							}
							g := eri.At(i, j, k, l)
							// absolute 1e-10 for the omitted (zero) ones too
							if !scalar.EqualWithinAbsOrRel(g, w, workedTol, workedTol) {
								if bad < 5 {
									t.Errorf("(%d %d|%d %d) = %.15g, want %.15g", i+1, j+1, k+1, l+1, g, w)
								}
								bad++
							}
						}
					}
				}
			}
			if bad > 0 {
				t.Errorf("%d of %d integrals differ (%d omitted in the file)", bad, len(want)+omitted, omitted)
			}
		})
	}
}
