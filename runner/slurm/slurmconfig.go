package slurm

import (
	"context"
	"fmt"
	"strconv"
	"strings"
	"time"
)

// slurmLimits are the controller settings a round needs: how big an array may be
// and how long finished jobs stay in squeue. Read them once per run.
type slurmLimits struct {
	// MaxArraySize: the largest array index is MaxArraySize-1 (default 1001).
	MaxArraySize int
	// MinJobAge: how long a finished job stays visible to squeue (default
	// 300 s); without accounting the poll interval must stay below half of it.
	MinJobAge time.Duration
}

// readSlurmLimits runs `scontrol show config` once and reads MaxArraySize and
// MinJobAge. Slurm only.
func readSlurmLimits(ctx context.Context, r Runner) (slurmLimits, error) {
	argv := []string{"scontrol", "show", "config"}
	out, err := r.Run(ctx, Cmd{Argv: argv})
	if err != nil {
		return slurmLimits{}, err
	}
	if out.ExitCode != 0 {
		msg := strings.TrimSpace(string(out.Stderr))
		return slurmLimits{}, &commandError{Argv: argv, ExitCode: out.ExitCode, Message: msg, Unreachable: containsAny(msg, unreachableTexts)}
	}
	return parseSlurmLimits(out.Stdout)
}

// parseSlurmLimits reads "Key = Value" lines of `scontrol show config`.
func parseSlurmLimits(text []byte) (slurmLimits, error) {
	var l slurmLimits
	for n, line := range strings.Split(string(text), "\n") {
		key, value, ok := strings.Cut(line, "=")
		if !ok {
			continue
		}
		key, value = strings.TrimSpace(key), strings.TrimSpace(value)
		switch key {
		case "MaxArraySize":
			v, err := strconv.Atoi(value)
			if err != nil || v < 0 {
				return slurmLimits{}, fmt.Errorf("slurm: scontrol show config line %d: MaxArraySize %q is not a count", n+1, value)
			}
			l.MaxArraySize = v
		case "MinJobAge":
			// "300 sec"
			num, unit, _ := strings.Cut(value, " ")
			v, err := strconv.Atoi(num)
			if err != nil || v < 0 || (unit != "" && unit != "sec") {
				return slurmLimits{}, fmt.Errorf("slurm: scontrol show config line %d: MinJobAge %q is not \"N sec\"", n+1, value)
			}
			l.MinJobAge = time.Duration(v) * time.Second
		}
	}
	if l.MaxArraySize == 0 || l.MinJobAge == 0 {
		return slurmLimits{}, fmt.Errorf("slurm: scontrol show config lists no MaxArraySize or MinJobAge")
	}
	return l, nil
}
