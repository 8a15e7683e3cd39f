package parsers

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"regexp"
	"regexp/syntax"
	"strconv"
	"strings"
)

// ErrOutputTooLarge is wrapped by the error of an extractor that needs a
// whole JSON document, or the whole output, and found more than it may
// read.
var ErrOutputTooLarge = errors.New("parsers: output too large to read whole")

// MaxLineBytes is the longest line a line-by-line extractor holds. A
// longer line (binary data, a dumped matrix on one line) makes it read the
// whole output instead, within the caller's cap.
const MaxLineBytes = 1 << 20

// lineBound reports whether every match of the regular expression expr
// (compiled in multi-line mode) lies within one line, so that matching
// each line alone finds exactly the matches of the whole text: nothing in
// it can match a line break, and it uses no \A or \z (whose meaning
// changes when each line is a text of its own). ^, $ and \b mean the same
// at a line's ends either way. why says what ties it to the whole text.
func lineBound(expr string) (ok bool, why string) {
	re, err := syntax.Parse(expr, syntax.Perl)
	if err != nil {
		return false, "it cannot be analysed"
	}
	var walk func(*syntax.Regexp) string
	walk = func(r *syntax.Regexp) string {
		switch r.Op {
		case syntax.OpLiteral:
			for _, c := range r.Rune {
				if c == '\n' {
					return "it matches a line break (\\n)"
				}
			}
		case syntax.OpCharClass:
			for i := 0; i+1 < len(r.Rune); i += 2 {
				if r.Rune[i] <= '\n' && '\n' <= r.Rune[i+1] {
					return "it can match a line break (\\s, a negated class such as [^…], or \\n: use [ \\t] for blanks within a line)"
				}
			}
		case syntax.OpAnyChar:
			return "it can match a line break ('.' with the s flag)"
		case syntax.OpBeginText, syntax.OpEndText:
			return "it uses \\A or \\z (the start or end of the whole output)"
		}
		for _, s := range r.Sub {
			if w := walk(s); w != "" {
				return w
			}
		}
		return ""
	}
	if w := walk(re); w != "" {
		return false, w
	}
	return true, ""
}

// needleOf is a literal text every match of re contains, or nil: lines
// without it are skipped without running the regular expression. It is
// the literal prefix, or else the longest case-sensitive literal that
// the pattern's top-level sequence requires.
func needleOf(re *regexp.Regexp) []byte {
	if p, _ := re.LiteralPrefix(); p != "" {
		return []byte(p)
	}
	t, err := syntax.Parse(re.String(), syntax.Perl)
	if err != nil {
		return nil
	}
	t = t.Simplify()
	subs := []*syntax.Regexp{t}
	if t.Op == syntax.OpConcat {
		subs = t.Sub
	}
	var best []rune
	for _, s := range subs {
		if s.Op == syntax.OpLiteral && s.Flags&syntax.FoldCase == 0 && len(s.Rune) > len(best) {
			best = s.Rune
		}
	}
	if len(best) == 0 {
		return nil
	}
	return []byte(string(best))
}

// Streams reports whether [Extractor.ExtractFrom] reads the output line
// by line, keeping only the matches it needs (its memory does not grow
// with the output), rather than whole. It says why not in the second
// result.
func (x Extractor) Streams() (bool, string) {
	switch x.kind {
	case KindLabel, KindRegexp:
		if x.lineBound {
			return true, ""
		}
		return false, fmt.Sprintf("%s: %s, so it is matched against the whole output", x.desc, x.notLineBound)
	case KindJSON:
		return false, "a JSON document is read whole (JSON lines one document at a time)"
	}
	return false, "no extractor"
}

