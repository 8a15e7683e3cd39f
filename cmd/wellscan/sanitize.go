package main

import (
	"fmt"
	"io"
	"strings"
	"unicode"
)

// sanitizeLine makes text from a spec, a store or a program's output safe
// to print on one line of a terminal: line breaks become blanks and every
// other control character (ESC and the rest of C0, DEL, C1) is shown
// escaped (\x1b), so a title or a program's stderr cannot move the cursor,
// recolour or retitle the terminal.
func sanitizeLine(s string) string {
	return sanitize(strings.NewReplacer("\r\n", " ", "\n", " ", "\r", " ").Replace(s), false)
}

// sanitize escapes control characters in s; keepBreaks keeps '\n' and
// '\t'.
func sanitize(s string, keepBreaks bool) string {
	ok := true
	for _, r := range s {
		if isUnsafe(r, keepBreaks) {
			ok = false
			break
		}
	}
	if ok {
		return s
	}
	var b strings.Builder
	for _, r := range s {
		if isUnsafe(r, keepBreaks) {
			if r < 0x100 {
				fmt.Fprintf(&b, "\\x%02x", r)
			} else {
				fmt.Fprintf(&b, "\\u%04x", r)
			}
			continue
		}
		b.WriteRune(r)
	}
	return b.String()
}

func isUnsafe(r rune, keepBreaks bool) bool {
	if keepBreaks && (r == '\n' || r == '\t') {
		return false
	}
	// Bidirectional overrides reorder what the reader sees.
	if r >= 0x202a && r <= 0x202e || r >= 0x2066 && r <= 0x2069 {
		return true
	}
	return unicode.IsControl(r)
}

// safeWriter escapes control characters (other than line breaks and tabs)
// in everything written through it: stdout and stderr of every command,
// whatever text from a spec, a store or a program reaches them.
type safeWriter struct{ w io.Writer }

func (s safeWriter) Write(p []byte) (int, error) {
	clean := sanitize(string(p), true)
	if len(clean) == len(p) && clean == string(p) {
		return s.w.Write(p)
	}
	if _, err := io.WriteString(s.w, clean); err != nil {
		return 0, err
	}
	return len(p), nil
}
