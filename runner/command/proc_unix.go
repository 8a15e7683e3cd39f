//go:build unix

package command

import (
	"os/exec"
	"syscall"
	"time"
)

// ownProcessGroup makes the program the leader of a new process group, so
// that it and everything it starts can be signalled together.
func ownProcessGroup(cmd *exec.Cmd) {
	cmd.SysProcAttr = &syscall.SysProcAttr{Setpgid: true}
}

// killGroup signals the program's whole process group. ESRCH (the group is
// gone) is the normal case after a clean exit and is not an error.
func killGroup(cmd *exec.Cmd, sig syscall.Signal) {
	if cmd.Process == nil || cmd.Process.Pid <= 0 {
		return
	}
	_ = syscall.Kill(-cmd.Process.Pid, sig)
}

// stopGroup asks the group to end (SIGTERM), waits up to grace for the
// program to exit, then kills the group (SIGKILL), and returns the
// program's wait error.
func stopGroup(cmd *exec.Cmd, done <-chan error, grace time.Duration) error {
	killGroup(cmd, syscall.SIGTERM)
	t := time.NewTimer(grace)
	defer t.Stop()
	select {
	case err := <-done:
		return err
	case <-t.C:
		killGroup(cmd, syscall.SIGKILL)
		return <-done
	}
}
