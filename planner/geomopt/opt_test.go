package geomopt

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"wellscan/planner"
)

func mol(t testing.TB, syms []string, pos [][3]float64) planner.Molecule {
	t.Helper()
	var atoms []planner.Atom
	for i, s := range syms {
		el, err := planner.ElementBySymbol(s)
		if err != nil {
			t.Fatal(err)
		}
		atoms = append(atoms, planner.NewAtom(el, pos[i]))
	}
	m, err := planner.NewMolecule(atoms, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// TestPrim_WilsonRowsMatchDifferences checks every B-matrix row against
// central differences of the coordinate values (independent computation)
// on a random, seeded geometry.
func TestPrim_WilsonRowsMatchDifferences(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	t.Log("seed 3/5")
	x := make([]float64, 12)
	for i := range x {
		x[i] = 3 * (rng.Float64() - 0.5)
	}
	prims := []Prim{
		{PrimBond, []int{0, 1}}, {PrimAngle, []int{0, 1, 2}}, {PrimAngle, []int{3, 2, 1}},
		{PrimTorsion, []int{0, 1, 2, 3}}, {PrimTorsion, []int{3, 1, 0, 2}}, {PrimCart, []int{2, 1}},
	}
	const h = 1e-6 // bohr
	for _, p := range prims {
		_, g := p.valueGrad(x, true)
		atoms := p.Atoms
		if p.Kind == PrimCart {
			atoms = atoms[:1]
		}
		for k, a := range atoms {
			for d := range 3 {
				xp := append([]float64(nil), x...)
				xm := append([]float64(nil), x...)
				xp[3*a+d] += h
				xm[3*a+d] -= h
				fd := p.diff(p.Value(xp), p.Value(xm)) / (2 * h) // independent: central difference
				// 1e-7: O(h²) truncation plus 1e-16/h rounding (common practice).
				if math.Abs(fd-g[k][d]) > 1e-7 {
					t.Errorf("%v: ∂/∂x[%d][%d] = %.9f, difference %.9f", p, a, d, g[k][d], fd)
				}
			}
		}
	}
}

// TestPrim_TorsionMatchesPlanner checks that the optimiser measures a
// torsion with the sign convention of the scan coordinates.
func TestPrim_TorsionMatchesPlanner(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 1))
	for range 20 {
		var pos [][3]float64
		x := make([]float64, 12)
		for a := range 4 {
			var p [3]float64
			for d := range 3 {
				p[d] = 3 * (rng.Float64() - 0.5)
				x[3*a+d] = p[d]
			}
			pos = append(pos, p)
		}
		m := mol(t, []string{"H", "C", "C", "H"}, pos)
		c := planner.Coordinate{Kind: planner.KindTorsion, Members: [][]int{{0, 1, 2, 3}}}
		want := c.Measure(m, 0) // independent: planner's own dihedral
		got := Prim{PrimTorsion, []int{0, 1, 2, 3}}.Value(x)
		if math.Abs(math.Remainder(got-want, 2*math.Pi)) > 1e-12 {
			t.Fatalf("torsion = %.12f, planner says %.12f", got, want)
		}
	}
}

// harmonicModel is a triatomic force field of our own: bonds
// k_r/2 (r − r0)², bend k_θ/2 (θ − θ0)², minimum at r0, θ0 exactly.
type harmonicModel struct{ kr, r0, kt, t0 float64 }

func (h harmonicModel) objective(calls *int) Objective {
	return func(ctx context.Context, m planner.Molecule) (float64, [][3]float64, error) {
		*calls++
		x := flatten(m)
		g := make([][3]float64, 3)
		var e float64
		for _, b := range [][]int{{0, 1}, {0, 2}} {
			p := Prim{PrimBond, b}
			r, d := p.valueGrad(x, true)
			e += 0.5 * h.kr * (r - h.r0) * (r - h.r0)
			for k, a := range b {
				for c := range 3 {
					g[a][c] += h.kr * (r - h.r0) * d[k][c]
				}
			}
		}
		p := Prim{PrimAngle, []int{1, 0, 2}}
		th, d := p.valueGrad(x, true)
		e += 0.5 * h.kt * (th - h.t0) * (th - h.t0)
		for k, a := range p.Atoms {
			for c := range 3 {
				g[a][c] += h.kt * (th - h.t0) * d[k][c]
			}
		}
		return e, g, nil
	}
}

