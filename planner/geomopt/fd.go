package geomopt

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sync"
)

// EnergyFunc is the energy (hartree) of the geometry x: 3 Cartesian
// coordinates per atom, in bohr. It must be safe for concurrent use when
// given to [CentralDifference] with parallel > 1.
type EnergyFunc func(ctx context.Context, x []float64) (float64, error)

// DefaultFDStep is the central-difference step (bohr) for gradients of
// energy-only methods. With SCF energies converged to about 1e-12 Eh the
// rounding contribution is ~1e-12/1e-3 = 1e-9 Eh/bohr and the truncation
// error h²/6·E”' about 1e-7 Eh/bohr for valence force constants (common
// practice), well below the default convergence thresholds of the
// optimiser (4.5e-4 Eh/bohr).
const DefaultFDStep = 1e-3

// Displacement is one independent energy calculation of a
// central-difference gradient: coordinate Coord moved by Sign·step.
type Displacement struct {
	Coord int
	Sign  int // +1 or −1
	X     []float64
}

// Displacements lists the 2·len(x) geometries of a central-difference
// gradient with step h (bohr), in the order +x₀, −x₀, +x₁, −x₁, …. Each is
// an independent calculation: a caller may compute them anywhere (other
// goroutines, other processes, a batch queue) and combine the energies with
// [CombineCentral].
func Displacements(x []float64, h float64) []Displacement {
	out := make([]Displacement, 0, 2*len(x))
	for i := range x {
		for _, s := range []int{+1, -1} {
			y := append([]float64(nil), x...)
			y[i] += float64(s) * h
			out = append(out, Displacement{Coord: i, Sign: s, X: y})
		}
	}
	return out
}

// CombineCentral turns the energies of [Displacements] (same order) into
// the gradient g_i = (E(x+h e_i) − E(x−h e_i)) / 2h, hartree/bohr.
func CombineCentral(energies []float64, h float64) ([]float64, error) {
	if len(energies)%2 != 0 {
		return nil, fmt.Errorf("geomopt: central difference: %d energies, want an even number", len(energies))
	}
	g := make([]float64, len(energies)/2)
	for i := range g {
		g[i] = (energies[2*i] - energies[2*i+1]) / (2 * h)
	}
	return g, nil
}

// CentralDifference computes the gradient of f at x by central
// differences with step h (bohr; ≤ 0 means DefaultFDStep), running up to
// parallel displacements at once (≤ 0 means 1). The first failure cancels
// the displacements still running and is returned, wrapped with the
// coordinate it concerns. It returns after every goroutine has exited.
func CentralDifference(ctx context.Context, x []float64, h float64, parallel int, f EnergyFunc) ([]float64, error) {
	if h <= 0 || math.IsNaN(h) {
		h = DefaultFDStep
	}
	parallel = max(parallel, 1)
	disp := Displacements(x, h)
	energies := make([]float64, len(disp))
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	jobs := make(chan int)
	var wg sync.WaitGroup
	var mu sync.Mutex
	var first error
	for range min(parallel, len(disp)) {
		wg.Go(func() {
			for k := range jobs {
				e, err := f(ctx, disp[k].X)
				if err == nil && (math.IsNaN(e) || math.IsInf(e, 0)) {
					err = fmt.Errorf("energy %v", e)
				}
				if err != nil {
					mu.Lock()
					if first == nil {
						first = fmt.Errorf("geomopt: finite-difference displacement of coordinate %d by %+g bohr: %w", disp[k].Coord, float64(disp[k].Sign)*h, err)
					}
					mu.Unlock()
					cancel()
					continue
				}
				energies[k] = e
			}
		})
	}
feed:
	for k := range disp {
		select {
		case jobs <- k:
		case <-ctx.Done():
			break feed
		}
	}
	close(jobs)
	wg.Wait()
	if first != nil {
		return nil, first
	}
	if err := ctx.Err(); err != nil {
		return nil, fmt.Errorf("geomopt: finite-difference gradient: %w", err)
	}
	if len(x) == 0 {
		return nil, errors.New("geomopt: finite-difference gradient of no coordinates")
	}
	return CombineCentral(energies, h)
}
