package main

import (
	"fmt"
	"runtime"
	"strconv"
	"strings"

	"github.com/spf13/cobra"

	"wellscan/planner"
	"wellscan/planner/geomopt"
	"wellscan/runner"
	"wellscan/runner/command"
	"wellscan/runner/hf"
)

// runRelaxDir is `wellscan relax DIR`: the optimisation DIR/scan.toml
// describes ([molecule], [engine] builtin or command, optional [relax]),
// checkpointed in DIR so that a rerun continues it.
func runRelaxDir(cmd *cobra.Command, a *app, o *relaxOptions, dir string) error {
	path := scanSpecPath(dir)
	// The flags that describe the calculation: with a directory the spec
	// says these.
	for _, name := range []string{"basis", "basis-file", "convention", "method", "charge", "multiplicity", "units", "hold", "max-steps", "tighter"} {
		if cmd.Flags().Changed(name) {
			return usageError{fmt.Errorf("--%s: with a directory the calculation is described by %s ([molecule], [engine], [relax]); set it there", name, path)}
		}
	}
	spec, err := planner.LoadSingle(path)
	if err != nil {
		return err
	}
	if isBatchQueue(spec) {
		return fmt.Errorf("%s: queue.kind = %q: wellscan relax runs its optimisation on this machine (its gradients one after another); leave [queue] out or use kind = \"local\"", path, spec.Queue.Kind)
	}
	b, err := newBackend(spec)
	if err != nil {
		return err
	}
	threads := o.workers
	if threads == 0 {
		threads = spec.Queue.Threads
	}
	if threads == 0 {
		threads = runtime.NumCPU()
	}
	res, err := runner.RelaxGeometry(cmd.Context(), spec, b, dir, threads)
	if res == nil {
		return err
	}
	mol, merr := spec.Molecule()
	if merr != nil {
		return merr
	}
	gres := resultFromState(res, mol)
	var held []string
	for _, h := range spec.Relax.Hold {
		kind := map[int]string{2: "bond", 3: "angle", 4: "torsion"}[len(h)]
		var at []string
		for _, i := range h {
			at = append(at, strconv.Itoa(i))
		}
		held = append(held, kind+":"+strings.Join(at, ","))
	}
	rep := newRelaxReport(gres, mol, held)
	rep.Directory = dir
	switch be := b.(type) {
	case *command.Backend:
		cfg := be.Config()
		rep.Method = "command"
		rep.Program = strings.Join(cfg.Args, " ")
		if cfg.Shell {
			rep.Program = "sh " + cfg.Script
		}
		rep.GradientKind = "read from the program's output"
		if cfg.Gradient == nil {
			rep.GradientKind = fmt.Sprintf("central differences of its energies (step %g bohr, %d runs per gradient)", geomopt.DefaultFDStep, 1+6*len(mol.Atoms))
		}
	case *hf.Backend:
		rep.Method, rep.Basis = spec.Engine.Method, spec.Engine.Basis
		rep.GradientKind = "analytic"
		if m, perr := hf.ParseMethod(spec.Engine.Method); perr == nil && m != hf.RHF && m != hf.UHF {
			rep.GradientKind = fmt.Sprintf("central differences, step %g bohr", geomopt.DefaultFDStep)
		}
	}
	return emitRelax(a, o, rep, gres, mol, err)
}

// resultFromState turns the checkpoint of a finished optimisation into
// the optimiser's result (geometry on a copy of mol, Cartesian gradient,
// and the internal forces the backend reported).
func resultFromState(r *runner.RelaxGeometryResult, mol planner.Molecule) *geomopt.Result {
	st := r.State
	m := mol.Clone()
	grad := make([][3]float64, len(m.Atoms))
	for i := range m.Atoms {
		copy(m.Atoms[i].Pos[:], st.X[3*i:3*i+3])
		copy(grad[i][:], st.Grad[3*i:3*i+3])
	}
	return &geomopt.Result{Converged: st.Converged, Reason: st.Reason, Mol: m, Energy: st.Energy, Gradient: grad,
		MaxForce: r.Outcome.Extra["relax_max_force"], RMSForce: r.Outcome.Extra["relax_rms_force"],
		Gradients: st.Gradients, State: st}
}
