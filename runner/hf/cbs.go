package hf

import (
	"context"
	"errors"
	"fmt"
	"math"
	"regexp"
	"strings"
	"time"

	"wellscan/planner"
	"wellscan/runner/hf/basis"
)

// Basis-set limit by two-point extrapolation, with an optional
// core–valence correction, as an engine method.
//
// With cardinal numbers X < Y of two correlation-consistent sets (3 and 4
// for cc-pVTZ and cc-pVQZ):
//
//	E_corr(∞) = (Y³ E_corr(Y) − X³ E_corr(X)) / (Y³ − X³)          [Helgaker et al. 1997]
//	E_HF(∞)   = (E_HF(Y) f(X) − E_HF(X) f(Y)) / (f(X) − f(Y)),
//	            f(n) = (n + 1) e^{−9√n}                           [Karton and Martin 2006]
//
// (the second is the two-point solution of E_HF(n) = E_HF(∞) + A f(n)).
// The correlation energy extrapolated is that of the method: MP2, CCSD,
// or CCSD plus (T). With a core basis (cc-pCVTZ), the core–valence
// correction ΔE_core = E(all electrons) − E(frozen core), both computed
// with the method in that basis, is added to the limit.
//
// Every component is an independent calculation (its own integrals, SCF
// and correlation treatment; [LimitRecipe.Components] lists them and
// [CombineLimit] turns their energies into the limit), so that a queue
// could run them as separate tasks. [ComputeLimit] runs them one after
// the other in one process.
//
// References:
//   - T. Helgaker, W. Klopper, H. Koch and J. Noga, J. Chem. Phys. 106, 9639 (1997),
//     doi:10.1063/1.473863 (X⁻³ extrapolation of the correlation energy).
//   - A. Halkier, T. Helgaker, P. Jørgensen, W. Klopper, H. Koch, J. Olsen and A. K. Wilson,
//     Chem. Phys. Lett. 286, 243 (1998), doi:10.1016/S0009-2614(98)00111-0 (two-point form).
//   - A. Karton and J. M. L. Martin, Theor. Chem. Acc. 115, 330 (2006),
//     doi:10.1007/s00214-005-0028-6 (HF extrapolation, E(n) = E(∞) + A (n+1) e^{−9√n}).
//   - D. E. Woon and T. H. Dunning, J. Chem. Phys. 103, 4572 (1995), doi:10.1063/1.470645
//     (cc-pCVXZ core–valence sets).
//
// The citations are given from memory.

// LimitRecipe names a basis-set-limit calculation.
type LimitRecipe struct {
	// Method is the correlated method: MP2, CCSD or CCSDT.
	Method Method
	// Small and Large are correlation-consistent basis sets with cardinal
	// numbers X < Y (for example cc-pVTZ and cc-pVQZ).
	Small, Large string
	// Core, if not empty, is a core–valence set (cc-pCVTZ) in which the
	// correction E(all electrons) − E(frozen core) is computed and added.
	Core string
	// FrozenCore applies to the Small and Large calculations (the zero
	// value freezes the noble-gas cores). A core correction needs them
	// frozen.
	FrozenCore FrozenCore
}

// Component names of a LimitRecipe.
const (
	ComponentSmall      = "small"
	ComponentLarge      = "large"
	ComponentCoreAll    = "core_all"
	ComponentCoreFrozen = "core_frozen"
)

// LimitComponent is one independent calculation of a recipe.
type LimitComponent struct {
	Name       string
	Basis      string
	FrozenCore FrozenCore
}

// ComponentEnergy is the outcome of one component calculation (hartree).
type ComponentEnergy struct {
	LimitComponent
	// Reference is the SCF energy, Correlation the correlation energy of
	// the method (for CCSDT: CCSD plus (T), whose part is Triples).
	Reference, Correlation, Triples float64
	// Frozen is the number of frozen orbitals actually used.
	Frozen         int
	BasisFunctions int
	Iterations     int
	Time           time.Duration
}

// LimitResult is the extrapolated energy and its parts (hartree).
type LimitResult struct {
	Recipe LimitRecipe
	// X, Y are the cardinal numbers of Small and Large.
	X, Y int
	// Components in the order of LimitRecipe.Components.
	Components []ComponentEnergy
	// HF and Correlation are the extrapolated parts; CoreCorrection is
	// E(all) − E(frozen) in the core basis (0 without one). Total is
	// their sum.
	HF, Correlation, CoreCorrection, Total float64
}

