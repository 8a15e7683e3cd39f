package format

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"unicode/utf8"

	"wellscan/planner"
)

// maxLine bounds one line of a basis file; real lines are < 1 kB.
const maxLine = 1 << 16

// Parse reads a basis file. name is used only in error messages (usually
// the file name). Every error is a *SyntaxError naming the line and what
// was expected there.
func Parse(r io.Reader, name string) (*File, error) {
	p := &parser{name: name, f: &File{}, seenZ: map[int]int{}, citeKeys: map[string]bool{}}
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 0, 4096), maxLine)
	for sc.Scan() {
		p.line++
		if err := p.parseLine(sc.Text()); err != nil {
			return nil, err
		}
	}
	if err := sc.Err(); err != nil {
		if errors.Is(err, bufio.ErrTooLong) {
			return nil, p.errf(p.line+1, "line longer than %d bytes", maxLine)
		}
		return nil, &SyntaxError{File: name, Line: p.line, Msg: "read: " + err.Error()}
	}
	if !p.sawMagic {
		return nil, p.errf(0, "empty file: expected a first line %q", fmt.Sprintf("%s %d", Magic, Version))
	}
	if err := p.closeElement(); err != nil {
		return nil, err
	}
	if len(p.f.Elements) == 0 {
		return nil, p.errf(0, "no element blocks (expected at least one line \"element SYMBOL\")")
	}
	return p.f, nil
}

type parser struct {
	name     string
	line     int
	f        *File
	sawMagic bool
	el       *Element // element being read, nil in the header
	sh       *Shell   // shell being read, nil outside a shell
	seenZ    map[int]int
	citeKeys map[string]bool
	// line numbers of the header keywords that may appear only once
	titleLine, aboutLine, harmonicsLine int
}

func (p *parser) errf(line int, format string, args ...any) error {
	return &SyntaxError{File: p.name, Line: line, Msg: fmt.Sprintf(format, args...)}
}

// splitKeyword splits a trimmed line into its first word and the rest.
func splitKeyword(s string) (string, string) {
	i := strings.IndexAny(s, " \t")
	if i < 0 {
		return s, ""
	}
	return s[:i], trim(s[i+1:])
}

func trim(s string) string { return strings.Trim(s, " \t") }

func fields(s string) []string {
	return strings.FieldsFunc(s, func(r rune) bool { return r == ' ' || r == '\t' })
}

func (p *parser) parseLine(raw string) error {
	if !utf8.ValidString(raw) {
		return p.errf(p.line, "line is not valid UTF-8 text")
	}
	raw = strings.TrimSuffix(raw, "\r")
	if strings.IndexByte(raw, '\r') >= 0 {
		return p.errf(p.line, "carriage return inside the line (lines end with LF or CR LF)")
	}
	s := trim(raw)
	if s == "" || s[0] == '#' {
		return nil
	}
	if !p.sawMagic {
		kw, rest := splitKeyword(s)
		if kw != Magic {
			return p.errf(p.line, "expected the first line %q, found %q", fmt.Sprintf("%s %d", Magic, Version), clip(s))
		}
		if rest != strconv.Itoa(Version) {
			return p.errf(p.line, "unsupported format version %q (this program reads version %d)", clip(rest), Version)
		}
		p.sawMagic = true
		return nil
	}
	if startsNumber(s) {
		return p.parseRow(s)
	}
	kw, rest := splitKeyword(s)
	switch kw {
	case "title", "about", "origin", "remark", "cite":
		return p.headerText(kw, rest)
	case "harmonics":
		return p.harmonics(rest)
	case "element":
		return p.element(rest)
	case "cites":
		return p.cites(rest)
	case "shell":
		return p.shell(rest)
	case Magic:
		return p.errf(p.line, "second %q line (one file holds one basis set)", Magic)
	}
	if p.el == nil {
		return p.errf(p.line, "unknown keyword %q (expected title, about, harmonics, origin, remark, cite or element)", clip(kw))
	}
	return p.errf(p.line, "unknown keyword %q in element %s (expected harmonics, cites, shell, a row of numbers or the next element)", clip(kw), p.el.Symbol)
}

// clip shortens text quoted in an error message.
func clip(s string) string {
	if utf8.RuneCountInString(s) <= 40 {
		return s
	}
	r := []rune(s)
	return string(r[:40]) + "…"
}

func startsNumber(s string) bool {
	c := s[0]
	return c >= '0' && c <= '9' || c == '.' || c == '-' || c == '+'
}

