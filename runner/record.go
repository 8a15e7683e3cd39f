package runner

import (
	"time"
)

// State is where a point is in its lifecycle:
// planned → submitted → running → done | failed. A failed point with
// attempts left goes back to planned.
type State string

// Point states; the strings are what status --json prints.
const (
	Planned   State = "planned"
	Submitted State = "submitted"
	Running   State = "running"
	Done      State = "done"
	Failed    State = "failed"
	// Dropped: taken out of the scan by the user (wellscan drop); never
	// computed again, not counted as a failure, and not used in fits.
	Dropped State = "dropped"
)

// States lists every state in lifecycle order.
var States = []State{Planned, Submitted, Running, Done, Failed, Dropped}

// recordVersion is the schema version of PointRecord ("v").
const recordVersion = 1

// PointRecord is a point as the store keeps it (JSON, so a person can dump
// it). Values are bohr/radians; Energy is hartree.
type PointRecord struct {
	V          int                `json:"v"`
	Key        string             `json:"key"`
	Values     []float64          `json:"values"`
	Round      int                `json:"round"`
	State      State              `json:"state"`
	Attempts   int                `json:"attempts"`
	Energy     *float64           `json:"energy_hartree,omitempty"`
	Converged  bool               `json:"converged,omitempty"`
	Iterations int                `json:"iterations,omitempty"`
	SSquared   *float64           `json:"s_squared,omitempty"`
	Extra      map[string]float64 `json:"extra,omitempty"`
	Flags      PointFlags         `json:"flags,omitzero"`
	Orbitals   string             `json:"orbitals,omitempty"` // relative to the scan directory
	Backend    string             `json:"backend,omitempty"`
	JobID      string             `json:"job_id,omitempty"`
	Class      FailureClass       `json:"class,omitempty"` // failure class of the last attempt
	LastError  string             `json:"last_error,omitempty"`
	Planned    time.Time          `json:"planned"`
	Started    time.Time          `json:"started,omitzero"`
	Finished   time.Time          `json:"finished,omitzero"`
	Seconds    float64            `json:"seconds,omitempty"` // compute time of the successful attempt
	// Jumps counts how often the energy-jump rule rejected the point's
	// energy (see FindJumps): 1 = recomputed once from a fresh guess,
	// 2 = failed for good.
	Jumps int `json:"energy_jumps,omitempty"`
	// Permanent: the last failure would come back the same way on another
	// try (a missing program, no energy in the output, a calculation that
	// did not converge); only `wellscan retry` plans such a point again.
	Permanent bool `json:"permanent,omitempty"`
	// Sum is the record's checksum (see recordSum), set by Store.Commit
	// and verified by Store.Points; empty in records of an earlier
	// wellscan, which are not checked.
	Sum string `json:"sum,omitempty"`
	// Damaged is set by Store.Points (never stored) when the record fails
	// its checksum: it says so, and the record's numbers must not be
	// used.
	Damaged string `json:"-"`
}

// Event is one entry of the store's append-only event log, and what
// progress observers receive.
type Event struct {
	Seq     uint64    `json:"seq"`
	Time    time.Time `json:"time"`
	Kind    EventKind `json:"kind"`
	Key     string    `json:"key,omitempty"`
	Round   int       `json:"round,omitempty"`
	Message string    `json:"message,omitempty"`
	// Progress is filled for observers (not stored).
	Progress *Progress `json:"-"`
}

// EventKind says what an [Event] records. The strings are what the
// store's event log and `run --json` hold.
type EventKind string

// Event kinds. A point that changes state is recorded under the kind of
// its new state.
const (
	EventPlanned   = EventKind(Planned)
	EventSubmitted = EventKind(Submitted)
	EventRunning   = EventKind(Running)
	EventDone      = EventKind(Done)
	EventFailed    = EventKind(Failed)
	EventDropped   = EventKind(Dropped)

	// EventRound: a round was planned (from the grid, or by refinement).
	EventRound EventKind = "round"
	// EventRefine: refinement judged a finished round.
	EventRefine EventKind = "refine"
	// EventRetry: a failed point is planned again (attempts left, an
	// energy jump, or the user's request).
	EventRetry EventKind = "retry"
	// EventResume: the store was brought in line with the files on disk,
	// or accepted a change (an engine change before any point finished,
	// keys made canonical).
	EventResume EventKind = "resume"
	// EventInterrupt: the run was cancelled; points in flight return to
	// planned.
	EventInterrupt EventKind = "interrupt"
	// EventDetach: a detached run left its points with the queue.
	EventDetach EventKind = "detach"
	// EventFinish: refinement is over.
	EventFinish EventKind = "finish"
	// EventRepair: a record that failed its checksum was replaced.
	EventRepair EventKind = "repair"
	// EventWarning: a convenience file (status.json, the store backup)
	// could not be written; the scan goes on.
	EventWarning EventKind = "warning"
	// EventRebuild: the store was rebuilt from the result files.
	EventRebuild EventKind = "rebuild"
	// EventNotice: a message from the queue while points run (a
	// scheduler that stopped answering, and answers again). Observers get
	// it; the store's log does not keep it.
	EventNotice EventKind = "notice"
)

// Progress is a count of the scan's points at one moment.
type Progress struct {
	Round   int
	Counts  map[State]int
	Total   int
	ETA     time.Duration // 0 when unknown
	Elapsed time.Duration
}

// RoundRecord is one round as the store keeps it.
type RoundRecord struct {
	V        int       `json:"v"`
	Round    int       `json:"round"`
	Points   int       `json:"points"` // planned in this round
	Started  time.Time `json:"started"`
	Finished time.Time `json:"finished,omitzero"`
	Status   string    `json:"refine_status,omitempty"`
	Reason   string    `json:"refine_reason,omitempty"`
}
