package planner

import "fmt"

// Limits on the shape of a spec's TOML, checked on the raw text before it
// is decoded: a deeply nested or very long dotted key costs the decoder
// memory out of all proportion to the text (a 40 KB spec nested 10 000
// deep took gigabytes), while a real spec nests three or four levels.
const (
	// MaxTOMLDepth bounds the nesting of arrays and inline tables.
	MaxTOMLDepth = 32
	// MaxTOMLKeyParts bounds the parts of a dotted key or table header.
	MaxTOMLKeyParts = 16
)

// checkTOMLShape scans data (outside strings and comments) for nesting
// deeper than MaxTOMLDepth and keys of more than MaxTOMLKeyParts parts.
// It does not validate TOML otherwise: the decoder does that.
func checkTOMLShape(data []byte, file string) error {
	line := 1
	var stack []byte // open '[' (array) and '{' (inline table) inside values
	inKey := true    // at a position where a key (or a header) is being read
	header := false  // inside a [table] or [[array]] header
	parts := 1
	i := 0
	n := len(data)
	fail := func(format string, args ...any) error {
		return &SpecError{File: file, Line: line, Msg: fmt.Sprintf(format, args...)}
	}
	startKey := func() { inKey, parts = true, 1 }
	startKey()
	for i < n {
		c := data[i]
		switch {
		case c == '\n':
			line++
			if len(stack) == 0 {
				startKey()
				header = false
			}
			i++
		case c == '#':
			for i < n && data[i] != '\n' {
				i++
			}
		case c == '"' || c == '\'':
			multi := i+2 < n && data[i+1] == c && data[i+2] == c
			if multi {
				i += 3
				for i < n && !(data[i] == c && i+2 < n && data[i+1] == c && data[i+2] == c) {
					if data[i] == '\n' {
						line++
					}
					if c == '"' && data[i] == '\\' {
						i++
					}
					i++
				}
				i += 3
				// A closing quote run may be up to five long ("""a"""""); the
				// extra quotes are ordinary characters for this scan.
				for i < n && data[i] == c {
					i++
				}
				continue
			}
			i++
			for i < n && data[i] != c && data[i] != '\n' {
				if c == '"' && data[i] == '\\' {
					i++
				}
				i++
			}
			i++
		case inKey && c == '.':
			parts++
			if parts > MaxTOMLKeyParts {
				return fail("a key with more than %d dotted parts; wellscan's keys have at most four", MaxTOMLKeyParts)
			}
			i++
		case inKey && c == '=' && !header:
			inKey = false
			i++
		case c == '[' && inKey && len(stack) == 0:
			header = true
			i++
		case c == ']' && header:
			header, inKey = false, false
			i++
		case c == '[' || c == '{':
			stack = append(stack, c)
			if len(stack) > MaxTOMLDepth {
				return fail("arrays or inline tables nested more than %d deep", MaxTOMLDepth)
			}
			if c == '{' {
				startKey()
			}
			i++
		case c == ']' || c == '}':
			if len(stack) > 0 {
				stack = stack[:len(stack)-1]
			}
			inKey = false
			i++
		case c == ',' && len(stack) > 0 && stack[len(stack)-1] == '{':
			startKey()
			i++
		default:
			i++
		}
	}
	return nil
}
