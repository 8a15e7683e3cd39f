package hf

import (
	"bufio"
	"context"
	"fmt"
	"os"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/mat"

	"wellscan/runner/hf/integral"
)

// Integral modes, as Result.IntegralMode names them.
const (
	// ModeInCore: every unique two-electron integral is computed once and
	// kept in memory; each Fock build reads them.
	ModeInCore = "in-core"
	// ModeSemiDirect: the integrals among the first shells (as many as
	// the memory budget holds) are kept; the quartets that involve a
	// later shell are recomputed at each Fock build.
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
	// split is the number of leading shells whose quartets are kept in
	// core (all shells in core mode, none in direct mode).
	split int
	// bytes is the memory the kept integrals take.
	bytes int64
}

// planIntegrals chooses the mode for shells under budget (bytes; ≤ 0:
// direct): in core when every integral fits; otherwise semi-direct with
// the longest prefix of whole shell groups (general contractions) whose
// integrals fit, when that holds at
// least a tenth of all unique integrals (below that the kept part saves
// too little to be worth its memory and bookkeeping); otherwise direct.
func planIntegrals(shells []integral.Shell, budget int64) integralPlan {
	nbf := integral.NumFunctions(shells)
	if budget > 0 && integral.InCoreBytes(nbf) <= budget {
		return integralPlan{mode: ModeInCore, split: len(shells), bytes: integral.InCoreBytes(nbf)}
	}
	if budget <= 0 {
		return integralPlan{mode: ModeDirect}
	}
	// Split only where a general contraction starts: the direct part
	// computes whole contractions (integral.NewDirectFrom).
	starts := integral.GroupStart(shells)
	split, n, m := 0, 0, 0
	for i, s := range shells {
		m += s.NumFunctions()
		if integral.InCoreBytes(m) > budget {
			break
		}
		if i+1 == len(shells) || starts[i+1] {
			split, n = i+1, m
		}
	}
	if split == 0 || 10*integral.InCoreBytes(n) < integral.InCoreBytes(nbf) {
		return integralPlan{mode: ModeDirect}
	}
	return integralPlan{mode: ModeSemiDirect, split: split, bytes: integral.InCoreBytes(n)}
}

// semiDirect builds J and K from the in-core integrals of the first
// shells plus an integral-direct pass over the quartets that involve any
// later shell (integral.NewDirectFrom). J and K are linear in the
// density, so the two parts add.
type semiDirect struct {
	core   *integral.ERI    // integrals among shells[:split]
	direct *integral.Direct // the other quartets
	nCore  int              // functions of shells[:split]
	shells []integral.Shell
	norm   integral.CartNorm
	work   int
	thr    float64
}

func newSemiDirect(ctx context.Context, shells []integral.Shell, norm integral.CartNorm, workers int, thr float64, split int) (*semiDirect, error) {
	core, err := integral.ComputeERI(ctx, shells[:split], norm, workers)
	if err != nil {
		return nil, err
	}
	d, err := integral.NewDirectFrom(shells, norm, workers, thr, split)
	if err != nil {
		return nil, err
	}
	return &semiDirect{core: core, direct: d, nCore: core.NumFunctions(), shells: shells, norm: norm, work: workers, thr: thr}, nil
}

// IncrementalJK: the direct part screens on the density (see
// integral.Direct.IncrementalJK); the in-core part costs the same either
// way.
func (s *semiDirect) IncrementalJK() bool { return true }

// JK implements JKBuilder.
func (s *semiDirect) JK(ctx context.Context, dens []*mat.SymDense, j, k []*mat.SymDense) error {
	if err := s.direct.JK(ctx, dens, j, k); err != nil {
		return err
	}
	m := s.nCore
	sub := make([]*mat.SymDense, len(dens))
	js := make([]*mat.SymDense, len(dens))
	ks := make([]*mat.SymDense, len(dens))
	for d := range dens {
		sub[d] = mat.NewSymDense(m, nil)
		for a := range m {
			for b := 0; b <= a; b++ {
				sub[d].SetSym(a, b, dens[d].At(a, b))
			}
		}
		js[d], ks[d] = mat.NewSymDense(m, nil), mat.NewSymDense(m, nil)
	}
	if err := s.core.JK(ctx, sub, js, ks); err != nil {
		return err
	}
	for d := range dens {
		for a := range m {
			for b := 0; b <= a; b++ {
				j[d].SetSym(a, b, j[d].At(a, b)+js[d].At(a, b))
				k[d].SetSym(a, b, k[d].At(a, b)+ks[d].At(a, b))
			}
		}
	}
	return nil
}

// pairSource returns integrals in pair blocks for MP2: a full direct
// builder (MP2 reads every integral once per batch).
func (s *semiDirect) pairSource() (PairBlockSource, error) {
	return integral.NewDirect(s.shells, s.norm, s.work, s.thr)
}
