package runner

import (
	"errors"
	"os"
	"os/exec"
	"strings"
	"testing"
	"time"
)

func TestLockInfo_Liveness_OwnDeadForeign(t *testing.T) {
	host, _ := os.Hostname()
	boot, _ := os.ReadFile("/proc/sys/kernel/random/boot_id")
	dead := exec.Command("true")
	if err := dead.Run(); err != nil {
		t.Skipf("no `true` to make a dead PID: %v", err)
	}
	tests := []struct {
		name string
		li   LockInfo
		want Liveness
	}{
		{"own process", LockInfo{PID: os.Getpid(), Host: host, BootID: string(trimNL(boot))}, LiveRunning},
		{"reaped child", LockInfo{PID: dead.Process.Pid, Host: host}, LiveDead},
		{"other host", LockInfo{PID: os.Getpid(), Host: host + "-elsewhere"}, LiveUnknown},
		{"before a reboot", LockInfo{PID: os.Getpid(), Host: host, BootID: "not-this-boot"}, LiveDead},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if tc.name == "before a reboot" && len(boot) == 0 {
				t.Skip("no boot id on this system")
			}
			if got := tc.li.Liveness(); got != tc.want {
				t.Errorf("Liveness(%+v) = %d, want %d", tc.li, got, tc.want)
			}
		})
	}
}

func TestOpen_StaleLockRecord_Reported(t *testing.T) {
	dir := t.TempDir()
	st, err := Open(dir, OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if st.StaleLock() != nil {
		t.Errorf("fresh store reports a stale lock %+v", st.StaleLock())
	}
	// Leave the record behind as a killed process would: close bbolt only.
	if err := st.db.Close(); err != nil {
		t.Fatal(err)
	}
	st, err = Open(dir, OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	li := st.StaleLock()
	if li == nil || li.PID != os.Getpid() {
		t.Fatalf("StaleLock() = %+v, want the record of PID %d", li, os.Getpid())
	}
	msg := StaleLockMessage(dir, li)
	for _, w := range []string{"died without closing the scan", "safe to continue"} {
		if !strings.Contains(msg, w) {
			t.Errorf("StaleLockMessage = %q, lacks %q", msg, w)
		}
	}
}

func TestOpen_Locked_NamesOwnerQuickly(t *testing.T) {
	dir := t.TempDir()
	st, err := Open(dir, OpenOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	start := time.Now()
	_, err = Open(dir, OpenOptions{Timeout: 200 * time.Millisecond})
	if elapsed := time.Since(start); elapsed > time.Second {
		t.Errorf("second Open took %v", elapsed)
	}
	var le *LockedError
	if !errors.As(err, &le) || !errors.Is(err, ErrLocked) || le.Info == nil || le.Info.PID != os.Getpid() {
		t.Fatalf("second Open: %v, want a *LockedError naming PID %d", err, os.Getpid())
	}
}
