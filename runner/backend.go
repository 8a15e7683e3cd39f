package runner

import (
	"context"

	"wellscan/planner"
)

// Task is one point handed to a backend.
type Task struct {
	Key     string
	Values  []float64 // bohr, radians, in [[scan]] order
	Mol     planner.Molecule
	Dir     string // points/<key>/, created before Compute is called; the backend may write there
	Attempt int    // 1 for the first try
	// GuessPath is the orbitals file of the nearest done neighbour, "" if
	// none, if the spec turns the continuation guess off, or if the point
	// is recomputed after an energy jump (a cold start: the neighbour's
	// orbitals may be what led it onto another state).
	GuessPath string
	// GuessLine, when it has two or more entries, lists done points with
	// orbitals on the scan line through this point and the GuessPath
	// neighbour (GuessLine[0] is that neighbour, then the next nearest, at
	// most three in all), and LineAt is this point's position on the line
	// (the varying coordinate, bohr or radians): a backend may extrapolate
	// its starting guess along the line instead of copying the neighbour's.
	GuessLine []LinePoint
	LineAt    float64
	// Cold is set when the point must start without any continuation
	// guess (a recomputation after an energy jump); queues that compute
	// elsewhere pass it on so the remote side does not pick a guess itself.
	Cold    bool
	Threads int // engine threads this point may use
}

// LinePoint is a done point on a scan line: its orbitals file and its
// position on the line.
type LinePoint struct {
	Path string
	At   float64
}

// Outcome is what a backend computed for one point, and the part of a
// [Result] (the point's result file) that says so. A calculation that ran
// but did not converge is an Outcome with Converged false and a Class,
// not an error.
type Outcome struct {
	Energy     float64  `json:"energy_hartree"` // hartree
	Converged  bool     `json:"converged"`
	Iterations int      `json:"iterations,omitempty"`
	SSquared   *float64 `json:"s_squared,omitempty"` // ⟨S²⟩ for unrestricted methods
	// Orbitals is a file that a later neighbour may start from; "" if
	// none. A backend may give it absolute or relative to Task.Dir (the
	// point directory); a Result holds it relative to the point directory.
	Orbitals string `json:"orbitals,omitempty"`
	// Extra holds further numbers of the calculation, by name (each name
	// carries its unit: "dipole_x_e_bohr", "mp2_correlation_hartree").
	Extra map[string]float64 `json:"extra,omitempty"`
	// Class names the failure when Converged is false; empty on success.
	Class FailureClass `json:"class,omitempty"`
	// Error explains a failure (the error text, with the end of the
	// program's output where there is one). In a Result it starts with
	// the backend's name.
	Error string `json:"error,omitempty"`
	// Permanent marks a failure that would come back the same way on
	// another try (a missing program, an energy that is not in the
	// output): the point is not retried.
	Permanent bool `json:"permanent,omitempty"`
	// Flags are yes/no facts about how the point was computed.
	Flags PointFlags `json:"flags,omitzero"`
}

// PointFlags are yes/no facts a backend reports about how it computed a
// point; the zero value says nothing happened that a flag names.
type PointFlags struct {
	// FromNeighbour: the calculation started from a done neighbour (its
	// orbitals, or for a relaxed point its relaxed geometry and Hessian)
	// and kept that start.
	FromNeighbour bool `json:"from_neighbour,omitempty"`
	// GuessReplaced: a cold start run beside the neighbour's reached a
	// lower state and replaced it (the built-in engine's cold check).
	GuessReplaced bool `json:"guess_replaced,omitempty"`
	// Relaxed: the geometry was optimised with the scanned coordinates
	// held (a relaxed scan).
	Relaxed bool `json:"relaxed,omitempty"`
	// GradientsRead: the relaxation read its gradients from the program's
	// output rather than by finite differences of energies.
	GradientsRead bool `json:"gradients_read,omitempty"`
}

// Backend computes the energy of one point. Compute must honour ctx
// (return promptly with ctx.Err() once it is done) and be safe for
// concurrent use. An error means the calculation could not run; it is
// retried while attempts remain.
type Backend interface {
	Name() string
	Compute(ctx context.Context, t Task) (Outcome, error)
}

// Completion reports one finished (or abandoned) task back to the loop.
type Completion struct {
	Task   Task
	Result Result
	// Interrupted means the task was abandoned because the run was
	// cancelled; it does not use up an attempt.
	Interrupted bool
	// Reused means the result file already existed; nothing was computed.
	Reused bool
	// LeftRunning means the task is still with a batch system that keeps
	// running it after this process stops (a detached or interrupted
	// cluster run): the point stays submitted, its attempt counted, and a
	// later run takes its result file (or finds out from the scheduler
	// what became of it).
	LeftRunning bool
}

// Worker runs one task to completion in this process, writing its result
// file: what a [Pool] calls for each task.
type Worker func(ctx context.Context, t Task) Completion

// Queue is where a scan's points run. A queue is one of two kinds and
// implements exactly one of their interfaces: a [Pool] runs tasks in this
// process with the runner's own worker; a [Batch] hands them to a system
// that computes them elsewhere and may outlive this process. [Runner.Run]
// refuses a queue that is neither.
type Queue interface {
	// Name names the queue in events and messages ("local", "slurm").
	Name() string
	// Slots is how many tasks may run at once.
	Slots() int
}

// Pool is a queue whose workers run tasks in this process (runner/local),
// one per free worker: the round loop then orders the points for the
// continuation guess and may hold a worker back until a first point is
// done.
type Pool interface {
	Queue
	// Run reads tasks from in until in is closed, runs each with compute
	// and sends exactly one Completion per task on out; it returns once
	// every task it took has completed. When ctx is cancelled it stops
	// taking new work; tasks in flight end early with Interrupted set.
	// Run must not close out.
	Run(ctx context.Context, compute Worker, in <-chan Task, out chan<- Completion) error
}

// Batch is a queue that hands tasks to a system that computes them
// elsewhere (a batch scheduler whose compute nodes call [ComputePoint])
// and keeps running them after this process stops.
type Batch interface {
	Queue
	// Submit reads tasks from in until in is closed, has each computed
	// elsewhere and sends exactly one Completion per task on out (its
	// result, a failure of the queue's own, or Interrupted for a task to
	// plan again without using an attempt); it returns once every task it
	// took has completed. When ctx is cancelled, or with opts.Detach once
	// in is closed, it stops watching instead: tasks the batch system has
	// go back with LeftRunning set, the others Interrupted. Submit must
	// not close out.
	Submit(ctx context.Context, in <-chan Task, out chan<- Completion, opts BatchOptions) error
	// DetachNote says what an interrupted run leaves with the batch
	// system: that the tasks go on, and how to see and cancel them.
	DetachNote() string
}

// BatchOptions are what the round loop tells a [Batch] for one Submit.
type BatchOptions struct {
	// Detach: once in is closed, submit what is gathered and return at
	// once, every task in flight as LeftRunning ([Runner.Detach]).
	Detach bool
	// Notice, if not nil, is told what the user should hear of while tasks
	// run (the scheduler stops answering, and answers again); the round
	// loop passes each message on as an [EventNotice]. It may be called
	// from the queue's goroutine and never blocks.
	Notice func(msg string)
}
