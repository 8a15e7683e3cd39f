package hf

import (
	"context"
	"errors"
	"fmt"
	"sort"
	"strings"
	"time"

	"wellscan/planner"
	"wellscan/runner/hf/integral"
)

// Second-order Møller–Plesset perturbation theory (MP2) on a converged
// RHF or UHF determinant, from canonical orbitals:
//
//	E_os = Σ_{i a ∈ α, j b ∈ β} (ia|jb)² / Δ_ijab
//	E_ss = Σ_σ ½ Σ_{ijab ∈ σ} (ia|jb)[(ia|jb) − (ib|ja)] / Δ_ijab
//	Δ_ijab = ε_i + ε_j − ε_a − ε_b
//
// (Mulliken integrals over spatial molecular orbitals, i, j occupied and
// correlated, a, b virtual). For a restricted reference both spins share
// the orbitals, E_os = Σ (ia|jb)²/Δ and E_ss = Σ (ia|jb)[(ia|jb) −
// (ib|ja)]/Δ over spatial orbitals, and their sum is the closed-shell
// formula E(2) = Σ (ia|jb)[2(ia|jb) − (ib|ja)]/Δ.
//
// References:
//   - C. Møller and M. S. Plesset, Phys. Rev. 46, 618 (1934), doi:10.1103/PhysRev.46.618.
//   - A. Szabo and N. S. Ostlund, Modern Quantum Chemistry (Dover, 1996), §6.4 (closed-shell MP2).
//   - S. Grimme, J. Chem. Phys. 118, 9095 (2003), doi:10.1063/1.1569242
//     (why same- and opposite-spin parts are kept apart: SCS-MP2 scales them by 1/3 and 6/5).
//
// The citations above are given from memory.

// MP2 is the method name of second-order Møller–Plesset theory on an RHF
// (closed shell) or UHF (open shell) reference.
const MP2 Method = "mp2"

// FrozenCore selects how many of the lowest occupied orbitals MP2 leaves
// uncorrelated. The zero value, FrozenCoreAuto, is the default.
type FrozenCore int

const (
	// FrozenCoreAuto freezes the noble-gas core of every atom (see
	// [FrozenCoreOrbitals]); this is the default.
	FrozenCoreAuto FrozenCore = 0
	// AllElectron correlates every electron.
	AllElectron FrozenCore = -1
)

// FrozenCoreCount returns a FrozenCore that freezes exactly n orbitals per
// spin (n = 0 is AllElectron).
func FrozenCoreCount(n int) FrozenCore {
	if n <= 0 {
		return AllElectron
	}
	return FrozenCore(n)
}

// DefaultMP2Memory is the default budget (bytes) for the half-transformed
// integrals and the (ia|jb) block of one batch of occupied orbitals.
const DefaultMP2Memory = 1 << 30

// coreOrbitals is the number of spatial orbitals in the noble-gas core of
// element z, and the core's label: 1 for Li–Ne ([He] = 1s), 5 for Na–Ar
// ([Ne]), 9 for K–Kr ([Ar]), 18 for Rb–Xe ([Kr]), 27 for Cs–Rn ([Xe]),
// 43 beyond ([Rn]); none for H and He. Common practice: the "chemical"
// frozen core of the previous noble gas.
func coreOrbitals(z int) (int, string) {
	switch {
	case z <= 2:
		return 0, ""
	case z <= 10:
		return 1, "1s"
	case z <= 18:
		return 5, "[Ne]"
	case z <= 36:
		return 9, "[Ar]"
	case z <= 54:
		return 18, "[Kr]"
	case z <= 86:
		return 27, "[Xe]"
	}
	return 43, "[Rn]"
}

