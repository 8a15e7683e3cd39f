package parsers

import (
	"bytes"
	"errors"
	"math"
	"strings"
	"testing"
)

func TestParseXYZComment_Forms(t *testing.T) {
	tests := []struct {
		in        string
		key       string
		energy    float64
		hasEnergy bool
		ok        bool
	}{
		{`key="r=1.12800" energy=-112.71234567890123 hartree`, "r=1.12800", -112.71234567890123, true, true},
		{`note: toy run key=r=0.95000,theta=104.500 energy=-76.0`, "r=0.95000,theta=104.500", -76.0, true, true},
		{`key="a b\"c\n" extra words`, "a b\"c\n", 0, false, true},
		// 27.211386245988 eV is one hartree (CODATA 2018).
		{`energy=-27.211386245988 eV key=x`, "x", -1, true, true},
		{`energy=-0.5D+00`, "", -0.5, true, true},
		{`energy=-1.0 furlongs`, "", -1.0, true, true},
		{`plain comment`, "", 0, false, true},
		{`key="open`, "", 0, false, false},
		{`energy=abc`, "", 0, false, false},
		{`energy=NaN`, "", 0, false, false},
	}
	for _, tc := range tests {
		key, e, has, err := ParseXYZComment(tc.in)
		if (err == nil) != tc.ok {
			t.Errorf("ParseXYZComment(%q) error %v, want ok %v", tc.in, err, tc.ok)
			continue
		}
		// 1e-15 relative: one division by the CODATA factor at most.
		if tc.ok && (key != tc.key || has != tc.hasEnergy || math.Abs(e-tc.energy) > 1e-15*math.Abs(tc.energy)) {
			t.Errorf("ParseXYZComment(%q) = %q, %v, %v; want %q, %v, %v", tc.in, key, e, has, tc.key, tc.energy, tc.hasEnergy)
		}
	}
	if _, _, _, err := ParseXYZComment("energy=Inf"); !errors.Is(err, ErrEnergyInvalid) {
		t.Errorf("energy=Inf: %v, want ErrEnergyInvalid", err)
	}
	if got := FormatXYZComment("r=1", math.NaN()); got != `key="r=1"` {
		t.Errorf("FormatXYZComment with NaN = %q", got)
	}
}

func FuzzXYZComment(f *testing.F) {
	f.Add("r=1.12800", -112.71234567890123, `key="r=1.12800" energy=-112.7 hartree`)
	f.Add("r=0.95000,theta=104.500", -76.0, "toy key=r energy=-1D+00 eV")
	f.Add("odd \"key\"\n$(x)", 1e-300, `key="\x94" energy=`)
	f.Fuzz(func(t *testing.T, key string, energy float64, line string) {
		// Arbitrary lines: no panic, and an energy read is finite.
		if _, e, has, err := ParseXYZComment(line); err == nil && has && (math.IsNaN(e) || math.IsInf(e, 0)) {
			t.Fatalf("ParseXYZComment(%q) gave non-finite %v", line, e)
		}
		// Round trip through a written and read XYZ frame.
		c := FormatXYZComment(key, energy)
		var buf bytes.Buffer
		if err := WriteXYZ(&buf, []Frame{{Comment: c, Labels: []string{"H"}, Coords: [][3]float64{{0, 0, 0}}}}); err != nil {
			t.Fatal(err)
		}
		frames, err := ReadXYZ(&buf, "fuzz.xyz")
		if err != nil || len(frames) != 1 || frames[0].Comment != c {
			t.Fatalf("comment %q did not survive an XYZ round trip: %v, %v", c, frames, err)
		}
		k, e, has, err := ParseXYZComment(frames[0].Comment)
		finite := !math.IsNaN(energy) && !math.IsInf(energy, 0)
		if err != nil || k != key || has != finite || (finite && e != energy) {
			t.Fatalf("ParseXYZComment(%q) = %q, %v, %v, %v; want %q, %v", c, k, e, has, err, key, energy)
		}
		if strings.ContainsAny(c, "\r\n") {
			t.Fatalf("comment %q spans lines", c)
		}
	})
}