func TestOptimize_HarmonicModel(t *testing.T) {
	model := harmonicModel{kr: 1.1, r0: 1.81, kt: 0.35, t0: 104.5 * math.Pi / 180} // our own force field
	start := mol(t, []string{"O", "H", "H"}, [][3]float64{{0, 0, 0}, {1.6, 0.3, 0.1}, {-0.6, 1.9, -0.2}})
	calls := 0
	res, err := Optimize(context.Background(), start, model.objective(&calls), Options{Criteria: Criteria{}.Tight(100)})
	if err != nil {
		t.Fatal(err)
	}
	x := flatten(res.Mol)
	r1 := Prim{PrimBond, []int{0, 1}}.Value(x)
	th := Prim{PrimAngle, []int{1, 0, 2}}.Value(x)
	// Exact minimum of the model (the force field's own parameters); the
	// tightened criteria give ~1e-6 accuracy.
	if math.Abs(r1-model.r0) > 1e-5 || math.Abs(th-model.t0) > 1e-5 {
		t.Errorf("minimum r = %.7f bohr, θ = %.5f°; want %.5f, %.5f", r1, th*180/math.Pi, model.r0, model.t0*180/math.Pi)
	}
	if calls != res.Gradients {
		t.Errorf("objective called %d times, result counts %d gradients", calls, res.Gradients)
	}
	t.Logf("harmonic model: %d gradients", res.Gradients)

	// Constrained: θ held at 95°; the bonds still relax to r0 (the model
	// has no bond–bend coupling), and the bend stays exactly at 95°.
	hold := 95 * math.Pi / 180
	calls = 0
	res, err = Optimize(context.Background(), start, model.objective(&calls), Options{
		Criteria:    Criteria{}.Tight(100),
		Constraints: []Constraint{{Prim: Prim{PrimAngle, []int{1, 0, 2}}, Value: hold}},
	})
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range res.State.Trajectory {
		th := Prim{PrimAngle, []int{1, 0, 2}}.Value(f.X)
		// 1e-4° is the bound on constraints; we hold 1e-10 rad.
		if math.Abs(th-hold)*180/math.Pi > 1e-8 {
			t.Fatalf("constrained bend %.10f° at a step, want 95°", th*180/math.Pi)
		}
	}
	x = flatten(res.Mol)
	if r := (Prim{PrimBond, []int{0, 2}}).Value(x); math.Abs(r-model.r0) > 1e-5 {
		t.Errorf("constrained optimisation: r = %.7f bohr, want %.5f (the model's r0)", r, model.r0)
	}
}

func TestOptimize_NotConvergedIsLoud(t *testing.T) {
	model := harmonicModel{kr: 1.1, r0: 1.81, kt: 0.35, t0: 104.5 * math.Pi / 180}
	start := mol(t, []string{"O", "H", "H"}, [][3]float64{{0, 0, 0}, {1.6, 0.3, 0.1}, {-0.6, 1.9, -0.2}})
	calls := 0
	res, err := Optimize(context.Background(), start, model.objective(&calls), Options{MaxSteps: 2})
	if !errors.Is(err, ErrNotConverged) {
		t.Fatalf("2-step limit: error %v, want ErrNotConverged", err)
	}
	if res == nil || res.Converged || res.Reason == "" {
		t.Fatalf("2-step limit: result %+v, want an unconverged result with a reason", res)
	}
}

// TestOptimize_LoneAtomRefused: one atom has no internal coordinates; the
// optimiser says so instead of failing inside the linear algebra.
func TestOptimize_LoneAtomRefused(t *testing.T) {
	model := harmonicModel{kr: 1.1, r0: 1.81, kt: 0.35, t0: 104.5 * math.Pi / 180}
	calls := 0
	_, err := Optimize(context.Background(), mol(t, []string{"H"}, [][3]float64{{0, 0, 0}}), model.objective(&calls), Options{})
	if err == nil || !strings.Contains(err.Error(), "lone atom") || calls != 0 {
		t.Errorf("one atom: error %v after %d gradients, want a lone-atom refusal before any", err, calls)
	}
}

