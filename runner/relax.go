package runner

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"

	"wellscan/parsers"
	"wellscan/planner"
	"wellscan/planner/geomopt"
)

// Files a relaxed scan point leaves in its directory.
const (
	// RelaxStateFile is the optimiser checkpoint, rewritten (atomically, by
	// rename) after every gradient; a resumed point continues from it.
	RelaxStateFile = "relax-state.json"
	// RelaxedFile is the final geometry (XYZ, Å).
	RelaxedFile = "relaxed.xyz"
	// RelaxTrajectoryFile holds every gradient's geometry (XYZ, Å).
	RelaxTrajectoryFile = "relax-trajectory.xyz"
	// RelaxGradientLogFile gets one line per gradient computed for the point
	// ("pid energy"), across interruptions: an audit of the work done,
	// including gradients lost to a crash.
	RelaxGradientLogFile = "relax-gradients.log"
)

// RelaxPointResult is the outcome of [RelaxPoint].
type RelaxPointResult struct {
	*geomopt.Result
	// FromNeighbour is set when the point started from a finished
	// neighbour's relaxed geometry and Hessian.
	FromNeighbour bool
	// Resumed is set when a checkpoint was continued; ResumedAt is the
	// number of gradients it already held.
	Resumed   bool
	ResumedAt int
	// MaxConstraintError is the largest deviation of a held coordinate
	// from its value over the trajectory (bohr or radians).
	MaxConstraintError float64
}

// RelaxPointOptions configures [RelaxPoint].
type RelaxPointOptions struct {
	// NeighbourDir is the directory of a finished neighbouring point
	// (usually the directory of Task.GuessPath); "" for none.
	NeighbourDir string
	// NoNeighbourStart starts from the rigid geometry with the model
	// Hessian even when a neighbour is available (for benchmarks).
	NoNeighbourStart bool
}

// RelaxConstraints returns the optimiser constraints of a relaxed point of
// spec at t: every scanned member at t's value, every [relax] hold at its
// value in the spec's geometry.
func RelaxConstraints(spec *planner.Spec, values []float64) ([]geomopt.Constraint, error) {
	var out []geomopt.Constraint
	held := spec.Held()
	scanIdx := 0
	member := 0
	coords := spec.Coordinates()
	for _, h := range held {
		var kind geomopt.PrimKind
		switch h.Kind {
		case planner.KindDistance:
			kind = geomopt.PrimBond
		case planner.KindAngle:
			kind = geomopt.PrimAngle
		case planner.KindTorsion:
			kind = geomopt.PrimTorsion
		default:
			return nil, fmt.Errorf("geomopt: %s: unknown coordinate kind", h.Label)
		}
		v := h.Value
		if math.IsNaN(v) {
			// Scan members come first, in coordinate order.
			for scanIdx < len(coords) && member >= len(coords[scanIdx].Members) {
				scanIdx, member = scanIdx+1, 0
			}
			if scanIdx >= len(values) {
				return nil, fmt.Errorf("geomopt: %d values for the scan coordinates", len(values))
			}
			v = values[scanIdx]
			member++
		}
		out = append(out, geomopt.Constraint{Prim: geomopt.Prim{Kind: kind, Atoms: h.Atoms}, Value: v})
	}
	kinds := map[planner.CoordKind]geomopt.PrimKind{planner.KindDistance: geomopt.PrimBond, planner.KindAngle: geomopt.PrimAngle, planner.KindTorsion: geomopt.PrimTorsion}
	for _, g := range spec.Ties() {
		ref := geomopt.Prim{Kind: kinds[g[0].Kind], Atoms: g[0].Atoms}
		for _, m := range g[1:] {
			r := ref
			out = append(out, geomopt.Constraint{Prim: geomopt.Prim{Kind: kinds[m.Kind], Atoms: m.Atoms}, Tie: &r})
		}
	}
	return out, nil
}

