package slurm

import (
	"fmt"

	"wellscan/planner"
	"wellscan/runner"
)

// forceFieldKeys resolves the point keys of a force-field job on a compute
// node. Stage-1 keys follow from the spec alone; stage-2 keys ("qff…") are
// displacements along the normal modes found in stage 1, so they are
// rebuilt here from the stage-1 result files in the scan directory: the
// same energies the orchestrator planned from, hence the same
// displacements, bit for bit (JSON round-trips float64 exactly).
func forceFieldKeys(spec *planner.Spec, scanDir, fp string) func(string) (planner.Point, error) {
	var stage2 map[string]planner.Point
	var planErr error
	return func(key string) (planner.Point, error) {
		if p, err := spec.ParseKey(key); err == nil {
			return p, nil
		}
		if stage2 == nil {
			stage2 = map[string]planner.Point{}
			var samples []planner.Sample
			for _, p := range spec.ForceField().HessPoints() {
				if p.Rep != "" {
					continue
				}
				res, ok := runner.ReadResult(scanDir, p.Key, fp)
				if !ok || res.Status != runner.ResultDone {
					continue
				}
				samples = append(samples, planner.Sample{Key: p.Key, Energy: res.Energy})
			}
			plan, err := spec.PlanForceField(samples)
			switch {
			case err != nil:
				planErr = err
			case len(plan.Missing) > 0:
				planErr = fmt.Errorf("%d stage-1 results are missing (first: %s)", len(plan.Missing), plan.Missing[0])
			default:
				for _, md := range plan.Modes {
					for _, q := range md.Points {
						stage2[q.Key] = planner.Point{Key: q.Key, Values: append([]float64(nil), q.Disp...)}
					}
				}
			}
		}
		if p, ok := stage2[key]; ok {
			return p, nil
		}
		if planErr != nil {
			return planner.Point{}, fmt.Errorf("slurm: force-field point %s: cannot rebuild the stage-2 plan from %s: %w", key, scanDir, planErr)
		}
		return planner.Point{}, fmt.Errorf("slurm: force-field point %s is neither a stage-1 displacement nor in the stage-2 plan", key)
	}
}
