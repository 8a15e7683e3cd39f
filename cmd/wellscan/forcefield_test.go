package main

import (
	"context"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"

	"wellscan/planner"
	"wellscan/runner/hf"
	"wellscan/runner/hf/basis"
	"wellscan/runner/report"
)

// ffWaterSpec is water at its RHF/6-31G* minimum (r = 0.947319 Å,
// θ = 105.4997°, found with wellscan's own energies by Newton steps on r
// and θ; the published HF/6-31G* geometry is r ≈ 0.947 Å, θ ≈ 105.5°,
// from memory).
const ffWaterSpec = `title = "water RHF/6-31G* force field"
[molecule]
geometry = """
O  0.000000000  0.000000000  0.000000000
H  0.000000000  0.754066640 -0.573408430
H  0.000000000 -0.754066640 -0.573408430
"""
[engine]
kind = "builtin"
method = "rhf"
basis = "6-31G*"
[queue]
kind = "local"
workers = %d
[forcefield]
order = "quartic"
[[forcefield.isotopologue]]
name = "D2O"
isotopes = { 2 = "2H", 3 = "2H" }
[[forcefield.isotopologue]]
name = "HDO"
isotopes = { 2 = "2H" }
`

func ffSpecText(workers int) string {
	return strings.Replace(ffWaterSpec, "%d", string(rune('0'+workers)), 1)
}

// independentHarmonic is written separately from planner and fit: a
// Cartesian Hessian by central differences of hf.Energy, mass-weighted,
// translations and rotations projected out with a projector built here,
// diagonalised with gonum; it returns the 3N−6 largest wavenumbers
// (cm⁻¹), ascending.
func independentHarmonic(t *testing.T, mol planner.Molecule, step float64) []float64 {
	t.Helper()
	set, err := basis.Lookup("6-31G*")
	if err != nil {
		t.Fatal(err)
	}
	n := len(mol.Atoms)
	n3 := 3 * n
	energy := func(d map[int]float64) float64 {
		m := mol.Clone()
		for c, v := range d {
			m.Atoms[c/3].Pos[c%3] += v
		}
		res, err := hf.Energy(context.Background(), m, hf.Options{Method: hf.RHF, Basis: set, Workers: 1})
		if err != nil {
			t.Fatal(err)
		}
		return res.Energy
	}
	e0 := energy(nil)
	h := mat.NewSymDense(n3, nil)
	for i := range n3 {
		p, m := energy(map[int]float64{i: step}), energy(map[int]float64{i: -step})
		h.SetSym(i, i, (p-2*e0+m)/(step*step))
		for j := i + 1; j < n3; j++ {
			v := (energy(map[int]float64{i: step, j: step}) - energy(map[int]float64{i: step, j: -step}) -
				energy(map[int]float64{i: -step, j: step}) + energy(map[int]float64{i: -step, j: -step})) / (4 * step * step)
			h.SetSym(i, j, v)
		}
	}
	// mass-weight
	w := make([]float64, n3)
	var com [3]float64
	tot := 0.0
	for a, at := range mol.Atoms {
		for k := range 3 {
			w[3*a+k] = math.Sqrt(at.Mass)
			com[k] += at.Mass * at.Pos[k]
		}
		tot += at.Mass
	}
	for k := range 3 {
		com[k] /= tot
	}
	for i := range n3 {
		for j := i; j < n3; j++ {
			h.SetSym(i, j, h.At(i, j)/(w[i]*w[j]))
		}
	}
	// translations and rotations, mass-weighted, orthonormalised (QR)
	tr := mat.NewDense(n3, 6, nil)
	for a, at := range mol.Atoms {
		r := [3]float64{at.Pos[0] - com[0], at.Pos[1] - com[1], at.Pos[2] - com[2]}
		for k := range 3 {
			tr.Set(3*a+k, k, w[3*a])
		}
		// rotations e_k × r
		tr.Set(3*a+1, 3, -r[2]*w[3*a])
		tr.Set(3*a+2, 3, r[1]*w[3*a])
		tr.Set(3*a+0, 4, r[2]*w[3*a])
		tr.Set(3*a+2, 4, -r[0]*w[3*a])
		tr.Set(3*a+0, 5, -r[1]*w[3*a])
		tr.Set(3*a+1, 5, r[0]*w[3*a])
	}
	var qr mat.QR
	qr.Factorize(tr)
	var q mat.Dense
	qr.QTo(&q)
	proj := mat.NewDense(n3, n3, nil)
	for i := range n3 {
		proj.Set(i, i, 1)
	}
	for k := range 6 {
		col := mat.Col(nil, k, &q)
		for i := range n3 {
			for j := range n3 {
				proj.Set(i, j, proj.At(i, j)-col[i]*col[j])
			}
		}
	}
	var a, b mat.Dense
	a.Mul(proj, h)
	b.Mul(&a, proj)
	hp := mat.NewSymDense(n3, nil)
	for i := range n3 {
		for j := i; j < n3; j++ {
			hp.SetSym(i, j, 0.5*(b.At(i, j)+b.At(j, i)))
		}
	}
	var es mat.EigenSym
	if !es.Factorize(hp, false) {
		t.Fatal("eigen failed")
	}
	vals := es.Values(nil)
	sort.Float64s(vals)
	var out []float64
	for _, v := range vals[6:] {
		out = append(out, math.Sqrt(v/planner.AmuInElectronMass)*planner.HartreeInCm1)
	}
	return out
}