// RelaxPoint optimises one point of a relaxed scan: the scanned
// coordinates (and [relax] holds) are held at their values and the rest
// of the molecule relaxes. It starts from t.Mol (the rigid geometry), or
// from a finished neighbour's relaxed geometry with the scanned
// coordinates set to this point's values and the neighbour's final
// Hessian, and continues from t.Dir's checkpoint when one exists, so an
// interrupted point loses at most the gradient in flight. It writes
// StateFile after every gradient and RelaxedFile and TrajectoryFile at
// the end. A point that did not converge returns its result with an
// error wrapping geomopt.ErrNotConverged.
func RelaxPoint(ctx context.Context, spec *planner.Spec, t Task, f geomopt.Objective, po RelaxPointOptions) (*RelaxPointResult, error) {
	cons, err := RelaxConstraints(spec, t.Values)
	if err != nil {
		return nil, err
	}
	maxSteps, tighter := spec.RelaxLimits()
	opts := geomopt.Options{MaxSteps: maxSteps, Criteria: geomopt.Criteria{}.Tight(tighter), Constraints: cons}
	statePath := filepath.Join(t.Dir, RelaxStateFile)
	opts.OnStep = func(st *geomopt.State) error {
		b, err := json.Marshal(st)
		if err != nil {
			return err
		}
		return writePointFile(t.Dir, RelaxStateFile, b)
	}
	pr := &RelaxPointResult{}
	start := t.Mol
	if st, err := readState(statePath); err == nil {
		if err := st.Check(len(t.Mol.Atoms)); err != nil {
			return nil, fmt.Errorf("geomopt: %s: %w", statePath, err)
		}
		opts.Resume = st
		pr.Resumed, pr.ResumedAt = true, st.Gradients
	} else if !errors.Is(err, fs.ErrNotExist) {
		return nil, fmt.Errorf("geomopt: %s: %w (delete it to restart the point)", statePath, err)
	} else if po.NeighbourDir != "" && !po.NoNeighbourStart {
		if nb, err := readState(filepath.Join(po.NeighbourDir, RelaxStateFile)); err == nil && nb.Done && nb.Converged && nb.Check(len(t.Mol.Atoms)) == nil {
			m := t.Mol.Clone()
			for a := range m.Atoms {
				copy(m.Atoms[a].Pos[:], nb.X[3*a:3*a+3])
			}
			if g, err := spec.GeometryFrom(m, t.Values); err == nil {
				start = g
				opts.Start = nb
				pr.FromNeighbour = true
			}
		}
	}
	logPath := filepath.Join(t.Dir, RelaxGradientLogFile)
	logged := func(ctx context.Context, m planner.Molecule) (float64, [][3]float64, error) {
		e, g, err := f(ctx, m)
		if err == nil && t.Dir != "" {
			if lf, lerr := os.OpenFile(logPath, os.O_WRONLY|os.O_CREATE|os.O_APPEND, 0o600); lerr == nil {
				fmt.Fprintf(lf, "%d %.12f\n", os.Getpid(), e)
				lf.Close()
			}
		}
		return e, g, err
	}
	res, err := geomopt.Optimize(ctx, start, logged, opts)
	pr.Result = res
	if res == nil {
		return pr, err
	}
	for _, fr := range res.State.Trajectory {
		for _, c := range res.State.Constraints {
			pr.MaxConstraintError = max(pr.MaxConstraintError, math.Abs(c.Error(fr.X)))
		}
	}
	if res.State.Done {
		if werr := writePointFiles(t, res, spec.ScanMode()); werr != nil && err == nil {
			err = werr
		}
	}
	return pr, err
}

func readState(path string) (*geomopt.State, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var st geomopt.State
	dec := json.NewDecoder(bytes.NewReader(b))
	if err := dec.Decode(&st); err != nil {
		return nil, fmt.Errorf("corrupt checkpoint: %w", err)
	}
	return &st, nil
}

// ReadRelaxState reads a point's checkpoint (RelaxStateFile in dir).
func ReadRelaxState(dir string) (*geomopt.State, error) {
	return readState(filepath.Join(dir, RelaxStateFile))
}

func writePointFiles(t Task, res *geomopt.Result, mode string) error {
	frame := func(x []float64, comment string) parsers.Frame {
		f := parsers.Frame{Comment: comment}
		for a, at := range t.Mol.Atoms {
			f.Labels = append(f.Labels, at.Element.Symbol)
			f.Coords = append(f.Coords, [3]float64{x[3*a] * planner.BohrInAngstrom, x[3*a+1] * planner.BohrInAngstrom, x[3*a+2] * planner.BohrInAngstrom})
		}
		return f
	}
	word := "converged"
	if !res.Converged {
		word = "NOT converged"
	}
	var buf bytes.Buffer
	if err := parsers.WriteXYZ(&buf, []parsers.Frame{frame(res.State.X, fmt.Sprintf("%s point %s: E = %.10f Eh, optimisation %s", mode, t.Key, res.Energy, word))}); err != nil {
		return err
	}
	if err := writePointFile(t.Dir, RelaxedFile, buf.Bytes()); err != nil {
		return err
	}
	buf.Reset()
	var frames []parsers.Frame
	for i, fr := range res.State.Trajectory {
		acc := "accepted"
		if !fr.Accepted {
			acc = "rejected"
		}
		frames = append(frames, frame(fr.X, fmt.Sprintf("point %s step %d: E = %.10f Eh, max force %.2e, %s", t.Key, i, fr.Energy, fr.MaxForce, acc)))
	}
	if err := parsers.WriteXYZ(&buf, frames); err != nil {
		return err
	}
	return writePointFile(t.Dir, RelaxTrajectoryFile, buf.Bytes())
}

// writePointFile writes name into the point directory pointDir
// (<scan>/points/<key>, or a directory of its own for one geometry)
// through the scan's confined writer: temporary
// file, fsync, rename, never through a symbolic link.
func writePointFile(pointDir, name string, data []byte) error {
	if filepath.Base(filepath.Dir(pointDir)) != PointsDir {
		// A point outside a scan (wellscan relax DIR) is its own root.
		return writeInScan(pointDir, name, data, tmpSuffix(), true)
	}
	scan := filepath.Dir(filepath.Dir(pointDir))
	return writeInScan(scan, filepath.Join(PointsDir, filepath.Base(pointDir), name), data, tmpSuffix(), true)
}
