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
package runner
