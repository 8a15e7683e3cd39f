package report

import (
	"fmt"
	"strings"
	"unicode"
)

// cleanText escapes control characters (ESC, the rest of C0 and C1, DEL,
// bidirectional overrides) and turns line breaks into blanks, so that a
// title or a program's error text cannot carry terminal sequences into
// the summary files, or reorder what a reader sees.
func cleanText(s string) string {
	var b strings.Builder
	for _, r := range s {
		switch {
		case r == '\n' || r == '\r' || r == '\t':
			b.WriteByte(' ')
		case unicode.IsControl(r) || r >= 0x202a && r <= 0x202e || r >= 0x2066 && r <= 0x2069:
			if r < 0x100 {
				fmt.Fprintf(&b, "\\x%02x", r)
			} else {
				fmt.Fprintf(&b, "\\u%04x", r)
			}
		default:
			b.WriteRune(r)
		}
	}
	return b.String()
}

// cleaned returns a copy of in whose free text (title, directory name,
// errors, notes) has passed through cleanText.
func (in Input) cleaned() Input {
	c := in.Conditions
	for _, p := range []*string{&c.Title, &c.Dir, &c.Formula, &c.Engine, &c.Method, &c.Basis, &c.Backend, &c.Version} {
		*p = cleanText(*p)
	}
	in.Conditions = c
	pts := make([]Point, len(in.Points))
	for i, p := range in.Points {
		p.Error = cleanText(p.Error)
		p.Key = cleanText(p.Key)
		pts[i] = p
	}
	in.Points = pts
	notes := make([]string, len(in.Notes))
	for i, n := range in.Notes {
		notes[i] = cleanText(n)
	}
	in.Notes = notes
	in.FitError = cleanText(in.FitError)
	return in
}
