package slurm

import (
	"testing"
	"time"
)

func TestClassify_States(t *testing.T) {
	// Slurm base states and flags (Slurm job_state_codes), mapped as in the
	// SOURCES.md §3.
	tests := map[string]Class{
		"PENDING": classWaiting, "CONFIGURING": classWaiting,
		"RUNNING": classActive, "COMPLETING": classActive, "SUSPENDED": classActive,
		"REQUEUED": classRequeued, "REQUEUE_HOLD": classHeld, "SPECIAL_EXIT": classHeld,
		"COMPLETED": classCompleted, "FAILED": classFailed, "TIMEOUT": classTimeout,
		"OUT_OF_MEMORY": classOutOfMemory, "NODE_FAIL": classInfra, "BOOT_FAIL": classInfra,
		"LAUNCH_FAILED": classInfra, "PREEMPTED": classPreempted, "CANCELLED": classCancelled,
		"DEADLINE": classDeadline, "": classUnknown, "WEIRD": classUnknown,
	}
	for s, want := range tests {
		if got := Classify(s); got != want {
			t.Errorf("Classify(%q) = %s, want %s", s, got, want)
		}
	}
	for _, c := range []Class{classWaiting, classActive, classRequeued, classHeld, classUnknown} {
		if c.Terminal() {
			t.Errorf("%s.Terminal() = true", c)
		}
	}
	for _, c := range []Class{classCompleted, classFailed, classTimeout, classCancelled, classLost} {
		if !c.Terminal() {
			t.Errorf("%s.Terminal() = false", c)
		}
	}
}

func TestRetryPolicy_Decide(t *testing.T) {
	p := defaultRetryPolicy()
	p.MaxTime = 3 * time.Hour
	p.MaxMemMB = 4000
	base := Resources{Time: time.Hour, MemMB: 2000, Partition: "debug"}
	tests := []struct {
		name      string
		class     Class
		res       Resources
		used      budget
		retry     bool
		time      time.Duration
		mem       int
		wantUsed  budget
		retryCanc bool
	}{
		{"timeout doubles time", classTimeout, base, budget{}, true, 2 * time.Hour, 2000, budget{Escalations: 1}, false},
		{"timeout capped", classTimeout, Resources{Time: 2 * time.Hour, MemMB: 2000}, budget{Escalations: 1}, true, 3 * time.Hour, 2000, budget{Escalations: 2}, false},
		{"timeout at cap", classTimeout, Resources{Time: 3 * time.Hour}, budget{}, false, 3 * time.Hour, 0, budget{}, false},
		{"timeout escalations used up", classTimeout, base, budget{Escalations: 2}, false, time.Hour, 2000, budget{Escalations: 2}, false},
		{"timeout without a limit", classTimeout, Resources{}, budget{}, false, 0, 0, budget{}, false},
		{"oom grows memory", classOutOfMemory, base, budget{}, true, time.Hour, 3000, budget{Escalations: 1}, false},
		{"oom capped", classOutOfMemory, Resources{MemMB: 3000}, budget{}, true, 0, 4000, budget{Escalations: 1}, false},
		{"node fail unchanged, no attempt", classInfra, base, budget{Attempts: 2}, true, time.Hour, 2000, budget{Attempts: 2, Infra: 1}, false},
		{"preempted unchanged", classPreempted, base, budget{}, true, time.Hour, 2000, budget{Infra: 1}, false},
		{"lost unchanged", classLost, base, budget{}, true, time.Hour, 2000, budget{Infra: 1}, false},
		{"infra budget used up", classInfra, base, budget{Infra: 4}, false, time.Hour, 2000, budget{Infra: 5}, false},
		{"failed uses an attempt", classFailed, base, budget{}, true, time.Hour, 2000, budget{Attempts: 1}, false},
		{"failed last attempt", classFailed, base, budget{Attempts: 2}, false, time.Hour, 2000, budget{Attempts: 3}, false},
		{"cancelled not retried", classCancelled, base, budget{}, false, time.Hour, 2000, budget{}, false},
		{"cancelled retried when asked", classCancelled, base, budget{}, true, time.Hour, 2000, budget{}, true},
		{"running: wait", classActive, base, budget{}, false, time.Hour, 2000, budget{}, false},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			pol := p
			pol.RetryCancelled = tc.retryCanc
			d := pol.Decide(tc.class, tc.res, tc.used)
			if d.Retry != tc.retry || d.Resources.Time != tc.time || d.Resources.MemMB != tc.mem || d.Used != tc.wantUsed {
				t.Errorf("Decide = retry %v, time %s, mem %d, used %+v (%s); want %v, %s, %d, %+v",
					d.Retry, d.Resources.Time, d.Resources.MemMB, d.Used, d.Reason, tc.retry, tc.time, tc.mem, tc.wantUsed)
			}
			if d.Reason == "" {
				t.Error("Decide gave no reason")
			}
			if d.Resources.Partition != tc.res.Partition {
				t.Errorf("partition changed to %q", d.Resources.Partition)
			}
		})
	}
}
