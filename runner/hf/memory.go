package hf

import (
	"bufio"
	"fmt"
	"os"
	"strconv"
	"strings"

	"wellscan/runner/hf/integral"
)

// Integral modes, as Result.IntegralMode names them.
const (
	// ModeInCore: every unique two-electron integral is computed once and
	// kept in memory; each Fock build reads them.
	ModeInCore = "in-core"
	// ModeSemiDirect: the shell-quartet blocks that cost most to
	// recompute per byte (many primitives, few functions) are kept, as
	// many as the memory budget holds; the others are recomputed at each
	// Fock build.
	ModeSemiDirect = "semi-direct"
	// ModeDirect: every Fock build recomputes the integrals it needs.
	ModeDirect = "direct"
)

// Memory budget bounds for the default (MemoryBudget).
const (
	memoryBudgetCap   = 16 << 30
	memoryBudgetFloor = 256 << 20
)

// MemoryBudget is the default in-core integral budget in bytes: half of
// the memory the kernel reports as available (MemAvailable in
// /proc/meminfo) at the time of the call, at least 256 MiB and at most
// 16 GiB (the other half is left to the rest of the calculation, other
// points running at the same time and other programs); DefaultMemory
// where /proc/meminfo cannot be read.
func MemoryBudget() int64 {
	avail, err := memAvailable("/proc/meminfo")
	if err != nil || avail <= 0 {
		return DefaultMemory
	}
	return min(max(avail/2, memoryBudgetFloor), memoryBudgetCap)
}

// memAvailable reads MemAvailable (bytes) from a meminfo file.
func memAvailable(path string) (int64, error) {
	f, err := os.Open(path)
	if err != nil {
		return 0, err
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		rest, ok := strings.CutPrefix(sc.Text(), "MemAvailable:")
		if !ok {
			continue
		}
		fields := strings.Fields(rest)
		if len(fields) != 2 || fields[1] != "kB" {
			return 0, fmt.Errorf("hf: %s: MemAvailable line %q, want a number of kB", path, sc.Text())
		}
		kb, err := strconv.ParseInt(fields[0], 10, 64)
		if err != nil {
			return 0, fmt.Errorf("hf: %s: MemAvailable: %w", path, err)
		}
		return kb << 10, nil
	}
	if err := sc.Err(); err != nil {
		return 0, fmt.Errorf("hf: %s: %w", path, err)
	}
	return 0, fmt.Errorf("hf: %s has no MemAvailable line", path)
}

// integralPlan is the integral mode chosen for a basis and a budget.
type integralPlan struct {
	mode string
	// bytes is the memory the kept integrals take at most (the builder
	// reports what it kept).
	bytes int64
}

// planIntegrals chooses the mode for shells under budget (bytes; ≤ 0:
// direct): in core when every shell-quartet block fits
// (integral.StoreBytes); otherwise semi-direct, keeping within the budget
// the blocks that cost most to recompute per byte
// (integral.NewDirectStored); direct when there is no budget.
func planIntegrals(shells []integral.Shell, budget int64) integralPlan {
	need := integral.StoreBytes(shells)
	switch {
	case budget <= 0:
		return integralPlan{mode: ModeDirect}
	case need <= budget:
		return integralPlan{mode: ModeInCore, bytes: need}
	}
	return integralPlan{mode: ModeSemiDirect, bytes: budget}
}
