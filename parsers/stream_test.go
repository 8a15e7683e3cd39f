package parsers

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"runtime"
	"strings"
	"testing"
	"testing/iotest"
)

// streamSpecs are extractors of every kind, each match rule, line-bound
// patterns and patterns that span lines.
var streamSpecs = []ExtractorSpec{
	{Label: "energy", Unit: "hartree"},
	{Label: "energy", Match: "first", Unit: "hartree"},
	{Label: "energy", Match: "2", Unit: "hartree"},
	{Label: "energy", Match: "-2", Unit: "hartree"},
	{Label: "total energy:", Unit: "eV"},
	{Pattern: `total energy[ \t]*=[ \t]*(?P<energy>[^ \t\n]+)`, Unit: "hartree"},
	{Pattern: `total energy[ \t]*=[ \t]*(?P<energy>[^ \t\n]+)`, Match: "first", Unit: "hartree"},
	{Pattern: `^E\((?P<energy>[-+0-9.]+)\)`, Match: "-1", Unit: "hartree"},
	{Pattern: `(?P<energy>-?[0-9.]+) Eh\b`, Match: "3", Unit: "hartree"},
	{Pattern: `x(?P<energy>\d*)|(?P<other>y)`, Unit: "hartree"},
	{Pattern: `total energy\s*=\s*(?P<energy>\S+)`, Unit: "hartree"},
	{Pattern: `\AE=(?P<energy>\S+)`, Unit: "hartree"},
	{Pattern: `(?s)begin.(?P<energy>\S+)`, Match: "first", Unit: "hartree"},
	{Path: "energy", Unit: "hartree"},
	{Path: "energy", Match: "first", Unit: "hartree"},
	{Path: "result.energy", Match: "-2", Unit: "hartree"},
}

// streamOutputs are outputs that exercise matches, misses, cut numbers,
// decimal commas, blank tails, CRLF, long lines and JSON lines.
var streamOutputs = []string{
	"",
	"\n\n",
	"energy = -1.5\nenergy = -1.6\nenergy = -1.7\n",
	"  energy: -76.0267\r\n  energy: -76.0268\r\n\r\n  \t\n",
	"energy = -3050,5\n",
	"energy = -76.4E-01 hartree\n",
	"total energy:  -2067.5 eV\ntotal energy: -2067.6\n",
	"total energy = -1.1\nsome text\ntotal energy = -1.2,5\n",
	"total energy =\n  -1.3\n",
	"E(-75.1)\nE(-75.2)x\n E(-75.3)\nE(nan)\n",
	"-1.0 Eh\n-2.0 Eh -3.0 Eh\n-4.0 Ehx -5.0 Eh\n",
	"x12\ny\nx\n",
	"E=-7.5\nE=-7.6\n",
	"begin\n-9.25\n",
	strings.Repeat("filler line with no number at all, ", 10) + "\nenergy = -2.5\n" + strings.Repeat("z", 300) + "\n",
	strings.Repeat("a", 70<<10) + "\nenergy = -4.25\n" + strings.Repeat("b", 90<<10),
	"{\"energy\": -1.25}\n{\"energy\": -1.5}\n{\"result\": {\"energy\": \"-2.0\"}}\n{\"result\": {\"energy\": -2.5}}\n",
	"{\"energy\": -1.25} trailing garbage",
	"{\"energy\": null}\n",
	"not json at all\nenergy = -1\n",
}

// sameOutcome fails unless ExtractFrom on r gave what Extract gave.
func sameOutcome(t *testing.T, what string, e1 float64, err1 error, e2 float64, err2 error) {
	t.Helper()
	s1, s2 := fmt.Sprint(err1), fmt.Sprint(err2)
	if s1 != s2 || math.Float64bits(e1) != math.Float64bits(e2) {
		t.Errorf("%s:\nExtract     = %v, %s\nExtractFrom = %v, %s", what, e1, s1, e2, s2)
	}
}

// TestExtractFrom_SameAsExtract: for every extractor and output the
// streaming reader returns exactly what the whole-output reader returns,
// value (bit for bit) and error text (tail included), also when the
// output arrives one byte per read and cannot be read again.
func TestExtractFrom_SameAsExtract(t *testing.T) {
	for _, sp := range streamSpecs {
		x, err := sp.Compile()
		if err != nil {
			t.Fatalf("%+v: %v", sp, err)
		}
		for i, out := range streamOutputs {
			e1, err1 := x.Extract([]byte(out))
			e2, err2 := x.ExtractFrom(strings.NewReader(out), 1<<30)
			sameOutcome(t, fmt.Sprintf("%s, output %d", x, i), e1, err1, e2, err2)
			e3, err3 := x.ExtractFrom(iotest.OneByteReader(strings.NewReader(out)), 1<<30)
			sameOutcome(t, fmt.Sprintf("%s, output %d one byte at a time", x, i), e1, err1, e3, err3)
		}
	}
}

