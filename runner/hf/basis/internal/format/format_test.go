package format

import (
	"bytes"
	"errors"
	"strings"
	"testing"
)

func TestParse_BadInput_PreciseError(t *testing.T) {
	const head = "wellscan-basis 1\n"
	tests := []struct {
		name, in, want string
	}{
		{"empty", "", `basis: f.basis: empty file: expected a first line "wellscan-basis 1"`},
		{"only comments", "# x\n\n", `basis: f.basis: empty file: expected a first line "wellscan-basis 1"`},
		{"no magic", "title x\n", `basis: f.basis:1: expected the first line "wellscan-basis 1", found "title x"`},
		{"version", "wellscan-basis 2\n", `basis: f.basis:1: unsupported format version "2" (this program reads version 1)`},
		{"no elements", head + "title x\n", `basis: f.basis: no element blocks (expected at least one line "element SYMBOL")`},
		{"unknown header keyword", head + "nmae x\n", `basis: f.basis:2: unknown keyword "nmae" (expected title, about, harmonics, origin, remark, cite or element)`},
		{"unknown element keyword", head + "element H\nshel s\n", `basis: f.basis:3: unknown keyword "shel" in element H (expected harmonics, cites, shell, a row of numbers or the next element)`},
		{"title twice", head + "title a\ntitle b\n", `basis: f.basis:3: second "title" line (the first is at line 2)`},
		{"empty title", head + "title\n", `basis: f.basis:2: "title" needs text after it`},
		{"header in element", head + "element H\ntitle x\n", `basis: f.basis:3: "title" belongs in the header, before the first element block (found in element H)`},
		{"bad harmonics", head + "harmonics 6d\n", `basis: f.basis:2: harmonics "6d": expected "cartesian" or "spherical"`},
		{"cite without text", head + "cite k\n", `basis: f.basis:2: cite "k" has no citation text (expected "cite KEY TEXT")`},
		{"cite twice", head + "cite k a\ncite k b\n", `basis: f.basis:3: cite key "k" declared twice`},
		{"undeclared key", head + "element H\ncites nope\n", `basis: f.basis:3: element H cites key "nope", which no "cite" line in the header declares`},
		{"cites in header", head + "cites k\n", `basis: f.basis:2: "cites" belongs in an element block (use "cite KEY TEXT" in the header)`},
		{"unknown element", head + "element Xx\n", `basis: f.basis:2: element "Xx": not a chemical symbol wellscan knows (H–Kr)`},
		{"element number", head + "element 8\n", `basis: f.basis:2: element "8": expected a chemical symbol such as O or Cl`},
		{"element twice", head + "element H\nshell s\n 1 1\nelement h\n", `basis: f.basis:5: element H appears twice (first at line 2)`},
		{"element no shells", head + "element H\nelement He\nshell s\n 1 1\n", `basis: f.basis:2: element H has no shells (expected "shell L" lines)`},
		{"shell outside", head + "shell s\n", `basis: f.basis:2: "shell" outside an element block (expected "element SYMBOL" first)`},
		{"bad letter", head + "element H\nshell sp\n", `basis: f.basis:3: shell "sp": expected one angular-momentum letter (s p d f g h i k)`},
		{"empty shell", head + "element H\nshell s\nshell p\n 1 1\n", `basis: f.basis:3: s shell of H has no rows (expected lines "EXPONENT COEFFICIENT…")`},
		{"row in header", head + "1.0 1.0\n", `basis: f.basis:2: row of numbers in the header (expected "element SYMBOL" and "shell L" first)`},
		{"row before shell", head + "element H\n1.0 1.0\n", `basis: f.basis:3: row of numbers in element H before any "shell L" line`},
		{"lone number", head + "element H\nshell s\n1.0\n", `basis: f.basis:4: expected an exponent followed by at least one coefficient, found one number`},
		{"ragged", head + "element O\nharmonics spherical\nshell d\n 1 1 0\n 2 1\n", `basis: f.basis:6: d shell of O (line 4) has 2 coefficient column(s) but this row has 1`},
		{"bad number", head + "element H\nshell s\n 1.0 0x1p3\n", `basis: f.basis:4: coefficient 1 "0x1p3": expected a decimal number such as 0.1543 or 1.2E-03`},
		{"nan", head + "element H\nshell s\n 1.0 NaN\n", `basis: f.basis:4: coefficient 1 "NaN": expected a decimal number such as 0.1543 or 1.2E-03`},
		{"overflow", head + "element H\nshell s\n 1e999 1\n", `basis: f.basis:4: exponent "1e999": number out of the float64 range`},
		{"negative exponent", head + "element H\nshell s\n -1.0 1\n", `basis: f.basis:4: exponent -1.0: expected a positive number`},
		{"zero column", head + "element H\nshell s\n 1.0 0.0 1\n 2.0 0 1\n", `basis: f.basis:3: s shell of H: coefficient column 1 is all zeros (no function)`},
		{"no harmonics", head + "element H\nshell s\n 1 1\nshell d\n 1 1\n", `basis: f.basis:2: element H has a d shell (line 5) but neither the element nor the header has a "harmonics cartesian|spherical" line`},
		{"harmonics late", head + "element H\nshell s\n 1 1\nharmonics cartesian\n", `basis: f.basis:5: "harmonics" of element H must come before its first shell`},
		{"cites late", head + "cite k t\nelement H\nshell s\n 1 1\ncites k\n", `basis: f.basis:6: "cites" of element H must come before its first shell`},
		{"second magic", head + "wellscan-basis 1\n", `basis: f.basis:2: second "wellscan-basis" line (one file holds one basis set)`},
		{"stray CR", head + "title a\rb\n", `basis: f.basis:2: carriage return inside the line (lines end with LF or CR LF)`},
		{"bad utf8", head + "title \xff\n", `basis: f.basis:2: line is not valid UTF-8 text`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Parse(strings.NewReader(tc.in), "f.basis")
			var se *SyntaxError
			if !errors.As(err, &se) {
				t.Fatalf("Parse error = %v, want a *SyntaxError", err)
			}
			if err.Error() != tc.want {
				t.Errorf("Parse error\n got %s\nwant %s", err, tc.want)
			}
		})
	}
}

