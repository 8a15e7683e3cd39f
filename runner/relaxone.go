package runner

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"

	"wellscan/planner"
	"wellscan/planner/geomopt"
)

// Files of a single-geometry optimisation directory (`wellscan relax
// DIR`), besides the point files of a relaxed point (RelaxStateFile,
// RelaxedFile, RelaxTrajectoryFile, RelaxGradientLogFile), which it
// keeps in DIR itself.
const (
	// RelaxFingerprintFile records the fingerprint of the spec the
	// checkpoint belongs to; a changed molecule, engine or [relax]
	// refuses to continue the old checkpoint.
	RelaxFingerprintFile = "relax-fingerprint.json"
	// RelaxLockFile is held (an advisory lock) while an optimisation runs
	// in the directory.
	RelaxLockFile = "relax.lock"
	// RelaxKey is the point key a single-geometry optimisation passes to
	// its backend (a template sees it as {{.Key}}).
	RelaxKey = "relax"
)

// RelaxGeometryResult is the outcome of [RelaxGeometry].
type RelaxGeometryResult struct {
	// Outcome is the backend's outcome for the one point.
	Outcome Outcome
	// State is the optimiser's checkpoint as it ended: the final
	// geometry (X, bohr), energy, Cartesian gradient and trajectory.
	State *geomopt.State
}

// RelaxFailure is a relaxation that ended without a result: a program
// run (or SCF) failed with Class. The checkpoint keeps every gradient
// computed before it, so running again continues.
type RelaxFailure struct {
	Dir, Class, Detail string
}

func (e *RelaxFailure) Error() string {
	return fmt.Sprintf("runner: relax %s: %s: %s (the checkpoint %s keeps the gradients computed so far; run again to continue)", e.Dir, e.Class, e.Detail, RelaxStateFile)
}

// RelaxGeometry optimises the geometry of a single-geometry spec
// (planner.LoadSingle) with backend b, in dir: the optimiser's
// checkpoint and result files go to dir (see RelaxPoint) and an external
// program runs in its own subdirectory per evaluation. A checkpoint left
// in dir by an interrupted run of the same spec is continued (at most
// the gradient in flight is lost); one left by a different spec
// (molecule, engine or [relax] changed) is refused. threads is the
// parallelism the backend may use (Task.Threads). The directory is locked
// while it runs; a second optimisation there fails with an error
// matching ErrLocked.
//
// A finished optimisation that did not converge returns its result with
// an error wrapping geomopt.ErrNotConverged; a failed evaluation returns
// a *RelaxFailure.
func RelaxGeometry(ctx context.Context, spec *planner.Spec, b Backend, dir string, threads int) (*RelaxGeometryResult, error) {
	if !spec.Single() {
		return nil, fmt.Errorf("runner: relax %s: the spec describes a scan; run it with wellscan run", dir)
	}
	unlock, err := lockRelaxDir(dir)
	if err != nil {
		return nil, err
	}
	defer unlock()
	fp, err := json.Marshal(spec.Fingerprint())
	if err != nil {
		return nil, err
	}
	old, err := os.ReadFile(filepath.Join(dir, RelaxFingerprintFile))
	switch {
	case err == nil:
		var f planner.Fingerprint
		if jerr := json.Unmarshal(old, &f); jerr != nil {
			return nil, fmt.Errorf("runner: relax %s: %s: %w", dir, RelaxFingerprintFile, jerr)
		}
		if d := f.Diff(spec.Fingerprint()); len(d) > 0 {
			return nil, fmt.Errorf("runner: relax %s: the checkpoint belongs to another spec (changed: %s); remove %s, %s and %s/ to start over, or use a new directory", dir, strings.Join(d, "; "), RelaxStateFile, RelaxFingerprintFile, "relax")
		}
	case errors.Is(err, fs.ErrNotExist):
		if _, serr := os.Stat(filepath.Join(dir, RelaxStateFile)); serr == nil {
			return nil, fmt.Errorf("runner: relax %s: %s exists without %s, so it cannot be matched to this spec; remove it to start over", dir, RelaxStateFile, RelaxFingerprintFile)
		}
		if err := writeInScan(dir, RelaxFingerprintFile, fp, tmpSuffix(), true); err != nil {
			return nil, err
		}
	default:
		return nil, err
	}
	mol, err := spec.Molecule()
	if err != nil {
		return nil, err
	}
	t := Task{Key: RelaxKey, Mol: mol, Dir: dir, Attempt: 1, Threads: max(1, threads)}
	out, err := b.Compute(ctx, t)
	if err != nil {
		return nil, err
	}
	st, serr := ReadRelaxState(dir)
	if out.Class != "" && out.Class != ClassRelaxNotConverged {
		return nil, &RelaxFailure{Dir: dir, Class: string(out.Class), Detail: out.Error}
	}
	if serr != nil {
		return nil, fmt.Errorf("runner: relax %s: %w", dir, serr)
	}
	res := &RelaxGeometryResult{Outcome: out, State: st}
	if !st.Converged {
		return res, fmt.Errorf("%w: %s", geomopt.ErrNotConverged, st.Reason)
	}
	return res, nil
}
