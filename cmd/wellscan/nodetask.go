package main

import (
	"fmt"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"wellscan/runner"
	"wellscan/runner/slurm"
)

type nodeTaskOptions struct {
	jobDir string
	task   int
}

func (o *nodeTaskOptions) AddFlags(fs *pflag.FlagSet) {
	fs.StringVar(&o.jobDir, "job-dir", "", "the submission's directory (DIR/jobs/<token>)")
	fs.IntVar(&o.task, "task", -1, "array task index")
}

func newNodeTaskCommand(a *app) *cobra.Command {
	var o nodeTaskOptions
	cmd := &cobra.Command{
		Use: slurm.NodeSubcommand + " --job-dir DIR --task N",
		// Internal: the job scripts run it; users never type it.
		Hidden: true,
		Short:  "Compute one array task's points (run by the job scripts of a cluster scan)",
		Long: `Compute the points that array task N of a submission lists in
DIR/tasks.tsv, writing each points/<key>/result.json. Points that already
have a done result are skipped, so a requeued task repeats nothing. The
scan's store is never opened. Job scripts written by "wellscan run" for
[queue] kind = "slurm" call this; there is no need to run it by hand.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			if o.jobDir == "" || o.task < 0 {
				return usageError{fmt.Errorf("--job-dir and a non-negative --task are required")}
			}
			return slurm.NodeTask{JobDir: o.jobDir, Task: o.task, NewBackend: newBackend,
				OnPoint: func(key, what string, status runner.ResultStatus) {
					fmt.Fprintf(a.stderr, "wellscan %s: %s %s (%s)\n", slurm.NodeSubcommand, what, key, status)
				}}.Run(cmd.Context())
		},
	}
	o.AddFlags(cmd.Flags())
	return cmd
}
