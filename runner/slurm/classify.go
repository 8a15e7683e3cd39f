package slurm

import (
	"fmt"
	"math"
	"time"
)

// Class is wellscan's reading of a scheduler state. The result file decides
// success before any of this: a valid result means done whatever the class
// (SOURCES.md §3).
type Class int

const (
	// classUnknown: the state is not recognised, or there is none. Never
	// success: check the result file, wait the grace period, then classLost.
	classUnknown Class = iota
	// classWaiting: PENDING, CONFIGURING, POWER_UP_NODE.
	classWaiting
	// classActive: RUNNING, COMPLETING, SUSPENDED, STOPPED, SIGNALING,
	// RESIZING, STAGE_OUT.
	classActive
	// classRequeued: REQUEUED, REQUEUE_FED — Slurm is requeueing under the
	// same id; wait, never resubmit.
	classRequeued
	// classHeld: REQUEUE_HOLD, SPECIAL_EXIT, RESV_DEL_HOLD — needs a person.
	classHeld
	// classCompleted: COMPLETED (the task ran to its end).
	classCompleted
	// classFailed: FAILED — the worker itself failed; the point's own error.
	classFailed
	// classTimeout: TIMEOUT.
	classTimeout
	// classOutOfMemory: OUT_OF_MEMORY.
	classOutOfMemory
	// classInfra: NODE_FAIL, BOOT_FAIL, LAUNCH_FAILED, RECONFIG_FAIL, REVOKED.
	classInfra
	// classPreempted: PREEMPTED (when not requeued by Slurm).
	classPreempted
	// classCancelled: CANCELLED.
	classCancelled
	// classDeadline: DEADLINE (only with --deadline).
	classDeadline
	// classLost: the task left the scheduler with no final state and no
	// result file within the grace period. Set by the caller, never by
	// [Classify].
	classLost
)

var classNames = map[Class]string{
	classUnknown: "unknown", classWaiting: "waiting", classActive: "active", classRequeued: "requeued",
	classHeld: "held", classCompleted: "completed", classFailed: "failed", classTimeout: "timeout",
	classOutOfMemory: "out-of-memory", classInfra: "infrastructure", classPreempted: "preempted",
	classCancelled: "cancelled", classDeadline: "deadline", classLost: "lost",
}

func (c Class) String() string {
	if s, ok := classNames[c]; ok {
		return s
	}
	return fmt.Sprintf("class(%d)", int(c))
}

// Terminal reports whether the task will not run again by itself.
func (c Class) Terminal() bool {
	switch c {
	case classCompleted, classFailed, classTimeout, classOutOfMemory, classInfra, classPreempted,
		classCancelled, classDeadline, classLost:
		return true
	}
	return false
}

// Classify maps a Slurm base state name (or a flag shown in its place,
// Slurm job_state_codes) to a class. Other profiles map their own words to
// these names first ([Profile.States]).
func Classify(state string) Class {
	switch state {
	case "PENDING", "CONFIGURING", "POWER_UP_NODE":
		return classWaiting
	case "RUNNING", "COMPLETING", "SUSPENDED", "STOPPED", "SIGNALING", "RESIZING", "STAGE_OUT":
		return classActive
	case "REQUEUED", "REQUEUE_FED":
		return classRequeued
	case "REQUEUE_HOLD", "SPECIAL_EXIT", "RESV_DEL_HOLD":
		return classHeld
	case "COMPLETED":
		return classCompleted
	case "FAILED":
		return classFailed
	case "TIMEOUT":
		return classTimeout
	case "OUT_OF_MEMORY":
		return classOutOfMemory
	case "NODE_FAIL", "BOOT_FAIL", "LAUNCH_FAILED", "RECONFIG_FAIL", "REVOKED":
		return classInfra
	case "PREEMPTED":
		return classPreempted
	case "CANCELLED":
		return classCancelled
	case "DEADLINE":
		return classDeadline
	}
	return classUnknown
}

// retryPolicy says how a point whose task ended without a valid result is
// retried. Budgets are separate (SOURCES.md §3): task failures use
// Attempts, infrastructure failures use Infra, resource growth uses
// Escalations.
type retryPolicy struct {
	// Attempts is the number of task failures (FAILED, DEADLINE) a point may
	// have in total; the last one is final.
	Attempts int
	// Infra is the number of infrastructure failures (node, boot,
	// preemption, lost) a point may have in total.
	Infra int
	// Escalations is how many times time or memory may grow.
	Escalations int
	// TimeFactor multiplies the time after a TIMEOUT, capped at MaxTime
	// (the partition limit; 0 means no cap is known).
	TimeFactor float64
	MaxTime    time.Duration
	// MemFactor multiplies the memory after OUT_OF_MEMORY, capped at
	// MaxMemMB (0 means no cap is known).
	MemFactor float64
	MaxMemMB  int
	// RetryCancelled retries a cancelled task (unchanged, no budget).
	RetryCancelled bool
}

