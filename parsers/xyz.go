package parsers

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// Frame is one geometry: element labels as written (symbols or atomic
// numbers), Cartesian coordinates in whatever unit the file uses (XYZ files
// are conventionally in Å; the caller decides), and the comment line.
type Frame struct {
	Comment string
	Labels  []string
	Coords  [][3]float64
}

// MaxXYZAtoms bounds the atom count a file may declare, so that a corrupt
// count cannot make the reader allocate without limit.
const MaxXYZAtoms = 1 << 20

// ReadXYZ reads every frame of a standard multi-frame XYZ file: a line with
// the atom count, a comment line, then one "label x y z" line per atom
// (extra columns are ignored). name labels errors ("water.xyz:4: …").
// Blank lines between frames are allowed.
func ReadXYZ(r io.Reader, name string) ([]Frame, error) {
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 64*1024), 16*1024*1024)
	line := 0
	next := func() (string, bool) {
		if !sc.Scan() {
			return "", false
		}
		line++
		return sc.Text(), true
	}
	var frames []Frame
	for {
		var head string
		var ok bool
		for {
			head, ok = next()
			if !ok || strings.TrimSpace(head) != "" {
				break
			}
		}
		if !ok {
			break
		}
		n, err := strconv.Atoi(strings.TrimSpace(head))
		if err != nil || n < 1 || n > MaxXYZAtoms {
			return nil, fmt.Errorf("parsers: %s:%d: expected the number of atoms (a positive integer), got %q", name, line, clip(head))
		}
		comment, ok := next()
		if !ok {
			return nil, fmt.Errorf("parsers: %s:%d: file ends before the comment line of a %d-atom frame", name, line, n)
		}
		f := Frame{Comment: strings.TrimRight(comment, "\r")}
		for i := 0; i < n; i++ {
			text, ok := next()
			if !ok {
				return nil, fmt.Errorf("parsers: %s:%d: file ends after %d of %d atoms", name, line, i, n)
			}
			label, xyz, err := atomLine(text)
			if err != nil {
				return nil, fmt.Errorf("parsers: %s:%d: %w", name, line, err)
			}
			f.Labels = append(f.Labels, label)
			f.Coords = append(f.Coords, xyz)
		}
		frames = append(frames, f)
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("parsers: %s:%d: %w", name, line, err)
	}
	if len(frames) == 0 {
		return nil, fmt.Errorf("parsers: %s: no geometry found (expected an atom count on the first line)", name)
	}
	return frames, nil
}

// ReadGeometryBlock reads a bare block of "label x y z" lines, as written
// inline in a spec. A leading atom-count line and comment line (a full XYZ
// frame) are accepted too. Blank lines and lines starting with '#' are
// skipped. firstLine is the line number of the block's first line in its
// file, so that errors point into the file.
func ReadGeometryBlock(text, name string, firstLine int) (Frame, error) {
	lines := strings.Split(strings.ReplaceAll(text, "\r\n", "\n"), "\n")
	start := 0
	for start < len(lines) && strings.TrimSpace(lines[start]) == "" {
		start++
	}
	if start < len(lines) {
		if _, err := strconv.Atoi(strings.TrimSpace(lines[start])); err == nil {
			frames, err := ReadXYZ(strings.NewReader(strings.Join(lines[start:], "\n")), name)
			if err != nil {
				return Frame{}, err
			}
			return frames[0], nil
		}
	}
	var f Frame
	for i := start; i < len(lines); i++ {
		t := strings.TrimSpace(lines[i])
		if t == "" || strings.HasPrefix(t, "#") {
			continue
		}
		label, xyz, err := atomLine(t)
		if err != nil {
			return Frame{}, fmt.Errorf("parsers: %s:%d: %w", name, firstLine+i, err)
		}
		f.Labels = append(f.Labels, label)
		f.Coords = append(f.Coords, xyz)
	}
	if len(f.Labels) == 0 {
		return Frame{}, fmt.Errorf("parsers: %s:%d: geometry block has no atoms", name, firstLine)
	}
	return f, nil
}

func atomLine(text string) (string, [3]float64, error) {
	var xyz [3]float64
	fields := strings.Fields(text)
	if len(fields) < 4 {
		return "", xyz, fmt.Errorf("expected \"element x y z\", got %q", clip(text))
	}
	for k := 0; k < 3; k++ {
		v, err := ParseFloat(fields[k+1])
		if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
			return "", xyz, fmt.Errorf("coordinate %c of %s is not a finite number: %q", "xyz"[k], clip(fields[0]), clip(fields[k+1]))
		}
		xyz[k] = v
	}
	return fields[0], xyz, nil
}

// ParseFloat parses a decimal number, accepting Fortran-style D/d exponents
// ("1.5D-03") as well as E. Hexadecimal floats ("0x1.dp3") are read as Go
// reads them: their digit d is not an exponent.
func ParseFloat(s string) (float64, error) {
	if strings.ContainsAny(s, "dD") && !isHex(s) {
		s = strings.NewReplacer("D", "E", "d", "e").Replace(s)
	}
	return strconv.ParseFloat(s, 64)
}

// isHex reports whether s has a hexadecimal prefix after an optional sign.
func isHex(s string) bool {
	if s != "" && (s[0] == '+' || s[0] == '-') {
		s = s[1:]
	}
	return len(s) >= 2 && s[0] == '0' && (s[1] == 'x' || s[1] == 'X')
}

// WriteXYZ writes frames in the standard XYZ layout with coordinates at
// 10 decimals. Comment lines are written on one line (newlines become
// spaces).
func WriteXYZ(w io.Writer, frames []Frame) error {
	bw := bufio.NewWriter(w)
	for _, f := range frames {
		fmt.Fprintf(bw, "%d\n%s\n", len(f.Labels), strings.NewReplacer("\n", " ", "\r", " ").Replace(f.Comment))
		for i, l := range f.Labels {
			c := f.Coords[i]
			fmt.Fprintf(bw, "%-3s %16.10f %16.10f %16.10f\n", l, noNegZero(c[0]), noNegZero(c[1]), noNegZero(c[2]))
		}
	}
	return bw.Flush()
}

func clip(s string) string {
	if len(s) > 60 {
		return s[:60] + "…"
	}
	return s
}

// noNegZero is x, or 0 when x rounds to zero at the 10 decimals WriteXYZ
// prints, so that no coordinate reads "-0.0000000000".
func noNegZero(x float64) float64 {
	if math.Abs(x) < 5e-11 {
		return 0
	}
	return x
}
