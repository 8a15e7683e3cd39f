package parsers

import (
	"fmt"
	"math"
	"strconv"
	"strings"
)

// FormatXYZComment returns the comment line wellscan writes for one frame
// of a scan's trajectory: the point's key, quoted as a Go string literal so
// that any text stays on one line, and the energy in hartree with every
// digit needed to read it back exactly:
//
//	key="r=1.12800" energy=-112.71234567890123 hartree
//
// A non-finite energy (a failed point) is left out.
func FormatXYZComment(key string, energy float64) string {
	s := "key=" + strconv.Quote(key)
	if !math.IsNaN(energy) && !math.IsInf(energy, 0) {
		s += " energy=" + strconv.FormatFloat(energy, 'g', -1, 64) + " hartree"
	}
	return s
}

// ParseXYZComment reads a comment line of the form [FormatXYZComment]
// writes. Words it does not know are skipped, so a person may add notes.
// The key may also be unquoted (up to the next blank); the energy may be
// followed by a unit word ([ParseEnergyUnit]: hartree when absent) and is
// returned in hartree. hasEnergy is false when the line has no energy=
// word. A non-finite energy is an error wrapping [ErrEnergyInvalid].
func ParseXYZComment(s string) (key string, energy float64, hasEnergy bool, err error) {
	rest := s
	for rest != "" {
		rest = strings.TrimLeft(rest, " \t")
		word, after, _ := cutBlank(rest)
		switch {
		case strings.HasPrefix(rest, "key=\""):
			q, qerr := strconv.QuotedPrefix(rest[len("key="):])
			if qerr != nil {
				return "", 0, false, fmt.Errorf("parsers: XYZ comment %q: the quoted key is not closed or not a valid Go string", clip(s))
			}
			key, _ = strconv.Unquote(q)
			rest = rest[len("key=")+len(q):]
			continue
		case strings.HasPrefix(word, "key="):
			key = word[len("key="):]
		case strings.HasPrefix(word, "energy="):
			text := word[len("energy="):]
			v, perr := ParseFloat(text)
			if perr != nil && !isRangeErr(perr) {
				return "", 0, false, fmt.Errorf("parsers: XYZ comment %q: energy %q is not a number", clip(s), clip(text))
			}
			unit := Hartree
			if next, after2, _ := cutBlank(strings.TrimLeft(after, " \t")); next != "" {
				if u, uerr := ParseEnergyUnit(next); uerr == nil {
					unit, after = u, after2
				}
			}
			v = unit.ToHartree(v)
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return "", 0, false, fmt.Errorf("%w: XYZ comment %q: energy %q is not a finite number", ErrEnergyInvalid, clip(s), clip(text))
			}
			energy, hasEnergy = v, true
		}
		rest = after
	}
	return key, energy, hasEnergy, nil
}

// cutBlank splits s at its first blank or tab.
func cutBlank(s string) (before, after string, found bool) {
	if i := strings.IndexAny(s, " \t"); i >= 0 {
		return s[:i], s[i+1:], true
	}
	return s, "", false
}

func isRangeErr(err error) bool {
	ne, ok := err.(*strconv.NumError)
	return ok && ne.Err == strconv.ErrRange
}
