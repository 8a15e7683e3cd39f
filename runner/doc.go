// Package runner gets a scan computed: the round loop (plan → dispatch →
// wait → ingest → refine), the bbolt store of point records, retries with
// an attempt budget, per-point timeouts, cancellation, progress events and
// the status.json snapshot. Backends (how one point's energy is computed)
// and queues (where points run) are interfaces defined here and
// implemented in sub-packages; runner never imports them.
//
// # On disk
//
//	DIR/scan.toml            the user's spec, never rewritten
//	DIR/wellscan.db          the store, file mode 0600, one writer
//	DIR/wellscan.lock        who holds the store (PID, host, start time)
//	DIR/status.json          progress snapshot, rewritten atomically
//	DIR/points/<key>/        the point's work directory and result.json
//
// # Invariants
//
// A point is done only after its result.json is durable (temp file, fsync,
// rename, directory fsync); a result file with status "done" for the
// scan's fingerprint is proof of work and is ingested even if the store
// never heard of it (a crash in between). Nothing that reached done is
// computed again. Every state change is written in a store transaction
// together with its event; transitions that happen together share one
// transaction.
//
// # Concurrency
//
// A Store has one writer: the goroutine running Runner.Run. Backends are
// called from several worker goroutines at once and must be safe for that.
// A [Pool] calls the runner's [Worker] from its own goroutines; a [Batch]
// reports from its goroutine through the completion channel and
// [BatchOptions.Notice], and the round loop alone touches the run's state.
//
// # Reading the source
//
// The round loop is in run.go: [Runner] holds the settings, [Runner.Run]
// copies them into the state of one run (scanRun, state.go: the records,
// the pending store transaction, the counters) and loops over rounds. One
// concern per file around it:
//
//	backend.go     Task, Outcome, Backend, and the queue kinds Pool and Batch
//	queue.go       starting and stopping the queue of one run, notices
//	reconcile.go   the store brought in line with the result files at start
//	dispatch.go    which planned point goes next, and the Task it becomes
//	guess.go       the continuation guess: nearest done neighbour, scan line
//	index.go       the coordinate index behind dispatch and guess
//	compute.go     the in-process worker and ComputePoint (compute nodes)
//	result.go      result files; the one conversion Result <-> PointRecord
//	ingest.go      a completion applied to its record
//	jumps.go       the energy-jump rule after each round
//	retry.go       retries, RetryPoints, DropPoints, the same-failure stop
//	failure.go     the failure classes and what each means for a retry
//	tally.go       progress counts, the ETA, status.json while points run
//	record.go      PointRecord, Event and its kinds, RoundRecord
//	store.go       the bbolt store (and migrate.go, recover.go, storeguard.go)
//	respec.go      OpenScan and a spec changed between runs
package runner