// ExtractFrom reads the energy (hartree) from the output in r and returns
// exactly what [Extractor.Extract] returns for the same bytes, value and
// error alike, with bounded memory where the extractor allows it:
//
//   - label extractors, and regexp extractors whose pattern cannot match
//     across a line break ([Extractor.Streams]), read line by line and
//     keep only the matches the match number needs ("first" or n stops
//     reading at the n-th match; "last" or -n keeps the last n). Lines
//     longer than [MaxLineBytes] make them read the whole output instead
//     (within maxWhole).
//   - JSON extractors decode one document at a time; a document longer
//     than maxWhole bytes is refused.
//   - a pattern that can match across lines needs the whole output: more
//     than maxWhole bytes is refused.
//
// A refusal wraps [ErrOutputTooLarge] and says why the output was needed
// whole. maxWhole < 1 means no cap.
func (x Extractor) ExtractFrom(r io.Reader, maxWhole int64) (float64, error) {
	if x.kind == "" {
		return 0, errors.New("parsers: ExtractFrom called on an Extractor not built by ExtractorSpec.Compile")
	}
	tail := &tailKeeper{}
	src := io.TeeReader(r, tail)
	var (
		text string
		xerr *ExtractError
		err  error
	)
	switch {
	case x.kind == KindJSON:
		text, xerr, err = x.findJSONFrom(src, maxWhole)
	case x.lineBound:
		var long bool
		text, xerr, long, err = x.findTextFrom(src)
		if long {
			// A line too long to hold: the whole output, within the cap,
			// when it can be read again from the start.
			sk, ok := r.(io.Seeker)
			if !ok {
				return 0, fmt.Errorf("%w: a line of the output is longer than the %d bytes the line-by-line reading of %s holds", ErrOutputTooLarge, MaxLineBytes, x.desc)
			}
			if _, err := sk.Seek(0, io.SeekStart); err != nil {
				return 0, fmt.Errorf("parsers: reading the output again: %w", err)
			}
			return x.extractWhole(r, maxWhole, fmt.Sprintf("a line of it is longer than %d bytes", MaxLineBytes))
		}
	default:
		_, why := x.Streams()
		return x.extractWhole(src, maxWhole, why)
	}
	if err != nil {
		return 0, err
	}
	if xerr == nil {
		e, perr := x.number(text)
		if perr == nil {
			return e, nil
		}
		xerr = perr
	}
	// The error quotes the end of the whole output, as Extract does.
	if _, err := io.Copy(io.Discard, src); err != nil {
		return 0, fmt.Errorf("parsers: reading the output: %w", err)
	}
	xerr.Tail = tail.String()
	return 0, xerr
}

// extractWhole reads r whole (at most max bytes) and extracts from it;
// why says why the whole output is needed.
func (x Extractor) extractWhole(r io.Reader, max int64, why string) (float64, error) {
	b, err := readCapped(r, max)
	if errors.Is(err, ErrOutputTooLarge) {
		return 0, fmt.Errorf("%w: the output is more than %d bytes, and it is needed whole: %s", err, max, why)
	}
	if err != nil {
		return 0, fmt.Errorf("parsers: reading the output: %w", err)
	}
	return x.Extract(b)
}

// readCapped reads r whole, failing with ErrOutputTooLarge past max bytes.
func readCapped(r io.Reader, max int64) ([]byte, error) {
	if max < 1 {
		return io.ReadAll(r)
	}
	b, err := io.ReadAll(io.LimitReader(r, max+1))
	if err != nil {
		return nil, err
	}
	if int64(len(b)) > max {
		return nil, ErrOutputTooLarge
	}
	return b, nil
}

// hit is one match found line by line: the energy group's text and what
// follows it on the line (for the cut-number check).
type hit struct {
	text, rest string
	noGroup    bool
}

// lineReader yields the lines of r without their '\n' (a final line
// without one included), each valid until the next call. long is set
// when a line exceeds MaxLineBytes.
//
// Like strings.Split(output, "\n"), it yields a last, empty line when the
// output ends with '\n' or is empty.
type lineReader struct {
	br    *bufio.Reader
	buf   []byte
	long  bool
	err   error // a read error other than the end of the output
	ended bool  // the last line was yielded
}

func newLineReader(r io.Reader) *lineReader {
	return &lineReader{br: bufio.NewReaderSize(r, 64<<10)}
}

func (l *lineReader) next() ([]byte, bool) {
	if l.ended {
		return nil, false
	}
	line, err := l.br.ReadSlice('\n')
	if err == nil {
		return line[:len(line)-1], true
	}
	if errors.Is(err, bufio.ErrBufferFull) {
		l.buf = append(l.buf[:0], line...)
		for {
			line, err = l.br.ReadSlice('\n')
			l.buf = append(l.buf, line...)
			if len(l.buf) > MaxLineBytes+1 {
				l.long = true
				return nil, false
			}
			if err == nil {
				return l.buf[:len(l.buf)-1], true
			}
			if !errors.Is(err, bufio.ErrBufferFull) {
				break
			}
		}
		line = l.buf
	}
	if !errors.Is(err, io.EOF) {
		l.err = err
		return nil, false
	}
	l.ended = true
	return line, true
}