// FrozenCoreOrbitals returns the default number of frozen spatial orbitals
// for mol (the sum of the atoms' noble-gas cores, see FrozenCoreAuto) and
// a description such as "O 1s" or "C 1s ×6, Cl [Ne]" ("" when nothing
// is frozen). The count ignores the charge; [Energy] caps it at the
// number of β electrons.
func FrozenCoreOrbitals(mol planner.Molecule) (int, string) {
	var n int
	var order []string
	count := map[string]int{}
	label := map[string]string{}
	for _, a := range mol.Atoms {
		c, l := coreOrbitals(a.Element.Z)
		if c == 0 {
			continue
		}
		n += c
		s := a.Element.Symbol
		if count[s] == 0 {
			order = append(order, s)
			label[s] = l
		}
		count[s]++
	}
	parts := make([]string, len(order))
	for i, s := range order {
		parts[i] = s + " " + label[s]
		if count[s] > 1 {
			parts[i] += fmt.Sprintf(" ×%d", count[s])
		}
	}
	return n, strings.Join(parts, ", ")
}

// MP2Options configures [RunMP2].
type MP2Options struct {
	// Frozen is the number of lowest occupied spatial orbitals, per spin,
	// left uncorrelated (0: all electrons correlated).
	Frozen int
	// Memory is the budget in bytes for the intermediates of one batch of
	// occupied orbitals (0: DefaultMP2Memory). When all occupied orbitals
	// do not fit, the transformation runs in several batches, each of
	// which reads (or, integral-direct, recomputes) all AO integrals once.
	Memory int64
	// Workers is the number of goroutines (≤ 0: runtime.NumCPU()).
	Workers int
}

// MP2Result holds the MP2 energies (hartree) of one geometry.
type MP2Result struct {
	// Reference is RHF or UHF; ReferenceEnergy is its total energy.
	Reference       Method
	ReferenceEnergy float64
	// Correlation = SameSpin + OppositeSpin; Total = ReferenceEnergy +
	// Correlation. Spin-component-scaled variants are
	// c_ss·SameSpin + c_os·OppositeSpin.
	Correlation, SameSpin, OppositeSpin float64
	Total                               float64
	// FrozenCore is the number of frozen spatial orbitals per spin;
	// FrozenCoreLabel describes them ("O 1s"; "" when none).
	FrozenCore      int
	FrozenCoreLabel string
	// Correlated occupied and virtual orbitals per spin.
	OccupiedAlpha, OccupiedBeta, VirtualAlpha, VirtualBeta int
	// Batches is the number of passes over the AO integrals (per spin
	// for UHF); BatchSize the occupied orbitals per pass.
	Batches, BatchSize int
	// TransformTime is the wall-clock time of the integral
	// transformation, Time that of the whole MP2 step.
	TransformTime, Time time.Duration
}

// PairBlockSource gives the AO two-electron integrals in blocks of ket
// pairs; see integral.ERI.PairBlock. *integral.ERI (in core) and
// *integral.Direct (recomputed) implement it. Implementations must be
// safe for concurrent PairBlock calls with different dst.
type PairBlockSource interface {
	NumFunctions() int
	NumPairBlocks() int
	MaxPairBlock() int
	PairBlock(ctx context.Context, b int, dst []float64, kls []int) ([]int, error)
}

// ErrMP2Reference is wrapped by RunMP2 when the SCF result cannot serve as
// an MP2 reference (not converged, or orbitals missing).
var ErrMP2Reference = errors.New("hf: mp2: unusable reference")

// spinOrbs is the correlated part of one spin's canonical orbitals,
// row-major: Co is n × no, Cv is n × nv.
type spinOrbs struct {
	no, nv int
	Co, Cv []float64
	eo, ev []float64
}

