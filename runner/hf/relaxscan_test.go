package hf_test

import (
	"context"
	"fmt"
	"math"
	"strings"
	"testing"

	"wellscan/planner"
	"wellscan/planner/geomopt"
	"wellscan/runner"
	"wellscan/runner/hf"
)

// kcalPerHartree converts hartree to kcal/mol: 627.5094740631 (CODATA
// 2018 hartree energy and the thermochemical calorie, 4.184 J).
const kcalPerHartree = 627.5094740631

// optimisedXYZ optimises mol at RHF/6-31G* and returns its geometry as
// spec geometry lines (Å).
func optimisedGeometry(t testing.TB, mol planner.Molecule) (string, planner.Molecule) {
	t.Helper()
	res, _, err := hf.Optimize(context.Background(), mol, hf.Options{Method: hf.RHF, Basis: lookupBasisTB(t, "6-31G*"), Workers: 2},
		geomopt.Options{Criteria: geomopt.Criteria{}.Tight(10)})
	if err != nil {
		t.Fatal(err)
	}
	var b strings.Builder
	for _, a := range res.Mol.Atoms {
		fmt.Fprintf(&b, "%s %.10f %.10f %.10f\n", a.Element.Symbol, a.Pos[0]*planner.BohrInAngstrom, a.Pos[1]*planner.BohrInAngstrom, a.Pos[2]*planner.BohrInAngstrom)
	}
	return b.String(), res.Mol
}

func torsionSpec(geom, torsion, values string, relax bool) string {
	return fmt.Sprintf(`title = "torsion"
[molecule]
geometry = """
%s"""
[[scan]]
name = "phi"
torsion = %s
values = %s
relax = %v
[refine]
adaptive = false
[engine]
kind = "builtin"
method = "rhf"
basis = "6-31G*"
[queue]
kind = "local"
workers = 2
`, geom, torsion, values, relax)
}

// angstromMolTB is a neutral singlet from symbols and positions in Å.
func angstromMolTB(tb testing.TB, syms []string, pos [][3]float64) planner.Molecule {
	tb.Helper()
	var atoms []planner.Atom
	for i, s := range syms {
		el, err := planner.ElementBySymbol(s)
		if err != nil {
			tb.Fatal(err)
		}
		atoms = append(atoms, planner.NewAtom(el, [3]float64{pos[i][0] / planner.BohrInAngstrom, pos[i][1] / planner.BohrInAngstrom, pos[i][2] / planner.BohrInAngstrom}))
	}
	m, err := planner.NewMolecule(atoms, 0, 1)
	if err != nil {
		tb.Fatal(err)
	}
	return m
}

func byKey(t *testing.T, recs []runner.PointRecord) map[string]runner.PointRecord {
	t.Helper()
	out := map[string]runner.PointRecord{}
	for _, r := range recs {
		if r.State != runner.Done {
			t.Fatalf("point %s: %s (%s): %s", r.Key, r.State, r.Class, r.LastError)
		}
		out[r.Key] = r
	}
	return out
}

// TestRelaxedScan_EthaneBarrier runs the eclipsed (0°) and staggered (60°)
// points of the H–C–C–H torsion of ethane at RHF/6-31G*, rigid and
// relaxed, from the optimised staggered geometry. The relaxed barrier must
// lie below the rigid one and near 3.0 kcal/mol (published HF/6-31G*
// barriers, from memory; the issue measured 2.986 relaxed, 3.133 rigid),
// and the torsion must be held exactly.
func TestRelaxedScan_EthaneBarrier(t *testing.T) {
	if testing.Short() {
		t.Skip("ethane optimisations")
	}
	s := 1.09 / math.Sqrt(3) // our own rough staggered start, Å
	c := 0.765
	start := angstromMol(t, 0, 1, []string{"C", "C", "H", "H", "H", "H", "H", "H"}, [][3]float64{
		{0, 0, c}, {0, 0, -c},
		{s * math.Sqrt2, 0, c + s}, {-s / math.Sqrt2, s * math.Sqrt(1.5), c + s}, {-s / math.Sqrt2, -s * math.Sqrt(1.5), c + s},
		{-s * math.Sqrt2, 0, -c - s}, {s / math.Sqrt2, s * math.Sqrt(1.5), -c - s}, {s / math.Sqrt2, -s * math.Sqrt(1.5), -c - s},
	})
	geom, _ := optimisedGeometry(t, start)
	rigid := byKey(t, runScanText(t, torsionSpec(geom, "[3, 1, 2, 6]", "[0, 60]", false), 2, func(b *hf.Backend) runner.Backend { return b }))
	relaxed := byKey(t, runScanText(t, torsionSpec(geom, "[3, 1, 2, 6]", "[0, 60]", true), 2, func(b *hf.Backend) runner.Backend { return b }))
	bRigid := (*rigid["phi=0.000"].Energy - *rigid["phi=60.000"].Energy) * kcalPerHartree
	bRelax := (*relaxed["phi=0.000"].Energy - *relaxed["phi=60.000"].Energy) * kcalPerHartree
	t.Logf("ethane RHF/6-31G*: rigid barrier %.3f kcal/mol, relaxed %.3f kcal/mol; gradients at 0°: %v", bRigid, bRelax, relaxed["phi=0.000"].Extra["relax_gradients"])
	if !(bRelax < bRigid) {
		t.Errorf("relaxed barrier %.3f not below rigid %.3f kcal/mol", bRelax, bRigid)
	}
	// Published HF/6-31G* ethane barriers ≈ 3.0 kcal/mol (from memory);
	// 0.15 kcal/mol covers the spread of the quoted values.
	if math.Abs(bRelax-3.0) > 0.15 {
		t.Errorf("relaxed barrier %.3f kcal/mol, want about 3.0", bRelax)
	}
	for k, r := range relaxed {
		// 1e-4° is the bound; the optimiser holds 1e-10 rad.
		if e := r.Extra["relax_constraint_error"] * 180 / math.Pi; e > 1e-4 {
			t.Errorf("point %s: held torsion off by %.2e°", k, e)
		}
		if !r.Flags.Relaxed {
			t.Errorf("point %s not marked relaxed", k)
		}
	}
}

