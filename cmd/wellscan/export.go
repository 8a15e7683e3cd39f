package main

import (
	"encoding/json"
	"fmt"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"wellscan/parsers"
	"wellscan/planner"
	"wellscan/runner/report"
)

type exportOptions struct {
	format string
}

func (o *exportOptions) AddFlags(fs *pflag.FlagSet) {
	fs.StringVar(&o.format, "format", "csv", "csv, json or xyz")
}

func newExportCommand(a *app) *cobra.Command {
	var o exportOptions
	cmd := &cobra.Command{
		Use:   "export DIR",
		Short: "Write the points of the scan in DIR to stdout as CSV, JSON or XYZ",
		Long: `Write the points of the scan in DIR to stdout:

  --format csv   the table of report's curve.csv (coordinates in both units,
                 energies in hartree, cm-1 and kJ/mol, state, and the
                 diagnostics the engine reported: SCF iterations, <S^2>,
                 dipole in debye, MP2 parts in hartree)
  --format json  JSON Lines: one object per point on its own line: key,
                 coordinates and coordinate_units (spec units), state,
                 energy_hartree (null when not done), attempts, last_error,
                 and where known scf_iterations, s_squared, dipole_debye,
                 mp2_reference_hartree, mp2_correlation_hartree,
                 mp2_same_spin_hartree, mp2_opposite_spin_hartree
  --format xyz   every done geometry as one frame of a multi-frame XYZ file
                 (Å), the comment line holding the point key and its energy
                 in hartree, for molecule viewers`,
		Example: `  wellscan export myscan > points.csv
  wellscan export myscan --format json | jq -c 'select(.state == "done") | [.key, .s_squared]'
  wellscan export myscan --format xyz > scan.xyz`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			switch o.format {
			case "csv", "json", "xyz":
			default:
				return usageError{fmt.Errorf("export: --format %q: expected csv, json or xyz", o.format)}
			}
			// The points only: export never fits (relative energies are
			// above the lowest computed point, as in curve.csv).
			in, err := buildReportInput(cmd.Context(), args[0], nil)
			if err != nil {
				return err
			}
			switch o.format {
			case "csv":
				return report.WriteCSV(a.stdout, in)
			case "json":
				return exportJSON(a, in)
			}
			spec, err := planner.Load(scanSpecPath(args[0]))
			if err != nil {
				return err
			}
			if err := notForceField(spec, args[0], "export --format xyz"); err != nil {
				return err
			}
			return exportXYZ(a, spec, in, args[0])
		},
	}
	o.AddFlags(cmd.Flags())
	return cmd
}

// exportPoint is one line of `export --format json` (JSON Lines).
type exportPoint struct {
	Key           string             `json:"key"`
	Coordinates   map[string]float64 `json:"coordinates"`
	Units         map[string]string  `json:"coordinate_units"`
	State         string             `json:"state"`
	ScanMode      string             `json:"scan_mode"` // rigid or relaxed
	EnergyHartree *float64           `json:"energy_hartree"`
	Attempts      int                `json:"attempts"`
	LastError     string             `json:"last_error,omitempty"`
	Iterations    int                `json:"scf_iterations,omitempty"`
	SSquared      *float64           `json:"s_squared,omitempty"`
	DipoleDebye   *float64           `json:"dipole_debye,omitempty"`
	MP2Reference  *float64           `json:"mp2_reference_hartree,omitempty"`
	MP2Corr       *float64           `json:"mp2_correlation_hartree,omitempty"`
	MP2SameSpin   *float64           `json:"mp2_same_spin_hartree,omitempty"`
	MP2OppSpin    *float64           `json:"mp2_opposite_spin_hartree,omitempty"`
}

// exportJSON writes one JSON object per point, one per line.
func exportJSON(a *app, in report.Input) error {
	units := map[string]string{}
	for _, ax := range in.Axes {
		units[ax.Name] = ax.Unit
	}
	enc := json.NewEncoder(a.stdout)
	for _, p := range in.Points {
		c := map[string]float64{}
		for i, ax := range in.Axes {
			c[ax.Name] = p.Values[i]
		}
		e := exportPoint{Key: p.Key, Coordinates: c, Units: units, State: p.State, ScanMode: modeOf(in), EnergyHartree: p.Energy, Attempts: p.Attempts, LastError: p.Error,
			Iterations: p.Iterations, SSquared: p.SSquared, DipoleDebye: p.DipoleDebye}
		if m := p.MP2; m != nil {
			ref, corr, ss, os := m.Reference, m.Correlation, m.SameSpin, m.OppositeSpin
			e.MP2Reference, e.MP2Corr, e.MP2SameSpin, e.MP2OppSpin = &ref, &corr, &ss, &os
		}
		if err := enc.Encode(e); err != nil {
			return fmt.Errorf("export: %w", err)
		}
	}
	return nil
}

// exportXYZ writes every done point's geometry (rebuilt from its key, as
// the engine saw it) in Å.
func exportXYZ(a *app, spec *planner.Spec, in report.Input, dir string) error {
	var frames []parsers.Frame
	for _, p := range in.Points {
		if p.Energy == nil {
			continue
		}
		pt, err := spec.ParseKey(p.Key)
		if err != nil {
			return fmt.Errorf("export: %w", err)
		}
		mol, err := spec.Geometry(pt)
		if err != nil {
			return fmt.Errorf("export: point %s: %w", p.Key, err)
		}
		if spec.Relaxed() {
			// The optimised geometry the energy belongs to.
			if mol, err = relaxedGeometry(dir, p.Key, mol); err != nil {
				return fmt.Errorf("export: point %s: %w", p.Key, err)
			}
		}
		f := parsers.Frame{Comment: parsers.FormatXYZComment(p.Key, *p.Energy) + " scan=" + spec.ScanMode()}
		for _, at := range mol.Atoms {
			f.Labels = append(f.Labels, at.Element.Symbol)
			f.Coords = append(f.Coords, [3]float64{at.Pos[0] * planner.BohrInAngstrom, at.Pos[1] * planner.BohrInAngstrom, at.Pos[2] * planner.BohrInAngstrom})
		}
		frames = append(frames, f)
	}
	if len(frames) == 0 {
		return fmt.Errorf("export: no done points to write")
	}
	return parsers.WriteXYZ(a.stdout, frames)
}