func splitSpin(o *Orbitals, beta bool, frozen int) (spinOrbs, error) {
	c, e, occ := o.CAlpha, o.EnergiesAlpha, o.OccAlpha
	if beta {
		c, e, occ = o.Beta(), o.EnergiesBeta, o.OccBeta
		if o.Restricted {
			e, occ = o.EnergiesAlpha, o.OccAlpha
		}
	}
	n, nmo := c.Dims()
	if len(e) != nmo || len(occ) != nmo {
		return spinOrbs{}, fmt.Errorf("%w: %d orbitals but %d energies and %d occupations", ErrMP2Reference, nmo, len(e), len(occ))
	}
	var occIdx, virIdx []int
	for k := range nmo {
		switch {
		case occ[k] > 0.999 && occ[k] < 1.001:
			occIdx = append(occIdx, k)
		case occ[k] < 1e-3 && occ[k] > -1e-3:
			virIdx = append(virIdx, k)
		default:
			return spinOrbs{}, fmt.Errorf("%w: orbital %d has occupation %g per spin; MP2 needs an integer-occupied determinant", ErrMP2Reference, k+1, occ[k])
		}
	}
	sort.SliceStable(occIdx, func(x, y int) bool { return e[occIdx[x]] < e[occIdx[y]] })
	if frozen > len(occIdx) {
		return spinOrbs{}, fmt.Errorf("hf: mp2: %d frozen orbitals but only %d occupied", frozen, len(occIdx))
	}
	occIdx = occIdx[frozen:]
	s := spinOrbs{no: len(occIdx), nv: len(virIdx)}
	s.Co = make([]float64, n*s.no)
	s.Cv = make([]float64, n*s.nv)
	for m := range n {
		for x, k := range occIdx {
			s.Co[m*s.no+x] = c.At(m, k)
		}
		for x, k := range virIdx {
			s.Cv[m*s.nv+x] = c.At(m, k)
		}
	}
	for _, k := range occIdx {
		s.eo = append(s.eo, e[k])
	}
	for _, k := range virIdx {
		s.ev = append(s.ev, e[k])
	}
	return s, nil
}

// RunMP2 computes the MP2 correlation energy of a converged SCF result from
// AO integrals. A restricted reference gives RHF-MP2, an unrestricted one
// UMP2 (which for a closed-shell UHF solution equals RHF-MP2). The
// integral transformation costs O(o·v·N³ + o·N⁴) per spin (N basis
// functions, o correlated occupied and v virtual orbitals), runs on
// opts.Workers goroutines and is batched over occupied orbitals to keep
// within opts.Memory. It checks ctx between blocks. The summation order
// does not depend on the number of workers, so results are reproducible.
// RunMP2 only reads scf and src; calls with different inputs may run
// concurrently.
func RunMP2(ctx context.Context, scf *SCFResult, src PairBlockSource, opts MP2Options) (*MP2Result, error) {
	start := time.Now()
	if scf == nil || scf.Orbitals == nil {
		return nil, fmt.Errorf("%w: no orbitals", ErrMP2Reference)
	}
	if !scf.Converged {
		return nil, fmt.Errorf("%w: the SCF did not converge (%s)", ErrMP2Reference, scf.Status)
	}
	o := scf.Orbitals
	if err := o.Validate(); err != nil {
		return nil, fmt.Errorf("%w: %w", ErrMP2Reference, err)
	}
	if src.NumFunctions() != o.NBasis {
		return nil, fmt.Errorf("hf: mp2: integrals span %d functions, orbitals %d", src.NumFunctions(), o.NBasis)
	}
	if opts.Frozen < 0 {
		return nil, fmt.Errorf("hf: mp2: negative frozen-core count %d", opts.Frozen)
	}
	budget := opts.Memory
	if budget == 0 {
		budget = DefaultMP2Memory
	}
	res := &MP2Result{Reference: RHF, ReferenceEnergy: scf.Energy, FrozenCore: opts.Frozen}
	if !o.Restricted {
		res.Reference = UHF
	}
	a, err := splitSpin(o, false, opts.Frozen)
	if err != nil {
		return nil, err
	}
	b := a
	if !o.Restricted {
		if b, err = splitSpin(o, true, opts.Frozen); err != nil {
			return nil, err
		}
	}
	res.OccupiedAlpha, res.VirtualAlpha, res.OccupiedBeta, res.VirtualBeta = a.no, a.nv, b.no, b.nv
	t := &transformer{src: src, n: o.NBasis, workers: integral.ResolveWorkers(opts.Workers), budget: budget}
	if o.Restricted {
		ss, os, err := t.restricted(ctx, a, res)
		if err != nil {
			return nil, err
		}
		res.SameSpin, res.OppositeSpin = ss, os
	} else {
		ss, os, err := t.unrestricted(ctx, a, b, res)
		if err != nil {
			return nil, err
		}
		res.SameSpin, res.OppositeSpin = ss, os
	}
	res.Correlation = res.SameSpin + res.OppositeSpin
	res.Total = res.ReferenceEnergy + res.Correlation
	res.TransformTime = t.transformTime
	res.Time = time.Since(start)
	return res, nil
}