// TestExtractor_Streams says which extractors read line by line.
func TestExtractor_Streams(t *testing.T) {
	for _, tc := range []struct {
		spec ExtractorSpec
		want bool
		why  string
	}{
		{ExtractorSpec{Label: "Total energy", Unit: "eV"}, true, ""},
		{ExtractorSpec{Pattern: `energy:[ \t]+(?P<energy>\S+)`, Unit: "eV"}, true, ""},
		{ExtractorSpec{Pattern: `(?i)^ *energy *= *(?P<energy>[^ \n]+)$`, Unit: "eV"}, true, ""},
		{ExtractorSpec{Pattern: `(?i)^ *energy *= *(?P<energy>[^ ]+)$`, Unit: "eV"}, false, "negated class"},
		{ExtractorSpec{Pattern: `energy:\s+(?P<energy>\S+)`, Unit: "eV"}, false, `use [ \t] for blanks`},
		{ExtractorSpec{Pattern: `energy:[^0-9]*(?P<energy>\S+)`, Unit: "eV"}, false, "negated class"},
		{ExtractorSpec{Pattern: `energy:\n(?P<energy>\S+)`, Unit: "eV"}, false, "line break"},
		{ExtractorSpec{Pattern: `(?s)energy:.(?P<energy>\S+)`, Unit: "eV"}, false, "'.' with the s flag"},
		{ExtractorSpec{Pattern: `energy=(?P<energy>\S+)\z`, Unit: "eV"}, false, `\z`},
		{ExtractorSpec{Path: "energy", Unit: "eV"}, false, "JSON document is read whole"},
	} {
		x, err := tc.spec.Compile()
		if err != nil {
			t.Fatal(err)
		}
		got, why := x.Streams()
		if got != tc.want || !strings.Contains(why, tc.why) {
			t.Errorf("%s: Streams() = %v, %q; want %v, containing %q", x, got, why, tc.want, tc.why)
		}
	}
}

// TestExtractFrom_Caps: what must be read whole is refused past the cap,
// naming why; a line-by-line extractor is not capped; a line longer than
// MaxLineBytes is read whole again when the reader can seek.
func TestExtractFrom_Caps(t *testing.T) {
	big := strings.Repeat("filler\n", 2000) + "total energy = -1.5\n" // 14 kB
	lineX, _ := ExtractorSpec{Pattern: `total energy = (?P<energy>\S+)`, Unit: "hartree"}.Compile()
	spanX, _ := ExtractorSpec{Pattern: `total energy\s*=\s*(?P<energy>\S+)`, Unit: "hartree"}.Compile()
	jsonX, _ := ExtractorSpec{Path: "energy", Unit: "hartree"}.Compile()
	if e, err := lineX.ExtractFrom(strings.NewReader(big), 1024); err != nil || e != -1.5 {
		t.Errorf("line-by-line past the cap = %v, %v; want -1.5 (not capped)", e, err)
	}
	if _, err := spanX.ExtractFrom(strings.NewReader(big), 1024); !errors.Is(err, ErrOutputTooLarge) || !strings.Contains(err.Error(), `\s`) {
		t.Errorf("a pattern across lines past the cap = %v; want ErrOutputTooLarge saying why", err)
	}
	docs := `{"energy": -1.0}` + "\n" + `{"energy": -2.0, "pad": "` + strings.Repeat("p", 4000) + `"}` + "\n"
	if _, err := jsonX.ExtractFrom(strings.NewReader(docs), 1024); !errors.Is(err, ErrOutputTooLarge) || !strings.Contains(err.Error(), "document 2") {
		t.Errorf("a JSON document past the cap = %v; want ErrOutputTooLarge naming document 2", err)
	}
	lines := strings.Repeat(`{"energy": -1.0}`+"\n", 1000) + `{"energy": -3.0}` + "\n"
	if e, err := jsonX.ExtractFrom(strings.NewReader(lines), 1024); err != nil || e != -3 {
		t.Errorf("JSON lines, each under the cap = %v, %v; want -3", e, err)
	}
	long := "total energy = -2.5 " + strings.Repeat("x", MaxLineBytes+10) + "\n"
	if e, err := lineX.ExtractFrom(strings.NewReader(long), 4<<20); err != nil || e != -2.5 {
		t.Errorf("an over-long line, seekable reader = %v, %v; want -2.5 read whole", e, err)
	}
	if _, err := lineX.ExtractFrom(iotest.OneByteReader(strings.NewReader(long)), 4<<20); !errors.Is(err, ErrOutputTooLarge) {
		t.Errorf("an over-long line, reader that cannot seek = %v; want ErrOutputTooLarge", err)
	}
}