var cardinalRE = regexp.MustCompile(`(?i)^(?:aug-)?cc-p(?:w?c)?v([dtq5-9])z$`)

// Cardinal returns the cardinal number X of a correlation-consistent set
// name (cc-pVTZ 3, aug-cc-pVQZ 4, cc-pCVTZ 3), or an error for a set that
// has none.
func Cardinal(name string) (int, error) {
	m := cardinalRE.FindStringSubmatch(strings.TrimSpace(name))
	if m == nil {
		return 0, fmt.Errorf("hf: basis %q is not a correlation-consistent set (cc-pVXZ, aug-cc-pVXZ, cc-pCVXZ) and has no cardinal number to extrapolate with", name)
	}
	switch c := strings.ToLower(m[1]); c {
	case "d":
		return 2, nil
	case "t":
		return 3, nil
	case "q":
		return 4, nil
	default:
		return int(c[0] - '0'), nil
	}
}

// Validate checks the recipe: a correlated method, two sets of the same
// family with X < Y, a core set only with frozen cores.
func (r LimitRecipe) Validate() error {
	switch r.Method {
	case MP2, CCSD, CCSDT:
	default:
		return fmt.Errorf("hf: basis-set limit: method %q has no correlation energy to extrapolate (use mp2, ccsd or ccsd(t))", r.Method)
	}
	x, err := Cardinal(r.Small)
	if err != nil {
		return err
	}
	y, err := Cardinal(r.Large)
	if err != nil {
		return err
	}
	if x >= y {
		return fmt.Errorf("hf: basis-set limit: %s (X = %d) must be smaller than %s (X = %d)", r.Small, x, r.Large, y)
	}
	if r.Core != "" {
		if _, err := Cardinal(r.Core); err != nil {
			return err
		}
		if r.FrozenCore == AllElectron {
			return errors.New("hf: basis-set limit: a core correction adds E(all electrons) − E(frozen core), so the two main calculations must freeze the cores")
		}
	}
	return nil
}

// Components lists the independent calculations of the recipe, in the
// order ComputeLimit runs them.
func (r LimitRecipe) Components() []LimitComponent {
	c := []LimitComponent{{ComponentSmall, r.Small, r.FrozenCore}, {ComponentLarge, r.Large, r.FrozenCore}}
	if r.Core != "" {
		c = append(c, LimitComponent{ComponentCoreAll, r.Core, AllElectron}, LimitComponent{ComponentCoreFrozen, r.Core, FrozenCoreAuto})
	}
	return c
}

// String describes the recipe, for example "CCSD(T) frozen core,
// cc-pVTZ/cc-pVQZ → basis-set limit (HF: Karton–Martin; correlation:
// X⁻³) + core–valence correction in cc-pCVTZ".
func (r LimitRecipe) String() string {
	fc := "frozen core"
	if r.FrozenCore == AllElectron {
		fc = "all electrons"
	} else if r.FrozenCore > 0 {
		fc = fmt.Sprintf("%d frozen orbitals", int(r.FrozenCore))
	}
	s := fmt.Sprintf("%s %s, %s/%s → basis-set limit (HF: (X+1)e^(−9√X), Karton–Martin 2006; correlation: X⁻³, Helgaker et al. 1997)", strings.ToUpper(string(r.Method)), fc, r.Small, r.Large)
	if r.Core != "" {
		s += fmt.Sprintf(" + core–valence correction (all electrons − frozen core) in %s", r.Core)
	}
	return s
}

// karton is f(n) = (n + 1) e^{−9√n} of Karton and Martin (2006).
func karton(n int) float64 {
	x := float64(n)
	return (x + 1) * math.Exp(-9*math.Sqrt(x))
}

