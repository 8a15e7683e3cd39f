package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/command"
)

type planOptions struct {
	geometries bool
}

func newPlanCommand(a *app) *cobra.Command {
	var o planOptions
	cmd := &cobra.Command{
		Use:   "plan DIR",
		Short: "Show what a run of DIR would compute, without computing anything",
		Long: `Dry run: check DIR/scan.toml, then print the scan's label, the molecule
with its reference geometry (Å), the defaults chosen for what the spec
leaves out (method, multiplicity), the keys of the points of round 1, the
refinement settings and budgets, and an estimate of the cost; with
--geometries also every round-1 point's geometry (Å). Nothing is computed
and the store is not touched.

With an external program (engine.kind = "command") plan also finds the
program as the runs will (and checks that it is executable), lists the
arguments that name files in the scan directory (they are passed as
absolute paths, since the program runs in points/<key>/), and renders
every input of round 1 into DIR/plan-inputs/; the first template error
stops the plan with the template's file and line.`,
		Example: `  wellscan plan co-stretch
  wellscan plan co-stretch --geometries`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			spec, err := planner.Load(filepath.Join(args[0], "scan.toml"))
			if err != nil {
				return err
			}
			backend, err := newBackend(spec)
			if err != nil {
				return err
			}
			printPlan(a.stdout, args[0], spec, o)
			if cb, ok := backend.(*command.Backend); ok {
				if err := printProgram(a.stdout, cb.Config()); err != nil {
					return err
				}
			}
			return renderInputs(cmd.Context(), a.stdout, args[0], spec)
		},
	}
	cmd.Flags().BoolVar(&o.geometries, "geometries", false, "also print the geometry (Å) of every point of round 1")
	return cmd
}

// num prints a setting without binary round-off: 0.002, not
// 0.0019999999999999974.
func num(x float64) string { return strconv.FormatFloat(x, 'g', 6, 64) }

// printProgram says how the external program and its file arguments
// will be found from a point's directory.
func printProgram(w io.Writer, c command.Config) error {
	p, err := c.Program()
	if err != nil {
		return fmt.Errorf("plan: engine.command: %w", err)
	}
	what := "program"
	if c.Shell {
		what = "shell"
	}
	fmt.Fprintf(w, "%s: %s (found, executable); it runs in points/<key>/\n", what, p)
	for _, r := range c.Resolved {
		fmt.Fprintf(w, "  argument %d %q names a file in the scan directory: passed as %s\n", r.Index, r.Written, r.Path)
	}
	resolved := map[int]bool{}
	for _, r := range c.Resolved {
		resolved[r.Index] = true
	}
	for i, a := range c.Args {
		if i == 0 || resolved[i] || filepath.IsAbs(a) || strings.HasPrefix(a, "-") || !strings.ContainsRune(a, '/') {
			continue
		}
		fmt.Fprintf(w, "  note: argument %d %q names no file in the scan directory; the program looks for it from points/<key>/\n", i, a)
	}
	for i, a := range c.Args {
		if i > 0 && filepath.IsAbs(a) && !resolved[i] {
			if _, err := os.Stat(a); err != nil {
				fmt.Fprintf(w, "  note: argument %d %q does not exist on this machine\n", i, a)
			}
		}
	}
	fmt.Fprintln(w)
	return nil
}

