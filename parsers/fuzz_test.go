package parsers

import (
	"bytes"
	"encoding/json"
	"errors"
	"math"
	"strconv"
	"strings"
	"testing"
	"unicode/utf8"

	"gonum.org/v1/gonum/floats/scalar"
)

// Seeds are snippets of output formats invented for wellscan's tests.
var outputSeeds = []string{
	toyLog,
	fortranLog,
	jsonLog,
	jsonLines,
	"energy = NaN\n",
	"energy = -Inf\n",
	"E(final) = -1.1D+00\r\nE(final) = -1.2d+00\r\n",
	"--- point r=1.100 ---\n  well energy / eV : -4.49012345678901\n",
	"well energy / eV : -3050,5\n",
	"Total energy = -1,234.5 hartree\nE = -76.4E-01x\n",
	"Total energy: -76.02abc\nE = 0x1p-2\n",
	"",
}

// checkExtracted is the property every extractor keeps on any input: either
// a finite energy, or an *ExtractError wrapping one of the two sentinels.
func checkExtracted(t *testing.T, v float64, err error) {
	t.Helper()
	if err == nil {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			t.Fatalf("Extract returned non-finite %v without an error", v)
		}
		return
	}
	var xe *ExtractError
	if !errors.As(err, &xe) || !(errors.Is(err, ErrEnergyMissing) || errors.Is(err, ErrEnergyInvalid)) {
		t.Fatalf("Extract error %v (%T) is not an ExtractError with a sentinel", err, err)
	}
}

func FuzzExtractRegexp(f *testing.F) {
	patterns := []string{`E = (?P<energy>\S+)`, `^Total energy[:=]\s*(?P<energy>\S+)`, `well energy / eV : (?<energy>[-+.0-9Dd]+)`, `E\(final\) = (?P<energy>\S+)`}
	for i, out := range outputSeeds {
		f.Add([]byte(out), patterns[i%len(patterns)], []string{"first", "last", "2", "-2"}[i%4], []string{"hartree", "eV", "kcal/mol"}[i%3])
	}
	f.Fuzz(func(t *testing.T, output []byte, pattern, match, unit string) {
		x, err := ExtractorSpec{Kind: KindRegexp, Pattern: pattern, Match: match, Unit: unit}.Compile()
		if err != nil {
			return
		}
		v, err := x.Extract(output)
		checkExtracted(t, v, err)
	})
}

func FuzzExtractLabel(f *testing.F) {
	labels := []string{"Total energy", "BINDING ENERGY", "e", "well energy / eV", "E(final)"}
	for i, out := range outputSeeds {
		f.Add([]byte(out), labels[i%len(labels)], []string{"first", "last", "3", "-1"}[i%4])
	}
	f.Fuzz(func(t *testing.T, output []byte, label, match string) {
		x, err := ExtractorSpec{Label: label, Match: match, Unit: "hartree"}.Compile()
		if err != nil {
			return
		}
		v, err := x.Extract(output)
		checkExtracted(t, v, err)

		// Round trip: a line "label = v" appended to the output is the last
		// occurrence and gives v back exactly.
		norm := strings.TrimSpace(strings.TrimRight(strings.TrimSpace(label), "=:"))
		want := -1.25
		if err == nil {
			want = v
		}
		last, err := ExtractorSpec{Label: label, Unit: "hartree"}.Compile()
		if err != nil {
			t.Fatalf("label %q compiled with match %q but not with the default: %v", label, match, err)
		}
		out := append(append([]byte{}, output...), "\n"+norm+" = "+strconv.FormatFloat(want, 'g', -1, 64)+"\n"...)
		got, err := last.Extract(out)
		if err != nil || got != want {
			t.Fatalf("label %q: appended line %q read back as %v, %v; want %v", label, norm, got, err, want)
		}
	})
}

func FuzzExtractJSON(f *testing.F) {
	paths := []string{"run.steps[-1].e", "energy", "[1][0]", "run.final.energy_eV", ""}
	for i, out := range outputSeeds {
		f.Add([]byte(out), paths[i%len(paths)], []string{"first", "last", "2", "-2"}[i%4], -76.5)
	}
	f.Add([]byte(`{"a": [1, {"b": "-1.5D+00"}]}`), "a[1].b", "last", 1e-300)
	f.Fuzz(func(t *testing.T, output []byte, path, match string, value float64) {
		p, perr := ParseJSONPath(path)
		if perr == nil {
			// The canonical form parses back to the same path.
			q, err := ParseJSONPath(p.String())
			if err != nil || !q.Equal(p) {
				t.Fatalf("path %q: canonical form %q parses to %v, %v", path, p.String(), q, err)
			}
		}
		x, err := ExtractorSpec{Kind: KindJSON, Path: path, Match: match, Unit: "hartree"}.Compile()
		if _, merr := parseMatch(match); merr == nil && (err == nil) != (perr == nil) {
			t.Fatalf("path %q: ParseJSONPath error %v but Compile error %v", path, perr, err)
		}
		if err != nil {
			return
		}
		v, err := x.Extract(output)
		checkExtracted(t, v, err)

		// Round trip: a document built along the path, holding value at
		// its end, gives value back.
		doc, ok := buildAlong(p.steps, value)
		if !ok || math.IsNaN(value) || math.IsInf(value, 0) {
			return
		}
		data, err := json.Marshal(doc)
		if err != nil {
			t.Fatalf("marshal: %v", err)
		}
		first, _ := ExtractorSpec{Kind: KindJSON, Path: path, Match: "first", Unit: "hartree"}.Compile()
		got, err := first.Extract(data)
		if err != nil || got != value {
			t.Fatalf("path %q in %s: got %v, %v; want %v", path, data, got, err, value)
		}
	})
}

