//go:build unix

package runner

import (
	"bytes"
	"errors"
	"os"
	"strconv"
	"syscall"
)

// processExists reports whether pid names a live process: signal 0 checks
// without sending (EPERM means it exists but belongs to another user),
// and on Linux a zombie — killed, not yet reaped — counts as dead.
func processExists(pid int) bool {
	err := syscall.Kill(pid, 0)
	if err != nil && !errors.Is(err, syscall.EPERM) {
		return false
	}
	stat, err := os.ReadFile("/proc/" + strconv.Itoa(pid) + "/stat")
	if err != nil {
		return true
	}
	// pid (comm) STATE ...: comm may hold spaces and parentheses.
	if i := bytes.LastIndexByte(stat, ')'); i >= 0 && i+2 < len(stat) && stat[i+2] == 'Z' {
		return false
	}
	return true
}