func printPlan(w io.Writer, dir string, spec *planner.Spec, o planOptions) {
	mol, _ := spec.Molecule()
	if spec.Title != "" {
		fmt.Fprintf(w, "scan: %s\n", sanitizeLine(spec.Title))
	}
	fmt.Fprintf(w, "label: %s\n", scanLabel(spec, mol))
	fmt.Fprintf(w, "molecule: %s, %s, %d electrons, charge %s, multiplicity %d%s\n", mol.Isotopologue(), plural(len(mol.Atoms), "atom"), mol.Electrons(), signed(mol.Charge),
		mol.Multiplicity, multiplicityNote(spec.IsDefined("molecule", "multiplicity") && spec.MoleculeInput.Multiplicity != 0, mol))
	if iso := mol.Isotopes(); len(iso) > 0 {
		fmt.Fprintf(w, "isotopes: %s (masses change frequencies, not energies)\n", strings.Join(iso, "; "))
	}
	fmt.Fprintln(w, "reference geometry (Å):")
	writeGeometry(w, mol)
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
			fmt.Fprintf(w, "; period %s°, %s", num(c.PeriodDegrees()), cover)
		}
		fmt.Fprintln(w)
	}
	for _, n := range spec.Notes() {
		fmt.Fprintf(w, "note: %s\n", n)
	}
	switch {
	case spec.ForceField() != nil:
		fmt.Fprintln(w, "job: force field (energies at displaced geometries around the reference)")
	case spec.Relaxed():
		fmt.Fprintf(w, "scan kind: %s (every coordinate not scanned is optimised at each point; %d held)\n", scanKind(spec), len(spec.Held()))
	default:
		fmt.Fprintf(w, "scan kind: %s (every coordinate not scanned stays at the reference geometry)\n", scanKind(spec))
	}
	e := spec.Engine
	switch e.Kind {
	case "builtin":
		how := "given"
		if !spec.IsDefined("engine", "method") {
			how = fmt.Sprintf("default for multiplicity %d", mol.Multiplicity)
		}
		fmt.Fprintf(w, "engine: built-in %s/%s (method %s)", specMethod(spec, mol), e.Basis, how)
		if strings.EqualFold(e.Method, "mp2") {
			if e.FrozenCore == nil || *e.FrozenCore {
				fmt.Fprint(w, "; MP2 with the atoms' noble-gas cores frozen")
			} else {
				fmt.Fprint(w, "; MP2 with every electron correlated")
			}
		}
		fmt.Fprintln(w)
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
	fmt.Fprintf(w, "queue: %s, %s, %s per point", spec.Queue.Kind, plural(workers, "worker"), plural(spec.Queue.Attempts, "attempt"))
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
		if o.geometries {
			if g, err := spec.Geometry(p); err == nil {
				writeGeometry(w, g)
			} else {
				fmt.Fprintf(w, "    (no geometry: %v)\n", err)
			}
		}
	}
	r := spec.Refinement()
	fmt.Fprintln(w)
	if r.Adaptive {
		var ts []string
		for i, c := range spec.Coordinates() {
			ts = append(ts, fmt.Sprintf("%s: target step %s %s, tolerance %s %s", c.Name, num(r.TargetStep[i]), c.UnitLabel(spec.Units()), num(r.Tolerance[i]), c.UnitLabel(spec.Units())))
		}
		fmt.Fprintf(w, "refinement: adaptive; %s; harmonic frequency tolerance %s cm⁻¹\n", strings.Join(ts, "; "), num(r.FrequencyTolerance))
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
	// The one read path; an edited spec's fingerprint error does not
	// matter for a time estimate, and a running scan's snapshot has no
	// point times.
	if ps, _ := runner.ReadPoints(dir, spec); len(ps.Records) > 0 {
		var secs []float64
		for _, rec := range ps.Records {
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
		fmt.Fprintf(w, "cost: about %d points (at most %d) × %s per point (%s) ≈ %s wall time on %s\n",
			typical, max(len(pts), r.MaxPoints), per.Round(time.Millisecond), basis, wall.Round(time.Second), plural(workers, "worker"))
	} else {
		fmt.Fprintf(w, "cost: about %d points (at most %d); time per point unknown until the first points finish\n", typical, max(len(pts), r.MaxPoints))
	}
}

// writeGeometry prints a molecule's atoms in Å, indented, numbered from 1.
func writeGeometry(w io.Writer, mol planner.Molecule) {
	for i, a := range mol.Atoms {
		fmt.Fprintf(w, "    %3d %-2s %12.6f %12.6f %12.6f\n", i+1, a.Element.Symbol,
			a.Pos[0]*planner.BohrInAngstrom+0, a.Pos[1]*planner.BohrInAngstrom+0, a.Pos[2]*planner.BohrInAngstrom+0)
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
func renderInputs(ctx context.Context, w io.Writer, dir string, spec *planner.Spec) error {
	if spec.Engine.Kind != "command" {
		return nil
	}
	b, err := command.NewBackend(spec)
	if err != nil {
		return err
	}
	out := filepath.Join(dir, "plan-inputs")
	fs, err := runner.OpenScanFS(dir)
	if err != nil {
		return err
	}
	defer fs.Close()
	if err := fs.MkdirAll("plan-inputs"); err != nil {
		return err
	}
	pts := spec.InitialPoints()
	for _, p := range pts {
		mol, err := spec.Geometry(p)
		if err != nil {
			return fmt.Errorf("point %s: %w", p.Key, err)
		}
		text, err := b.RenderContext(ctx, runner.Task{Key: p.Key, Values: p.Values, Mol: mol})
		if err != nil {
			return fmt.Errorf("point %s: %w", p.Key, err)
		}
		f, err := fs.Create(filepath.Join("plan-inputs", p.Key+".in"))
		if err != nil {
			return err
		}
		_, werr := f.Write(text)
		if err := errors.Join(werr, f.Close()); err != nil {
			return fmt.Errorf("plan: %w", err)
		}
	}
	fmt.Fprintf(w, "rendered %d inputs of round 1 into %s\n", len(pts), out)
	return nil
}
