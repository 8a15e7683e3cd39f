package parsers

import (
	"errors"
	"fmt"
	"math"
	"regexp"
	"strconv"
	"strings"
	"unicode/utf8"
)

// Errors an [Extractor] returns, wrapped in an [*ExtractError] that adds the
// detail and the last lines of the output. Test with errors.Is.
var (
	// ErrEnergyMissing: the output holds no energy where the extractor
	// looks (no match, no such label, no such JSON key, output not JSON).
	ErrEnergyMissing = errors.New("parsers: energy missing")
	// ErrEnergyInvalid: something stands where the energy should be, but it
	// is not a finite number (NaN, Inf, a row of overflow asterisks, text),
	// or it fails a plausibility check.
	ErrEnergyInvalid = errors.New("parsers: energy invalid")
)

// MaxMatches bounds how many occurrences of a pattern or label an
// extractor collects, and so the memory a pattern that matches almost
// everywhere can take.
const MaxMatches = 1 << 18

// TailLines is how many lines of output an [ExtractError] quotes.
const TailLines = 8

// ExtractError is the error of a failed extraction. Err is
// [ErrEnergyMissing] or [ErrEnergyInvalid]; Detail says what was looked for
// and what was found; Tail holds the last lines of the output (see [Tail]).
type ExtractError struct {
	Err    error
	Detail string
	Tail   string
}

func (e *ExtractError) Error() string {
	s := e.Err.Error() + ": " + e.Detail
	if e.Tail != "" {
		s += "\n" + e.Tail
	}
	return s
}

// Unwrap returns the sentinel, so that errors.Is(err, ErrEnergyMissing) works.
func (e *ExtractError) Unwrap() error { return e.Err }

// maxTailLineBytes clips very long lines (a line of a dumped matrix, binary
// garbage) so that an error message stays readable.
const maxTailLineBytes = 200

// Tail returns the last n lines of output, ready to append to an error
// message: a heading line, then each line indented by "  | ". Long lines are
// clipped, invalid UTF-8 is replaced, and an empty output says so.
func Tail(output []byte, n int) string {
	text := strings.TrimRight(string(output), "\r\n \t")
	if text == "" {
		return "(the output is empty)"
	}
	if n < 1 {
		n = 1
	}
	lines := strings.Split(text, "\n")
	if len(lines) > n {
		lines = lines[len(lines)-n:]
	}
	var b strings.Builder
	fmt.Fprintf(&b, "last %d line(s) of the output:", len(lines))
	for _, l := range lines {
		l = strings.TrimRight(l, "\r")
		if len(l) > maxTailLineBytes {
			l = l[:maxTailLineBytes] + "…"
		}
		b.WriteString("\n  | ")
		b.WriteString(strings.ToValidUTF8(l, "\uFFFD"))
	}
	return b.String()
}

// ExtractorSpec describes, as a spec states it, how to find the energy in a
// program's output. It is plain data; [ExtractorSpec.Compile] checks it and
// builds an [Extractor].
//
// Kinds:
//
//   - "regexp": Pattern is a regular expression (Go RE2 syntax) with a
//     named group energy, e.g. `final energy:\s+(?P<energy>\S+)`. It is
//     matched in multi-line mode: ^ and $ match at line boundaries.
//   - "label": Label is the text that starts a line "Label = value" or
//     "Label: value" (leading blanks allowed; runs of blanks inside the
//     label match any run of blanks; a trailing '=' or ':' in Label is
//     dropped). The value is the first blank-, comma- or
//     semicolon-delimited word after the separator; anything after it (a
//     unit, a comment) is ignored. Case matters.
//   - "json": the output is one JSON document, or several one after
//     another (JSON lines); Path selects the value in the document (see
//     [ParseJSONPath]). The value may be a number or a string holding a
//     number.
//
// An empty Kind is inferred from which one of Pattern, Label and Path is
// set.
//
// Match picks among several occurrences: "first", "last" (the default:
// programs print intermediate energies before the final one), or a match
// number n (1 = first, 2 = second, …, -1 = last, -2 = the one before
// last). For "json" the occurrences are the JSON documents in the output.
//
// Unit is the unit the program writes the energy in; it is required (see
// [ParseEnergyUnit]). Extracted values are converted to hartree.
type ExtractorSpec struct {
	Kind    string
	Pattern string
	Path    string
	Label   string
	Match   string
	Unit    string
}