func TestForcefield_WaterRHF631GStar(t *testing.T) {
	dir := t.TempDir()
	writeSpec(t, dir, ffSpecText(2))
	code, out, errs := wellscan(t, "plan", dir)
	if code != 0 {
		t.Fatalf("plan: exit %d: %s", code, errs)
	}
	// C2v water: 14 of 19 stage-1 and 22 of 32 stage-2 displacements per
	// quartic set (counted independently in planner's tests).
	for _, want := range []string{"stage 1 (Hessian, dipole derivatives): 19 displacements, 14 computed", "stage 2 (quartic force field, parent): 32 displacements, 22 computed", "points to compute: 36"} {
		if !strings.Contains(out, want) {
			t.Errorf("plan output lacks %q:\n%s", want, out)
		}
	}
	code, out, errs = wellscan(t, "run", "-q", dir)
	if code != 0 {
		t.Fatalf("run: exit %d: %s\n%s", code, errs, out)
	}
	if !strings.Contains(out, "quartic force field complete") || !strings.Contains(out, "points: 36 done") {
		t.Errorf("run summary:\n%s", out)
	}
	for _, args := range [][]string{{"report", dir}, {"fit", dir}, {"export", dir, "--format", "csv"}} {
		if code, _, errs := wellscan(t, args...); code == 0 || !strings.Contains(errs, "force-field job") {
			t.Errorf("%v on a force-field job: exit %d, %q", args, code, errs)
		}
	}
	code, js, errs := wellscan(t, "forcefield", "--json", dir)
	if code != 0 {
		t.Fatalf("forcefield: exit %d: %s", code, errs)
	}
	var rep report.FFReport
	if err := json.Unmarshal([]byte(js), &rep); err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{"forcefield.md", "forcefield.json", "forcefield.csv", "forcefield.png", "forcefield.svg"} {
		if st, err := os.Stat(filepath.Join(dir, "forcefield", f)); err != nil || st.Size() == 0 {
			t.Errorf("%s: %v", f, err)
		}
	}
	parent := rep.Isotopologues[0]
	if parent.Name != "parent" || len(parent.Modes) != 3 || !parent.Anharmonic {
		t.Fatalf("parent: %+v", parent)
	}
	// published HF/6-31G* harmonic wavenumbers of water (from memory);
	// 3 cm⁻¹ covers the rounding of the recalled values.
	for i, want := range []float64{1827, 4070, 4189} {
		if !scalar.EqualWithinAbs(parent.Modes[i].WavenumberCm1, want, 3) {
			t.Errorf("ω%d = %.2f cm⁻¹, published about %.0f", i+1, parent.Modes[i].WavenumberCm1, want)
		}
	}
	// VPT2 lowers every fundamental; the bend by 40–70 cm⁻¹ and the
	// stretches by 130–220 cm⁻¹ (water's experimental ω − ν: 54, 175 and
	// 187 cm⁻¹, from memory).
	shifts := [][2]float64{{40, 70}, {130, 220}, {130, 220}}
	for i, b := range parent.Bands[:3] {
		d := b.HarmonicCm1 - b.Cm1
		if d < shifts[i][0] || d > shifts[i][1] {
			t.Errorf("%s: ω − ν = %.1f cm⁻¹, want %v", b.Label, d, shifts[i])
		}
	}
	if testing.Short() {
		t.Skip("the independent Cartesian Hessian takes 163 more energies")
	}
	spec, err := planner.Load(filepath.Join(dir, "scan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	ind := independentHarmonic(t, spec.ForceField().Ref, 0.005)
	for i := range 3 {
		// independent computation above; 0.5 cm⁻¹ is the target
		// (the two step sizes differ: O(h²) differences ~0.1 cm⁻¹)
		if !scalar.EqualWithinAbs(parent.Modes[i].WavenumberCm1, ind[i], 0.5) {
			t.Errorf("ω%d = %.3f cm⁻¹, independent Cartesian Hessian gives %.3f", i+1, parent.Modes[i].WavenumberCm1, ind[i])
		}
	}
	t.Logf("job %.3f %.3f %.3f, independent %.3f %.3f %.3f cm⁻¹", parent.Modes[0].WavenumberCm1, parent.Modes[1].WavenumberCm1, parent.Modes[2].WavenumberCm1, ind[0], ind[1], ind[2])
	// D2O from the same Hessian: the independent route with D masses.
	d2o := spec.ForceField().Ref.Clone()
	for _, a := range []int{1, 2} {
		d2o.Atoms[a].Mass = rep.Isotopologues[1].MassesAmu[a]
	}
	indD := independentHarmonic(t, d2o, 0.005)
	for i := range 3 {
		if !scalar.EqualWithinAbs(rep.Isotopologues[1].Modes[i].WavenumberCm1, indD[i], 0.5) { // as above
			t.Errorf("D2O ω%d = %.3f, independent %.3f", i+1, rep.Isotopologues[1].Modes[i].WavenumberCm1, indD[i])
		}
	}
	// The finished job's points belong to this spec: an edited molecule
	// (O → S) is refused by the analysis, as by fit and report.
	b, err := os.ReadFile(filepath.Join(dir, "scan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	edited := strings.Replace(string(b), "\nO ", "\nS ", 1)
	if edited == string(b) {
		t.Fatal("test spec has no oxygen line to edit")
	}
	writeSpec(t, dir, edited)
	if code, out, errs := wellscan(t, "forcefield", dir); code == 0 || !strings.Contains(errs, "changed") {
		t.Errorf("forcefield on an edited spec: exit %d, want a refusal naming the change\n%s%s", code, out, errs)
	}
}

func TestForcefield_CrashTorture(t *testing.T) {
	if testing.Short() && os.Getenv("WELLSCAN_TORTURE") == "" {
		t.Skip("builds the binary and kills force-field jobs as child processes")
	}
	seed := tortureSeed(t)
	t.Logf("seed %d (rerun with WELLSCAN_TORTURE_SEED=%d)", seed, seed)
	rng := rand.New(rand.NewPCG(seed, 0xff21))
	bin := buildWellscan(t)

	ref := t.TempDir()
	writeSpec(t, ref, ffSpecText(1))
	start := time.Now()
	runToEnd(t, bin, ref)
	wall := time.Since(start)
	want, _ := storeState(t, ref)
	if len(want) != 36 { // 14 stage-1 + 22 stage-2 (C2v water, see the plan test)
		t.Fatalf("reference job has %d points, want 36", len(want))
	}
	dir := t.TempDir()
	writeSpec(t, dir, ffSpecText(1))
	n := killCount(5, 2)
	// Kills spread over the first half of an uninterrupted run's time
	// (a kill before the store exists is harmless and checked too), so
	// that they land mid-job on a quiet machine as on a loaded one.
	lo := 50 * time.Millisecond
	hi := lo + wall/2
	t.Logf("uninterrupted run %v for %d points; kills in [%v, %v)", wall.Round(time.Millisecond), len(want), lo, hi.Round(time.Millisecond))
	killed := killLoop(t, bin, dir, rng, n, lo, hi)
	// On a quiet machine the last kills can come after the (fast) job is
	// done; two kills mid-job still exercise resume in both stages' order.
	if killed < 2 {
		t.Fatalf("only %d of %d kills landed before the job finished; the test did not exercise resume", killed, n)
	}
	t.Logf("%d of %d kills landed mid-job", killed, n)
	runToEnd(t, bin, dir)
	checkBolt(t, dir)
	// Same tolerance as the RHF scan torture: a resumed point may start from
	// another guess and converge to the same energy within 1e-8 hartree.
	assertNoLossNoDup(t, dir, want, 1e-8)
	// The analyses agree: energies within 1e-8 hartree move the harmonic
	// wavenumbers by < 0.5 cm⁻¹ (1e-8/δ² = 4e-4 hartree/(amu bohr²) with
	// δ = 0.005 amu^½ bohr: ~0.3% of the bend's λ, i.e. 0.15% of ω) and the
	// VPT2 bands by < 1 cm⁻¹; in practice resumed points reuse the same
	// guesses and agree far better (logged).
	spec, err := planner.Load(filepath.Join(ref, "scan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	analyse := func(d string) *report.FFReport {
		s, err := forceFieldSamples(d, spec)
		if err != nil {
			t.Fatal(err)
		}
		r, err := report.AnalyzeForceField(spec, s)
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	a, b := analyse(ref), analyse(dir)
	worst := 0.0
	for k, iso := range a.Isotopologues {
		for i, m := range iso.Modes {
			worst = math.Max(worst, math.Abs(m.WavenumberCm1-b.Isotopologues[k].Modes[i].WavenumberCm1))
			if !scalar.EqualWithinAbs(m.WavenumberCm1, b.Isotopologues[k].Modes[i].WavenumberCm1, 0.5) {
				t.Errorf("%s ω%d: %.4f vs %.4f", iso.Name, i+1, m.WavenumberCm1, b.Isotopologues[k].Modes[i].WavenumberCm1)
			}
		}
		for i, band := range iso.Bands {
			worst = math.Max(worst, math.Abs(band.Cm1-b.Isotopologues[k].Bands[i].Cm1))
			if !scalar.EqualWithinAbs(band.Cm1, b.Isotopologues[k].Bands[i].Cm1, 1) {
				t.Errorf("%s %s: %.4f vs %.4f", iso.Name, band.Label, band.Cm1, b.Isotopologues[k].Bands[i].Cm1)
			}
		}
	}
	t.Logf("largest difference between the interrupted and uninterrupted analyses: %.2e cm⁻¹", worst)
}

func TestForcefield_AddIsotopologueLater(t *testing.T) {
	// A finished job takes a new quartic isotopologue: its stage-2 points
	// are computed, nothing else is recomputed.
	dir := t.TempDir()
	text := strings.Replace(ffSpecText(2), "[[forcefield.isotopologue]]\nname = \"D2O\"", "[[forcefield.isotopologue]]\nname = \"D2O\"\nquartic = false", 1)
	writeSpec(t, dir, text)
	if code, out, errs := wellscan(t, "run", "-q", dir); code != 0 || !strings.Contains(out, "computed now 36") {
		t.Fatalf("first run: exit %d: %s\n%s", code, errs, out)
	}
	writeSpec(t, dir, strings.Replace(text, "quartic = false", "quartic = true", 1))
	code, out, errs := wellscan(t, "run", "-q", dir)
	// C2v D2O: 22 of its 32 stage-2 displacements (same count as H2O)
	if code != 0 || !strings.Contains(out, "points: 58 done") || !strings.Contains(out, "computed now 22,") {
		t.Fatalf("second run: exit %d: %s\n%s", code, errs, out)
	}
	if !strings.Contains(out, "## D2O") || strings.Count(out, "VPT2 (quartic step") != 2 {
		t.Errorf("second run lacks the D2O VPT2 table:\n%s", out)
	}
}

func TestForcefield_ExampleSpecPlans(t *testing.T) {
	text, err := os.ReadFile("../../testdata/examples/water-forcefield/scan.toml")
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	writeSpec(t, dir, string(text))
	code, out, errs := wellscan(t, "plan", dir)
	// 14 stage-1 + 22 + 22 stage-2 (H2O and D2O, C2v; see the counts above)
	if code != 0 || !strings.Contains(out, "points to compute: 58") {
		t.Errorf("plan: exit %d, %s\n%s", code, errs, out)
	}
}

// TestForcefield_LinearMolecule_VPT2Withheld: a quartic force field of
// linear CO2 (RHF/STO-3G, 41 points) keeps its harmonic analysis and
// withholds VPT2, which needs the degenerate-mode formulas, with a
// warning instead of failing the whole analysis.
func TestForcefield_LinearMolecule_VPT2Withheld(t *testing.T) {
	dir := t.TempDir()
	writeSpec(t, dir, `title = "linear CO2 force field"
[molecule]
geometry = """
O 0 0 -1.188
C 0 0 0
O 0 0 1.188
"""
[engine]
kind = "builtin"
method = "rhf"
basis = "sto-3g"
[forcefield]
`)
	if code, out, errs := wellscan(t, "run", "-q", dir); code != 0 {
		t.Fatalf("run: exit %d\n%s%s", code, out, errs)
	}
	code, out, errs := wellscan(t, "forcefield", "--json", dir)
	if code != 0 {
		t.Fatalf("forcefield: exit %d\n%s%s", code, out, errs)
	}
	var rep report.FFReport
	if err := json.Unmarshal([]byte(out), &rep); err != nil {
		t.Fatal(err)
	}
	iso := rep.Isotopologues[0]
	if iso.Anharmonic || !strings.Contains(iso.AnharmonicWithheld, "degenerate") {
		t.Errorf("anharmonic %v, withheld %q: want VPT2 withheld for the degenerate bend", iso.Anharmonic, iso.AnharmonicWithheld)
	}
	if len(iso.Modes) != 4 {
		t.Fatalf("%d modes, want 3N−5 = 4 for a linear triatomic (common practice)", len(iso.Modes))
	}
	// The two bends are degenerate and the symmetric stretch is infrared
	// inactive (symmetry, common practice); the antisymmetric stretch is
	// the strongest band.
	w := func(i int) float64 { return iso.Modes[i].WavenumberCm1 }
	in := func(i int) float64 { return *iso.Modes[i].IntensityKmPerMol }
	if math.Abs(w(0)-w(1)) > 0.01 {
		t.Errorf("bends %.3f and %.3f cm⁻¹, want degenerate", w(0), w(1))
	}
	if in(2) > 1e-3 || in(3) < in(0) {
		t.Errorf("intensities %.4f %.4f %.4f %.4f km/mol: want the symmetric stretch inactive and the antisymmetric one strongest", in(0), in(1), in(2), in(3))
	}
}
