//go:build unix

package hf_test

import (
	"syscall"
	"time"
)

// processCPU is the CPU time (user + system) of this process so far:
// unlike wall time it hardly changes when other processes share the
// cores, so benchmark ratios stay meaningful on a loaded machine.
func processCPU() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
