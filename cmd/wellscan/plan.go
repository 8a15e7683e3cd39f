package main

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/command"
)

func newPlanCommand(a *app) *cobra.Command {
	return &cobra.Command{
		Use:   "plan DIR",
		Short: "Show what a run of DIR would compute, without computing anything",
		Long: `Dry run: check DIR/scan.toml, then print the points of round 1 with
their geometry's coordinates, the refinement settings and budgets, and an
estimate of the cost. Nothing is computed and the store is not touched.
With an external program (engine.kind = "command") every input of round 1
is rendered into DIR/plan-inputs/ and the first template error stops the
plan with the template's file and line.`,
		Example: `  wellscan plan co-stretch`,
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			spec, err := planner.Load(filepath.Join(args[0], "scan.toml"))
			if err != nil {
				return err
			}
			if _, err := newBackend(spec); err != nil {
				return err
			}
			if err := renderInputs(a.stdout, args[0], spec); err != nil {
				return err
			}
			printPlan(a.stdout, args[0], spec)
			return nil
		},
	}
}

func printPlan(w io.Writer, dir string, spec *planner.Spec) {
	mol, _ := spec.Molecule()
	if spec.Title != "" {
		fmt.Fprintf(w, "scan: %s\n", spec.Title)
	}
	fmt.Fprintf(w, "molecule: %s, %d atoms, charge %+d, multiplicity %d\n", mol.Formula(), len(mol.Atoms), mol.Charge, mol.Multiplicity)
	for _, c := range spec.Coordinates() {
		var members, moving []string
		for i, m := range c.Members {
			members = append(members, atoms1(m))
			moving = append(moving, atoms1(c.Moving[i]))
		}
		fmt.Fprintf(w, "coordinate %s: %s %s, moving atoms %s (%s)", c.Name, c.Kind, strings.Join(members, " = "), strings.Join(moving, " / "), c.UnitLabel(spec.Units()))
		if c.Periodic() {
			cover := "part of the period: refined inside the range only"
			if c.FullPeriod {
				cover = "the whole period: the scan wraps"
			}
			fmt.Fprintf(w, "; period %g°, %s", c.PeriodDegrees(), cover)
		}
		fmt.Fprintln(w)
	}
	for _, n := range spec.Notes() {
		fmt.Fprintf(w, "note: %s\n", n)
	}
	e := spec.Engine
	switch e.Kind {
	case "builtin":
		fmt.Fprintf(w, "engine: built-in %s/%s\n", strings.ToUpper(e.Method), e.Basis)
	case "model":
		fmt.Fprintf(w, "engine: model potential (%d terms), no electronic structure\n", len(e.Model.Terms))
	default:
		fmt.Fprintf(w, "engine: %s\n", e.Kind)
	}
	workers := spec.Queue.Workers
	if workers == 0 {
		q, err := newQueue(spec, 0)
		if err == nil {
			workers = q.Slots()
		}
	}
	fmt.Fprintf(w, "queue: %s, %d workers, %d attempts per point", spec.Queue.Kind, workers, spec.Queue.Attempts)
	if spec.Queue.Timeout.Duration > 0 {
		fmt.Fprintf(w, ", timeout %s per point", spec.Queue.Timeout.Duration)
	}
	fmt.Fprintln(w)
	if spec.ForceField() != nil {
		fmt.Fprintln(w)
		if err := printForceFieldPlan(w, spec); err != nil {
			fmt.Fprintf(w, "force field: %v\n", err)
		}
		return
	}
	pts := spec.InitialPoints()
	fmt.Fprintf(w, "\nround 1: %d points\n", len(pts))
	for _, p := range pts {
		fmt.Fprintf(w, "  %s\n", p.Key)
	}
	r := spec.Refinement()
	fmt.Fprintln(w)
	if r.Adaptive {
		var ts []string
		for i, c := range spec.Coordinates() {
			ts = append(ts, fmt.Sprintf("%s: target step %g %s, tolerance %g %s", c.Name, r.TargetStep[i], c.UnitLabel(spec.Units()), r.Tolerance[i], c.UnitLabel(spec.Units())))
		}
		fmt.Fprintf(w, "refinement: adaptive; %s; harmonic frequency tolerance %g cm⁻¹\n", strings.Join(ts, "; "), r.FrequencyTolerance)
		what := "minima"
		if r.Maxima {
			what = "minima and maxima"
		}
		fmt.Fprintf(w, "  refines %s; budgets: %d rounds, %d points, %d edge extensions per side\n", what, r.MaxRounds, r.MaxPoints, r.MaxExtensions)
	} else {
		fmt.Fprintln(w, "refinement: off (the grid as written)")
	}
	// Cost: measured point times from an earlier run if there is one, else
	// what is known up front.
	per, basis := time.Duration(0), ""
	if st, err := runner.Open(dir, runner.OpenOptions{ReadOnly: true, Timeout: 200 * time.Millisecond}); err == nil {
		if recs, err := st.Points(); err == nil {
			var secs []float64
			for _, rec := range recs {
				if rec.State == runner.Done && rec.Seconds > 0 {
					secs = append(secs, rec.Seconds)
				}
			}
			if len(secs) > 0 {
				sort.Float64s(secs)
				per = time.Duration(secs[len(secs)/2] * float64(time.Second))
				basis = fmt.Sprintf("median of %d points already computed", len(secs))
			}
		}
		st.Close()
	}
	if per == 0 && e.Kind == "model" {
		per, basis = max(e.Model.Delay.Duration, time.Millisecond), "the model's delay"
	}
	// Typical refinement: about 3 points per extremum per round, 3 rounds
	// (what the Morse tests need); the budget is the upper bound.
	typical := len(pts)
	if r.Adaptive {
		typical += 9
	}
	if per > 0 {
		wall := time.Duration(float64(per) * float64(typical) / float64(max(1, workers)))
		fmt.Fprintf(w, "cost: about %d points (at most %d) × %s per point (%s) ≈ %s wall time on %d workers\n",
			typical, max(len(pts), r.MaxPoints), per.Round(time.Millisecond), basis, wall.Round(time.Second), workers)
	} else {
		fmt.Fprintf(w, "cost: about %d points (at most %d); time per point unknown until the first points finish\n", typical, max(len(pts), r.MaxPoints))
	}
}

func atoms1(idx []int) string {
	var s []string
	for _, i := range idx {
		s = append(s, fmt.Sprint(i+1))
	}
	return "[" + strings.Join(s, ",") + "]"
}

// renderInputs renders the round-1 inputs of a command scan into
// DIR/plan-inputs/<key>.in, so that template mistakes show before anything
// runs. Other engines need nothing rendered.
func renderInputs(w io.Writer, dir string, spec *planner.Spec) error {
	if spec.Engine.Kind != "command" {
		return nil
	}
	b, err := command.NewBackend(spec)
	if err != nil {
		return err
	}
	out := filepath.Join(dir, "plan-inputs")
	if err := os.MkdirAll(out, 0o700); err != nil {
		return err
	}
	pts := spec.InitialPoints()
	for _, p := range pts {
		mol, err := spec.Geometry(p)
		if err != nil {
			return fmt.Errorf("point %s: %w", p.Key, err)
		}
		text, err := b.Render(runner.Task{Key: p.Key, Values: p.Values, Mol: mol})
		if err != nil {
			return fmt.Errorf("point %s: %w", p.Key, err)
		}
		if err := os.WriteFile(filepath.Join(out, p.Key+".in"), text, 0o600); err != nil {
			return err
		}
	}
	fmt.Fprintf(w, "rendered %d inputs of round 1 into %s\n", len(pts), out)
	return nil
}
