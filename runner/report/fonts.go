package report

import (
	"fmt"

	"codeberg.org/go-fonts/dejavu/dejavusans"
	"golang.org/x/image/font/opentype"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
)

// figureFont is the typeface of every text in a figure: DejaVu Sans, which
// has the glyphs units and constants need (cm⁻¹, Å, °, ωₑ, H₂O, ¹³C), unlike
// the plotting library's default face (it has no superscript minus). The
// font is embedded through codeberg.org/go-fonts/dejavu (BSD-3-Clause
// wrapper; the fonts are under the Bitstream Vera licence with DejaVu's
// changes in the public domain: free to embed and redistribute).
const figureFont = "DejaVu Sans"

// fonts is the per-figure font cache and text handler (no global state:
// the plotting library's default cache is left alone).
type fonts struct {
	handler text.Handler
}

func newFonts() (*fonts, error) {
	f, err := opentype.Parse(dejavusans.TTF)
	if err != nil {
		return nil, fmt.Errorf("report: font: %w", err)
	}
	cache := font.NewCache([]font.Face{{Font: font.Font{Typeface: figureFont}, Face: f}})
	return &fonts{handler: text.Plain{Fonts: cache}}, nil
}

// style sets the figure font on s, keeping its size.
func (f *fonts) style(s *text.Style) {
	s.Handler = f.handler
	s.Font = font.Font{Typeface: figureFont, Size: s.Font.Size}
}

// plot sets the figure font on every text of p.
func (f *fonts) plot(p *plot.Plot) {
	for _, s := range []*text.Style{&p.Title.TextStyle, &p.X.Label.TextStyle, &p.Y.Label.TextStyle,
		&p.X.Tick.Label, &p.Y.Tick.Label, &p.Legend.TextStyle} {
		f.style(s)
	}
}

// labels sets the figure font on a labels plotter.
func (f *fonts) labels(l *plotter.Labels) {
	for i := range l.TextStyle {
		f.style(&l.TextStyle[i])
	}
}
