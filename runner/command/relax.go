package command

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"sync"

	"wellscan/planner"
	"wellscan/planner/geomopt"
	"wellscan/runner"
)

// RelaxDir is the subdirectory of a relaxed point's directory that holds
// one directory per program run: step-NNN for a gradient (or the
// undisplaced energy), step-NNN/d-MMM for the displacements of a
// central-difference gradient.
const RelaxDir = "relax"

// computeRelaxed runs one point of a relaxed scan through the program:
// geomopt.RelaxPoint drives the optimisation, each gradient is one run
// (the gradient read with Config.Gradient) or, without a gradient
// extractor, 1 + 6N runs whose energies are differenced (central
// differences, step geomopt.DefaultFDStep bohr, up to t.Threads runs at
// a time). A program failure fails the point with its class; the
// optimiser's checkpoint lets the next attempt continue.
func (b *Backend) computeRelaxed(ctx context.Context, t runner.Task) (runner.Outcome, error) {
	step := nextStep(filepath.Join(t.Dir, RelaxDir))
	// Each program run makes only its own directory (Config.Run), so
	// relax/ is made here, inside the point directory and never through
	// a symbolic link.
	if err := runner.MkdirScan(t.Dir, RelaxDir); err != nil {
		return runner.Outcome{Class: runner.ClassSetupFailed, Error: err.Error(), Permanent: true}, nil
	}
	var (
		mu       sync.Mutex
		lastFail *RunError
	)
	noteFail := func(err error) {
		var re *RunError
		if errors.As(err, &re) {
			mu.Lock()
			lastFail = re
			mu.Unlock()
		}
	}
	runs := 0
	job := func(mol planner.Molecule, dir, key string) Job {
		tt := t
		tt.Mol, tt.Dir, tt.Key = mol, dir, key
		return b.Job(tt)
	}
	obj := func(ctx context.Context, mol planner.Molecule) (float64, [][3]float64, error) {
		k := step
		step++
		dir := filepath.Join(t.Dir, RelaxDir, fmt.Sprintf("step-%03d", k))
		out, err := b.cfg.Run(ctx, job(mol, dir, fmt.Sprintf("%s step %d", t.Key, k)))
		runs++
		if err != nil {
			noteFail(err)
			return 0, nil, err
		}
		if out.Gradient != nil {
			return out.Energy, out.Gradient, nil
		}
		x := geomopt.Flatten(mol)
		g, err := geomopt.CentralDifference(ctx, x, geomopt.DefaultFDStep, max(1, t.Threads), func(ctx context.Context, y []float64) (float64, error) {
			m := mol.Clone()
			for a := range m.Atoms {
				copy(m.Atoms[a].Pos[:], y[3*a:3*a+3])
			}
			// Name the run by its displaced coordinate and sign.
			var name string
			for i := range y {
				if d := y[i] - x[i]; d != 0 {
					s := "p"
					if d < 0 {
						s = "m"
					}
					name = fmt.Sprintf("d-%03d%s", i, s)
				}
			}
			o, err := b.cfg.Run(ctx, job(m, filepath.Join(dir, name), fmt.Sprintf("%s step %d %s", t.Key, k, name)))
			if err != nil {
				noteFail(err)
				return 0, err
			}
			return o.Energy, nil
		})
		runs += 2 * len(x)
		if err != nil {
			return 0, nil, err
		}
		grad := make([][3]float64, len(mol.Atoms))
		for a := range grad {
			copy(grad[a][:], g[3*a:3*a+3])
		}
		return out.Energy, grad, nil
	}
	po := runner.RelaxPointOptions{}
	if t.GuessPath != "" {
		po.NeighbourDir = filepath.Dir(t.GuessPath)
	}
	pr, err := runner.RelaxPoint(ctx, b.spec, t, obj, po)
	if err != nil && !errors.Is(err, geomopt.ErrNotConverged) {
		if ctx.Err() != nil {
			return runner.Outcome{}, errors.Join(ctx.Err(), err)
		}
		if lastFail != nil {
			return runner.Outcome{Class: lastFail.Class, Error: err.Error(), Permanent: !retryable(lastFail.Class)}, nil
		}
		return runner.Outcome{}, err
	}
	res := pr.Result
	out := runner.Outcome{Energy: res.Energy, Converged: res.Converged, Iterations: res.Gradients,
		Flags: runner.PointFlags{Relaxed: true, FromNeighbour: pr.FromNeighbour, GradientsRead: b.cfg.Gradient != nil},
		Extra: map[string]float64{
			"relax_gradients":        float64(res.Gradients),
			"relax_max_force":        res.MaxForce,
			"relax_rms_force":        res.RMSForce,
			"relax_resumed_at":       float64(pr.ResumedAt),
			"relax_constraint_error": pr.MaxConstraintError,
			"program_runs":           float64(runs),
		}}
	if !res.Converged {
		out.Class, out.Error = runner.ClassRelaxNotConverged, res.Reason
		return out, nil
	}
	// The checkpoint is what a neighbour starts from (the runner hands
	// its path to the next point as the continuation file).
	out.Orbitals = filepath.Join(t.Dir, runner.RelaxStateFile)
	return out, nil
}

// nextStep is one more than the highest step-NNN directory in dir (0 when
// there is none), so that a resumed point never reuses a run directory.
func nextStep(dir string) int {
	ents, err := os.ReadDir(dir)
	if err != nil {
		return 0
	}
	n := 0
	for _, e := range ents {
		var k int
		if _, err := fmt.Sscanf(e.Name(), "step-%d", &k); err == nil && strings.HasPrefix(e.Name(), "step-") && k+1 > n {
			n = k + 1
		}
	}
	return n
}
