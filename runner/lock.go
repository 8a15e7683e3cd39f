package runner

import (
	"fmt"
	"os"
)

// ReadLockInfo reads DIR/wellscan.lock; nil if it is absent or unreadable.
// While no run holds the store, a lock file present means the last run
// died without closing the scan (a clean Close removes the file).
func ReadLockInfo(dir string) *LockInfo { return readLock(dir) }

// Liveness of the process a lock record names.
type Liveness int

const (
	// LiveUnknown: the record names another host or boot, so this host
	// cannot tell.
	LiveUnknown Liveness = iota
	// LiveRunning: the PID exists on this host and boot.
	LiveRunning
	// LiveDead: no process with that PID exists on this host and boot.
	LiveDead
)

// Liveness tells whether the process li names is still running. It can
// only know for a record written on this host since the last boot.
func (li *LockInfo) Liveness() Liveness {
	host, _ := os.Hostname()
	if li == nil || li.PID <= 0 || li.Host != host {
		return LiveUnknown
	}
	if li.BootID != "" {
		boot, err := os.ReadFile("/proc/sys/kernel/random/boot_id")
		if err == nil && string(trimNL(boot)) != li.BootID {
			return LiveDead // written before a reboot: that process is gone
		}
	}
	if processExists(li.PID) {
		return LiveRunning
	}
	return LiveDead
}

// StaleLock is the lock record a previous run left behind when it died
// without closing the store (killed, power cut), or nil. Open found it
// while taking the store's lock, so that run is certainly not writing any
// more: the store is consistent and the scan can go on.
func (s *Store) StaleLock() *LockInfo { return s.stale }

// StaleLockMessage explains a stale lock record to the user.
func StaleLockMessage(dir string, li *LockInfo) string {
	who := fmt.Sprintf("PID %d on %s, started %s", li.PID, li.Host, li.Started.Local().Format("2006-01-02 15:04:05 MST"))
	why := "it holds no lock any more"
	if li.Liveness() == LiveDead {
		why = "that process is no longer running"
	}
	return fmt.Sprintf("the previous run of %s (%s) died without closing the scan: %s left behind, but %s; the store is consistent and it is safe to continue", dir, who, LockFile, why)
}