func (p *parser) headerText(kw, rest string) error {
	if p.el != nil {
		return p.errf(p.line, "%q belongs in the header, before the first element block (found in element %s)", kw, p.el.Symbol)
	}
	if rest == "" {
		return p.errf(p.line, "%q needs text after it", kw)
	}
	once := func(prev *int) error {
		if *prev != 0 {
			return p.errf(p.line, "second %q line (the first is at line %d)", kw, *prev)
		}
		*prev = p.line
		return nil
	}
	switch kw {
	case "title":
		if err := once(&p.titleLine); err != nil {
			return err
		}
		p.f.Title = rest
	case "about":
		if err := once(&p.aboutLine); err != nil {
			return err
		}
		p.f.About = rest
	case "origin":
		p.f.Origins = append(p.f.Origins, rest)
	case "remark":
		p.f.Remarks = append(p.f.Remarks, rest)
	case "cite":
		key, text := splitKeyword(rest)
		if text == "" {
			return p.errf(p.line, "cite %q has no citation text (expected \"cite KEY TEXT\")", clip(key))
		}
		if p.citeKeys[key] {
			return p.errf(p.line, "cite key %q declared twice", clip(key))
		}
		p.citeKeys[key] = true
		p.f.Cites = append(p.f.Cites, Cite{Key: key, Text: text})
	}
	return nil
}

func parseHarmonics(s string) (Harmonics, bool) {
	switch s {
	case "cartesian":
		return Cartesian, true
	case "spherical":
		return Spherical, true
	}
	return Unstated, false
}

func (p *parser) harmonics(rest string) error {
	h, ok := parseHarmonics(rest)
	if !ok {
		return p.errf(p.line, "harmonics %q: expected \"cartesian\" or \"spherical\"", clip(rest))
	}
	if p.el == nil {
		if p.harmonicsLine != 0 {
			return p.errf(p.line, "second \"harmonics\" line in the header (the first is at line %d)", p.harmonicsLine)
		}
		p.harmonicsLine = p.line
		p.f.Harmonics = h
		return nil
	}
	if p.el.Harmonics != Unstated {
		return p.errf(p.line, "second \"harmonics\" line in element %s", p.el.Symbol)
	}
	if len(p.el.Shells) > 0 {
		return p.errf(p.line, "\"harmonics\" of element %s must come before its first shell", p.el.Symbol)
	}
	p.el.Harmonics = h
	return nil
}

func (p *parser) element(rest string) error {
	if err := p.closeElement(); err != nil {
		return err
	}
	if rest == "" || len(fields(rest)) != 1 {
		return p.errf(p.line, "expected \"element SYMBOL\", found %q", clip("element "+rest))
	}
	for _, c := range rest {
		if c < 'A' || c > 'Z' && c < 'a' || c > 'z' {
			return p.errf(p.line, "element %q: expected a chemical symbol such as O or Cl", clip(rest))
		}
	}
	e, err := planner.ElementBySymbol(rest)
	if err != nil {
		return p.errf(p.line, "element %q: not a chemical symbol wellscan knows (H–Kr)", clip(rest))
	}
	if prev, dup := p.seenZ[e.Z]; dup {
		return p.errf(p.line, "element %s appears twice (first at line %d)", e.Symbol, prev)
	}
	p.seenZ[e.Z] = p.line
	p.f.Elements = append(p.f.Elements, Element{Symbol: e.Symbol, Z: e.Z, Line: p.line})
	p.el = &p.f.Elements[len(p.f.Elements)-1]
	return nil
}

func (p *parser) cites(rest string) error {
	if p.el == nil {
		return p.errf(p.line, "\"cites\" belongs in an element block (use \"cite KEY TEXT\" in the header)")
	}
	if p.el.Cites != nil {
		return p.errf(p.line, "second \"cites\" line in element %s", p.el.Symbol)
	}
	if len(p.el.Shells) > 0 {
		return p.errf(p.line, "\"cites\" of element %s must come before its first shell", p.el.Symbol)
	}
	keys := fields(rest)
	if len(keys) == 0 {
		return p.errf(p.line, "\"cites\" needs at least one key")
	}
	for _, k := range keys {
		if !p.citeKeys[k] {
			return p.errf(p.line, "element %s cites key %q, which no \"cite\" line in the header declares", p.el.Symbol, clip(k))
		}
	}
	p.el.Cites = keys
	return nil
}

func (p *parser) shell(rest string) error {
	if p.el == nil {
		return p.errf(p.line, "\"shell\" outside an element block (expected \"element SYMBOL\" first)")
	}
	if err := p.closeShell(); err != nil {
		return err
	}
	l, ok := parseL(rest)
	if !ok {
		return p.errf(p.line, "shell %q: expected one angular-momentum letter (%s)", clip(rest), strings.Join(strings.Split(angular, ""), " "))
	}
	p.el.Shells = append(p.el.Shells, Shell{L: l, Line: p.line})
	p.sh = &p.el.Shells[len(p.el.Shells)-1]
	return nil
}

