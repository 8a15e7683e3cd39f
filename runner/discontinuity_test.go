package runner

import (
	"fmt"
	"math"
	"testing"
)

// morseLine builds done records along r (bohr) of an invented Morse curve
// (D = 0.41 Eh, a = 1.22 /bohr, r_e = 2.135 bohr), with ⟨S²⟩ s2(r).
func morseLine(rs []float64, s2 func(r float64) float64) []PointRecord {
	var recs []PointRecord
	for _, r := range rs {
		e := -112.7 + 0.41*math.Pow(1-math.Exp(-1.22*(r-2.135)), 2)
		rec := PointRecord{Key: fmt.Sprintf("r=%.5f", r), Values: []float64{r}, State: Done, Energy: &e}
		if s2 != nil {
			v := s2(r)
			rec.SSquared = &v
		}
		recs = append(recs, rec)
	}
	return recs
}

func TestFindDiscontinuities_Line(t *testing.T) {
	var uniform, refined []float64
	for i := range 13 {
		uniform = append(uniform, 1.7+0.094*float64(i)) // 0.05 Å steps
	}
	refined = append(refined, uniform...)
	refined = append(refined, 2.13, 2.131, 2.136, 2.14) // clustered refinement points
	tests := []struct {
		name string
		recs []PointRecord
		want []string
	}{
		{"smooth uniform", morseLine(uniform, nil), nil},
		{"smooth with refinement cluster", morseLine(refined, nil), nil},
		{"one point on another state", func() []PointRecord {
			r := morseLine(uniform, nil)
			*r[6].Energy += 0.005
			return r
		}(), []string{"r=2.26400"}},
		{"⟨S²⟩ jump", morseLine(uniform, func(r float64) float64 {
			if r > 2.5 {
				return 1.0
			}
			return 0
		}), []string{"r=2.54600"}},
		{"smooth ⟨S²⟩ growth", morseLine(uniform, func(r float64) float64 { return 0.05 * (r - 1.7) }), nil},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := FindDiscontinuities(tc.recs, DiscontinuityOptions{})
			var keys []string
			for _, s := range got {
				keys = append(keys, s.Key)
			}
			if fmt.Sprint(keys) != fmt.Sprint(tc.want) {
				t.Errorf("FindDiscontinuities = %v, want %v", got, tc.want)
			}
		})
	}
}

// morseAt is the invented Morse curve of morseLine (hartree, r in bohr).
func morseAt(r float64) float64 { return -112.7 + 0.41*math.Pow(1-math.Exp(-1.22*(r-2.135)), 2) }

func gridAround(center, step float64, lo, hi int, offset float64) []float64 {
	var rs []float64
	for i := lo; i <= hi; i++ {
		rs = append(rs, center+(float64(i)+offset)*step)
	}
	return rs
}

func TestFindJumps_NoFalsePositives(t *testing.T) {
	const bohrPerAngstrom = 1 / 0.529177210544 // CODATA 2018 Bohr radius
	tests := []struct {
		name string
		rs   []float64
	}{
		// The repulsive wall from 0.6 to 2.0 bohr in 0.2 bohr steps: the
		// energy falls from 12.4 to 0.013 hartree above the minimum, by up
		// to 5.5 hartree per step — far more than the threshold from both
		// neighbours, but monotonically.
		{"steep repulsive wall, coarse", gridAround(0.6, 0.2, 0, 7, 0)},
		{"wall into the well, 0.3 bohr steps", gridAround(0.5, 0.3, 0, 10, 0)},
	}
	// Coarse grids across the minimum, shifted so the minimum falls
	// anywhere between two points: at 0.2 Å a grid point on the minimum
	// lies 0.056 and 0.14 hartree below its neighbours, beyond the
	// 0.05 hartree default on both sides.
	for _, stepA := range []float64{0.05, 0.1, 0.2, 0.3, 0.5} {
		for _, off := range []float64{0, 0.25, 0.5, 0.75} {
			tests = append(tests, struct {
				name string
				rs   []float64
			}{fmt.Sprintf("minimum, step %.2f Å, offset %.2f", stepA, off), gridAround(2.135, stepA*bohrPerAngstrom, -4, 6, off)})
		}
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			for _, limit := range []float64{0.01, 0.05} {
				if got := FindJumps(morseLine(tc.rs, nil), limit); len(got) != 0 {
					t.Errorf("limit %g hartree: flagged %+v on a smooth Morse curve", limit, got)
				}
			}
		})
	}
}