// Extractor reads an energy out of a program's output. Build it with
// [ExtractorSpec.Compile]. It is immutable and safe for concurrent use. The
// zero Extractor returns an error from Extract.
type Extractor struct {
	kind  string
	desc  string // what is looked for, for messages
	re    *regexp.Regexp
	group int
	path  JSONPath
	match int // n>0: n-th from the start; n<0: from the end
	unit  EnergyUnit
	// lineBound: every match lies within one line, so ExtractFrom reads
	// line by line (else notLineBound says why not); needle is a text
	// every match contains (nil: none known).
	lineBound    bool
	notLineBound string
	needle       []byte
}

// The extractor kinds.
const (
	KindRegexp = "regexp"
	KindLabel  = "label"
	KindJSON   = "json"
)

// Compile checks the spec and returns its extractor. Errors name the field
// and say what was expected.
func (s ExtractorSpec) Compile() (Extractor, error) {
	kind := strings.ToLower(strings.TrimSpace(s.Kind))
	if kind == "" {
		var set []string
		if s.Pattern != "" {
			set, kind = append(set, "pattern"), KindRegexp
		}
		if s.Label != "" {
			set, kind = append(set, "label"), KindLabel
		}
		if s.Path != "" {
			set, kind = append(set, "path"), KindJSON
		}
		switch len(set) {
		case 0:
			return Extractor{}, errors.New("parsers: energy extractor: set one of pattern (a regular expression), label (a \"label = value\" line) or path (a JSON path)")
		case 1:
		default:
			return Extractor{}, fmt.Errorf("parsers: energy extractor: %s are all set; set only one, or name the kind", strings.Join(set, " and "))
		}
	}
	unit, err := ParseEnergyUnit(s.Unit)
	if err != nil {
		return Extractor{}, err
	}
	match, err := parseMatch(s.Match)
	if err != nil {
		return Extractor{}, err
	}
	x := Extractor{kind: kind, match: match, unit: unit}
	switch kind {
	case KindRegexp:
		if s.Label != "" || s.Path != "" {
			return Extractor{}, errors.New("parsers: energy extractor of kind regexp takes a pattern, not a label or path")
		}
		if s.Pattern == "" {
			return Extractor{}, errors.New("parsers: energy extractor of kind regexp needs a pattern with a group (?P<energy>…)")
		}
		re, err := regexp.Compile("(?m)" + s.Pattern)
		if err != nil {
			return Extractor{}, fmt.Errorf("parsers: energy pattern %q is not a valid regular expression: %w", clip(s.Pattern), err)
		}
		x.re, x.desc = re, fmt.Sprintf("pattern %q", clip(s.Pattern))
	case KindLabel:
		if s.Pattern != "" || s.Path != "" {
			return Extractor{}, errors.New("parsers: energy extractor of kind label takes a label, not a pattern or path")
		}
		label := strings.TrimSpace(s.Label)
		label = strings.TrimSpace(strings.TrimRight(label, "=:"))
		if label == "" {
			return Extractor{}, fmt.Errorf("parsers: energy label %q has no text before the separator", clip(s.Label))
		}
		if !utf8.ValidString(label) {
			return Extractor{}, fmt.Errorf("parsers: energy label %q is not valid UTF-8 text", clip(label))
		}
		if strings.ContainsAny(label, "\r\n") {
			return Extractor{}, fmt.Errorf("parsers: energy label %q spans several lines; a label is the start of one line", clip(s.Label))
		}
		// Split on blanks and tabs only: the pattern joins the words with
		// [ \t]+, and any other character stays part of a word.
		words := strings.FieldsFunc(label, func(r rune) bool { return r == ' ' || r == '\t' })
		x.needle = []byte(words[0]) // every match holds the label's first word
		for i, w := range words {
			words[i] = regexp.QuoteMeta(w)
		}
		re, err := regexp.Compile(`(?m)^[ \t]*` + strings.Join(words, `[ \t]+`) + `[ \t]*[=:][ \t]*(?P<energy>[^\s,;]*(?:[,;][0-9][^\s,;]*)*)`)
		if err != nil {
			return Extractor{}, fmt.Errorf("parsers: energy label %q: %w", clip(label), err)
		}
		x.re = re
		x.desc = fmt.Sprintf("label %q", clip(label))

	case KindJSON:
		if s.Pattern != "" || s.Label != "" {
			return Extractor{}, errors.New("parsers: energy extractor of kind json takes a path, not a pattern or label")
		}
		p, err := ParseJSONPath(s.Path)
		if err != nil {
			return Extractor{}, err
		}
		x.path, x.desc = p, fmt.Sprintf("JSON path %q", clip(p.String()))
		return x, nil
	default:
		return Extractor{}, fmt.Errorf("parsers: unknown energy extractor kind %q: expected regexp, label or json", clip(s.Kind))
	}
	x.group = x.re.SubexpIndex("energy")
	if x.group < 0 {
		return Extractor{}, fmt.Errorf("parsers: energy pattern %q has no group named energy: put (?P<energy>…) around the number", clip(s.Pattern))
	}
	if x.re.Match(nil) {
		// A pattern that matches nothing at all would match at every
		// position of the output; no energy is written as nothing.
		return Extractor{}, fmt.Errorf("parsers: energy %s matches the empty text, so it would match everywhere; make the energy group match at least one character (\\S+, not \\S*)", x.desc)
	}
	x.lineBound, x.notLineBound = lineBound(x.re.String())
	if x.kind == KindRegexp {
		x.needle = needleOf(x.re)
	}
	return x, nil
}

