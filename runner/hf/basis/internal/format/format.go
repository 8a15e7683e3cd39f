// Package format reads and writes wellscan's own plain-text basis-set file
// format (described in ../../FORMAT.md). It works on the text of the
// numbers: every exponent and coefficient keeps the decimal string it was
// written with, so that a file read and written again is unchanged and a
// conversion never re-rounds a number.
//
// The package is shared by the basis package (which turns a File into
// integral shells) and by the converter that produces the embedded library.
//
// # Concurrency
//
// Parse and Write keep no state; a File is plain data and may be read from
// several goroutines as long as nobody modifies it.
package format

import (
	"fmt"
	"strings"
)

// Magic is the keyword of the first line of every file; the format version
// follows it.
const Magic = "wellscan-basis"

// Version is the only format version this package reads and writes.
const Version = 1

// Harmonics says how shells with l ≥ 2 are built from the contraction: as
// all (l+1)(l+2)/2 Cartesian components or as the 2l+1 real solid
// harmonics. Shells with l ≤ 1 are the same either way.
type Harmonics int

const (
	// Unstated means the file does not say (allowed only when no shell it
	// governs has l ≥ 2, or, on an element, when the set-wide line applies).
	Unstated Harmonics = iota
	// Cartesian components (six d, ten f, …).
	Cartesian
	// Spherical (pure) functions (five d, seven f, …).
	Spherical
)

// String is the keyword used in the file ("cartesian", "spherical"), or
// "unstated".
func (h Harmonics) String() string {
	switch h {
	case Cartesian:
		return "cartesian"
	case Spherical:
		return "spherical"
	}
	return "unstated"
}

// File is the content of one basis file.
type File struct {
	Title     string    // name of the set, e.g. "6-31G*"
	About     string    // one-line description, may be empty
	Harmonics Harmonics // set-wide choice for l ≥ 2
	Origins   []string  // where the numbers come from, one line each
	Remarks   []string  // free notes, one line each
	Cites     []Cite    // literature, in the order given
	Elements  []Element // in file order
}

// Cite is one literature reference: a short key that element blocks refer
// to and the formatted citation.
type Cite struct {
	Key  string
	Text string
}

// Element is the block of one element.
type Element struct {
	Symbol    string    // canonical symbol, e.g. "Cl"
	Z         int       // atomic number
	Harmonics Harmonics // overrides File.Harmonics when not Unstated
	Cites     []string  // keys of File.Cites used by this element
	Shells    []Shell
	Line      int // line of the "element" keyword (0 when not parsed)
}

// Shell is one contraction block: Exps[i] is the exponent of primitive i
// and Coefs[k][i] the coefficient of primitive i in contracted function
// (column) k. Every column has len(Exps) entries.
type Shell struct {
	L     int
	Exps  []Number
	Coefs [][]Number
	Line  int // line of the "shell" keyword (0 when not parsed)
}

// Number is a decimal number together with the exact text it was written
// with.
type Number struct {
	Text  string
	Value float64
}

// SyntaxError is a problem at one line of a basis file.
type SyntaxError struct {
	File string // name given to Parse
	Line int    // 1-based; 0 when the problem concerns the whole file
	Msg  string
}

func (e *SyntaxError) Error() string {
	if e.Line == 0 {
		return fmt.Sprintf("basis: %s: %s", e.File, e.Msg)
	}
	return fmt.Sprintf("basis: %s:%d: %s", e.File, e.Line, e.Msg)
}

// angular lists the letters for l = 0, 1, 2, …; j is skipped, as is common
// practice in atomic spectroscopy notation.
const angular = "spdfghik"

// MaxL is the largest angular momentum the format can express.
const MaxL = len(angular) - 1

// LetterL returns the letter for angular momentum l ("s", "p", …).
func LetterL(l int) string {
	if l < 0 || l > MaxL {
		return fmt.Sprintf("l=%d", l)
	}
	return angular[l : l+1]
}

// parseL is the inverse of LetterL (case-insensitive).
func parseL(s string) (int, bool) {
	if len(s) != 1 {
		return 0, false
	}
	i := strings.IndexByte(angular, lowerASCII(s[0]))
	return i, i >= 0
}

func lowerASCII(c byte) byte {
	if c >= 'A' && c <= 'Z' {
		return c + 'a' - 'A'
	}
	return c
}