func (p *parser) parseRow(s string) error {
	if p.sh == nil {
		if p.el == nil {
			return p.errf(p.line, "row of numbers in the header (expected \"element SYMBOL\" and \"shell L\" first)")
		}
		return p.errf(p.line, "row of numbers in element %s before any \"shell L\" line", p.el.Symbol)
	}
	fs := fields(s)
	if len(fs) < 2 {
		return p.errf(p.line, "expected an exponent followed by at least one coefficient, found one number")
	}
	if len(p.sh.Coefs) == 0 {
		p.sh.Coefs = make([][]Number, len(fs)-1)
	} else if len(fs)-1 != len(p.sh.Coefs) {
		return p.errf(p.line, "%s shell of %s (line %d) has %d coefficient column(s) but this row has %d",
			LetterL(p.sh.L), p.el.Symbol, p.sh.Line, len(p.sh.Coefs), len(fs)-1)
	}
	nums := make([]Number, len(fs))
	for i, t := range fs {
		n, err := ParseNumber(t)
		if err != nil {
			what := "exponent"
			if i > 0 {
				what = fmt.Sprintf("coefficient %d", i)
			}
			return p.errf(p.line, "%s %q: %v", what, clip(t), err)
		}
		nums[i] = n
	}
	if !(nums[0].Value > 0) {
		return p.errf(p.line, "exponent %s: expected a positive number", nums[0].Text)
	}
	p.sh.Exps = append(p.sh.Exps, nums[0])
	for k := range p.sh.Coefs {
		p.sh.Coefs[k] = append(p.sh.Coefs[k], nums[k+1])
	}
	return nil
}

func (p *parser) closeShell() error {
	sh := p.sh
	p.sh = nil
	if sh == nil {
		return nil
	}
	if len(sh.Exps) == 0 {
		return p.errf(sh.Line, "%s shell of %s has no rows (expected lines \"EXPONENT COEFFICIENT…\")", LetterL(sh.L), p.el.Symbol)
	}
	for k, col := range sh.Coefs {
		zero := true
		for _, c := range col {
			if c.Value != 0 {
				zero = false
				break
			}
		}
		if zero {
			return p.errf(sh.Line, "%s shell of %s: coefficient column %d is all zeros (no function)", LetterL(sh.L), p.el.Symbol, k+1)
		}
	}
	return nil
}

func (p *parser) closeElement() error {
	if err := p.closeShell(); err != nil {
		return err
	}
	el := p.el
	p.el = nil
	if el == nil {
		return nil
	}
	if len(el.Shells) == 0 {
		return p.errf(el.Line, "element %s has no shells (expected \"shell L\" lines)", el.Symbol)
	}
	if el.Harmonics == Unstated && p.f.Harmonics == Unstated {
		for _, sh := range el.Shells {
			if sh.L >= 2 {
				return p.errf(el.Line, "element %s has a %s shell (line %d) but neither the element nor the header has a \"harmonics cartesian|spherical\" line",
					el.Symbol, LetterL(sh.L), sh.Line)
			}
		}
	}
	return nil
}

// ParseNumber reads a decimal number: optional sign, digits with an
// optional decimal point, and an optional exponent introduced by E or e
// (or D/d, the Fortran double-precision marker). Hexadecimal, "inf",
// "nan", underscores and values that overflow float64 are rejected.
func ParseNumber(t string) (Number, error) {
	if !isDecimal(t) {
		return Number{}, errors.New("expected a decimal number such as 0.1543 or 1.2E-03")
	}
	g := t
	if strings.ContainsAny(g, "Dd") {
		g = strings.Map(func(r rune) rune {
			if r == 'D' || r == 'd' {
				return 'e'
			}
			return r
		}, g)
	}
	v, err := strconv.ParseFloat(g, 64)
	if err != nil || math.IsInf(v, 0) {
		return Number{}, errors.New("number out of the float64 range")
	}
	return Number{Text: t, Value: v}, nil
}

func isDecimal(t string) bool {
	i := 0
	if i < len(t) && (t[i] == '+' || t[i] == '-') {
		i++
	}
	digits := 0
	for i < len(t) && t[i] >= '0' && t[i] <= '9' {
		i++
		digits++
	}
	if i < len(t) && t[i] == '.' {
		i++
		for i < len(t) && t[i] >= '0' && t[i] <= '9' {
			i++
			digits++
		}
	}
	if digits == 0 {
		return false
	}
	if i < len(t) && strings.IndexByte("eEdD", t[i]) >= 0 {
		i++
		if i < len(t) && (t[i] == '+' || t[i] == '-') {
			i++
		}
		ed := 0
		for i < len(t) && t[i] >= '0' && t[i] <= '9' {
			i++
			ed++
		}
		if ed == 0 {
			return false
		}
	}
	return i == len(t)
}
