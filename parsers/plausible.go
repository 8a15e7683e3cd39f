package parsers

import (
	"fmt"
	"math"
)

// Plausibility holds the checks that catch an energy a program printed but
// that cannot be right for the molecule. It takes plain numbers in hartree;
// the caller decides which points are neighbours. The zero value rejects
// non-finite and positive energies and does no neighbour check.
type Plausibility struct {
	// AllowPositive accepts energies above zero. The total electronic
	// energy of a bound molecule is negative (common practice); set this
	// when the extracted quantity is a relative or interaction energy.
	AllowPositive bool
	// MaxJump (hartree) flags a point whose energy lies more than MaxJump
	// above both of its neighbours along the scan, or more than MaxJump
	// below both (a spike: another electronic state, a collapsed SCF).
	// Zero or negative turns the check off. A step — far from one
	// neighbour, near the other — is not flagged, because a real curve can
	// change state there; nor is a steep monotonic stretch (a repulsive
	// wall), where the point is above one neighbour and below the other.
	MaxJump float64
}

// Check rejects an energy that is not finite, or positive unless
// AllowPositive is set. The error wraps [ErrEnergyInvalid].
func (p Plausibility) Check(e float64) error {
	if math.IsNaN(e) || math.IsInf(e, 0) {
		return fmt.Errorf("%w: %v is not a finite number", ErrEnergyInvalid, e)
	}
	if e > 0 && !p.AllowPositive {
		return fmt.Errorf("%w: total energy %.10g hartree is positive; a bound molecule's is negative (set the positive-energy allowance if this is a relative energy)", ErrEnergyInvalid, e)
	}
	return nil
}

// CheckNeighbours rejects e when it lies more than MaxJump above both prev
// and next, or more than MaxJump below both (all in hartree). It does
// nothing when MaxJump ≤ 0 or a value is not finite. The error wraps
// [ErrEnergyInvalid].
func (p Plausibility) CheckNeighbours(prev, e, next float64) error {
	if !(p.MaxJump > 0) || !finite(prev) || !finite(next) || !finite(e) {
		return nil
	}
	dp, dn := e-prev, e-next
	if (dp > p.MaxJump && dn > p.MaxJump) || (dp < -p.MaxJump && dn < -p.MaxJump) {
		return fmt.Errorf("%w: energy %.10g hartree jumps by %+.3g and %+.3g hartree from its two neighbours (allowed: %.3g)", ErrEnergyInvalid, e, dp, dn, p.MaxJump)
	}
	return nil
}

// Spikes returns the indices of the interior points of a curve (energies in
// hartree, in the order of the scanned coordinate) that fail
// [Plausibility.CheckNeighbours]. The two end points have one neighbour
// each and are never flagged.
func (p Plausibility) Spikes(energies []float64) []int {
	var out []int
	for i := 1; i+1 < len(energies); i++ {
		if p.CheckNeighbours(energies[i-1], energies[i], energies[i+1]) != nil {
			out = append(out, i)
		}
	}
	return out
}

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }
