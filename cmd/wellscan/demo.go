package main

import (
	"bytes"
	_ "embed"
	"fmt"
	"os"
	"path/filepath"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"wellscan/planner"
)

// The demo's embedded specs. demoSpec selects the one `demo` runs: the
// model stand-in until the built-in engine is wired in newBackend, then
// demoCO (carbon monoxide at RHF/6-31G*).
var (
	//go:embed demo_co.toml
	demoCO []byte
	//go:embed demo_model.toml
	demoModel []byte
)

// demoSpec is the spec `wellscan demo` runs. Switch to demoCO when the
// built-in engine lands.
func demoSpec() []byte { return demoCO }

type demoOptions struct {
	dir  string
	keep bool
	run  runOptions
}

func (o *demoOptions) AddFlags(fs *pflag.FlagSet) {
	fs.StringVar(&o.dir, "dir", "", "scan directory to use and keep (default: a new temporary directory, removed at the end)")
	fs.BoolVar(&o.keep, "keep", false, "keep the temporary scan directory (its path is printed)")
	o.run.AddFlags(fs)
}

func newDemoCommand(a *app) *cobra.Command {
	var o demoOptions
	cmd := &cobra.Command{
		Use:   "demo",
		Short: "Run the built-in demonstration scan (carbon monoxide bond stretch, adaptive)",
		Long: `Run an embedded scan — the carbon monoxide bond stretch, refined
adaptively around its minimum — and print the located minimum. Without
--dir the scan runs in a temporary directory that is removed at the end
(--keep keeps it and prints where it is); with --dir it runs there and
stays, and rerunning with the same --dir resumes.`,
		Example: `  wellscan demo
  wellscan demo --dir co-demo && wellscan report co-demo`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			dir := o.dir
			if dir == "" {
				d, err := os.MkdirTemp("", "wellscan-demo-")
				if err != nil {
					return err
				}
				dir = d
				if o.keep {
					defer fmt.Fprintf(a.stderr, "demo scan kept in %s (wellscan report %s draws it)\n", dir, dir)
				} else {
					defer os.RemoveAll(dir)
				}
			}
			text := demoSpec()
			path := filepath.Join(dir, "scan.toml")
			if old, err := os.ReadFile(path); err == nil {
				if !bytes.Equal(old, text) {
					return fmt.Errorf("%s exists and is not the demo spec; use another --dir", path)
				}
			} else {
				if err := os.MkdirAll(dir, 0o700); err != nil {
					return err
				}
				if err := os.WriteFile(path, text, 0o600); err != nil {
					return err
				}
			}
			spec, err := planner.Load(path)
			if err != nil {
				return err
			}
			if o.dir == "" && !o.keep {
				fmt.Fprintf(a.stderr, "demo scan in %s (removed at the end; --keep keeps it)\n", dir)
			} else {
				fmt.Fprintf(a.stderr, "demo scan in %s\n", dir)
			}
			sum, err := runScan(cmd.Context(), a, dir, spec, o.run)
			if sum != nil {
				printSummary(a.stdout, spec, dir, *sum)
				for _, e := range sum.Extrema {
					if e.Kind == "minimum" && spec.Coordinates()[0].Kind == planner.KindDistance {
						fmt.Fprintf(a.stdout, "located minimum: r = %.5f Å (%.5f bohr), E = %.8f hartree", e.Values[0]*planner.BohrInAngstrom, e.Values[0], e.Energy)
						fmt.Fprintln(a.stdout)
					}
				}
				printEndFit(cmd.Context(), a.stdout, dir, spec, sum.Points)
				if spec.Engine.Kind == "model" {
					fmt.Fprintln(a.stdout, "note: this demo ran on a MODEL potential (engine.kind = \"model\"), not an electronic-structure method")
				}
			}
			return err
		},
	}
	o.AddFlags(cmd.Flags())
	return cmd
}
