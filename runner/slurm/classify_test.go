package slurm

import (
	"testing"
	"time"
)

func TestClassify_States(t *testing.T) {
	// Slurm base states and flags (Slurm job_state_codes), mapped as in the
	// lessons memo §3 table.
	tests := map[string]Class{
		"PENDING": ClassWaiting, "CONFIGURING": ClassWaiting,
		"RUNNING": ClassActive, "COMPLETING": ClassActive, "SUSPENDED": ClassActive,
		"REQUEUED": ClassRequeued, "REQUEUE_HOLD": ClassHeld, "SPECIAL_EXIT": ClassHeld,
		"COMPLETED": ClassCompleted, "FAILED": ClassFailed, "TIMEOUT": ClassTimeout,
		"OUT_OF_MEMORY": ClassOutOfMemory, "NODE_FAIL": ClassInfra, "BOOT_FAIL": ClassInfra,
		"LAUNCH_FAILED": ClassInfra, "PREEMPTED": ClassPreempted, "CANCELLED": ClassCancelled,
		"DEADLINE": ClassDeadline, "": ClassUnknown, "WEIRD": ClassUnknown,
	}
	for s, want := range tests {
		if got := Classify(s); got != want {
			t.Errorf("Classify(%q) = %s, want %s", s, got, want)
		}
	}
	for _, c := range []Class{ClassWaiting, ClassActive, ClassRequeued, ClassHeld, ClassUnknown} {
		if c.Terminal() {
			t.Errorf("%s.Terminal() = true", c)
		}
	}
	for _, c := range []Class{ClassCompleted, ClassFailed, ClassTimeout, ClassCancelled, ClassLost} {
		if !c.Terminal() {
			t.Errorf("%s.Terminal() = false", c)
		}
	}
}

func TestRetryPolicy_Decide(t *testing.T) {
	p := DefaultRetryPolicy()
	p.MaxTime = 3 * time.Hour
	p.MaxMemMB = 4000
	base := Resources{Time: time.Hour, MemMB: 2000, Partition: "debug"}
	tests := []struct {
		name      string
		class     Class
		res       Resources
		used      Budget
		retry     bool
		time      time.Duration
		mem       int
		wantUsed  Budget
		retryCanc bool
	}{
		{"timeout doubles time", ClassTimeout, base, Budget{}, true, 2 * time.Hour, 2000, Budget{Escalations: 1}, false},
		{"timeout capped", ClassTimeout, Resources{Time: 2 * time.Hour, MemMB: 2000}, Budget{Escalations: 1}, true, 3 * time.Hour, 2000, Budget{Escalations: 2}, false},
		{"timeout at cap", ClassTimeout, Resources{Time: 3 * time.Hour}, Budget{}, false, 3 * time.Hour, 0, Budget{}, false},
		{"timeout escalations used up", ClassTimeout, base, Budget{Escalations: 2}, false, time.Hour, 2000, Budget{Escalations: 2}, false},
		{"timeout without a limit", ClassTimeout, Resources{}, Budget{}, false, 0, 0, Budget{}, false},
		{"oom grows memory", ClassOutOfMemory, base, Budget{}, true, time.Hour, 3000, Budget{Escalations: 1}, false},
		{"oom capped", ClassOutOfMemory, Resources{MemMB: 3000}, Budget{}, true, 0, 4000, Budget{Escalations: 1}, false},
		{"node fail unchanged, no attempt", ClassInfra, base, Budget{Attempts: 2}, true, time.Hour, 2000, Budget{Attempts: 2, Infra: 1}, false},
		{"preempted unchanged", ClassPreempted, base, Budget{}, true, time.Hour, 2000, Budget{Infra: 1}, false},
		{"lost unchanged", ClassLost, base, Budget{}, true, time.Hour, 2000, Budget{Infra: 1}, false},
		{"infra budget used up", ClassInfra, base, Budget{Infra: 4}, false, time.Hour, 2000, Budget{Infra: 5}, false},
		{"failed uses an attempt", ClassFailed, base, Budget{}, true, time.Hour, 2000, Budget{Attempts: 1}, false},
		{"failed last attempt", ClassFailed, base, Budget{Attempts: 2}, false, time.Hour, 2000, Budget{Attempts: 3}, false},
		{"cancelled not retried", ClassCancelled, base, Budget{}, false, time.Hour, 2000, Budget{}, false},
		{"cancelled retried when asked", ClassCancelled, base, Budget{}, true, time.Hour, 2000, Budget{}, true},
		{"running: wait", ClassActive, base, Budget{}, false, time.Hour, 2000, Budget{}, false},
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
