package command

import (
	"context"
	"errors"
	"fmt"
	"path/filepath"

	"wellscan/planner"
	"wellscan/runner"
)

// Backend runs scan points with an external program. It implements
// runner.Backend and is safe for concurrent use (it holds only the
// immutable config).
type Backend struct {
	cfg   Config
	spec  *planner.Spec
	title string
}

// NewBackend builds the command backend from a validated spec whose
// engine kind is "command": it decodes [engine.command], compiles the
// energy extractor and checks that the program and the template exist, so
// that a mistake shows before any point runs.
func NewBackend(spec *planner.Spec) (*Backend, error) {
	if spec.Engine.Kind != "command" {
		return nil, fmt.Errorf("command: engine kind is %q, not \"command\"", spec.Engine.Kind)
	}
	if !spec.IsDefined("engine", "command") {
		return nil, fmt.Errorf("%s: engine.command: missing: kind = \"command\" needs an [engine.command] table (template, input, command, energy)", spec.File())
	}
	var m map[string]any
	if err := spec.DecodePrimitive(spec.Engine.Command, "engine.command", &m); err != nil {
		return nil, err
	}
	cfg, err := DecodeConfig(m, spec.File(), "engine.command")
	if err != nil {
		return nil, err
	}
	// The template and the script come from the scan directory only: a
	// spec cannot make a scan read or run files elsewhere through them.
	for _, f := range []struct{ key, path string }{{"template", cfg.Template}, {"script", cfg.Script}} {
		if f.path == "" {
			continue
		}
		if _, err := planner.WithinDir(filepath.Dir(spec.File()), f.path); err != nil {
			return nil, fmt.Errorf("%s: engine.command.%s: %w", spec.File(), f.key, err)
		}
	}
	if err := cfg.Validate(); err != nil {
		return nil, fmt.Errorf("%s: engine.command: %w", spec.File(), err)
	}
	if err := cfg.Check(); err != nil {
		return nil, fmt.Errorf("%s: engine.command: %w", spec.File(), err)
	}
	if err := cfg.Load(); err != nil {
		return nil, fmt.Errorf("%s: engine.command: %w", spec.File(), err)
	}
	return &Backend{cfg: cfg, spec: spec, title: spec.Title}, nil
}

// Config is the backend's decoded config (a copy).
func (b *Backend) Config() Config { return b.cfg }

// Name implements runner.Backend.
func (b *Backend) Name() string { return "command" }

// Job builds the template data of a task.
func (b *Backend) Job(t runner.Task) Job {
	coords := b.spec.Coordinates()
	disp := b.spec.DisplayValues(planner.Point{Key: t.Key, Values: t.Values})
	job := Job{Dir: t.Dir, Title: b.title, Key: t.Key, Coords: map[string]float64{}, CoordUnits: map[string]string{},
		Charge: t.Mol.Charge, Multiplicity: t.Mol.Multiplicity, Attempt: t.Attempt}
	for i, c := range coords {
		job.Coords[c.Name] = disp[i]
		unit := "degree"
		if c.Kind == planner.KindDistance {
			unit = string(b.spec.Units())
		}
		job.CoordUnits[c.Name] = unit
	}
	for _, a := range t.Mol.Atoms {
		job.Atoms = append(job.Atoms, Atom{Symbol: a.Element.Symbol, Z: a.Element.Z, Mass: a.Mass, Pos: a.Pos})
	}
	return job
}

// Render renders the input of one task without running anything (for
// `wellscan plan`).
func (b *Backend) Render(t runner.Task) ([]byte, error) { return b.cfg.Render(b.Job(t)) }

// RenderContext is Render bounded by ctx (see Config.RenderContext).
func (b *Backend) RenderContext(ctx context.Context, t runner.Task) ([]byte, error) {
	return b.cfg.RenderContext(ctx, b.Job(t))
}

// Compute implements runner.Backend. A failed run is an Outcome with its
// failure class and the error text (which quotes the end of the output),
// so the runner records it per point and decides on retries by class.
func (b *Backend) Compute(ctx context.Context, t runner.Task) (runner.Outcome, error) {
	if b.spec != nil && b.spec.Relaxed() {
		return b.computeRelaxed(ctx, t)
	}
	out, err := b.cfg.Run(ctx, b.Job(t))
	if err == nil {
		return runner.Outcome{Energy: out.Energy, Converged: true,
			Extra: map[string]float64{"seconds": out.Elapsed.Seconds()}}, nil
	}
	if out.Class == runner.ClassCancelled || ctx.Err() != nil {
		return runner.Outcome{}, errors.Join(ctx.Err(), err)
	}
	// The class travels in Outcome.Class; the detail is what happened.
	detail := err.Error()
	var re *RunError
	if errors.As(err, &re) && re.Err != nil {
		detail = re.Err.Error()
	}
	return runner.Outcome{Class: out.Class, Error: detail, Permanent: !retryable(out.Class)}, nil
}
