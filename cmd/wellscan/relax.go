package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"wellscan/parsers"
	"wellscan/planner"
	"wellscan/planner/geomopt"
	"wellscan/runner"
	"wellscan/runner/hf"
)

type relaxOptions struct {
	moleculeFlags
	method     string
	maxSteps   int
	out        string
	trajectory string
	hold       []string
	tighter    float64
}

func (o *relaxOptions) AddFlags(fs *pflag.FlagSet) {
	o.moleculeFlags.AddFlags(fs)
	fs.StringVar(&o.method, "method", "", "rhf, uhf (analytic gradients) or mp2 (gradients by central differences); default rhf for singlets, uhf otherwise")
	fs.IntVar(&o.maxSteps, "max-steps", 100, "largest number of gradients")
	fs.StringVar(&o.out, "out", "", "also write the optimised geometry to this XYZ file (Å)")
	fs.StringVar(&o.trajectory, "trajectory", "", "write every step's geometry to this multi-frame XYZ file (Å)")
	fs.StringArrayVar(&o.hold, "hold", nil, "hold a coordinate at its starting value: bond:I,J, angle:I,J,K or torsion:I,J,K,L (atoms from 1); repeatable")
	fs.Float64Var(&o.tighter, "tighter", 1, "divide every convergence threshold by this factor (defaults: max force 4.5e-4, rms force 3e-4, max step 1.8e-3, ΔE 1e-6 in atomic units)")
}

func newRelaxCommand(a *app) *cobra.Command {
	o := &relaxOptions{}
	cmd := &cobra.Command{
		Use:   "relax FILE.xyz | relax DIR",
		Short: "Optimise the geometry of one molecule (built-in engine or an external program)",
		Long: `Minimise the energy of one molecule over its nuclear positions:
rational-function quasi-Newton steps with a trust radius and BFGS updates
in redundant internal coordinates (bonds, bends, torsions).

relax FILE.xyz uses the built-in engine (analytic RHF/UHF gradients, MP2
by central differences) with the flags below; --hold keeps chosen
coordinates exactly at their starting values.

relax DIR reads DIR/scan.toml: [molecule], [engine] (kind = "builtin", or
kind = "command" with [engine.command] as for a scan, plus gradient = {…}
to read the program's gradient; without it the program's energies are
differenced), optionally [relax] (hold, tie, max_steps, tighter) and
[queue] threads, and no [[scan]]. Every program run gets its own
directory DIR/relax/step-NNN (and step-NNN/d-MMMp|m for the displaced
energies of a central difference). DIR/relax-state.json is the
checkpoint, rewritten after every gradient: a killed run loses at most
the gradient in flight and the next 'wellscan relax DIR' continues it
(or, when finished, prints the result again). DIR also gets relaxed.xyz,
relax-trajectory.xyz and relax-gradients.log.

Prints the optimised geometry (XYZ, Å), the energy, the final forces and
the internal coordinates. The exit status is 1, with a loud message, when
the optimisation does not converge; the last geometry is then printed but
is NOT a minimum.`,
		Example: `  wellscan relax water.xyz --basis 6-31G*
  wellscan relax ch3.xyz --method uhf --multiplicity 2 --out ch3-opt.xyz
  wellscan relax h2o2.xyz --hold torsion:3,1,2,4 --trajectory steps.xyz
  wellscan relax opt-dir --out opt.xyz     # opt-dir/scan.toml: [molecule], [engine], no [[scan]]`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return runRelax(cmd, a, o, args[0])
		},
	}
	o.AddFlags(cmd.Flags())
	return cmd
}

// parseHold reads KIND:I,J[,K[,L]] (atoms 1-based) into a prim.
func parseHold(s string, nat int) (geomopt.Prim, error) {
	kind, list, ok := strings.Cut(s, ":")
	if !ok {
		return geomopt.Prim{}, fmt.Errorf("--hold %q: want KIND:I,J[,K[,L]]", s)
	}
	want := map[string]int{"bond": 2, "angle": 3, "torsion": 4}[kind]
	if want == 0 {
		return geomopt.Prim{}, fmt.Errorf("--hold %q: kind %q, want bond, angle or torsion", s, kind)
	}
	parts := strings.Split(list, ",")
	if len(parts) != want {
		return geomopt.Prim{}, fmt.Errorf("--hold %q: %s needs %d atoms, got %d", s, kind, want, len(parts))
	}
	p := geomopt.Prim{Kind: geomopt.PrimKind(kind)}
	for _, f := range parts {
		i, err := strconv.Atoi(strings.TrimSpace(f))
		if err != nil || i < 1 || i > nat {
			return geomopt.Prim{}, fmt.Errorf("--hold %q: atom %q, want a number from 1 to %d", s, f, nat)
		}
		p.Atoms = append(p.Atoms, i-1)
	}
	return p, nil
}

