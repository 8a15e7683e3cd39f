package main

import (
	"encoding/json"
	"fmt"
	"math"

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
                 energies in hartree, cm-1 and kJ/mol, state)
  --format json  one object per point: key, coordinates (spec units), state,
                 energy_hartree (null when not done), attempts, last_error
  --format xyz   every done geometry as one frame of a multi-frame XYZ file
                 (Å), the comment line holding the point key and its energy
                 in hartree, for molecule viewers`,
		Example: `  wellscan export myscan > points.csv
  wellscan export myscan --format xyz > scan.xyz`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			switch o.format {
			case "csv", "json", "xyz":
			default:
				return usageError{fmt.Errorf("export: --format %q: expected csv, json or xyz", o.format)}
			}
			in, err := buildReportInput(cmd.Context(), args[0], &fitOptions{limit: math.NaN()})
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
			return exportXYZ(a, spec, in, args[0])
		},
	}
	o.AddFlags(cmd.Flags())
	return cmd
}

type exportPoint struct {
	Key           string             `json:"key"`
	Coordinates   map[string]float64 `json:"coordinates"`
	State         string             `json:"state"`
	EnergyHartree *float64           `json:"energy_hartree"`
	Attempts      int                `json:"attempts"`
	LastError     string             `json:"last_error,omitempty"`
}

func exportJSON(a *app, in report.Input) error {
	units := map[string]string{}
	for _, ax := range in.Axes {
		units[ax.Name] = ax.Unit
	}
	out := struct {
		Mode   string            `json:"scan_mode"`
		Units  map[string]string `json:"coordinate_units"`
		Points []exportPoint     `json:"points"`
	}{Mode: modeOf(in), Units: units, Points: []exportPoint{}}
	for _, p := range in.Points {
		c := map[string]float64{}
		for i, ax := range in.Axes {
			c[ax.Name] = p.Values[i]
		}
		out.Points = append(out.Points, exportPoint{Key: p.Key, Coordinates: c, State: p.State, EnergyHartree: p.Energy, Attempts: p.Attempts, LastError: p.Error})
	}
	enc := json.NewEncoder(a.stdout)
	enc.SetIndent("", "  ")
	return enc.Encode(out)
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