func TestParse_LongLine_Error(t *testing.T) {
	in := "wellscan-basis 1\ntitle " + strings.Repeat("x", maxLine) + "\n"
	_, err := Parse(strings.NewReader(in), "f")
	if err == nil || err.Error() != "basis: f:2: line longer than 65536 bytes" {
		t.Errorf("Parse(long line) error = %v", err)
	}
}

func TestParse_CRLF_Accepted(t *testing.T) {
	in := "wellscan-basis 1\r\ntitle x\r\nelement H\r\nshell s\r\n  1.0  1.0\r\n"
	f, err := Parse(strings.NewReader(in), "f")
	if err != nil {
		t.Fatal(err)
	}
	if f.Title != "x" || f.Elements[0].Shells[0].Exps[0].Text != "1.0" {
		t.Errorf("CRLF file read as %+v", f)
	}
}

func TestParseNumber_Forms(t *testing.T) {
	tests := []struct {
		in   string
		want float64
		ok   bool
	}{
		{"0.1543289673E+00", 0.1543289673, true}, // Fortran-style text of the STO-3G data
		{"-2.585000E-03", -2.585e-3, true},
		{"13.0100", 13.01, true},
		{"1.0D-01", 0.1, true},
		{".5", 0.5, true},
		{"5.", 5, true},
		{"+3", 3, true},
		{"1e5", 1e5, true},
		{"", 0, false},
		{".", 0, false},
		{"-", 0, false},
		{"1e", 0, false},
		{"1e+", 0, false},
		{"1_000", 0, false},
		{"inf", 0, false},
		{"0x10", 0, false},
		{"1.2.3", 0, false},
	}
	for _, tc := range tests {
		n, err := ParseNumber(tc.in)
		if (err == nil) != tc.ok || (tc.ok && (n.Value != tc.want || n.Text != tc.in)) {
			t.Errorf("ParseNumber(%q) = %+v, %v; want %v, ok=%v", tc.in, n, err, tc.want, tc.ok)
		}
	}
}

func TestWrite_Invalid_Error(t *testing.T) {
	good := func() *File {
		return &File{Title: "t", Elements: []Element{{Symbol: "H", Z: 1, Shells: []Shell{{L: 0,
			Exps: []Number{{Text: "1.0", Value: 1}}, Coefs: [][]Number{{{Text: "1.0", Value: 1}}}}}}}}
	}
	if err := Write(new(bytes.Buffer), good()); err != nil {
		t.Fatalf("Write(good) = %v", err)
	}
	tests := []struct {
		name   string
		modify func(f *File)
	}{
		{"newline in title", func(f *File) { f.Title = "a\nb" }},
		{"empty remark", func(f *File) { f.Remarks = []string{""} }},
		{"cite key with blank", func(f *File) { f.Cites = []Cite{{Key: "a b", Text: "x"}} }},
		{"undeclared cite", func(f *File) { f.Elements[0].Cites = []string{"k"} }},
		{"bad symbol", func(f *File) { f.Elements[0].Symbol = "h" }},
		{"no elements", func(f *File) { f.Elements = nil }},
		{"ragged", func(f *File) { f.Elements[0].Shells[0].Coefs[0] = nil }},
		{"bad number", func(f *File) { f.Elements[0].Shells[0].Exps[0].Text = "x" }},
		{"d without harmonics", func(f *File) { f.Elements[0].Shells[0].L = 2 }},
		{"l too large", func(f *File) { f.Elements[0].Shells[0].L = MaxL + 1 }},
	}
	for _, tc := range tests {
		f := good()
		tc.modify(f)
		if err := Write(new(bytes.Buffer), f); err == nil {
			t.Errorf("%s: Write gave no error", tc.name)
		}
	}
}
