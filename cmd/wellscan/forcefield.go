package main

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"path/filepath"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"wellscan/planner"
	"wellscan/runner"
	"wellscan/runner/report"
)

type forcefieldOptions struct {
	out  string
	json bool
}

func (o *forcefieldOptions) AddFlags(fs *pflag.FlagSet) {
	fs.StringVar(&o.out, "out", "", "directory to write the tables and the figure into (default DIR/forcefield)")
	fs.BoolVar(&o.json, "json", false, "print the JSON report on stdout instead of the tables")
}

func newForcefieldCommand(a *app) *cobra.Command {
	var o forcefieldOptions
	cmd := &cobra.Command{
		Use:   "forcefield DIR",
		Short: "Analyse the force-field job in DIR: harmonic and VPT2 wavenumbers, intensities, per isotopologue",
		Long: `Analyse a force-field job (a scan.toml with a [forcefield] table) from
the displacements computed so far, and write DIR/forcefield/ (or --out):

  forcefield.md       per isotopologue: harmonic modes (wavenumber, IR
                      intensity, reduced mass, force constant), VPT2
                      fundamentals, overtones and combination bands, Fermi
                      resonances, x_ij, A0/B0/C0
  forcefield.json     every number, labelled with its unit
  forcefield.csv      one row per isotopologue and band
  forcefield.svg/png  the stick spectrum

The harmonic part is available as soon as stage 1 is done, the anharmonic
part once stage 2 is. Nothing is computed here.`,
		Example: `  wellscan run h2o-ff && wellscan forcefield h2o-ff`,
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			spec, err := planner.Load(filepath.Join(args[0], "scan.toml"))
			if err != nil {
				return err
			}
			if spec.ForceField() == nil {
				return usageError{fmt.Errorf("%s has no [forcefield] table; for a coordinate scan use wellscan fit or wellscan report", filepath.Join(args[0], "scan.toml"))}
			}
			out := o.out
			var dest report.Dest
			if out == "" {
				// Inside the scan: confined, never through a symbolic link.
				out = filepath.Join(args[0], "forcefield")
				fs, err := runner.OpenScanFS(args[0])
				if err != nil {
					return err
				}
				defer fs.Close()
				if err := fs.MkdirAll("forcefield"); err != nil {
					return err
				}
				dest = runner.ReportDest{FS: fs, Rel: "forcefield"}
			} else {
				d, err := runner.OpenDirDest(out)
				if err != nil {
					return err
				}
				defer d.FS.Close()
				dest = d
			}
			rep, err := writeForceField(args[0], dest, spec)
			if err != nil {
				return err
			}
			if o.json {
				return report.WriteFFJSON(a.stdout, rep)
			}
			if err := report.WriteFFMarkdown(a.stdout, rep); err != nil {
				return err
			}
			fmt.Fprintf(a.stdout, "\nfiles: %s\n", out)
			return nil
		},
	}
	o.AddFlags(cmd.Flags())
	return cmd
}

// forceFieldSamples reads the done displacements of the job in dir through
// the one read path (runner.ReadPoints), so that points computed for
// another spec are refused as for a scan. The dipoles (for the infrared
// intensities) are kept in the store only: while a run holds it, the
// analysis waits for the run to stop.
func forceFieldSamples(dir string, spec *planner.Spec) ([]report.FFSample, error) {
	ps, err := runner.ReadPoints(dir, spec)
	if err != nil {
		return nil, err
	}
	if ps.Snapshot != nil {
		return nil, fmt.Errorf("%s: a run holds the store (%s); the force field is analysed from the stored points and their dipoles once it stops", dir, ps.Source)
	}
	recs := ps.Records
	var out []report.FFSample
	for _, r := range recs {
		if r.State != runner.Done || r.Energy == nil {
			continue
		}
		s := report.FFSample{Key: r.Key, Energy: *r.Energy}
		x, okx := r.Extra["dipole_x_e_bohr"]
		y, oky := r.Extra["dipole_y_e_bohr"]
		z, okz := r.Extra["dipole_z_e_bohr"]
		if okx && oky && okz {
			s.Dipole = &[3]float64{x, y, z}
		}
		out = append(out, s)
	}
	return out, nil
}