// morseLines is an output generator: size bytes of SCF-like lines with a
// "final energy" line every 100 000 lines and a last one of its own; it
// allocates nothing per line.
type morseLines struct {
	block []byte // 99 999 filler lines and one final line
	last  []byte
	left  int64
	off   int
}

func newMorseLines(size int64) *morseLines {
	var b bytes.Buffer
	for i := range 99999 {
		fmt.Fprintf(&b, "  cycle %5d  delta E = %.3e  rms D = %.3e\n", i, 1e-3/float64(i+1), 2e-3/float64(i+1))
	}
	b.WriteString("final energy = -76.0100000000 hartree\n")
	// Whole blocks only: the last line must start a line of its own.
	blocks := (size + int64(b.Len()) - 1) / int64(b.Len())
	return &morseLines{block: b.Bytes(), last: []byte("final energy = -76.0267600000 hartree\n"), left: blocks * int64(b.Len())}
}

func (m *morseLines) Read(p []byte) (int, error) {
	if m.left <= 0 {
		if len(m.last) == 0 {
			return 0, io.EOF
		}
		n := copy(p, m.last)
		m.last = m.last[n:]
		return n, nil
	}
	n := copy(p[:min(int64(len(p)), m.left)], m.block[m.off:])
	m.off = (m.off + n) % len(m.block)
	m.left -= int64(n)
	return n, nil
}

// TestExtractFrom_200MiB_BoundedMemory reads the energy from 200 MiB of
// output, line by line, and measures what the extraction allocates: far
// less than the output (reading it whole would allocate at least 200
// MiB). The value is the generator's last final line.
func TestExtractFrom_200MiB_BoundedMemory(t *testing.T) {
	if testing.Short() {
		t.Skip("reads 200 MiB")
	}
	for _, sp := range []ExtractorSpec{
		{Label: "final energy", Unit: "hartree"},
		{Pattern: `^final energy = (?P<energy>\S+) hartree$`, Unit: "hartree"},
	} {
		x, err := sp.Compile()
		if err != nil {
			t.Fatal(err)
		}
		gen := newMorseLines(200 << 20)
		var before, after runtime.MemStats
		runtime.GC()
		runtime.ReadMemStats(&before)
		e, err := x.ExtractFrom(gen, 64<<20)
		runtime.ReadMemStats(&after)
		if err != nil {
			t.Fatalf("%s: %v", x, err)
		}
		// The generator writes -76.02676 as its last line (exact text).
		if e != -76.02676 {
			t.Errorf("%s: E = %v, want -76.02676 (the last final line)", x, e)
		}
		// 4 MiB: the 64 KiB line buffer and ~2100 matches of a few dozen
		// bytes, with room for the runtime's own allocations; reading the
		// output whole would take 200 MiB.
		alloc := after.TotalAlloc - before.TotalAlloc
		t.Logf("%s: %d bytes allocated for 200 MiB of output", x, alloc)
		if alloc > 4<<20 {
			t.Errorf("%s: %d bytes allocated for 200 MiB of output, want under 4 MiB", x, alloc)
		}
	}
}