func parseMatch(s string) (int, error) {
	switch t := strings.ToLower(strings.TrimSpace(s)); t {
	case "", "last":
		return -1, nil
	case "first":
		return 1, nil
	default:
		n, err := strconv.Atoi(t)
		if err != nil || n == 0 {
			return 0, fmt.Errorf("parsers: energy match %q: expected first, last or a match number (1 = first, -1 = last)", clip(s))
		}
		return n, nil
	}
}

// Unit returns the unit the extractor reads values in.
func (x Extractor) Unit() EnergyUnit { return x.unit }

// String describes what the extractor looks for, e.g. `label "Total energy"
// (last match, eV)`.
func (x Extractor) String() string {
	if x.kind == "" {
		return "(no extractor)"
	}
	return fmt.Sprintf("%s (%s, %s)", x.desc, matchName(x.match), x.unit)
}

func matchName(n int) string {
	switch n {
	case 1:
		return "first match"
	case -1:
		return "last match"
	}
	return fmt.Sprintf("match %d", n)
}

// Extract returns the energy in hartree. On failure the error is an
// [*ExtractError] wrapping [ErrEnergyMissing] or [ErrEnergyInvalid], with the
// last [TailLines] lines of output.
func (x Extractor) Extract(output []byte) (float64, error) {
	var (
		text string
		err  *ExtractError
	)
	switch x.kind {
	case KindRegexp, KindLabel:
		text, err = x.findText(output)
	case KindJSON:
		text, err = x.findJSON(output)
	default:
		return 0, errors.New("parsers: Extract called on an Extractor not built by ExtractorSpec.Compile")
	}
	if err != nil {
		err.Tail = Tail(output, TailLines)
		return 0, err
	}
	e, perr := x.number(text)
	if perr != nil {
		perr.Tail = Tail(output, TailLines)
		return 0, perr
	}
	return e, nil
}

func (x Extractor) number(text string) (float64, *ExtractError) {
	t := strings.TrimSpace(text)
	if t == "" {
		return 0, &ExtractError{Err: ErrEnergyInvalid, Detail: fmt.Sprintf("%s: the energy is empty", x.desc)}
	}
	if why := notPlainNumber(t); why == "not a finite number" {
		return 0, &ExtractError{Err: ErrEnergyInvalid, Detail: fmt.Sprintf("%s: %q is not a finite number", x.desc, clip(t))}
	} else if why != "" {
		return 0, &ExtractError{Err: ErrEnergyInvalid, Detail: fmt.Sprintf("%s: %q is not a number (%s)", x.desc, clip(t), why)}
	}
	v, err := ParseFloat(t)
	if err != nil && !errors.Is(err, strconv.ErrRange) {
		return 0, &ExtractError{Err: ErrEnergyInvalid, Detail: fmt.Sprintf("%s: %q is not a number", x.desc, clip(t))}
	}
	e := x.unit.ToHartree(v)
	if math.IsNaN(e) || math.IsInf(e, 0) {
		return 0, &ExtractError{Err: ErrEnergyInvalid, Detail: fmt.Sprintf("%s: %q is not a finite number", x.desc, clip(t))}
	}
	return e, nil
}