func TestFindJumps_Spikes(t *testing.T) {
	rs := gridAround(1.7, 0.094, 0, 12, 0) // 0.05 Å steps across the well
	tests := []struct {
		name  string
		at    int
		shift float64 // hartree added to point at
		limit float64
		want  []string
	}{
		{"spike up", 6, 0.2, 0.05, []string{"r=2.26400"}},
		// 0.1 hartree down on the inner wall: 0.04 below both neighbours,
		// still above the scan's minimum.
		{"spike down on the wall", 1, -0.1, 0.03, []string{"r=1.79400"}},
		// A point that lowers the scan's global minimum is never failed
		// (issue 14): it is the minimum sought, or a lower state.
		{"spike down below the scan's minimum", 6, -0.2, 0.05, nil},
		{"spike up next to the end", 1, 0.2, 0.05, []string{"r=1.79400"}},
		{"below the threshold", 6, 0.04, 0.05, nil},
		{"check off", 6, 0.2, 0, nil},
		{"end point is never judged", 0, 0.2, 0.05, nil},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			recs := morseLine(rs, nil)
			*recs[tc.at].Energy += tc.shift
			got := FindJumps(recs, tc.limit)
			var keys []string
			for _, j := range got {
				keys = append(keys, j.Key)
				i := tc.at
				if j.Prev != recs[i-1].Key || j.Next != recs[i+1].Key || j.Energy != *recs[i].Energy ||
					j.PrevEnergy != *recs[i-1].Energy || j.NextEnergy != *recs[i+1].Energy {
					t.Errorf("jump %+v does not name the point's neighbours and energies", j)
				}
				// The curve through the neighbours is the Morse value to
				// well within the 0.2 hartree spike.
				if math.Abs(j.Curve-morseAt(recs[i].Values[0])) > 0.01 {
					t.Errorf("curve %.6f, Morse %.6f", j.Curve, morseAt(recs[i].Values[0]))
				}
			}
			if fmt.Sprint(keys) != fmt.Sprint(tc.want) {
				t.Errorf("FindJumps = %v, want %v", keys, tc.want)
			}
		})
	}
}

func TestFindJumps_TwoSpikesOnOneLine(t *testing.T) {
	recs := morseLine(gridAround(1.7, 0.094, 0, 12, 0), nil)
	*recs[3].Energy += 0.3
	*recs[10].Energy += 0.25
	got := FindJumps(recs, 0.05)
	if len(got) != 2 || got[0].Key != recs[3].Key || got[1].Key != recs[10].Key {
		t.Errorf("FindJumps = %+v, want %s and %s only", got, recs[3].Key, recs[10].Key)
	}
}

// A smooth curve sampled coarsely bends as much at its neighbours as at
// the minimum: CO-like Morse points 0.4 and 0.5 Å apart from 0.8 Å (the
// issue's coarse first grids) are never flagged, at any threshold down to
// 1e-3 hartree.
func TestFindJumps_CoarseGridAroundMinimum_NotFlagged(t *testing.T) {
	const bohrPerAngstrom = 1 / 0.529177210544 // CODATA 2018 Bohr radius
	for _, stepA := range []float64{0.3, 0.4, 0.5} {
		for _, off := range []float64{0, 0.1, 0.2, 0.3} {
			var rs []float64
			for r := 0.8 + off; r <= 2.5+1e-9; r += stepA {
				rs = append(rs, r*bohrPerAngstrom)
			}
			for _, limit := range []float64{1e-3, 0.01, 0.05} {
				if got := FindJumps(morseLine(rs, nil), limit); len(got) != 0 {
					t.Errorf("step %.1f Å, start %.1f Å, limit %g: flagged %+v", stepA, 0.8+off, limit, got)
				}
			}
		}
	}
}

func TestFindJumps_Grid2D(t *testing.T) {
	// Morse in r plus a harmonic bend (k = 0.2 hartree/rad², invented) on
	// a 9 × 7 grid; one point spiked by 0.15 hartree.
	var recs []PointRecord
	for i := range 9 {
		r := 1.8 + 0.1*float64(i)
		for j := range 7 {
			th := 1.6 + 0.1*float64(j)
			e := morseAt(r) + 0.1*(th-1.9)*(th-1.9)
			recs = append(recs, PointRecord{Key: fmt.Sprintf("r=%.5f,a=%.3f", r, th), Values: []float64{r, th}, State: Done, Energy: &e})
		}
	}
	if got := FindJumps(recs, 0.05); len(got) != 0 {
		t.Fatalf("smooth grid: flagged %+v", got)
	}
	spiked := recs[4*7+3]
	*spiked.Energy += 0.15
	got := FindJumps(recs, 0.05)
	if len(got) != 1 || got[0].Key != spiked.Key {
		t.Fatalf("FindJumps = %+v, want only %s", got, spiked.Key)
	}
}