// findTextFrom is findText over a stream, line by line. long reports a
// line longer than MaxLineBytes (nothing else is then meaningful).
func (x Extractor) findTextFrom(r io.Reader) (string, *ExtractError, bool, error) {
	lr := newLineReader(r)
	var ring []hit // the last -x.match hits ("last" or -n)
	var chosen *hit
	count := 0
	keep := 0
	if x.match < 0 {
		keep = -x.match
	}
	for chosen == nil {
		line, ok := lr.next()
		if !ok {
			break
		}
		if x.needle != nil && !bytes.Contains(line, x.needle) {
			continue
		}
		n := -1
		if x.match > 0 {
			n = x.match - count
		}
		for _, loc := range x.re.FindAllSubmatchIndex(line, n) {
			count++
			h := hit{}
			if a, b := loc[2*x.group], loc[2*x.group+1]; a < 0 {
				h.noGroup = true
			} else {
				h.text, h.rest = string(line[a:b]), continuation(line[b:])
			}
			switch {
			case x.match > 0 && count == x.match:
				chosen = &h
			case x.match < 0:
				if len(ring) == keep {
					copy(ring, ring[1:])
					ring = ring[:keep-1]
				}
				ring = append(ring, h)
			}
			if chosen != nil || count > MaxMatches {
				break
			}
		}
		if count > MaxMatches {
			break
		}
	}
	if lr.long {
		return "", nil, true, nil
	}
	if lr.err != nil {
		return "", nil, false, fmt.Errorf("parsers: reading the output: %w", lr.err)
	}
	if count > MaxMatches {
		return "", &ExtractError{Err: ErrEnergyMissing, Detail: fmt.Sprintf("%s occurs more than %d times; make it match only energy lines", x.desc, MaxMatches)}, false, nil
	}
	if count == 0 {
		return "", &ExtractError{Err: ErrEnergyMissing, Detail: fmt.Sprintf("no line matches %s", x.desc)}, false, nil
	}
	if chosen == nil && x.match < 0 && len(ring) == keep {
		chosen = &ring[0]
	}
	if chosen == nil {
		return "", &ExtractError{Err: ErrEnergyMissing, Detail: fmt.Sprintf("%s occurs %s, but %s was asked for", x.desc, times(count), matchName(x.match))}, false, nil
	}
	if chosen.noGroup {
		return "", &ExtractError{Err: ErrEnergyInvalid, Detail: fmt.Sprintf("%s matched, but its energy group took no part in the match", x.desc)}, false, nil
	}
	if chosen.rest != "" {
		return "", &ExtractError{Err: ErrEnergyInvalid, Detail: fmt.Sprintf("%s took %q, but the number goes on with %q (a decimal comma, a thousands separator or an exponent the pattern left out); wellscan reads only whole numbers with a '.' decimal point",
			x.desc, clip(chosen.text), clip(chosen.text+chosen.rest))}, false, nil
	}
	return chosen.text, nil, false, nil
}

// docCap fails a read once the JSON document being decoded has taken more
// than max bytes.
type docCap struct {
	r     io.Reader
	read  int64
	start int64 // where the current document began
	max   int64
}

func (c *docCap) Read(p []byte) (int, error) {
	if c.max > 0 && c.read-c.start > c.max {
		return 0, ErrOutputTooLarge
	}
	n, err := c.r.Read(p)
	c.read += int64(n)
	return n, err
}

// findJSONFrom is findJSON over a stream: the documents are decoded one
// at a time and only the last -x.match are kept ("last" or -n). err is a
// refusal (a document over max bytes, or a read error).
func (x Extractor) findJSONFrom(r io.Reader, max int64) (string, *ExtractError, error) {
	cr := &docCap{r: r, max: max}
	dec := json.NewDecoder(cr)
	dec.UseNumber()
	var ring []any
	keep := 0
	if x.match < 0 {
		keep = -x.match
	}
	var chosen any
	found, count := false, 0
	for !found {
		cr.start = dec.InputOffset()
		var d any
		err := dec.Decode(&d)
		if errors.Is(err, io.EOF) {
			break
		}
		if errors.Is(err, ErrOutputTooLarge) {
			return "", nil, fmt.Errorf("%w: %s: JSON document %d is more than %d bytes, and a JSON document is read whole", ErrOutputTooLarge, x.desc, count+1, max)
		}
		if err != nil {
			var se *json.SyntaxError
			var ue *json.UnmarshalTypeError
			if !errors.As(err, &se) && !errors.As(err, &ue) && !errors.Is(err, io.ErrUnexpectedEOF) {
				return "", nil, fmt.Errorf("parsers: reading the output: %w", err)
			}
			return "", &ExtractError{Err: ErrEnergyMissing, Detail: fmt.Sprintf("looking for %s: the output is not JSON (document %d, near byte %d): %v", x.desc, count+1, dec.InputOffset(), err)}, nil
		}
		count++
		switch {
		case x.match > 0 && count == x.match:
			chosen, found = d, true
		case x.match < 0:
			if len(ring) == keep {
				copy(ring, ring[1:])
				ring = ring[:keep-1]
			}
			ring = append(ring, d)
		}
	}
	if count == 0 {
		return "", &ExtractError{Err: ErrEnergyMissing, Detail: fmt.Sprintf("looking for %s: the output holds no JSON document", x.desc)}, nil
	}
	if !found && x.match < 0 && len(ring) == keep {
		chosen, found = ring[0], true
	}
	if !found {
		return "", &ExtractError{Err: ErrEnergyMissing, Detail: fmt.Sprintf("looking for %s: the output holds %d JSON document(s), but %s was asked for", x.desc, count, matchName(x.match))}, nil
	}
	text, xerr := x.jsonValue(chosen)
	return text, xerr, nil
}