// buildAlong makes the smallest document in which steps lead to leaf. ok is
// false where the test cannot build one (an index too large to
// materialise, a key that JSON would not keep byte for byte).
func buildAlong(steps []jsonStep, leaf any) (any, bool) {
	if len(steps) == 0 {
		return leaf, true
	}
	inner, ok := buildAlong(steps[1:], leaf)
	if !ok {
		return nil, false
	}
	st := steps[0]
	if !st.isIdx {
		if !utf8.ValidString(st.key) {
			return nil, false
		}
		return map[string]any{st.key: inner}, true
	}
	k := st.index
	if k > 1000 || k < -1000 {
		return nil, false
	}
	var arr []any
	if k >= 0 {
		arr = make([]any, k+1)
		arr[k] = inner
	} else {
		arr = make([]any, -k)
		arr[0] = inner
	}
	return arr, true
}

var xyzSeeds = []string{
	"3\nwater, r=0.9572 energy=-76.0107\nO 0.0 0.0 0.1173\nH 0.0 0.7572 -0.4692\nH 0.0 -0.7572 -0.4692\n",
	"2\nkey=r=1.12800 E=-112.7\nC 0 0 0\nO 0 0 1.128D+00\n\n2\nkey=r=1.13000\nC 0 0 0\nO 0 0 1.13 extra columns\n",
	"1\n\n8 1e-3 -2.5E+01 0\n",
	"2\r\nwindows line ends\r\nH 0 0 0\r\nH 0 0 0.74\r\n",
	"2\ncut short\nH 0 0 0\n",
}

func FuzzReadXYZ(f *testing.F) {
	for _, s := range xyzSeeds {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		frames, err := ReadXYZ(bytes.NewReader(data), "fuzz.xyz")
		if err != nil {
			if !strings.HasPrefix(err.Error(), "parsers: fuzz.xyz") {
				t.Fatalf("error %q does not name the file", err)
			}
			return
		}
		// Round trip: write, read back, compare.
		var buf bytes.Buffer
		if err := WriteXYZ(&buf, frames); err != nil {
			t.Fatalf("WriteXYZ: %v", err)
		}
		again, err := ReadXYZ(&buf, "again.xyz")
		if err != nil {
			t.Fatalf("written frames do not read back: %v\n%s", err, buf.String())
		}
		if len(again) != len(frames) {
			t.Fatalf("%d frames read back as %d", len(frames), len(again))
		}
		for i, fr := range frames {
			g := again[i]
			if want := strings.ReplaceAll(fr.Comment, "\r", " "); g.Comment != want {
				t.Fatalf("frame %d comment %q read back as %q", i, want, g.Comment)
			}
			if len(g.Labels) != len(fr.Labels) {
				t.Fatalf("frame %d: %d atoms read back as %d", i, len(fr.Labels), len(g.Labels))
			}
			for j := range fr.Labels {
				if g.Labels[j] != fr.Labels[j] {
					t.Fatalf("frame %d atom %d label %q read back as %q", i, j, fr.Labels[j], g.Labels[j])
				}
				for k := 0; k < 3; k++ {
					// WriteXYZ writes 10 decimals: the absolute error is
					// at most 5e-11; huge values keep ~15 digits.
					if !scalar.EqualWithinAbsOrRel(g.Coords[j][k], fr.Coords[j][k], 1e-10, 1e-14) {
						t.Fatalf("frame %d atom %d coordinate %d: %v read back as %v", i, j, k, fr.Coords[j][k], g.Coords[j][k])
					}
				}
			}
		}
	})
}

func FuzzParseFloat(f *testing.F) {
	for _, s := range []string{"-0.7602683D+02", "1.5d-3", "-76.02", "1e10", "0x1p-2", "0x1.8p1", "NaN", "-Inf", "1_000", ".5", "+3."} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		got, err := ParseFloat(s)
		// Wherever Go itself reads s as a number, ParseFloat must read the
		// same number, or refuse it: never a different value.
		want, werr := strconv.ParseFloat(s, 64)
		if werr == nil && err == nil && !(got == want || math.IsNaN(got) && math.IsNaN(want)) {
			t.Fatalf("ParseFloat(%q) = %v, but strconv reads %v", s, got, want)
		}
		// A D exponent means the same as an E exponent.
		if werr == nil && !strings.ContainsAny(s, "dDxX") && strings.ContainsAny(s, "eE") && !strings.ContainsAny(s, "nNiI") {
			d := strings.NewReplacer("e", "d", "E", "D").Replace(s)
			gd, derr := ParseFloat(d)
			if derr != nil || gd != want {
				t.Fatalf("ParseFloat(%q) = %v, %v; want %v as for %q", d, gd, derr, want, s)
			}
		}
	})
}
