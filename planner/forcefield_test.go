package planner

import (
	"math"
	"strconv"
	"strings"
	"testing"
)

const ffWater = `
title = "water force field"
[molecule]
geometry = """
O  0.000000  0.000000  0.117300
H  0.000000  0.757200 -0.469200
H  0.000000 -0.757200 -0.469200
"""
[engine]
kind = "builtin"
method = "rhf"
basis = "6-31G*"
[forcefield]
order = "quartic"
%s
`

const ffFormaldehyde = `
[molecule]
geometry = """
C  0.000000  0.000000 -0.529000
O  0.000000  0.000000  0.678000
H  0.000000  0.935000 -1.120000
H  0.000000 -0.935000 -1.120000
"""
[engine]
kind = "builtin"
method = "rhf"
basis = "sto-3g"
[forcefield]
%s
`

func decodeFF(t *testing.T, tmpl, extra string) *Spec {
	t.Helper()
	s, err := Decode([]byte(strings.Replace(tmpl, "%s", extra, 1)), "scan.toml")
	if err != nil {
		t.Fatal(err)
	}
	if s.ForceField() == nil {
		t.Fatal("no force field")
	}
	return s
}

// orbits counts the distinct step patterns of a stencil under a group
// whose operations multiply the step of each mode by that mode's
// character: an independent count from a hand-written character table.
func orbits(stencil [][]int, chars [][]int) int {
	seen := map[string]bool{}
	count := 0
	for _, s := range stencil {
		canon := ""
		for _, g := range chars {
			img := make([]int, len(s))
			for i := range s {
				img[i] = s[i] * g[i]
			}
			k := fmtInts(img)
			if canon == "" || k < canon {
				canon = k
			}
		}
		if !seen[canon] {
			seen[canon] = true
			count++
		}
	}
	return count
}

func fmtInts(v []int) string {
	var b strings.Builder
	for _, x := range v {
		b.WriteString(" ")
		b.WriteString(strings.Repeat("+", max(0, x)) + strings.Repeat("-", max(0, -x)) + "0")
	}
	return b.String()
}

func hessStencil(n int) [][]int {
	out := [][]int{make([]int, n)}
	for i := range n {
		for _, s := range []int{1, -1} {
			v := make([]int, n)
			v[i] = s
			out = append(out, v)
		}
	}
	for i := range n {
		for j := i + 1; j < n; j++ {
			for _, si := range []int{1, -1} {
				for _, sj := range []int{1, -1} {
					v := make([]int, n)
					v[i], v[j] = si, sj
					out = append(out, v)
				}
			}
		}
	}
	return out
}

func TestCountForceField_WaterC2v(t *testing.T) {
	s := decodeFF(t, ffWater, "")
	ff := s.ForceField()
	if len(ff.Ops) != 4 {
		t.Fatalf("%d symmetry operations, want 4 (C2v, common practice)", len(ff.Ops))
	}
	c, err := s.CountForceField()
	if err != nil {
		t.Fatal(err)
	}
	// C2v water: vibrations 2 A1 + 1 B2 (Wilson, Decius & Cross 1955, ch. 6);
	// the B2 mode changes sign under C2 and σ(xz), the A1 modes under none.
	// Characters per operation (E, C2, σ, σ'), modes ordered A1, A1, B2
	// — the basis order does not matter for the count.
	chars := [][]int{{1, 1, 1}, {1, 1, -1}, {1, 1, -1}, {1, 1, 1}}
	wantHess := orbits(hessStencil(3), chars)
	wantQFF := orbits(quarticStencil(3), chars)
	if c.HessAll != 19 || c.HessComputed != wantHess {
		t.Errorf("stage 1: %d of %d computed, want %d of 19 (1 + 2n + 4·n(n−1)/2, n = 3)", c.HessComputed, c.HessAll, wantHess)
	}
	if len(c.QuarticAll) != 1 || c.QuarticAll[0] != 32 || c.QuarticComputed[0] != wantQFF {
		t.Errorf("stage 2: %v of %v computed, want %d of 32 (4n + 4·n(n−1)/2 + 8·n(n−1)(n−2)/6)", c.QuarticComputed, c.QuarticAll, wantQFF)
	}
	t.Logf("water: stage 1 %d/%d, stage 2 %d/%d (computed/all)", c.HessComputed, c.HessAll, c.QuarticComputed[0], c.QuarticAll[0])

	s2 := decodeFF(t, ffWater, "symmetry = false")
	c2, err := s2.CountForceField()
	if err != nil {
		t.Fatal(err)
	}
	if c2.HessComputed != 19 || c2.QuarticComputed[0] != 32 {
		t.Errorf("without symmetry: %d and %d computed, want 19 and 32", c2.HessComputed, c2.QuarticComputed[0])
	}
}

func TestCountForceField_FormaldehydeC2v(t *testing.T) {
	s := decodeFF(t, ffFormaldehyde, "")
	c, err := s.CountForceField()
	if err != nil {
		t.Fatal(err)
	}
	// H2CO (C2v): 3 A1 + 1 B1 + 2 B2 (WDC 1955 / common practice). Characters
	// (E, C2, σv(xz), σv'(yz)): A1 (1,1,1,1), B1 (1,−1,1,−1), B2 (1,−1,−1,1).
	a1, b1, b2 := []int{1, 1, 1, 1}, []int{1, -1, 1, -1}, []int{1, -1, -1, 1}
	species := [][]int{a1, a1, a1, b1, b2, b2}
	chars := make([][]int, 4)
	for g := range 4 {
		for _, sp := range species {
			chars[g] = append(chars[g], sp[g])
		}
	}
	wantHess := orbits(hessStencil(6), chars)
	wantQFF := orbits(quarticStencil(6), chars)
	if c.HessAll != 73 || c.HessComputed != wantHess {
		t.Errorf("stage 1: %d of %d computed, want %d of 73", c.HessComputed, c.HessAll, wantHess)
	}
	if c.QuarticAll[0] != 244 || c.QuarticComputed[0] != wantQFF {
		t.Errorf("stage 2: %d of %d computed, want %d of 244", c.QuarticComputed[0], c.QuarticAll[0], wantQFF)
	}
	t.Logf("formaldehyde: stage 1 %d/%d, stage 2 %d/%d (computed/all)", c.HessComputed, c.HessAll, c.QuarticComputed[0], c.QuarticAll[0])
}