// tailKeeper receives the output as it is read and keeps what [Tail]
// quotes: the last TailLines lines (each clipped, blank lines after the
// last non-blank one held back), in bounded memory and without an
// allocation per line (the line buffers are reused).
type tailKeeper struct {
	ring    lineRing // the last lines up to the last non-blank one
	pending lineRing // blank lines after it
	cur     []byte   // the line being read, clipped
	blank   bool     // cur holds blanks only so far
	started bool
}

// lineRing holds the last TailLines lines in reused buffers.
type lineRing struct {
	bufs  [TailLines][]byte
	first int // index of the oldest line
	n     int
}

func (r *lineRing) push(b []byte) {
	i := (r.first + r.n) % TailLines
	if r.n == TailLines {
		i = r.first
		r.first = (r.first + 1) % TailLines
	} else {
		r.n++
	}
	r.bufs[i] = append(r.bufs[i][:0], b...)
}

func (r *lineRing) each(f func([]byte)) {
	for j := range r.n {
		f(r.bufs[(r.first+j)%TailLines])
	}
}

// keepLineBytes is enough of a line for Tail to clip it the same way.
const keepLineBytes = maxTailLineBytes + 2

func (k *tailKeeper) Write(p []byte) (int, error) {
	n := len(p)
	for len(p) > 0 {
		if !k.started {
			k.cur, k.blank, k.started = k.cur[:0], true, true
		}
		i := bytes.IndexByte(p, '\n')
		seg := p
		if i >= 0 {
			seg = p[:i]
		}
		if room := keepLineBytes - len(k.cur); room > 0 {
			k.cur = append(k.cur, seg[:min(room, len(seg))]...)
		}
		if k.blank && len(bytes.Trim(seg, " \t\r")) > 0 {
			k.blank = false
		}
		if i < 0 {
			break
		}
		k.endLine()
		p = p[i+1:]
	}
	return n, nil
}

func (k *tailKeeper) endLine() {
	k.started = false
	if k.blank {
		k.pending.push(k.cur)
		return
	}
	k.pending.each(k.ring.push)
	k.pending.n = 0
	k.ring.push(k.cur)
}

// String is Tail of the output seen.
func (k *tailKeeper) String() string {
	if k.started {
		k.endLine()
	}
	var lines [][]byte
	k.ring.each(func(b []byte) { lines = append(lines, b) })
	return Tail(bytes.Join(lines, []byte("\n")), TailLines)
}

// jsonValue is the energy text at the path in the JSON document doc.
func (x Extractor) jsonValue(doc any) (string, *ExtractError) {
	v, where, ok := x.path.Lookup(doc)
	if !ok {
		return "", &ExtractError{Err: ErrEnergyMissing, Detail: fmt.Sprintf("%s: %s", x.desc, where)}
	}
	return jsonNumberText(x.desc, v)
}

// jsonNumberText turns the value found at the path into number text.
func jsonNumberText(desc string, v any) (string, *ExtractError) {
	switch t := v.(type) {
	case json.Number:
		return string(t), nil
	case float64:
		return strconv.FormatFloat(t, 'g', -1, 64), nil
	case string:
		return t, nil
	case nil:
		return "", &ExtractError{Err: ErrEnergyMissing, Detail: fmt.Sprintf("%s is null", desc)}
	}
	return "", &ExtractError{Err: ErrEnergyInvalid, Detail: fmt.Sprintf("%s is %s, not a number", desc, jsonKind(v))}
}

