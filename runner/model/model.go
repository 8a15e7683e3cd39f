// Package model is a backend of analytic model potentials — Morse,
// Lennard-Jones, harmonic and a quartic double well — in the scanned
// coordinates, for tests, demos and checking a pipeline without an
// electronic-structure calculation.
//
// # Units
//
// Constants and coordinates are atomic units: energies in hartree,
// lengths in bohr, angles in radians (the spec documents each constant).
//
// # Continuation guesses
//
// Each point writes a small state file (its coordinate values) and
// reports it as its orbitals file, so the runner's nearest-neighbour
// guess plumbing is exercised end to end: the distance to the neighbour a
// point was started from is reported as the extra value
// "guess_distance" (−1 for a cold start).
//
// References: P. M. Morse, Phys. Rev. 34, 57 (1929),
// doi:10.1103/PhysRev.34.57 (Morse potential); J. E. Jones, Proc. R. Soc.
// Lond. A 106, 463 (1924), doi:10.1098/rspa.1924.0082 (12-6 potential).
package model

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"slices"
	"time"

	"wellscan/planner"
	"wellscan/runner"
)

// Backend evaluates the spec's [engine.model] potential. It is safe for
// concurrent use.
type Backend struct {
	offset float64
	delay  time.Duration
	fail   map[string]bool
	spikes map[string]float64
	terms  []term
}

type term struct {
	coord int
	planner.ModelTerm
}

// New builds the model backend of a validated spec whose engine kind is
// "model".
func New(spec *planner.Spec) (*Backend, error) {
	if spec.Engine.Kind != "model" {
		return nil, fmt.Errorf("model: engine kind is %q, not \"model\"", spec.Engine.Kind)
	}
	m := spec.Engine.Model
	b := &Backend{offset: m.Offset, delay: m.Delay.Duration, fail: map[string]bool{}, spikes: m.Spikes}
	for _, k := range m.Fail {
		b.fail[k] = true
	}
	for _, t := range m.Terms {
		c := 0
		if t.Coordinate != "" {
			c = spec.CoordinateIndex(t.Coordinate)
		}
		if c < 0 {
			return nil, fmt.Errorf("model: no coordinate %q", t.Coordinate)
		}
		b.terms = append(b.terms, term{c, t})
	}
	return b, nil
}

// Name implements runner.Backend.
func (b *Backend) Name() string { return "model" }

// UsesGuess implements runner.ContinuationBackend: a point reads its
// neighbour's state file (the guess_distance extra), as the built-in
// engine reads orbitals, so scans on the model exercise the same order.
func (b *Backend) UsesGuess() bool { return true }

// Energy is the model energy (hartree) at coordinate values v (bohr,
// radians).
func (b *Backend) Energy(v []float64) float64 {
	e := b.offset
	for _, t := range b.terms {
		e += t.energy(v[t.coord])
	}
	return e
}

func (t term) energy(q float64) float64 {
	switch t.Shape {
	case "morse":
		// D_e (1 − e^{−a(q−q_e)})², zero at the minimum.
		x := 1 - math.Exp(-t.Width*(q-t.Center))
		return t.Depth * x * x
	case "lennard-jones":
		// 4ε[(σ/q)¹² − (σ/q)⁶].
		s6 := math.Pow(t.Sigma/q, 6)
		return 4 * t.Depth * (s6*s6 - s6)
	case "harmonic":
		d := q - t.Center
		return 0.5 * t.Force * d * d
	case "double-well":
		// h((q−c)²/w² − 1)² + tilt·(q−c): minima near c ± w, barrier h at c.
		d := q - t.Center
		u := d*d/(t.Width*t.Width) - 1
		return t.Depth*u*u + t.Tilt*d
	case "cosine":
		// (V_n/2)(1 − cos n(q − c)): a hindered-rotor term with n equal
		// wells per turn, barrier V_n (depth) between them.
		return t.Depth / 2 * (1 - math.Cos(float64(t.Fold)*(q-t.Center)))
	}
	return math.NaN()
}

type state struct {
	Key    string    `json:"key"`
	Values []float64 `json:"values"`
}

// Compute implements runner.Backend.
func (b *Backend) Compute(ctx context.Context, t runner.Task) (runner.Outcome, error) {
	if b.delay > 0 {
		tm := time.NewTimer(b.delay)
		select {
		case <-ctx.Done():
			tm.Stop()
			return runner.Outcome{}, ctx.Err()
		case <-tm.C:
		}
	}
	if err := ctx.Err(); err != nil {
		return runner.Outcome{}, err
	}
	if b.fail[t.Key] {
		return runner.Outcome{}, fmt.Errorf("model: point %s is listed in engine.model.fail", t.Key)
	}
	gd := -1.0
	if t.GuessPath != "" {
		raw, err := os.ReadFile(t.GuessPath)
		switch {
		case errors.Is(err, fs.ErrNotExist):
			// The neighbour's state file vanished (points/ deleted under a
			// running scan): start cold rather than fail the point.
		case err != nil:
			return runner.Outcome{}, fmt.Errorf("model: guess: %w", err)
		default:
			var g state
			if err := json.Unmarshal(raw, &g); err != nil || len(g.Values) != len(t.Values) {
				return runner.Outcome{}, fmt.Errorf("model: guess %s is not a model state file", t.GuessPath)
			}
			gd = 0
			for i := range g.Values {
				gd += (g.Values[i] - t.Values[i]) * (g.Values[i] - t.Values[i])
			}
			gd = math.Sqrt(gd)
		}
	}
	raw, _ := json.Marshal(state{Key: t.Key, Values: slices.Clone(t.Values)})
	// A plain write: the state file is a convenience for the next point,
	// not proof of work (that is result.json, which the runner writes). It
	// is written inside the point directory only, never through a link.
	if err := writeState(t.Dir, raw); err != nil {
		return runner.Outcome{}, fmt.Errorf("model: %w", err)
	}
	// A spike (engine.model.spikes) stands for a point that lands on
	// another state whatever its starting guess.
	return runner.Outcome{Energy: b.Energy(t.Values) + b.spikes[t.Key], Converged: true, Iterations: 1,
		Orbitals: stateFile, Extra: map[string]float64{"guess_distance": gd}}, nil
}

// stateFile is the model's state file in a point directory.
const stateFile = "model-state.json"

// writeState writes the state file inside dir through an os.Root,
// refusing a symbolic link (or anything but a regular file) in its place.
func writeState(dir string, raw []byte) error {
	r, err := os.OpenRoot(dir)
	if err != nil {
		return err
	}
	defer r.Close()
	if st, err := r.Lstat(stateFile); err == nil && st.Mode()&fs.ModeSymlink != 0 {
		return fmt.Errorf("%s is a symbolic link; wellscan writes nothing through a link (remove it)", filepath.Join(dir, stateFile))
	} else if err == nil && !st.Mode().IsRegular() {
		return fmt.Errorf("%s is not a regular file (%s)", filepath.Join(dir, stateFile), st.Mode().Type())
	}
	f, err := r.OpenFile(stateFile, os.O_WRONLY|os.O_CREATE|os.O_TRUNC, 0o600)
	if err != nil {
		return err
	}
	_, werr := f.Write(raw)
	return errors.Join(werr, f.Close())
}
