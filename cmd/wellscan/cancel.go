package main

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"time"

	"github.com/spf13/cobra"

	"wellscan/planner"
	"wellscan/runner/slurm"
)

func newCancelCommand(a *app) *cobra.Command {
	var wait time.Duration
	cmd := &cobra.Command{
		Use:   "cancel DIR",
		Short: "Cancel the batch jobs of the scan in DIR (Slurm, or the [queue.batch] scheduler)",
		Long: `Cancel every batch job of the scan in DIR by the scan's own job name
(one scancel for all of them on Slurm; by id, in batches, where the scheduler
cannot cancel by name), then wait until the status command lists none of them
as pending or running. Points already written stay done; the points of the
cancelled tasks are computed again by the next 'wellscan run DIR'.`,
		Example: "  wellscan cancel co-stretch\n  wellscan cancel co-stretch --wait 2m",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			dir := args[0]
			spec, err := planner.Load(filepath.Join(dir, "scan.toml"))
			if err != nil {
				return err
			}
			if !isBatchQueue(spec) {
				return fmt.Errorf("cancel: %s runs on the %q queue, which has no batch jobs to cancel (stop a local run with Ctrl-C)", dir, spec.Queue.Kind)
			}
			abs, err := filepath.Abs(dir)
			if err != nil {
				return err
			}
			if _, err := os.Stat(abs); err != nil {
				return err
			}
			name := slurm.JobNameFor(abs)
			client, err := slurm.ClientFor(spec)
			if err != nil {
				return err
			}
			if err := client.Cancel(cmd.Context(), name); err != nil {
				return fmt.Errorf("cancel: jobs named %s: %w", name, err)
			}
			ctx, stop := context.WithTimeout(cmd.Context(), wait)
			defer stop()
			left, err := client.ConfirmCancelled(ctx, name, 2*time.Second)
			live := 0
			for _, t := range left {
				if !slurm.Classify(t.State).Terminal() {
					live++
				}
			}
			if err != nil || live > 0 {
				return fmt.Errorf("cancel: asked %s to cancel the jobs named %s, but %d task(s) are still listed as live after %s: %v", slurm.DisplayName(client.Profile().Name), name, live, wait, err)
			}
			fmt.Fprintf(a.stdout, "cancelled the %s jobs of %s (job name %s); 'wellscan run %s' computes what is missing\n", slurm.DisplayName(client.Profile().Name), dir, name, dir)
			return nil
		},
	}
	cmd.Flags().DurationVar(&wait, "wait", time.Minute, "how long to wait for Slurm to confirm")
	return cmd
}