// Streams reports whether [GradientExtractor.ExtractFrom] reads the
// output line by line (the "block" kind) rather than whole, and why not.
func (x GradientExtractor) Streams() (bool, string) {
	switch x.kind {
	case "block":
		return true, ""
	case KindRegexp:
		return false, fmt.Sprintf("%s is matched against the whole output", x.desc)
	case KindJSON:
		return false, "a JSON document is read whole"
	}
	return false, "no extractor"
}

// ExtractFrom reads the gradient from the output in r and returns exactly
// what [GradientExtractor.Extract] returns for the same bytes. The
// "block" kind reads line by line and holds one block of rows at most
// ("first" stops reading after its block); the other kinds read the whole
// output, at most maxWhole bytes (a refusal wraps [ErrOutputTooLarge]).
// maxWhole < 1 means no cap.
func (x GradientExtractor) ExtractFrom(r io.Reader, natoms int, maxWhole int64) ([][3]float64, error) {
	if x.kind != "block" || natoms < 1 || natoms > maxGradientAtoms {
		_, why := x.Streams()
		b, err := readCapped(r, maxWhole)
		if errors.Is(err, ErrOutputTooLarge) {
			return nil, fmt.Errorf("%w: the output is more than %d bytes, and it is needed whole: %s", err, maxWhole, why)
		}
		if err != nil {
			return nil, fmt.Errorf("parsers: reading the output: %w", err)
		}
		return x.Extract(b, natoms)
	}
	tail := &tailKeeper{}
	src := io.TeeReader(r, tail)
	rows, err := x.blockFrom(src, natoms)
	if err == nil {
		return x.finish(rows)
	}
	if errors.Is(err, ErrOutputTooLarge) || !(errors.Is(err, ErrGradientMissing) || errors.Is(err, ErrGradientInvalid)) {
		return nil, err
	}
	if _, rerr := io.Copy(io.Discard, src); rerr != nil {
		return nil, fmt.Errorf("parsers: reading the output: %w", rerr)
	}
	return nil, fmt.Errorf("%w\n%s", err, tail.String())
}

// blockFrom is block over a stream: each line that starts with the label
// begins a new candidate block ("last" keeps the latest, "first" the
// earliest), parsed as block parses it.
func (x GradientExtractor) blockFrom(r io.Reader, natoms int) ([][3]float64, error) {
	lr := newLineReader(r)
	type candidate struct {
		at      int // the label's line number (0-based)
		skipped int // non-row lines between the label and the first row
		rows    [][3]float64
		err     error // the block's verdict once known
	}
	var c *candidate
	label := []byte(x.label)
	lineNo := -1
	for {
		line, ok := lr.next()
		if !ok {
			break
		}
		lineNo++
		if (c == nil || x.last) && bytes.HasPrefix(bytes.TrimLeft(line, " \t"), label) {
			c = &candidate{at: lineNo}
			continue
		}
		if c == nil || c.err != nil || len(c.rows) == natoms {
			if c != nil && !x.last && (c.err != nil || len(c.rows) == natoms) {
				break // "first": its block is decided
			}
			continue
		}
		s := string(line)
		if len(c.rows) == 0 {
			if strings.TrimSpace(s) == "" {
				continue
			}
			if row, ok := trailing3(s); ok {
				c.rows = append(c.rows, row)
				continue
			}
			if c.skipped++; c.skipped > 3 {
				c.err = fmt.Errorf("%w: %s: no row of three numbers within three lines of the label (line %d)", ErrGradientMissing, x.desc, c.at+1)
			}
			continue
		}
		row, ok := trailing3(s)
		if !ok {
			c.err = fmt.Errorf("%w: %s: line %d is not a row of three numbers after %d of %d rows: %q", ErrGradientInvalid, x.desc, lineNo+1, len(c.rows), natoms, clip(s))
			continue
		}
		c.rows = append(c.rows, row)
	}
	if lr.long {
		return nil, fmt.Errorf("%w: a line of the output is longer than the %d bytes the line-by-line reading of %s holds", ErrOutputTooLarge, MaxLineBytes, x.desc)
	}
	if lr.err != nil {
		return nil, fmt.Errorf("parsers: reading the output: %w", lr.err)
	}
	switch {
	case c == nil:
		return nil, fmt.Errorf("%w: no line starts with %q", ErrGradientMissing, clip(x.label))
	case c.err != nil:
		return nil, c.err
	case len(c.rows) < natoms:
		return nil, fmt.Errorf("%w: %s: %d rows, want %d (one per atom)", ErrGradientMissing, x.desc, len(c.rows), natoms)
	}
	return c.rows, nil
}
