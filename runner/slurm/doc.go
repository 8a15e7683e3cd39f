// Package slurm is wellscan's batch-scheduler client layer: it renders job-array
// submission scripts, submits them through argv, polls the scheduler with one
// batched query per cycle, classifies final states into wellscan's failure
// classes with a retry policy, cancels a scan's jobs by name, and carries the
// result-file protocol that compute-node tasks use to hand results back.
//
// # Overview
//
// Slurm is the scheduler this package is built and tested for. Other batch
// systems (PBS/Torque-like, LSF-like, SGE-like) are described as data in a
// [Profile]: command templates (argv lists), directive prefix, array and
// throttle syntax, a job-id pattern, a status-line pattern and a state map.
// [Slurm] returns the Slurm preset; the others are chosen by name with
// `scheduler` in [queue.slurm]. Only the Slurm preset is exercised against a
// real scheduler (the tests behind the build tag `slurm`);
// the others are checked only on sample outputs written for the tests.
//
// The pieces, in the order a round uses them:
//   - [Render] writes the job-array script from a [ScriptSpec]; writeManifest
//     writes the per-task list of point keys (tasks.tsv) that the worker reads;
//     no point data ever goes into the script.
//   - Client.submit runs `sbatch --parsable FILE` (no shell, no --wrap) and
//     returns the job id or a *submitError.
//   - poller.Poll runs one status command for the whole scan (filtered by the
//     scan-unique job name) and, only for tasks that left the queue and only
//     when accounting exists, one bounded history command.
//   - [Classify] and retryPolicy.Decide turn a final state into a class and
//     an action (retry with more time, more memory, unchanged, or not at all).
//   - [Client.Cancel] cancels by name (or by ids in batches) and
//     [Client.ConfirmCancelled] confirms with status queries.
//   - readSlurmLimits reads MaxArraySize and MinJobAge once per run (array
//     chunk size; pollPolicy.WithoutAccounting caps polling at MinJobAge/2).
//   - The submission token travels in the job comment and comes back in the
//     status listing (TaskState.token), so a submit interrupted by a crash
//     can be adopted instead of repeated.
//   - writeResultAtomic and readResult are the compute-node/orchestrator
//     halves of the result-file protocol: a result file decides success,
//     whatever the scheduler says.
//
// On top of these, [Queue] is the round loop's [runner.Batch] for
// `[queue] kind = "slurm"`: it packs the points it receives into job
// arrays (config.PointsPerTask per task), writes jobs/<token>/ (script,
// manifest, job.json) before sbatch runs, polls with one batched status
// command per cycle, hands back every point whose result file appears,
// and turns tasks that ended without a result into completions by class.
// [NodeTask] is the compute-node side that the job scripts run (through
// the `wellscan node-task` subcommand): it computes a task's points with
// [runner.ComputePoint] and never opens the store. decodeConfig reads
// [queue.slurm].
//
// # Units
//
// Times are [time.Duration] (rendered as whole minutes, rounded up, because
// Slurm time limits have minute resolution); memory is MiB per node.
//
// # Invariants
//
//   - Every value that reaches a directive line is validated first
//     (validateValue); every word of the script body goes through shell
//     single-quoting; newlines are rejected everywhere.
//   - Scheduler commands are run only through a [Runner], as argv lists.
//   - A poll cycle issues a constant number of scheduler commands (one status
//     command, plus at most one history command), independent of the number
//     of jobs or tasks.
//
// # Concurrency
//
// [Client] and [Profile] values are safe for concurrent use once built. A
// poller keeps state between cycles and must be used by one goroutine.
// [Queue.Submit] runs in one goroutine (no goroutines of its own); call it
// once at a time per Queue. [Queue.Stats] may be called at any time.
package slurm
