package hf

import (
	"context"

	"wellscan/planner"
	"wellscan/runner/geomopt"
)

// GradientSource turns the built-in engine into a geometry-optimisation
// objective: each call computes the energy and gradient of Opts.Method
// (analytic for rhf/uhf, central differences for mp2) and starts the SCF
// from the orbitals of the previous call, so successive steps stay on one
// electronic state and converge in few iterations. It is not safe for
// concurrent use (an optimisation is sequential).
type GradientSource struct {
	Opts Options
	// Last is the most recent result (nil before the first call); its
	// orbitals seed the next call. Set Opts.Guess to start the first call
	// from given orbitals.
	Last *GradientResult
	// Calls counts the gradients computed.
	Calls int
}

// Objective returns the objective for geomopt.Optimize.
func (s *GradientSource) Objective() geomopt.Objective {
	return func(ctx context.Context, mol planner.Molecule) (float64, [][3]float64, error) {
		opts := s.Opts
		if s.Last != nil && s.Last.Orbitals != nil {
			opts.Guess = s.Last.Orbitals
			opts.GuessPrevious, opts.GuessPositions = nil, nil
		}
		r, err := Gradient(ctx, mol, opts)
		if err != nil {
			return 0, nil, err
		}
		s.Calls++
		s.Last = r
		return r.Energy, r.Gradient, nil
	}
}

// Optimize minimises the energy of mol with the built-in engine (method,
// basis and SCF settings from opts) by geomopt.Optimize with gopts. It
// returns the optimiser's result and the gradient source (whose Last
// holds the final electronic structure). A result that did not converge
// comes with an error wrapping geomopt.ErrNotConverged.
func Optimize(ctx context.Context, mol planner.Molecule, opts Options, gopts geomopt.Options) (*geomopt.Result, *GradientSource, error) {
	src := &GradientSource{Opts: opts}
	res, err := geomopt.Optimize(ctx, mol, src.Objective(), gopts)
	return res, src, err
}