func (x Extractor) findText(output []byte) (string, *ExtractError) {
	limit := MaxMatches + 1
	if x.match > 0 && x.match < limit {
		limit = x.match
	}
	locs := x.re.FindAllSubmatchIndex(output, limit)
	if len(locs) > MaxMatches {
		return "", &ExtractError{Err: ErrEnergyMissing, Detail: fmt.Sprintf("%s occurs more than %d times; make it match only energy lines", x.desc, MaxMatches)}
	}
	i := x.match - 1
	if x.match < 0 {
		i = len(locs) + x.match
	}
	if len(locs) == 0 {
		return "", &ExtractError{Err: ErrEnergyMissing, Detail: fmt.Sprintf("no line matches %s", x.desc)}
	}
	if i < 0 || i >= len(locs) {
		return "", &ExtractError{Err: ErrEnergyMissing, Detail: fmt.Sprintf("%s occurs %s, but %s was asked for", x.desc, times(len(locs)), matchName(x.match))}
	}
	loc := locs[i]
	a, b := loc[2*x.group], loc[2*x.group+1]
	if a < 0 {
		return "", &ExtractError{Err: ErrEnergyInvalid, Detail: fmt.Sprintf("%s matched, but its energy group took no part in the match", x.desc)}
	}
	if rest := continuation(output[b:]); rest != "" {
		// The pattern stopped inside a number: "-3050" of "-3050,5" or
		// "-76.4" of "-76.4E-01". Taking the part would be a wrong energy.
		return "", &ExtractError{Err: ErrEnergyInvalid, Detail: fmt.Sprintf("%s took %q, but the number goes on with %q (a decimal comma, a thousands separator or an exponent the pattern left out); wellscan reads only whole numbers with a '.' decimal point",
			x.desc, clip(string(output[a:b])), clip(string(output[a:b])+rest))}
	}
	return string(output[a:b]), nil
}

func times(n int) string {
	if n == 1 {
		return "once"
	}
	return fmt.Sprintf("%d times", n)
}

// plainNumberRE is the only shape of number an energy may have: an
// optional sign, digits with at most one '.', and an optional exponent
// with E, e, D or d (Fortran). No decimal comma, no thousands separators,
// no underscores, no hexadecimal, no words such as inf or nan.
var plainNumberRE = regexp.MustCompile(`^[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[EeDd][+-]?[0-9]+)?$`)

// notPlainNumber says why s is not a plain decimal number, or "" if it is.
func notPlainNumber(s string) string {
	switch {
	case plainNumberRE.MatchString(s):
		return ""
	case strings.ContainsAny(s, ",;"):
		return "a decimal comma or a thousands separator; write the number with a '.' decimal point and no grouping"
	case strings.ContainsAny(s, "_' "):
		return "digit grouping is not read"
	}
	lower := strings.ToLower(strings.TrimLeft(s, "+-"))
	if strings.HasPrefix(lower, "nan") || strings.HasPrefix(lower, "inf") {
		return "not a finite number"
	}
	if strings.HasPrefix(lower, "0x") {
		return "hexadecimal numbers are not read"
	}
	return "expected digits with an optional '.' and exponent, and nothing after them"
}

// continuation returns the start of rest when it continues a number that
// an energy pattern cut short: a digit or '.', a comma or semicolon
// followed by a digit, or an exponent (E, e, D, d, then an optional sign
// and a digit); "" otherwise.
func continuation(rest []byte) string {
	if len(rest) == 0 {
		return ""
	}
	end := 0
	switch c := rest[0]; {
	case c >= '0' && c <= '9', c == '.' && len(rest) > 1 && rest[1] >= '0' && rest[1] <= '9':
		end = 1
	case (c == ',' || c == ';') && len(rest) > 1 && rest[1] >= '0' && rest[1] <= '9':
		end = 2
	case c == 'E' || c == 'e' || c == 'D' || c == 'd':
		j := 1
		if j < len(rest) && (rest[j] == '+' || rest[j] == '-') {
			j++
		}
		if j < len(rest) && rest[j] >= '0' && rest[j] <= '9' {
			end = j + 1
		}
	}
	if end == 0 {
		return ""
	}
	for end < len(rest) && end < 24 && !isBlank(rest[end]) {
		end++
	}
	return string(rest[:end])
}

func isBlank(c byte) bool { return c == ' ' || c == '\t' || c == '\n' || c == '\r' }