func TestForceField_IsotopologueModes(t *testing.T) {
	s := decodeFF(t, ffWater, `
[[forcefield.isotopologue]]
name = "HDO"
isotopes = { 2 = "2H" }
quartic = true
`)
	// Energies do not depend on masses: the geometric operations stay C2v.
	if got := len(s.ForceField().Ops); got != 4 {
		t.Errorf("%d operations for H2O+HDO, want 4", got)
	}
	c, err := s.CountForceField()
	if err != nil {
		t.Fatal(err)
	}
	if len(c.QuarticAll) != 2 || c.QuarticNames[1] != "HDO" {
		t.Fatalf("quartic sets %v", c.QuarticNames)
	}
	// HDO's modes are symmetric only under the molecular plane, which maps
	// every in-plane displacement onto itself: no savings for its stage 2;
	// the parent's stage 1 keeps its C2v savings.
	if c.HessComputed != 14 || c.QuarticComputed[1] != 32 {
		t.Errorf("%d and %d computed, want 14 and 32", c.HessComputed, c.QuarticComputed[1])
	}
}

func TestForceField_Keys(t *testing.T) {
	s := decodeFF(t, ffWater, "")
	pts := s.InitialPoints()
	if pts[0].Key != "hess.ref" {
		t.Errorf("first key %q", pts[0].Key)
	}
	for _, p := range pts {
		q, err := s.ParseKey(p.Key)
		if err != nil || q.Key != p.Key || len(q.Values) != 9 {
			t.Errorf("ParseKey(%q) = %v, %v", p.Key, q, err)
		}
		if _, err := s.Geometry(p); err != nil {
			t.Error(err)
		}
	}
	if _, err := s.ParseKey("qff.q1=+1"); err == nil {
		t.Error("stage-2 key parsed without stage-1 results")
	}
}

func TestForceField_BadInput(t *testing.T) {
	for _, tc := range []struct{ extra, want string }{
		{`order = "sextic"`, "forcefield.order"},
		{`hessian_step = 5.0`, "forcefield.hessian_step"},
		{"[[forcefield.isotopologue]]\nname = \"a b\"\nisotopes = { 2 = \"2H\" }", "forcefield.isotopologue[1].name"},
		{"[[forcefield.isotopologue]]\nname = \"x\"\nisotopes = { 1 = \"2H\" }", "atom 1 is O"},
		{"[[forcefield.isotopologue]]\nname = \"x\"\nisotopes = { 7 = \"2H\" }", "atom number from 1 to 3"},
	} {
		_, err := Decode([]byte(strings.Replace(ffWater, "%s", tc.extra, 1)), "scan.toml")
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: err = %v, want it to mention %q", tc.extra, err, tc.want)
		}
	}
}

func TestRefineFF_ImaginaryStopsBeforeStage2(t *testing.T) {
	// Energies of a quadratic form with a negative curvature along the
	// first basis vector (a saddle point): stage 2 must not be planned, and
	// the reason must say why.
	s := decodeFF(t, ffWater, "")
	ff := s.ForceField()
	masses := ff.Isos[0].Masses
	energy := func(disp []float64) float64 {
		e := 0.0
		for a, d := range ff.Basis {
			c := 0.0
			for i := range d {
				c += d[i] * math.Sqrt(masses[i/3]) * disp[i]
			}
			lam := 0.1 * float64(a+1)
			if a == 0 {
				lam = -0.05
			}
			e += 0.5 * lam * c * c
		}
		return e
	}
	var done []Sample
	for _, p := range s.InitialPoints() {
		done = append(done, Sample{Key: p.Key, Values: p.Values, Energy: energy(p.Values)})
	}
	plan := Refine(s, done, 1)
	if plan.Status != RefineStalled || !strings.Contains(plan.Reason, "imaginary") {
		t.Errorf("Refine = %s: %s; want stalled with an imaginary mode", plan.Status, plan.Reason)
	}
}

func TestForceField_SizeLimits(t *testing.T) {
	var b strings.Builder
	for i := range 21 {
		b.WriteString("C " + itoa(i*2) + " 0 0\n")
	}
	spec := "[molecule]\ngeometry = \"\"\"\n" + b.String() + "\"\"\"\n[engine]\nkind = \"builtin\"\nmethod = \"rhf\"\nbasis = \"STO-3G\"\n[forcefield]\n"
	if _, err := Decode([]byte(spec), "scan.toml"); err == nil || !strings.Contains(err.Error(), "at most 20") {
		t.Errorf("21-atom quartic force field: err = %v", err)
	}
	if _, err := Decode([]byte(spec+"order = \"harmonic\"\n"), "scan.toml"); err != nil {
		t.Errorf("21-atom harmonic force field: %v", err)
	}
}

func itoa(i int) string { return strconv.Itoa(i) }