// TestRelaxedScan_H2O2Barriers checks the trans (180°) and cis (0°)
// barriers of H2O2 at RHF/6-31G*, measured from the fully optimised
// molecule: relaxed barriers must lie below the rigid ones (a relaxed
// point's energy is a constrained minimum over the rigid geometry's
// neighbourhood). The independent measurement (rigid 1.085 and
// 10.47, relaxed 0.946 and 9.15 kcal/mol) is the cross-check, within 0.05
// kcal/mol.
func TestRelaxedScan_H2O2Barriers(t *testing.T) {
	if testing.Short() {
		t.Skip("H2O2 optimisations")
	}
	start := angstromMol(t, 0, 1, []string{"O", "O", "H", "H"}, [][3]float64{
		{0, 0.70, 0}, {0, -0.70, 0}, {0.90, 0.85, 0.30}, {-0.35, -0.85, 0.85}}) // our own rough start
	geom, opt := optimisedGeometry(t, start)
	eMin := 0.0
	{
		r, err := hf.Energy(context.Background(), opt, hf.Options{Method: hf.RHF, Basis: lookupBasis(t, "6-31G*"), Workers: 2})
		if err != nil {
			t.Fatal(err)
		}
		eMin = r.Energy
	}
	rigid := byKey(t, runScanText(t, torsionSpec(geom, "[3, 1, 2, 4]", "[0, 180]", false), 2, func(b *hf.Backend) runner.Backend { return b }))
	relaxed := byKey(t, runScanText(t, torsionSpec(geom, "[3, 1, 2, 4]", "[0, 180]", true), 2, func(b *hf.Backend) runner.Backend { return b }))
	bar := func(m map[string]runner.PointRecord, k string) float64 { return (*m[k].Energy - eMin) * kcalPerHartree }
	rc, rt := bar(rigid, "phi=0.000"), bar(rigid, "phi=180.000")
	xc, xt := bar(relaxed, "phi=0.000"), bar(relaxed, "phi=180.000")
	t.Logf("H2O2 RHF/6-31G*: trans rigid %.3f relaxed %.3f; cis rigid %.2f relaxed %.2f kcal/mol", rt, xt, rc, xc)
	if !(xt < rt && xc < rc) {
		t.Errorf("relaxed barriers (trans %.3f, cis %.2f) not below rigid (%.3f, %.2f) kcal/mol", xt, xc, rt, rc)
	}
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"rigid trans", rt, 1.085}, {"rigid cis", rc, 10.47}, // issue 17 measurement
		{"relaxed trans", xt, 0.946}, {"relaxed cis", xc, 9.15}, // issue 17 measurement
	} {
		// 0.05 kcal/mol: the numbers come from another optimiser
		// and rounding; geometry differences of 1e-4 Å move barriers less.
		if math.Abs(c.got-c.want) > 0.05 {
			t.Errorf("%s barrier %.3f kcal/mol, issue measured %.3f", c.name, c.got, c.want)
		}
	}
}

// TestRelaxedScan_TiedBonds relaxes H2O2 (RHF/STO-3G, our own rough
// start) at a torsion of 75° with the two O–H bonds and the two O–O–H
// bends tied: the tied pairs must come out equal to 1e-8 (bohr, rad),
// the torsion held.
func TestRelaxedScan_TiedBonds(t *testing.T) {
	text := `[molecule]
geometry = """
O 0 0.70 0
O 0 -0.70 0
H 0.90 0.85 0.30
H -0.35 -0.85 0.85
"""
[[scan]]
name = "phi"
torsion = [3, 1, 2, 4]
values = [75]
relax = true
[relax]
tie = [[[1, 3], [2, 4]], [[2, 1, 3], [1, 2, 4]]]
[refine]
adaptive = false
[engine]
kind = "builtin"
method = "rhf"
basis = "sto-3g"
`
	recs := byKey(t, runScanText(t, text, 1, func(b *hf.Backend) runner.Backend { return b }))
	r := recs["phi=75.000"]
	if e := r.Extra["relax_constraint_error"]; e > 1e-8 { // ties and the torsion, bohr or rad
		t.Errorf("largest constraint error %.2e", e)
	}
	if !r.Flags.Relaxed || r.Energy == nil {
		t.Fatalf("point not relaxed: %+v", r)
	}
}
