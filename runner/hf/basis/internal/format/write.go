package format

import (
	"bufio"
	"fmt"
	"io"
	"strings"
	"unicode/utf8"

	"wellscan/planner"
)

// Write writes f in the canonical layout: the magic line, the header
// keywords in a fixed order, then one block per element with its rows
// aligned in columns. Numbers are written with their original text. Write
// checks that f could be read back (no line breaks in texts, valid
// numbers, rectangular coefficient blocks) and returns an error otherwise.
func Write(w io.Writer, f *File) error {
	if err := check(f); err != nil {
		return err
	}
	bw := bufio.NewWriter(w)
	fmt.Fprintf(bw, "%s %d\n", Magic, Version)
	if f.Title != "" {
		fmt.Fprintf(bw, "title %s\n", f.Title)
	}
	if f.About != "" {
		fmt.Fprintf(bw, "about %s\n", f.About)
	}
	if f.Harmonics != Unstated {
		fmt.Fprintf(bw, "harmonics %s\n", f.Harmonics)
	}
	for _, o := range f.Origins {
		fmt.Fprintf(bw, "origin %s\n", o)
	}
	for _, r := range f.Remarks {
		fmt.Fprintf(bw, "remark %s\n", r)
	}
	for _, c := range f.Cites {
		fmt.Fprintf(bw, "cite %s %s\n", c.Key, c.Text)
	}
	for _, el := range f.Elements {
		fmt.Fprintf(bw, "\nelement %s\n", el.Symbol)
		if el.Harmonics != Unstated {
			fmt.Fprintf(bw, "harmonics %s\n", el.Harmonics)
		}
		if len(el.Cites) > 0 {
			fmt.Fprintf(bw, "cites %s\n", strings.Join(el.Cites, " "))
		}
		for _, sh := range el.Shells {
			writeShell(bw, sh)
		}
	}
	return bw.Flush()
}

// writeShell aligns the decimal points of each column where it can (the
// integer part is right-aligned, the rest left-aligned), which keeps diffs
// of single numbers to a single line and makes columns easy to read.
func writeShell(w *bufio.Writer, sh Shell) {
	fmt.Fprintf(w, "shell %s\n", LetterL(sh.L))
	cols := make([][]Number, 0, 1+len(sh.Coefs))
	cols = append(cols, sh.Exps)
	cols = append(cols, sh.Coefs...)
	intW := make([]int, len(cols))
	fracW := make([]int, len(cols))
	for c, col := range cols {
		for _, n := range col {
			i, f := splitPoint(n.Text)
			intW[c] = max(intW[c], len(i))
			fracW[c] = max(fracW[c], len(f))
		}
	}
	var line strings.Builder
	for r := range sh.Exps {
		line.Reset()
		for c, col := range cols {
			i, f := splitPoint(col[r].Text)
			line.WriteString("  ")
			line.WriteString(strings.Repeat(" ", intW[c]-len(i)))
			line.WriteString(i)
			line.WriteString(f)
			if c < len(cols)-1 {
				line.WriteString(strings.Repeat(" ", fracW[c]-len(f)))
			}
		}
		w.WriteString(line.String())
		w.WriteByte('\n')
	}
}

// splitPoint splits a number's text before its decimal point (or before
// its exponent, or at its end when it has neither).
func splitPoint(t string) (string, string) {
	if i := strings.IndexAny(t, ".eEdD"); i >= 0 {
		return t[:i], t[i:]
	}
	return t, ""
}

func check(f *File) error {
	bad := func(format string, args ...any) error {
		return fmt.Errorf("basis: cannot write %q: %s", f.Title, fmt.Sprintf(format, args...))
	}
	text := func(what, s string, required bool) error {
		if s == "" {
			if required {
				return bad("%s is empty", what)
			}
			return nil
		}
		if strings.ContainsAny(s, "\n\r") || s != trim(s) || !utf8.ValidString(s) {
			return bad("%s %q has a line break or leading/trailing blanks", what, s)
		}
		return nil
	}
	if err := text("title", f.Title, false); err != nil {
		return err
	}
	if err := text("about", f.About, false); err != nil {
		return err
	}
	for _, o := range f.Origins {
		if err := text("origin", o, true); err != nil {
			return err
		}
	}
	for _, r := range f.Remarks {
		if err := text("remark", r, true); err != nil {
			return err
		}
	}
	keys := map[string]bool{}
	for _, c := range f.Cites {
		if c.Key == "" || len(fields(c.Key)) != 1 || c.Key != trim(c.Key) || strings.ContainsAny(c.Key, "\n\r") || !utf8.ValidString(c.Key) {
			return bad("cite key %q is not a single word", c.Key)
		}
		if keys[c.Key] {
			return bad("cite key %q twice", c.Key)
		}
		keys[c.Key] = true
		if err := text("cite "+c.Key, c.Text, true); err != nil {
			return err
		}
	}
	if len(f.Elements) == 0 {
		return bad("no elements")
	}
	seen := map[int]bool{}
	for _, el := range f.Elements {
		pe, err := planner.ElementBySymbol(el.Symbol)
		if err != nil || pe.Symbol != el.Symbol || pe.Z != el.Z {
			return bad("element %q (Z = %d) is not a known chemical symbol", el.Symbol, el.Z)
		}
		if seen[el.Z] {
			return bad("element %s twice", el.Symbol)
		}
		seen[el.Z] = true
		if _, ok := parseHarmonicsValue(el.Harmonics); !ok {
			return bad("element %s: invalid harmonics %d", el.Symbol, el.Harmonics)
		}
		for _, k := range el.Cites {
			if !keys[k] {
				return bad("element %s cites undeclared key %q", el.Symbol, k)
			}
		}
		if len(el.Shells) == 0 {
			return bad("element %s has no shells", el.Symbol)
		}
		for si, sh := range el.Shells {
			if sh.L < 0 || sh.L > MaxL {
				return bad("element %s shell %d: angular momentum %d outside 0–%d", el.Symbol, si+1, sh.L, MaxL)
			}
			if sh.L >= 2 && el.Harmonics == Unstated && f.Harmonics == Unstated {
				return bad("element %s has a %s shell but no harmonics", el.Symbol, LetterL(sh.L))
			}
			if len(sh.Exps) == 0 || len(sh.Coefs) == 0 {
				return bad("element %s shell %d is empty", el.Symbol, si+1)
			}
			for _, e := range sh.Exps {
				n, err := ParseNumber(e.Text)
				if err != nil || !(n.Value > 0) {
					return bad("element %s shell %d: exponent %q is not a positive decimal number", el.Symbol, si+1, e.Text)
				}
			}
			for k, col := range sh.Coefs {
				if len(col) != len(sh.Exps) {
					return bad("element %s shell %d: column %d has %d coefficients for %d exponents", el.Symbol, si+1, k+1, len(col), len(sh.Exps))
				}
				zero := true
				for _, c := range col {
					n, err := ParseNumber(c.Text)
					if err != nil {
						return bad("element %s shell %d: coefficient %q is not a decimal number", el.Symbol, si+1, c.Text)
					}
					zero = zero && n.Value == 0
				}
				if zero {
					return bad("element %s shell %d: column %d is all zeros", el.Symbol, si+1, k+1)
				}
			}
		}
	}
	return nil
}

func parseHarmonicsValue(h Harmonics) (Harmonics, bool) {
	switch h {
	case Unstated, Cartesian, Spherical:
		return h, true
	}
	return h, false
}