// defaultRetryPolicy returns the defaults of SOURCES.md §3: attempts 3, infra 5,
// escalations 2, time ×2, memory ×1.5, no caps known.
func defaultRetryPolicy() retryPolicy {
	return retryPolicy{Attempts: 3, Infra: 5, Escalations: 2, TimeFactor: 2, MemFactor: 1.5}
}

// budget counts what a point has used so far.
type budget struct {
	Attempts, Infra, Escalations int
}

// decision is what to do with one point.
type decision struct {
	Class Class
	// Retry: plan the point again with Resources.
	Retry     bool
	Resources Resources
	// Used is the budget after this decision.
	Used budget
	// Reason explains the decision for logs and `status --failed`.
	Reason string
}

// Decide applies the policy to a point that has no valid result and whose
// task is in class c, ran with res, and has used budget used. Non-terminal
// classes (and unknown) give no retry: wait.
func (p retryPolicy) Decide(c Class, res Resources, used budget) decision {
	d := decision{Class: c, Resources: res, Used: used}
	switch c {
	case classFailed, classDeadline:
		d.Used.Attempts++
		d.Retry = d.Used.Attempts < p.Attempts
		d.Reason = fmt.Sprintf("task failed (%s): the point's own error; attempt %d of %d", c, d.Used.Attempts, p.Attempts)
	case classTimeout:
		d.Retry, d.Reason = p.grow(&d, "time", func() (bool, string) {
			if res.Time <= 0 {
				return false, "no time limit was set, so it cannot be raised; set one in the spec"
			}
			next := time.Duration(math.Ceil(float64(res.Time) * p.TimeFactor))
			if p.MaxTime > 0 && next > p.MaxTime {
				next = p.MaxTime
			}
			if next <= res.Time {
				return false, fmt.Sprintf("time limit %s is already at the cap %s", res.Time, p.MaxTime)
			}
			d.Resources.Time = next
			return true, fmt.Sprintf("time limit %s → %s", res.Time, next)
		})
	case classOutOfMemory:
		d.Retry, d.Reason = p.grow(&d, "memory", func() (bool, string) {
			if res.MemMB <= 0 {
				return false, "no memory was requested, so it cannot be raised; set one in the spec"
			}
			next := int(math.Ceil(float64(res.MemMB) * p.MemFactor))
			if p.MaxMemMB > 0 && next > p.MaxMemMB {
				next = p.MaxMemMB
			}
			if next <= res.MemMB {
				return false, fmt.Sprintf("memory %d MiB is already at the cap %d MiB", res.MemMB, p.MaxMemMB)
			}
			d.Resources.MemMB = next
			return true, fmt.Sprintf("memory %d → %d MiB", res.MemMB, next)
		})
	case classInfra, classPreempted, classLost, classCompleted:
		// A COMPLETED task without a result after the grace period is lost.
		d.Used.Infra++
		d.Retry = d.Used.Infra < p.Infra
		d.Reason = fmt.Sprintf("%s: retried with the same resources; infrastructure failure %d of %d", c, d.Used.Infra, p.Infra)
	case classCancelled:
		d.Retry = p.RetryCancelled
		d.Reason = "cancelled"
		if d.Retry {
			d.Reason = "cancelled; retried because the policy asks for it"
		}
	default:
		d.Reason = fmt.Sprintf("%s: not final; wait", c)
	}
	return d
}

// grow charges an escalation and applies f when budget remains.
func (p retryPolicy) grow(d *decision, what string, f func() (bool, string)) (bool, string) {
	if d.Used.Escalations >= p.Escalations {
		return false, fmt.Sprintf("%s: %s already raised %d times (the limit)", d.Class, what, d.Used.Escalations)
	}
	ok, why := f()
	if !ok {
		return false, fmt.Sprintf("%s: %s", d.Class, why)
	}
	d.Used.Escalations++
	return true, fmt.Sprintf("%s: %s (escalation %d of %d)", d.Class, why, d.Used.Escalations, p.Escalations)
}