// relaxReport is the --json output of `wellscan relax`.
type relaxReport struct {
	Converged      bool           `json:"converged"`
	Reason         string         `json:"reason"`
	EnergyHartree  float64        `json:"energy_hartree"`
	Method         string         `json:"method"`
	Basis          string         `json:"basis"`
	Program        string         `json:"program,omitempty"`   // external program (wellscan relax DIR)
	Directory      string         `json:"directory,omitempty"` // wellscan relax DIR
	Gradients      int            `json:"gradients"`
	GradientKind   string         `json:"gradient"`
	Symbols        []string       `json:"symbols"`
	GeometryAng    [][3]float64   `json:"geometry_angstrom"`
	ForcesAU       [][3]float64   `json:"forces_hartree_per_bohr"`
	MaxForce       float64        `json:"max_internal_force"`
	RMSForce       float64        `json:"rms_internal_force"`
	Internals      []internalLine `json:"internal_coordinates"`
	Held           []string       `json:"held,omitempty"`
	StepEnergiesEh []float64      `json:"step_energies_hartree"`
}

type internalLine struct {
	Name  string  `json:"name"`
	Value float64 `json:"value"`
	Unit  string  `json:"unit"`
}

func runRelax(cmd *cobra.Command, a *app, o *relaxOptions, path string) error {
	if st, err := os.Stat(path); err == nil && st.IsDir() {
		return runRelaxDir(cmd, a, o, path)
	}
	unit, conv, err := o.checkUnitsConvention()
	if err != nil {
		return err
	}
	method, err := hf.ParseMethod(o.method)
	if err != nil {
		return usageError{fmt.Errorf("--method: %w", err)}
	}
	if !(o.tighter > 0) || math.IsInf(o.tighter, 0) {
		return usageError{fmt.Errorf("--tighter %v: want a positive factor", o.tighter)}
	}
	if o.maxSteps < 1 {
		return usageError{fmt.Errorf("--max-steps %d: want at least 1", o.maxSteps)}
	}
	mol, err := o.readMolecule(a.stdin, path, unit)
	if err != nil {
		return err
	}
	set, err := o.basisSet()
	if err != nil {
		return err
	}
	x0 := geomopt.Flatten(mol)
	var cons []geomopt.Constraint
	for _, h := range o.hold {
		p, err := parseHold(h, len(mol.Atoms))
		if err != nil {
			return usageError{err}
		}
		cons = append(cons, geomopt.Constraint{Prim: p, Value: p.Value(x0)})
	}
	gopts := geomopt.Options{MaxSteps: o.maxSteps, Criteria: geomopt.Criteria{}.Tight(o.tighter), Constraints: cons}
	res, src, err := hf.Optimize(cmd.Context(), mol, hf.Options{Method: method, Basis: set, Convention: conv, Workers: o.workers}, gopts)
	if res == nil {
		return err
	}
	rep := newRelaxReport(res, mol, o.hold)
	if l := src.Last; l != nil {
		rep.Method, rep.Basis = string(l.Method), l.Basis
		rep.GradientKind = "analytic"
		if !l.Analytic {
			rep.GradientKind = fmt.Sprintf("central differences, step %g bohr", l.FDStep)
		}
	}
	return emitRelax(a, o, rep, res, mol, err)
}

// emitRelax writes --out and --trajectory and prints the report; err is
// the optimiser's (a non-converged run exits 1 after printing).
func emitRelax(a *app, o *relaxOptions, rep relaxReport, res *geomopt.Result, mol planner.Molecule, err error) error {
	if o.out != "" {
		if e := writeXYZFile(o.out, []parsers.Frame{xyzFrame(res.Mol, fmt.Sprintf("wellscan relax: E = %.10f Eh (%s)", res.Energy, convergedWord(res.Converged)))}); e != nil {
			return e
		}
	}
	if o.trajectory != "" {
		var fr []parsers.Frame
		for i, f := range res.State.Trajectory {
			m := mol.Clone()
			for k := range m.Atoms {
				copy(m.Atoms[k].Pos[:], f.X[3*k:3*k+3])
			}
			word := "rejected"
			if f.Accepted {
				word = "accepted"
			}
			fr = append(fr, xyzFrame(m, fmt.Sprintf("step %d: E = %.10f Eh, max force %.2e, %s", i, f.Energy, f.MaxForce, word)))
		}
		if e := writeXYZFile(o.trajectory, fr); e != nil {
			return e
		}
	}
	if o.json {
		enc := json.NewEncoder(a.stdout)
		enc.SetIndent("", "  ")
		if e := enc.Encode(rep); e != nil {
			return e
		}
	} else {
		printRelax(a.stdout, rep)
	}
	if errors.Is(err, geomopt.ErrNotConverged) {
		return fmt.Errorf("%w: geometry optimisation: %v", errNotConverged, err)
	}
	return err
}

