package hf

import (
	"context"
	"errors"
	"os"
	"path/filepath"

	"wellscan/planner"
	"wellscan/planner/geomopt"
	"wellscan/runner"
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
			// Later steps are small moves on one state: start from the
			// last orbitals, without the cold-guess checks of the first.
			opts.Guess = s.Last.Orbitals
			opts.GuessPrevious, opts.GuessPositions = nil, nil
			opts.CheckGuesses, opts.ColdIfUnconverged = nil, false
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

// computeRelaxed runs one point of a relaxed scan: the optimiser with the
// scanned coordinates held (geomopt.RelaxPoint), each gradient starting
// from the previous step's orbitals, and the point's orbitals file
// rewritten after every gradient so that a resumed point starts warm.
func (b *Backend) computeRelaxed(ctx context.Context, t runner.Task, opts Options) (runner.Outcome, error) {
	if g, err := readOrbitalsFile(filepath.Join(t.Dir, OrbitalsFile)); err == nil && t.Dir != "" {
		opts.Guess = g // a checkpoint's own orbitals beat the neighbour's
		opts.GuessPrevious, opts.GuessPositions = nil, nil
	}
	src := &GradientSource{Opts: opts}
	obj := src.Objective()
	var orbPath string
	wrapped := func(ctx context.Context, mol planner.Molecule) (float64, [][3]float64, error) {
		e, g, err := obj(ctx, mol)
		if err == nil && src.Last != nil && src.Last.Orbitals != nil && t.Dir != "" {
			if p, werr := writeOrbitalsFile(t.Dir, src.Last.Orbitals); werr == nil {
				orbPath = p
			}
		}
		return e, g, err
	}
	po := runner.RelaxPointOptions{NoNeighbourStart: b.coldRelax}
	if t.GuessPath != "" {
		po.NeighbourDir = filepath.Dir(t.GuessPath)
	}
	pr, err := runner.RelaxPoint(ctx, b.spec, t, wrapped, po)
	if err != nil && !errors.Is(err, geomopt.ErrNotConverged) {
		if ctx.Err() != nil {
			return runner.Outcome{}, ctx.Err()
		}
		if errors.Is(err, ErrNotConverged) {
			return runner.Outcome{Converged: false, Class: runner.ClassSCFNotConverged, Error: err.Error()}, nil
		}
		return runner.Outcome{}, err
	}
	res := pr.Result
	out := runner.Outcome{
		Energy:     res.Energy,
		Converged:  res.Converged,
		Iterations: res.Gradients,
		Flags:      runner.PointFlags{Relaxed: true, FromNeighbour: pr.FromNeighbour},
		Extra: map[string]float64{
			"relax_gradients":          float64(res.Gradients),
			"relax_max_force":          res.MaxForce,
			"relax_rms_force":          res.RMSForce,
			"relax_resumed_at":         float64(pr.ResumedAt),
			"relax_constraint_error":   pr.MaxConstraintError,
			"relax_gradients_computed": float64(src.Calls),
		},
	}
	if l := src.Last; l != nil && l.Reference == UHF {
		s2 := l.S2
		out.SSquared = &s2
	}
	if !res.Converged {
		out.Class = runner.ClassRelaxNotConverged
		out.Error = res.Reason
		return out, nil
	}
	if orbPath == "" {
		if _, err := os.Stat(filepath.Join(t.Dir, OrbitalsFile)); err == nil {
			orbPath = filepath.Join(t.Dir, OrbitalsFile)
		}
	}
	out.Orbitals = orbPath
	return out, nil
}

// WithoutNeighbourGeometry returns a copy of b whose relaxed points start
// from their rigid geometry and the model Hessian, ignoring finished
// neighbours (the orbitals guess is kept). It exists to measure what the
// neighbour start saves.
func (b *Backend) WithoutNeighbourGeometry() *Backend {
	nb := *b
	nb.coldRelax = true
	return &nb
}
