package main

import (
	"fmt"

	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/command"
	"wellscan/runner/hf"
	"wellscan/runner/local"
	"wellscan/runner/model"
	"wellscan/runner/slurm"
)

// newBackend builds the backend a spec's [engine] asks for. It is the one
// place that knows every backend package; runner never imports them.
func newBackend(spec *planner.Spec) (runner.Backend, error) {
	switch spec.Engine.Kind {
	case "model":
		return model.New(spec)
	case "builtin":
		return hf.NewBackend(spec)
	case "command":
		return command.NewBackend(spec)
	}
	return nil, fmt.Errorf("%s: unknown engine kind %q", spec.File(), spec.Engine.Kind)
}

// isBatchQueue reports whether the spec's points run as batch jobs that
// outlive this process.
func isBatchQueue(spec *planner.Spec) bool {
	return spec.Queue.Kind == "slurm" || spec.Queue.Kind == "batch"
}

// newQueue builds the queue of [queue]; workers > 0 overrides queue.workers.
func newQueue(spec *planner.Spec, workers int) (runner.Queue, error) {
	switch spec.Queue.Kind {
	case "local", "":
		if workers == 0 {
			workers = spec.Queue.Workers
		}
		return local.New(workers), nil
	case "slurm", "batch":
		return slurm.NewQueue(spec)
	}
	return nil, fmt.Errorf("%s: unknown queue kind %q", spec.File(), spec.Queue.Kind)
}