func convergedWord(ok bool) string {
	if ok {
		return "converged"
	}
	return "NOT converged"
}

func xyzFrame(m planner.Molecule, comment string) parsers.Frame {
	f := parsers.Frame{Comment: comment}
	for _, at := range m.Atoms {
		f.Labels = append(f.Labels, at.Element.Symbol)
		var p [3]float64
		for k := range 3 {
			p[k] = at.Pos[k] * planner.BohrInAngstrom
		}
		f.Coords = append(f.Coords, p)
	}
	return f
}

func writeXYZFile(path string, frames []parsers.Frame) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	if err := parsers.WriteXYZ(f, frames); err != nil {
		f.Close()
		return fmt.Errorf("write %s: %w", path, err)
	}
	return f.Close()
}

func newRelaxReport(res *geomopt.Result, mol planner.Molecule, held []string) relaxReport {
	rep := relaxReport{Converged: res.Converged, Reason: res.Reason, EnergyHartree: res.Energy,
		Gradients: res.Gradients, MaxForce: res.MaxForce, RMSForce: res.RMSForce, Held: held}
	for a, at := range res.Mol.Atoms {
		rep.Symbols = append(rep.Symbols, at.Element.Symbol)
		var p, f [3]float64
		for k := range 3 {
			p[k] = at.Pos[k] * planner.BohrInAngstrom
			f[k] = -res.Gradient[a][k]
		}
		rep.GeometryAng = append(rep.GeometryAng, p)
		rep.ForcesAU = append(rep.ForcesAU, f)
	}
	x := geomopt.Flatten(res.Mol)
	for _, p := range res.State.Prims {
		switch p.Kind {
		case geomopt.PrimBond:
			rep.Internals = append(rep.Internals, internalLine{p.String(), p.Value(x) * planner.BohrInAngstrom, "Å"})
		case geomopt.PrimAngle, geomopt.PrimTorsion:
			rep.Internals = append(rep.Internals, internalLine{p.String(), p.Value(x) * 180 / math.Pi, "deg"})
		}
	}
	for _, f := range res.State.Trajectory {
		rep.StepEnergiesEh = append(rep.StepEnergiesEh, f.Energy)
	}
	return rep
}

func printRelax(w io.Writer, rep relaxReport) {
	if !rep.Converged {
		fmt.Fprintf(w, "!! GEOMETRY OPTIMISATION NOT CONVERGED (%s): the geometry below is NOT a minimum !!\n\n", rep.Reason)
	}
	if rep.Program != "" {
		fmt.Fprintf(w, "program          %s\ngradients        %s\n", rep.Program, rep.GradientKind)
	} else {
		fmt.Fprintf(w, "method / basis   %s / %s, %s gradients\n", strings.ToUpper(rep.Method), rep.Basis, rep.GradientKind)
	}
	if rep.Directory != "" {
		fmt.Fprintf(w, "directory        %s (checkpoint %s; a rerun continues it)\n", rep.Directory, runner.RelaxStateFile)
	}
	fmt.Fprintf(w, "optimisation     %s after %d gradients (%s)\n", convergedWord(rep.Converged), rep.Gradients, rep.Reason)
	fmt.Fprintf(w, "energy           %.10f Eh\n", rep.EnergyHartree)
	if len(rep.Held) > 0 {
		fmt.Fprintf(w, "held             %s\n", strings.Join(rep.Held, " "))
	}
	fmt.Fprintf(w, "\ngeometry (Å)\n")
	_ = parsers.WriteXYZ(w, []parsers.Frame{{Comment: "optimised by wellscan relax", Labels: rep.Symbols, Coords: rep.GeometryAng}})
	fmt.Fprintf(w, "\nforces (Eh/bohr)\n")
	for i, s := range rep.Symbols {
		f := rep.ForcesAU[i]
		fmt.Fprintf(w, "%3d %-3s %13.2e %13.2e %13.2e\n", i+1, s, f[0]+0, f[1]+0, f[2]+0) // +0: no "-0.00e+00"
	}
	fmt.Fprintf(w, "max / rms internal force  %.2e / %.2e (Eh/bohr, Eh/rad)\n", rep.MaxForce, rep.RMSForce)
	fmt.Fprintf(w, "\ninternal coordinates\n")
	for _, l := range rep.Internals {
		if l.Unit == "Å" {
			fmt.Fprintf(w, "  %-22s %10.5f %s\n", l.Name, l.Value, l.Unit)
		} else {
			fmt.Fprintf(w, "  %-22s %10.3f %s\n", l.Name, l.Value, l.Unit)
		}
	}
}
