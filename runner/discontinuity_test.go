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
