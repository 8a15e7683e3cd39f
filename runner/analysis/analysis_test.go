package analysis_test

import (
	"context"
	"math"
	"sort"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"wellscan/fit"
	"wellscan/planner"
	"wellscan/runner/analysis"
	"wellscan/runner/hf"
	"wellscan/runner/hf/basis"
)

// ethane is a staggered ethane (Å; C–C 1.53, C–H 1.09, H–C–C 111°,
// invented round numbers close to the usual structure).
const ethane = `
title = "ethane methyl rotation"
[molecule]
units = "angstrom"
geometry = """
C  0.000000  0.000000  0.000000
C  0.000000  0.000000  1.530000
H  1.017603  0.000000 -0.390621
H -0.508801  0.881270 -0.390621
H -0.508801 -0.881270 -0.390621
H  0.508801  0.881270  1.920621
H -1.017603  0.000000  1.920621
H  0.508801 -0.881270  1.920621
"""
[[scan]]
name = "tau"
torsion = [3, 1, 2, 6]
from = 0
to = 120
step = 10
period = 120
[engine]
kind = "model"
[[engine.model.term]]
shape = "cosine"
depth = 0.005
fold = 3
`

func decode(t *testing.T, text string) *planner.Spec {
	t.Helper()
	s, err := planner.Decode([]byte(text), "scan.toml")
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// pitzer is the reduced moment of inertia of two coaxial symmetric tops,
// I_A I_B/(I_A + I_B) (K. S. Pitzer, J. Chem. Phys. 14, 239 (1946)), from
// the atoms of each top about the axis a→b; written here independently
// of planner's kinetic metric.
func pitzer(mol planner.Molecule, a, b int, topA, topB []int) float64 {
	ax := [3]float64{}
	for k := range 3 {
		ax[k] = mol.Atoms[b].Pos[k] - mol.Atoms[a].Pos[k]
	}
	n := math.Sqrt(ax[0]*ax[0] + ax[1]*ax[1] + ax[2]*ax[2])
	moment := func(idx []int) float64 {
		s := 0.0
		for _, i := range idx {
			var r [3]float64
			for k := range 3 {
				r[k] = mol.Atoms[i].Pos[k] - mol.Atoms[a].Pos[k]
			}
			along := (r[0]*ax[0] + r[1]*ax[1] + r[2]*ax[2]) / n
			d2 := r[0]*r[0] + r[1]*r[1] + r[2]*r[2] - along*along
			s += mol.Atoms[i].Mass * d2
		}
		return s
	}
	ia, ib := moment(topA), moment(topB)
	return ia * ib / (ia + ib)
}

func TestAnalyse_CosineTorsion_Exact(t *testing.T) {
	// V = V3/2 (1 − cos 3τ): one distinct minimum (×3 per turn), barrier
	// V3 exactly, V″ = 9V3/2 at the minimum (analytic).
	const v3 = 0.005
	spec := decode(t, ethane)
	var pts []analysis.Point
	for _, p := range spec.InitialPoints() {
		pts = append(pts, analysis.Point{Key: p.Key, Values: p.Values, Energy: -79.2 + v3/2*(1-math.Cos(3*p.Values[0]))})
	}
	res, err := analysis.Analyse(context.Background(), spec, pts, analysis.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if res.Model != "torsion" || res.Torsion == nil {
		t.Fatalf("model %q: want the full-period torsion analysis", res.Model)
	}
	tr := res.Torsion
	if len(tr.Minima) != 1 || tr.Minima[0].Multiplicity != 3 || len(res.Barriers) != 1 {
		t.Fatalf("minima %+v, barriers %+v: want one minimum ×3 and one barrier", tr.Minima, res.Barriers)
	}
	if got, want := res.Barriers[0].HeightCm1, v3*fit.HartreeInCm1; math.Abs(got-want) > 1e-6 {
		t.Errorf("barrier %.8f cm⁻¹, want V3 = %.8f (exact for the model)", got, want)
	}
	mol, _ := spec.Molecule()
	in := pitzer(mol, 0, 1, []int{2, 3, 4}, []int{5, 6, 7})
	want := math.Sqrt(4.5*v3/(in*fit.AmuInElectronMass)) * fit.HartreeInCm1
	if got := tr.Minima[0].HarmonicCm1; math.Abs(got-want) > 1e-6*want {
		t.Errorf("harmonic %.6f cm⁻¹, want √(V″/I_Pitzer) = %.6f", got, want)
	}
}

// waterVFF is a valence force field for water, V = ½k_r[(r₁ − r₀)² +
// (r₂ − r₀)²] + ½k_θ(θ − θ₀)², with invented constants of the right size;
// it is defined for every Cartesian geometry.
func waterVFF(pos [][3]float64) float64 {
	const kr, r0, kth, th0 = 0.5, 1.80, 0.16, 104.5 * math.Pi / 180
	d := func(a, b int) [3]float64 {
		return [3]float64{pos[b][0] - pos[a][0], pos[b][1] - pos[a][1], pos[b][2] - pos[a][2]}
	}
	u, w := d(0, 1), d(0, 2)
	nu, nw := math.Sqrt(u[0]*u[0]+u[1]*u[1]+u[2]*u[2]), math.Sqrt(w[0]*w[0]+w[1]*w[1]+w[2]*w[2])
	th := math.Acos((u[0]*w[0] + u[1]*w[1] + u[2]*w[2]) / (nu * nw))
	return 0.5*kr*((nu-r0)*(nu-r0)+(nw-r0)*(nw-r0)) + 0.5*kth*(th-th0)*(th-th0)
}

// cartesianFrequencies diagonalises the mass-weighted Cartesian Hessian of
// v at pos (finite differences, step h bohr) after projecting out the
// three translations and three rotations (Eckart; projector built here
// from the centre of mass and the principal axes), and returns the
// vibrational wavenumbers (cm⁻¹). Written independently of the code
// under test.
func cartesianFrequencies(v func([][3]float64) float64, pos [][3]float64, masses []float64, h float64) []float64 {
	n := 3 * len(pos)
	at := func(d map[int]float64) float64 {
		p := make([][3]float64, len(pos))
		copy(p, pos)
		for i, s := range d {
			p[i/3][i%3] += s
		}
		return v(p)
	}
	hess := mat.NewSymDense(n, nil)
	for i := range n {
		for j := i; j < n; j++ {
			var e float64
			if i == j {
				e = (at(map[int]float64{i: h}) - 2*at(nil) + at(map[int]float64{i: -h})) / (h * h)
			} else {
				e = (at(map[int]float64{i: h, j: h}) - at(map[int]float64{i: h, j: -h}) - at(map[int]float64{i: -h, j: h}) + at(map[int]float64{i: -h, j: -h})) / (4 * h * h)
			}
			hess.SetSym(i, j, e/math.Sqrt(masses[i/3]*masses[j/3]))
		}
	}
	// Translation and rotation vectors in mass-weighted coordinates.
	var com [3]float64
	mt := 0.0
	for a, m := range masses {
		for k := range 3 {
			com[k] += m * pos[a][k]
		}
		mt += m
	}
	for k := range 3 {
		com[k] /= mt
	}
	var basisVecs [][]float64
	for k := range 3 {
		t := make([]float64, n)
		for a, m := range masses {
			t[3*a+k] = math.Sqrt(m)
		}
		basisVecs = append(basisVecs, t)
	}
	for k := range 3 {
		r := make([]float64, n)
		for a, m := range masses {
			x := [3]float64{pos[a][0] - com[0], pos[a][1] - com[1], pos[a][2] - com[2]}
			e := [3]float64{}
			e[k] = 1
			c := [3]float64{e[1]*x[2] - e[2]*x[1], e[2]*x[0] - e[0]*x[2], e[0]*x[1] - e[1]*x[0]}
			for q := range 3 {
				r[3*a+q] = math.Sqrt(m) * c[q]
			}
		}
		basisVecs = append(basisVecs, r)
	}
	// Gram–Schmidt, then P = 1 − Σ |b⟩⟨b|.
	var ortho [][]float64
	for _, b := range basisVecs {
		w := append([]float64(nil), b...)
		for _, o := range ortho {
			d := 0.0
			for i := range w {
				d += w[i] * o[i]
			}
			for i := range w {
				w[i] -= d * o[i]
			}
		}
		nn := 0.0
		for _, x := range w {
			nn += x * x
		}
		if nn < 1e-10 {
			continue
		}
		for i := range w {
			w[i] /= math.Sqrt(nn)
		}
		ortho = append(ortho, w)
	}
	proj := mat.NewDense(n, n, nil)
	for i := range n {
		proj.Set(i, i, 1)
	}
	for _, o := range ortho {
		for i := range n {
			for j := range n {
				proj.Set(i, j, proj.At(i, j)-o[i]*o[j])
			}
		}
	}
	var ph, php mat.Dense
	ph.Mul(proj, hess)
	php.Mul(&ph, proj)
	sym := mat.NewSymDense(n, nil)
	for i := range n {
		for j := i; j < n; j++ {
			sym.SetSym(i, j, (php.At(i, j)+php.At(j, i))/2)
		}
	}
	var es mat.EigenSym
	es.Factorize(sym, false)
	var out []float64
	for _, l := range es.Values(nil) {
		if l > 1e-7 { // hartree/(bohr²·amu); the zero modes are ~1e-10
			out = append(out, math.Sqrt(l/fit.AmuInElectronMass)*fit.HartreeInCm1)
		}
	}
	sort.Float64s(out)
	return out
}

func TestAnalyse_WaterSurface_MatchesCartesianNormalModes(t *testing.T) {
	// The 2-D GF problem on the symmetric-stretch × bend surface, with the
	// kinetic metric of the two scanned coordinates, must give exactly the
	// two totally symmetric normal modes of the same potential's Cartesian
	// Hessian (the antisymmetric stretch is the third, outside the
	// surface). 0.5 cm⁻¹ (issue goal); the finite-difference Hessian is
	// good to ~1e-3 cm⁻¹.
	spec := decode(t, `
[molecule]
units = "angstrom"
geometry = """
O  0.000000  0.000000  0.117300
H  0.000000  0.757200 -0.469200
H  0.000000 -0.757200 -0.469200
"""
[[scan]]
name = "r"
bonds = [[1, 2], [1, 3]]
from = 0.90
to = 1.00
step = 0.025
[[scan]]
name = "theta"
angle = [2, 1, 3]
from = 100
to = 110
step = 2.5
[refine]
adaptive = false
[engine]
kind = "model"
[[engine.model.term]]
shape = "harmonic"
force = 1
`)
	vAt := func(p planner.Point) (float64, planner.Molecule) {
		mol, err := spec.Geometry(p)
		if err != nil {
			t.Fatal(err)
		}
		pos := make([][3]float64, len(mol.Atoms))
		for i, a := range mol.Atoms {
			pos[i] = a.Pos
		}
		return waterVFF(pos), mol
	}
	var pts []analysis.Point
	for _, p := range spec.InitialPoints() {
		e, _ := vAt(p)
		pts = append(pts, analysis.Point{Key: p.Key, Values: p.Values, Energy: e})
	}
	res, err := analysis.Analyse(context.Background(), spec, pts, analysis.Options{WindowEnergy: 1})
	if err != nil {
		t.Fatal(err)
	}
	sr := res.Surface
	if sr == nil || len(sr.Frequencies) != 2 {
		t.Fatalf("surface %+v: want two harmonic wavenumbers", sr)
	}
	_, mol := vAt(planner.Point{Key: "stationary", Values: []float64{sr.X, sr.Y}})
	pos := make([][3]float64, len(mol.Atoms))
	masses := make([]float64, len(mol.Atoms))
	for i, a := range mol.Atoms {
		pos[i], masses[i] = a.Pos, a.Mass
	}
	ref := cartesianFrequencies(waterVFF, pos, masses, 1e-3)
	if len(ref) != 3 {
		t.Fatalf("Cartesian Hessian gave %d vibrations %v, want 3", len(ref), ref)
	}
	t.Logf("2-D GF %v cm⁻¹; Cartesian normal modes %v cm⁻¹", sr.Frequencies, ref)
	for _, w := range sr.Frequencies {
		best := math.Inf(1)
		for _, r := range ref {
			best = math.Min(best, math.Abs(w-r))
		}
		if best > 0.5 {
			t.Errorf("2-D GF wavenumber %.3f cm⁻¹ matches none of the normal modes %v within 0.5 cm⁻¹", w, ref)
		}
	}
}

func TestAnalyse_RefusesUnbracketedWells(t *testing.T) {
	// A curve that only falls (toward a repulsive-wall-free edge) has no
	// well: the analysis says so instead of extrapolating one.
	spec := decode(t, `
[molecule]
geometry = """
He 0 0 0
He 0 0 3.0
"""
[[scan]]
bond = [1, 2]
from = 2.0
to = 4.0
step = 0.25
[engine]
kind = "model"
[[engine.model.term]]
shape = "harmonic"
force = 1
`)
	var pts []analysis.Point
	for _, p := range spec.InitialPoints() {
		r := p.Values[0]
		pts = append(pts, analysis.Point{Key: p.Key, Values: p.Values, Energy: -5.7 + 0.3*math.Exp(-1.5*r)})
	}
	_, err := analysis.Analyse(context.Background(), spec, pts, analysis.Options{})
	if err == nil || !strings.Contains(err.Error(), "no well is bracketed") {
		t.Errorf("error %v: want the refusal that no well is bracketed", err)
	}
}

func TestAnalyse_CO2Bend_WilsonLinearTriatomic(t *testing.T) {
	if testing.Short() {
		t.Skip("RHF/6-31G* CO2 energies (about 5 s)")
	}
	// CO2 RHF/6-31G*, bend 150–180°: the analysis mirrors the points about
	// 180° and its harmonic bend wavenumber must agree within 0.5 % with
	// √(k·G), k from a central difference of the same engine's energies
	// at 180° ± 1° (even, so k = 2(E(179°) − E(180°))/h²), G Wilson's
	// linear-triatomic bend element 1/(m₁r₁²) + 1/(m₃r₂²) +
	// (1/r₁ + 1/r₂)²/m₂ (Wilson, Decius & Cross, Molecular Vibrations,
	// 1955), evaluated here.
	spec := decode(t, `
[molecule]
geometry = """
O 0.0 0.0 -1.143
C 0.0 0.0 0.0
O 0.0 0.0 1.143
"""
[[scan]]
name = "bend"
angle = [1, 2, 3]
from = 150
to = 180
step = 5
[engine]
kind = "model"
[[engine.model.term]]
shape = "harmonic"
force = 1
`)
	set, err := basis.Lookup("6-31G*")
	if err != nil {
		t.Fatal(err)
	}
	energy := func(deg float64) float64 {
		p := spec.PointAt([]float64{deg})
		mol, err := spec.Geometry(p)
		if err != nil {
			t.Fatal(err)
		}
		r, err := hf.Energy(t.Context(), mol, hf.Options{Basis: set, Method: hf.RHF})
		if err != nil || !r.Converged {
			t.Fatalf("RHF at %g°: %v", deg, err)
		}
		return r.Energy
	}
	var pts []analysis.Point
	for _, deg := range []float64{150, 160, 170, 175, 178, 180} {
		p := spec.PointAt([]float64{deg})
		pts = append(pts, analysis.Point{Key: p.Key, Values: p.Values, Energy: energy(deg)})
	}
	res, err := analysis.Analyse(t.Context(), spec, pts, analysis.Options{NoLevels: true})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Minima) != 1 || math.Abs(res.Minima[0].ThetaEDegree-180) > 1e-3 {
		t.Fatalf("minima %+v: want one at 180°", res.Minima)
	}
	h := math.Pi / 180
	k := 2 * (energy(179) - pts[len(pts)-1].Energy) / (h * h)
	mol, _ := spec.Molecule()
	r := 1.143 * planner.AngstromInBohr
	mO, mC := mol.Atoms[0].Mass, mol.Atoms[1].Mass
	g := 1/(mO*r*r) + 1/(mO*r*r) + (2/r)*(2/r)/mC
	want := math.Sqrt(k*g/fit.AmuInElectronMass) * fit.HartreeInCm1
	t.Logf("CO2 bend: analysis %.3f cm⁻¹, √(kG) %.3f cm⁻¹", res.Minima[0].OmegaE, want)
	if got := res.Minima[0].OmegaE; math.Abs(got-want) > 0.005*want {
		t.Errorf("bend %.2f cm⁻¹, √(kG) = %.2f cm⁻¹ (differ by %.2f %%)", got, want, 100*math.Abs(got-want)/want)
	}
}