// CombineLimit turns the component energies (one per entry of
// r.Components(), in any order) into the limit.
func CombineLimit(r LimitRecipe, comps []ComponentEnergy) (*LimitResult, error) {
	if err := r.Validate(); err != nil {
		return nil, err
	}
	x, _ := Cardinal(r.Small)
	y, _ := Cardinal(r.Large)
	out := &LimitResult{Recipe: r, X: x, Y: y}
	byName := map[string]ComponentEnergy{}
	for _, c := range comps {
		byName[c.Name] = c
	}
	for _, want := range r.Components() {
		c, ok := byName[want.Name]
		if !ok {
			return nil, fmt.Errorf("hf: basis-set limit: component %q (%s) missing", want.Name, want.Basis)
		}
		for _, v := range []float64{c.Reference, c.Correlation, c.Triples} {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("hf: basis-set limit: component %q has a non-finite energy", want.Name)
			}
		}
		out.Components = append(out.Components, c)
	}
	s, l := byName[ComponentSmall], byName[ComponentLarge]
	fx, fy := karton(x), karton(y)
	out.HF = (l.Reference*fx - s.Reference*fy) / (fx - fy)
	x3, y3 := float64(x*x*x), float64(y*y*y)
	out.Correlation = (y3*l.Correlation - x3*s.Correlation) / (y3 - x3)
	if r.Core != "" {
		a, f := byName[ComponentCoreAll], byName[ComponentCoreFrozen]
		if a.Frozen != 0 {
			return nil, fmt.Errorf("hf: basis-set limit: the all-electron core calculation froze %d orbitals", a.Frozen)
		}
		// f.Frozen is 0 only for molecules without cores (H2, He): the two
		// calculations are then the same one and the correction is exactly
		// 0 (not the last-bit difference of two parallel runs).
		if f.Frozen != 0 {
			out.CoreCorrection = (a.Reference + a.Correlation) - (f.Reference + f.Correlation)
		}
	}
	out.Total = out.HF + out.Correlation + out.CoreCorrection
	return out, nil
}

// ComputeLimit runs every component of r on mol with Energy (base gives
// the other options; its Basis, Method, FrozenCore and Guess are replaced
// per component) and combines them. A component whose SCF or amplitude
// equations do not converge stops the calculation with its error.
func ComputeLimit(ctx context.Context, mol planner.Molecule, r LimitRecipe, base Options) (*LimitResult, error) {
	if err := r.Validate(); err != nil {
		return nil, err
	}
	var comps []ComponentEnergy
	noCore := false
	if n, _ := FrozenCoreOrbitals(mol); n == 0 {
		noCore = true
	}
	for _, c := range r.Components() {
		if c.Name == ComponentCoreFrozen && noCore && len(comps) > 0 && comps[len(comps)-1].Name == ComponentCoreAll {
			// Nothing to freeze: the frozen-core calculation is the
			// all-electron one just done.
			ce := comps[len(comps)-1]
			ce.LimitComponent = c
			ce.Basis = comps[len(comps)-1].Basis
			comps = append(comps, ce)
			continue
		}
		ce, err := ComputeComponent(ctx, mol, r.Method, c, base)
		if err != nil {
			return nil, err
		}
		comps = append(comps, *ce)
	}
	return CombineLimit(r, comps)
}

// ComputeComponent runs one component calculation of a recipe: method in
// the component's basis with its frozen-core setting.
func ComputeComponent(ctx context.Context, mol planner.Molecule, method Method, c LimitComponent, base Options) (*ComponentEnergy, error) {
	set, err := basis.Lookup(c.Basis)
	if err != nil {
		return nil, fmt.Errorf("hf: basis-set limit, %s: %w", c.Name, err)
	}
	opts := base
	opts.Basis, opts.Method, opts.FrozenCore = set, method, c.FrozenCore
	opts.Guess, opts.GuessPrevious, opts.GuessPositions = nil, nil, nil
	start := time.Now()
	res, err := Energy(ctx, mol, opts)
	if err != nil {
		return nil, fmt.Errorf("hf: basis-set limit, %s calculation (%s/%s): %w", c.Name, method, set.Name(), err)
	}
	ce := &ComponentEnergy{LimitComponent: c, BasisFunctions: res.BasisFunctions, Iterations: res.Iterations, Time: time.Since(start)}
	ce.Basis = set.Name()
	switch {
	case res.CC != nil:
		ce.Reference, ce.Correlation, ce.Triples, ce.Frozen = res.CC.ReferenceEnergy, res.CC.Correlation+res.CC.Triples, res.CC.Triples, res.CC.FrozenCore
	case res.MP2 != nil:
		ce.Reference, ce.Correlation, ce.Frozen = res.MP2.ReferenceEnergy, res.MP2.Correlation, res.MP2.FrozenCore
	default:
		return nil, fmt.Errorf("hf: basis-set limit, %s: no correlation energy", c.Name)
	}
	return ce, nil
}
