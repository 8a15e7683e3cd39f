package runner

// FailureClass says why a point failed; the empty class means it did not.
// Every room that fails a point (the round loop, the engines, the
// external-program backend, the batch queue) names the failure with one
// of the classes below; the strings are what result files, the store and
// `status` hold, and what `wellscan retry --class` takes.
type FailureClass string

// Failures the round loop and its in-process workers find.
const (
	// ClassIO: the point's directory or result file could not be
	// written.
	ClassIO FailureClass = "io"
	// ClassError: the backend returned an error (the calculation could
	// not run).
	ClassError FailureClass = "error"
	// ClassTimeout: no result within [queue] timeout, or the batch task
	// ran out of its time limit.
	ClassTimeout FailureClass = "timeout"
	// ClassNotConverged: the backend reported no convergence without a
	// class of its own.
	ClassNotConverged FailureClass = "not-converged"
	// ClassGeometry: the point's geometry cannot be built.
	ClassGeometry FailureClass = "geometry"
	// ClassEnergyJump: the energy-jump rule rejected the point's energy
	// (see [FindJumps]).
	ClassEnergyJump FailureClass = "energy-jump"
)

// Failures of the built-in engine.
const (
	// ClassSCFNotConverged: the SCF did not converge.
	ClassSCFNotConverged FailureClass = "scf-not-converged"
	// ClassCCNotConverged: the coupled-cluster equations did not
	// converge.
	ClassCCNotConverged FailureClass = "cc-not-converged"
	// ClassMemoryBudget: the method needs more memory than its budget.
	ClassMemoryBudget FailureClass = "memory-budget"
	// ClassRelaxNotConverged: the relaxation of a relaxed-scan point did
	// not converge (either engine).
	ClassRelaxNotConverged FailureClass = "relax-not-converged"
)

// Failures of an external program run through a template.
const (
	// ClassProgramMissing: the program (or the shell script) does not
	// exist or is not executable.
	ClassProgramMissing FailureClass = "program-missing"
	// ClassExitNonZero: the program exited with a non-zero status or was
	// killed by a signal it did not get from wellscan.
	ClassExitNonZero FailureClass = "exit-nonzero"
	// ClassTimedOut: the program ran past its time limit and was killed.
	ClassTimedOut FailureClass = "timed-out"
	// ClassOutputMissing: the program exited cleanly but left out a file
	// it was to write (or the energy file).
	ClassOutputMissing FailureClass = "output-missing"
	// ClassEnergyMissing: the output holds no energy where the extractor
	// looks.
	ClassEnergyMissing FailureClass = "energy-missing"
	// ClassEnergyInvalid: the energy is NaN, infinite, not a number, or
	// implausible (positive, unless allowed).
	ClassEnergyInvalid FailureClass = "energy-invalid"
	// ClassSetupFailed: the point could not be prepared (template error,
	// directory or file could not be written).
	ClassSetupFailed FailureClass = "setup-failed"
	// ClassCancelled: the run was cancelled (the context, or the batch
	// task was cancelled by someone).
	ClassCancelled FailureClass = "cancelled"
	// ClassGradientMissing: a gradient was asked for but the output has
	// none where the extractor looks.
	ClassGradientMissing FailureClass = "gradient-missing"
	// ClassGradientInvalid: the gradient read is not N rows of finite
	// numbers.
	ClassGradientInvalid FailureClass = "gradient-invalid"
)

// Failures of a batch queue, for tasks that ended without a result.
const (
	// ClassSubmit: the submission failed (it may pass on another try).
	ClassSubmit FailureClass = "submit"
	// ClassSubmitRejected: the scheduler refused the job (its
	// resources or options); not retried.
	ClassSubmitRejected FailureClass = "submit-rejected"
	// ClassLost: the task vanished, or the node failed, more often than
	// the infrastructure retries allow.
	ClassLost FailureClass = "lost"
	// ClassOutOfMemory: the task ran out of its memory limit, with no
	// escalation left.
	ClassOutOfMemory FailureClass = "out-of-memory"
	// ClassTaskFailed: the task failed (or passed its deadline) without a
	// result for the point.
	ClassTaskFailed FailureClass = "task-failed"
)

// retriable says whether a failure class may succeed on another try when
// the result does not say so itself (Result.Permanent). A calculation
// that ran and did not converge, or a geometry that cannot be built, will
// fail the same way again.
func retriable(class FailureClass) bool {
	switch class {
	case ClassNotConverged, ClassSCFNotConverged, ClassGeometry:
		return false
	}
	return true
}

// permanentClasses are failure classes that come back the same way on
// another try; records written before PointRecord.Permanent existed are
// judged by them.
var permanentClasses = map[FailureClass]bool{
	ClassProgramMissing: true, ClassOutputMissing: true, ClassEnergyMissing: true, ClassEnergyInvalid: true,
	ClassSetupFailed: true, ClassEnergyJump: true, ClassGeometry: true, ClassNotConverged: true, ClassSCFNotConverged: true,
}

// setupClasses are failures of the set-up rather than of a point: they
// recur at every point (the program does not start, a file it needs is
// missing, the template cannot be rendered).
var setupClasses = map[FailureClass]bool{ClassProgramMissing: true, ClassSetupFailed: true, ClassOutputMissing: true}
