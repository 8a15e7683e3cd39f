package slurm

import (
	"context"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"time"

	"wellscan/planner"
	"wellscan/runner"
)

// NodeTask is the compute-node side of one array task: it computes the
// points its manifest line lists, in order, and writes each result file.
type NodeTask struct {
	// JobDir is jobs/<token>/ of the scan; Task the array task index.
	JobDir string
	Task   int
	// NewBackend builds the backend of the scan's spec (the same function
	// `run` uses).
	NewBackend func(*planner.Spec) (runner.Backend, error)
	// OnPoint, if set, is told about each point: "computed" (with the
	// result's status), "skipped" (a done result was already there).
	OnPoint func(key, what string, status runner.ResultStatus)
}

// Run computes the task's points. It never opens the store. A point whose
// result file already says done is skipped (a requeued or rerun task
// repeats nothing); every other point is computed with [runner.ComputePoint]
// from the nearest done neighbour's orbitals, when one exists. It returns
// an error when the job directory, manifest or spec cannot be read, when
// a result file could not be written, or when ctx ends (SIGTERM at the time
// limit or on scancel): the task then ends FAILED/TIMEOUT/CANCELLED, and the
// points it did finish keep their result files.
func (n NodeTask) Run(ctx context.Context) error {
	jobDir, err := filepath.Abs(n.JobDir)
	if err != nil {
		return fmt.Errorf("slurm: job directory: %w", err)
	}
	m, err := readManifest(jobDir)
	if err != nil {
		return err
	}
	keys, err := m.Task(n.Task)
	if err != nil {
		return err
	}
	var meta jobMeta
	b, err := os.ReadFile(filepath.Join(jobDir, JobMetaFile))
	if err != nil {
		return fmt.Errorf("slurm: read %s: %w", JobMetaFile, err)
	}
	if err := json.Unmarshal(b, &meta); err != nil {
		return fmt.Errorf("slurm: %s: %w", filepath.Join(jobDir, JobMetaFile), err)
	}
	scanDir := meta.ScanDir
	if scanDir == "" {
		scanDir = filepath.Dir(filepath.Dir(jobDir))
	}
	spec, err := planner.Load(filepath.Join(scanDir, "scan.toml"))
	if err != nil {
		return err
	}
	if n.NewBackend == nil {
		return fmt.Errorf("slurm: NodeTask needs NewBackend")
	}
	backend, err := n.NewBackend(spec)
	if err != nil {
		return err
	}
	fp := runner.SpecFingerprint(spec)
	if meta.Fingerprint != "" && meta.Fingerprint != fp {
		return fmt.Errorf("slurm: %s changed the molecule, coordinates or [engine] since this job was submitted; its results would not belong to the scan", spec.File())
	}
	threads := spec.Queue.Threads
	if threads == 0 {
		threads, _ = strconv.Atoi(os.Getenv("SLURM_CPUS_PER_TASK"))
	}
	threads = max(threads, 1)
	resolve := spec.ParseKey
	if spec.ForceField() != nil {
		resolve = forceFieldKeys(spec, scanDir, fp)
	}
	var nb neighbours
	if spec.Engine.Guess != "fresh" {
		nb = loadNeighbours(resolve, scanDir, fp)
	}
	for _, k := range keys {
		if err := ctx.Err(); err != nil {
			return fmt.Errorf("slurm: task %d stopped before %s: %w", n.Task, k, err)
		}
		if res, ok := runner.ReadResult(scanDir, k, fp); ok && res.Status == runner.ResultDone {
			if n.OnPoint != nil {
				n.OnPoint(k, "skipped", res.Status)
			}
			continue
		}
		attempt := max(meta.Attempts[k], 1)
		pt, err := resolve(k)
		var mol planner.Molecule
		if err == nil {
			mol, err = spec.Geometry(pt)
		}
		if err != nil {
			now := time.Now()
			res := runner.FailedResult(runner.Task{Key: k, Attempt: attempt}, fp, backend.Name(), runner.ClassGeometry, true, err.Error(), now, now)
			if werr := runner.WriteResult(scanDir, res); werr != nil {
				return werr
			}
			continue
		}
		t := runner.Task{Key: k, Values: pt.Values, Mol: mol, Dir: runner.PointDir(scanDir, k), Attempt: attempt,
			GuessPath: nb.nearest(pt.Values, k), Threads: threads}
		if slices.Contains(meta.Cold, k) {
			t.GuessPath, t.Cold = "", true
		}
		c := runner.ComputePoint(ctx, spec, scanDir, backend, t)
		if c.Interrupted {
			return fmt.Errorf("slurm: task %d interrupted during %s: %w", n.Task, k, ctx.Err())
		}
		if c.Result.Class == runner.ClassIO {
			return fmt.Errorf("slurm: point %s: %s", k, c.Result.Error)
		}
		if n.OnPoint != nil {
			n.OnPoint(k, "computed", c.Result.Status)
		}
		if c.Result.Status == runner.ResultDone && c.Result.Orbitals != "" && spec.Engine.Guess != "fresh" {
			nb = append(nb, neighbour{key: k, values: pt.Values, path: filepath.Join(t.Dir, c.Result.Orbitals)})
		}
	}
	return nil
}

type neighbour struct {
	key    string
	values []float64
	path   string
}

type neighbours []neighbour

// loadNeighbours reads the done points of the scan that left an orbitals
// file. A directory listing may lag on a shared filesystem; that only
// costs a better starting guess, never a result.
func loadNeighbours(parseKey func(string) (planner.Point, error), scanDir, fp string) neighbours {
	ents, err := os.ReadDir(filepath.Join(scanDir, runner.PointsDir))
	if err != nil {
		return nil
	}
	var nb neighbours
	for _, e := range ents {
		if !e.IsDir() {
			continue
		}
		res, ok := runner.ReadResult(scanDir, e.Name(), fp)
		if !ok || res.Status != runner.ResultDone || res.Orbitals == "" {
			continue
		}
		pt, err := parseKey(e.Name())
		if err != nil {
			continue
		}
		nb = append(nb, neighbour{key: e.Name(), values: pt.Values, path: filepath.Join(runner.PointDir(scanDir, e.Name()), res.Orbitals)})
	}
	return nb
}

// nearest returns the orbitals file of the done point nearest to values
// (squared distance in internal units, ties by key, as the round loop
// does); "" if none.
func (nb neighbours) nearest(values []float64, key string) string {
	best, bestKey, path := 0.0, "", ""
	for _, o := range nb {
		if o.key == key || len(o.values) != len(values) {
			continue
		}
		d := 0.0
		for i := range values {
			d += (o.values[i] - values[i]) * (o.values[i] - values[i])
		}
		if path == "" || d < best || (d == best && o.key < bestKey) {
			best, bestKey, path = d, o.key, o.path
		}
	}
	return path
}
