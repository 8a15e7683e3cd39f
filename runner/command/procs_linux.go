//go:build linux

package command

import (
	"bytes"
	"os"
	"strconv"
)

func canListProcesses() bool {
	_, err := os.Stat("/proc/self/environ")
	return err == nil
}

// findToken lists the processes (other than this one) whose environment
// holds WELLSCAN_RUN_TOKEN=token, from /proc.
func findToken(token string) []int {
	if token == "" {
		return nil
	}
	ents, err := os.ReadDir("/proc")
	if err != nil {
		return nil
	}
	want := []byte("\x00" + envPrefix + "RUN_TOKEN=" + token + "\x00")
	self := os.Getpid()
	var out []int
	for _, e := range ents {
		pid, err := strconv.Atoi(e.Name())
		if err != nil || pid == self {
			continue
		}
		env, err := os.ReadFile("/proc/" + e.Name() + "/environ")
		if err != nil || len(env) == 0 {
			continue
		}
		env = append([]byte{0}, env...)
		if env[len(env)-1] != 0 {
			env = append(env, 0)
		}
		if bytes.Contains(env, want) {
			out = append(out, pid)
		}
	}
	return out
}