// writeForceField analyses the job in dir and writes the files into out.
func writeForceField(dir string, dest report.Dest, spec *planner.Spec) (*report.FFReport, error) {
	samples, err := forceFieldSamples(dir, spec)
	if err != nil {
		return nil, err
	}
	rep, err := report.AnalyzeForceField(spec, samples)
	if err != nil {
		return nil, err
	}
	fig, err := report.NewFFFigure(rep)
	if err != nil {
		return nil, err
	}
	files := []struct {
		name  string
		write func(io.Writer) error
	}{
		{"forcefield.md", func(w io.Writer) error { return report.WriteFFMarkdown(w, rep) }},
		{"forcefield.json", func(w io.Writer) error { return report.WriteFFJSON(w, rep) }},
		{"forcefield.csv", func(w io.Writer) error { return report.WriteFFCSV(w, rep) }},
		{"forcefield.svg", fig.WriteSVG},
		{"forcefield.png", fig.WritePNG},
	}
	for _, f := range files {
		var b bytes.Buffer
		if err := f.write(&b); err != nil {
			return nil, err
		}
		if err := dest.WriteFile(f.name, b.Bytes()); err != nil {
			return nil, fmt.Errorf("forcefield: %w", err)
		}
	}
	return rep, nil
}

// printForceFieldPlan is plan's view of a force-field job: how many
// displacements each stage needs, with and without symmetry.
func printForceFieldPlan(w io.Writer, spec *planner.Spec) error {
	ff := spec.ForceField()
	c, err := spec.CountForceField()
	if err != nil {
		return err
	}
	var ops []string
	for _, op := range ff.Ops {
		ops = append(ops, op.Name)
	}
	fmt.Fprintf(w, "force field: order %s; %d vibrational coordinates; symmetry operations %v", ff.Order, len(ff.Basis), ops)
	if ff.SymShift > 1e-6 {
		fmt.Fprintf(w, " (reference symmetrised: atoms moved by up to %.2e bohr)", ff.SymShift)
	}
	fmt.Fprintln(w)
	fmt.Fprintf(w, "stage 1 (Hessian, dipole derivatives): %d displacements, %d computed after symmetry; step %.3g amu^½·bohr along the symmetry-adapted vibrational basis\n", c.HessAll, c.HessComputed, ff.HessStep)
	total := c.HessComputed
	for i, name := range c.QuarticNames {
		fmt.Fprintf(w, "stage 2 (quartic force field, %s): %d displacements, %d computed after symmetry; step %.3g in dimensionless normal coordinates (mode i moves Q = %.3g/√ω_i)\n", name, c.QuarticAll[i], c.QuarticComputed[i], ff.QuarticStep, ff.QuarticStep)
		total += c.QuarticComputed[i]
	}
	fmt.Fprintf(w, "points to compute: %d\n", total)
	var names []string
	for _, iso := range ff.Isos {
		names = append(names, iso.Name)
	}
	fmt.Fprintf(w, "isotopologues analysed: %v\n", names)
	return nil
}

// printEndForceField is run's closing summary for a force-field job.
func printEndForceField(w io.Writer, dir string, spec *planner.Spec) {
	rep, err := func() (*report.FFReport, error) {
		fs, err := runner.OpenScanFS(dir)
		if err != nil {
			return nil, err
		}
		defer fs.Close()
		if err := fs.MkdirAll("forcefield"); err != nil {
			return nil, err
		}
		return writeForceField(dir, runner.ReportDest{FS: fs, Rel: "forcefield"}, spec)
	}()
	fmt.Fprintln(w)
	if err != nil {
		if errors.Is(err, report.ErrFFIncomplete) {
			fmt.Fprintf(w, "force field: not available yet (%v)\n", err)
			return
		}
		fmt.Fprintf(w, "force field: not available (%v)\n", err)
		return
	}
	_ = report.WriteFFMarkdown(w, rep)
	fmt.Fprintf(w, "files: %s\n", filepath.Join(dir, "forcefield"))
}

// notForceField refuses a curve command on a force-field job.
func notForceField(spec *planner.Spec, dir, cmd string) error {
	if spec.ForceField() == nil {
		return nil
	}
	return usageError{fmt.Errorf("%s is a force-field job ([forcefield] in its scan.toml), not a coordinate scan: wellscan %s does not apply; use wellscan forcefield %s", dir, cmd, dir)}
}