// BenchmarkExtractFrom_200MiB measures the line-by-line label extractor
// on 200 MiB of output (B/op is what it allocates; MB/s its speed).
func BenchmarkExtractFrom_200MiB(b *testing.B) {
	for _, sp := range []ExtractorSpec{
		{Label: "final energy", Unit: "hartree"},
		{Pattern: `^final energy = (?P<energy>\S+) hartree$`, Unit: "hartree"},
	} {
		x, err := sp.Compile()
		if err != nil {
			b.Fatal(err)
		}
		b.Run(x.kind, func(b *testing.B) {
			b.ReportAllocs()
			b.SetBytes(200 << 20)
			gen := newMorseLines(200 << 20)
			for b.Loop() {
				g := *gen
				if _, err := x.ExtractFrom(&g, 64<<20); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// FuzzExtractFrom_SameAsExtract: for any output and any label or pattern
// that compiles, the streaming reader returns what Extract returns.
func FuzzExtractFrom_SameAsExtract(f *testing.F) {
	for i, out := range streamOutputs {
		if len(out) > 4096 {
			continue
		}
		sp := streamSpecs[i%len(streamSpecs)]
		f.Add([]byte(out), sp.Label, sp.Pattern, sp.Match)
	}
	f.Fuzz(func(t *testing.T, out []byte, label, pattern, match string) {
		sp := ExtractorSpec{Label: label, Pattern: pattern, Match: match, Unit: "hartree"}
		x, err := sp.Compile()
		if err != nil {
			return
		}
		e1, err1 := x.Extract(out)
		e2, err2 := x.ExtractFrom(bytes.NewReader(out), 1<<30)
		sameOutcome(t, x.String(), e1, err1, e2, err2)
	})
}

// TestGradientExtractFrom_SameAsExtract: the block reader over a stream
// gives what Extract gives (rows, units, errors with their tail).
func TestGradientExtractFrom_SameAsExtract(t *testing.T) {
	specs := []GradientSpec{
		{Label: "GRADIENT", Unit: "hartree/bohr"},
		{Label: "GRADIENT", Match: "first", Unit: "hartree/bohr"},
		{Label: "forces", Unit: "eV/angstrom", Sign: "force"},
		{Pattern: `g (?P<x>\S+) (?P<y>\S+) (?P<z>\S+)`, Unit: "hartree/bohr"},
	}
	outputs := []string{
		"",
		"GRADIENT\n1 O 0.1 0.2 0.3\n2 H -0.1 0 0.05\n",
		"GRADIENT\n1 O 0.1 0.2 0.3\n",
		"GRADIENT\nheader\n---\n\n1 O 0.1 0.2 0.3\n2 H 1 2 3\nGRADIENT\n1 O 9 9 9\n2 H 8 8 8\n",
		"GRADIENT\na\nb\nc\nd\n1 O 0.1 0.2 0.3\n",
		"GRADIENT\n1 O 0.1 0.2 0.3\nbad row\n",
		"GRADIENT\n1 O 0.1 0.2 nan\n2 H 1 1 1\n",
		"forces\n  1 2 3\r\n  4 5 6\r\n",
		"g 1 2 3\ng 4 5 6\ng 7 8 9\n",
		"no gradient here\n\n",
	}
	for _, sp := range specs {
		x, err := sp.Compile()
		if err != nil {
			t.Fatal(err)
		}
		for i, out := range outputs {
			g1, err1 := x.Extract([]byte(out), 2)
			g2, err2 := x.ExtractFrom(iotest.OneByteReader(strings.NewReader(out)), 2, 1<<30)
			if fmt.Sprint(g1) != fmt.Sprint(g2) || fmt.Sprint(err1) != fmt.Sprint(err2) {
				t.Errorf("%s, output %d:\nExtract     = %v, %v\nExtractFrom = %v, %v", x, i, g1, err1, g2, err2)
			}
		}
	}
}

// BenchmarkExtract_Whole_200MiB is the old way, for comparison: the
// output read whole, then Extract.
func BenchmarkExtract_Whole_200MiB(b *testing.B) {
	x, err := ExtractorSpec{Label: "final energy", Unit: "hartree"}.Compile()
	if err != nil {
		b.Fatal(err)
	}
	gen := newMorseLines(200 << 20)
	b.ReportAllocs()
	b.SetBytes(200 << 20)
	for b.Loop() {
		g := *gen
		out, err := io.ReadAll(&g)
		if err != nil {
			b.Fatal(err)
		}
		if _, err := x.Extract(out); err != nil {
			b.Fatal(err)
		}
	}
}

// FuzzGradientExtractFrom_SameAsExtract: the block reader over a stream
// gives what Extract gives, for any output, label, match and atom count.
func FuzzGradientExtractFrom_SameAsExtract(f *testing.F) {
	f.Add([]byte("GRADIENT\nx\n1 O 0.1 0.2 0.3\n2 H 1 2 3\nGRADIENT\n1 2 3\n"), "GRADIENT", "last", 2)
	f.Add([]byte("forces\n  1 2 3\r\n\n"), "forces", "first", 1)
	f.Fuzz(func(t *testing.T, out []byte, label, match string, natoms int) {
		x, err := GradientSpec{Label: label, Match: match, Unit: "hartree/bohr"}.Compile()
		if err != nil || natoms > 64 {
			return
		}
		g1, err1 := x.Extract(out, natoms)
		g2, err2 := x.ExtractFrom(bytes.NewReader(out), natoms, 1<<30)
		if fmt.Sprint(g1) != fmt.Sprint(g2) || fmt.Sprint(err1) != fmt.Sprint(err2) {
			t.Errorf("%s, %d atoms:\nExtract     = %v, %v\nExtractFrom = %v, %v", x, natoms, g1, err1, g2, err2)
		}
	})
}