// TestOptimize_ResumeRepeatsNothing interrupts an optimisation after each
// checkpoint in turn (JSON round trip), resumes, and requires the same
// final geometry and no extra gradients.
func TestOptimize_ResumeRepeatsNothing(t *testing.T) {
	model := harmonicModel{kr: 1.1, r0: 1.81, kt: 0.35, t0: 104.5 * math.Pi / 180}
	start := mol(t, []string{"O", "H", "H"}, [][3]float64{{0, 0, 0}, {1.6, 0.3, 0.1}, {-0.6, 1.9, -0.2}})
	calls := 0
	full, err := Optimize(context.Background(), start, model.objective(&calls), Options{})
	if err != nil {
		t.Fatal(err)
	}
	for stop := 1; stop < full.Gradients; stop++ {
		var saved []byte
		stopErr := errors.New("killed")
		calls1 := 0
		_, err := Optimize(context.Background(), start, model.objective(&calls1), Options{OnStep: func(s *State) error {
			b, err := json.Marshal(s)
			if err != nil {
				return err
			}
			saved = b
			if s.Gradients == stop {
				return stopErr
			}
			return nil
		}})
		if !errors.Is(err, stopErr) {
			t.Fatalf("stop %d: %v", stop, err)
		}
		var st State
		if err := json.Unmarshal(saved, &st); err != nil {
			t.Fatal(err)
		}
		calls2 := 0
		res, err := Optimize(context.Background(), start, model.objective(&calls2), Options{Resume: &st})
		if err != nil {
			t.Fatal(err)
		}
		if calls1+calls2 != full.Gradients {
			t.Errorf("stop %d: %d + %d gradients, uninterrupted run %d", stop, calls1, calls2, full.Gradients)
		}
		if res.Energy != full.Energy { // deterministic: exact equality intended
			t.Errorf("stop %d: energy %.15g, uninterrupted %.15g", stop, res.Energy, full.Energy)
		}
	}
}

// TestOptimize_TiedBonds ties the two bonds of an asymmetric model of our
// own (different r0) to each other: they must stay equal and settle at the
// value that minimises the sum of both terms, (k1 r1 + k2 r2)/(k1 + k2)
// (the closed-form minimum of two springs forced to one length).
func TestOptimize_TiedBonds(t *testing.T) {
	const k1, r1, k2, r2, kt, t0 = 1.1, 1.70, 0.6, 1.95, 0.35, 1.8
	f := func(ctx context.Context, m planner.Molecule) (float64, [][3]float64, error) {
		x := flatten(m)
		g := make([][3]float64, 3)
		var e float64
		for i, b := range [][]int{{0, 1}, {0, 2}} {
			k, r0 := []float64{k1, k2}[i], []float64{r1, r2}[i]
			p := Prim{PrimBond, b}
			r, d := p.valueGrad(x, true)
			e += 0.5 * k * (r - r0) * (r - r0)
			for j, a := range b {
				for c := range 3 {
					g[a][c] += k * (r - r0) * d[j][c]
				}
			}
		}
		p := Prim{PrimAngle, []int{1, 0, 2}}
		th, d := p.valueGrad(x, true)
		e += 0.5 * kt * (th - t0) * (th - t0)
		for j, a := range p.Atoms {
			for c := range 3 {
				g[a][c] += kt * (th - t0) * d[j][c]
			}
		}
		return e, g, nil
	}
	start := mol(t, []string{"O", "H", "H"}, [][3]float64{{0, 0, 0}, {1.6, 0.3, 0.1}, {-0.6, 1.9, -0.2}})
	tie := Prim{PrimBond, []int{0, 2}}
	res, err := Optimize(context.Background(), start, f, Options{Criteria: Criteria{}.Tight(100),
		Constraints: []Constraint{{Prim: Prim{PrimBond, []int{0, 1}}, Tie: &tie}}})
	if err != nil {
		t.Fatal(err)
	}
	x := flatten(res.Mol)
	a, b := Prim{PrimBond, []int{0, 1}}.Value(x), tie.Value(x)
	want := (k1*r1 + k2*r2) / (k1 + k2) // closed form, see above
	if math.Abs(a-b) > 1e-9 || math.Abs(a-want) > 1e-5 {
		t.Errorf("tied bonds %.7f and %.7f bohr, want both %.7f", a, b, want)
	}
}
