package slurm_test

import (
	"fmt"
	"time"

	"wellscan/runner/slurm"
)

// A two-task array for an invented scan, rendered for Slurm. The point keys
// of each task go into tasks.tsv, never into the script.
func ExampleRender() {
	script, err := slurm.Render(slurm.Slurm(), slurm.ScriptSpec{
		JobName:  slurm.JobNameFor("demo scan"),
		Token:    "demo-r1-1",
		Tasks:    2,
		Throttle: 10,
		JobDir:   "/scratch/demo/jobs/r1-1",
		Worker:   []string{"/usr/local/bin/wellscan", "node-run"},
		Resources: slurm.Resources{
			Partition: "short", Time: 30 * time.Minute, CPUsPerTask: 4, MemMB: 2000,
			Setup: []string{"module load openblas"},
		},
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Print(string(script))
	// Output:
	// #!/bin/bash
	// # Job-array script written by wellscan (profile slurm); the point keys of
	// # each task are in tasks.tsv next to this file.
	// #SBATCH --job-name=ws-03205e71
	// #SBATCH --array=0-1%10
	// #SBATCH --comment=ws:demo-r1-1
	// #SBATCH --partition=short
	// #SBATCH --time=0-00:30:00
	// #SBATCH --cpus-per-task=4
	// #SBATCH --mem=2000M
	// #SBATCH --export=NONE
	// #SBATCH --no-requeue
	// #SBATCH --output=/scratch/demo/jobs/r1-1/slurm-%A_%a.out
	// #SBATCH --error=/scratch/demo/jobs/r1-1/slurm-%A_%a.err
	// set -euo pipefail
	// module load openblas
	// exec '/usr/local/bin/wellscan' 'node-run' --job-dir '/scratch/demo/jobs/r1-1' --task "$SLURM_ARRAY_TASK_ID"
}
