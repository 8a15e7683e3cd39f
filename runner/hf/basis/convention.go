package basis

import (
	"fmt"
	"strings"
)

// Convention chooses how shells with l ≥ 2 become basis functions: as the
// (l+1)(l+2)/2 Cartesian components (six for d, ten for f) or the 2l+1
// real solid harmonics (five for d, seven for f). Shells with l ≤ 1 are Cartesian either way.
type Convention int

const (
	// ConventionAsSet uses what the set states for each element (the
	// default, and the zero value).
	ConventionAsSet Convention = iota
	// ConventionCartesian makes every l ≥ 2 shell Cartesian.
	ConventionCartesian
	// ConventionSpherical makes every l ≥ 2 shell spherical (pure).
	ConventionSpherical
)

// String is the name ParseConvention accepts: "as-set", "cartesian" or
// "spherical".
func (c Convention) String() string {
	switch c {
	case ConventionAsSet:
		return "as-set"
	case ConventionCartesian:
		return "cartesian"
	case ConventionSpherical:
		return "spherical"
	}
	return fmt.Sprintf("Convention(%d)", int(c))
}

func (c Convention) valid() error {
	if c < ConventionAsSet || c > ConventionSpherical {
		return fmt.Errorf("basis: invalid convention %d", int(c))
	}
	return nil
}

// ParseConvention reads a convention name, case-insensitively: "" or
// "as-set" (the set's own), "cartesian", "spherical" (also "pure").
func ParseConvention(s string) (Convention, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "", "as-set":
		return ConventionAsSet, nil
	case "cartesian":
		return ConventionCartesian, nil
	case "spherical", "pure":
		return ConventionSpherical, nil
	}
	return 0, fmt.Errorf("basis: unknown d/f convention %q (expected as-set, cartesian or spherical)", s)
}
