package main

import (
	"context"
	"image"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
	"time"
)

// chromiumPath is where Debian's chromium package installs the browser.
const chromiumPath = "/usr/bin/chromium"

// TestReport_SummaryHTML_Chromium loads summary.html in headless Chromium
// and checks that the screenshot shows the figure (the vibrational-level
// green exists only in the plot) and the tables (their header shading
// exists only in the tables). It runs only where Chromium is installed.
func TestReport_SummaryHTML_Chromium(t *testing.T) {
	if _, err := os.Stat(chromiumPath); err != nil {
		t.Skipf("%s not installed", chromiumPath)
	}
	if testing.Short() {
		t.Skip("starts a browser")
	}
	dir := runReportScan(t)
	html, err := filepath.Abs(filepath.Join(dir, "report", "summary.html"))
	if err != nil {
		t.Fatal(err)
	}
	shot := filepath.Join(t.TempDir(), "summary.png")
	ctx, cancel := context.WithTimeout(t.Context(), 90*time.Second)
	defer cancel()
	cmd := exec.CommandContext(ctx, chromiumPath, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--user-data-dir="+t.TempDir(), "--screenshot="+shot, "--window-size=1200,1600", "file://"+html)
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("chromium: %v\n%s", err, out)
	}
	f, err := os.Open(shot)
	if err != nil {
		t.Fatalf("no screenshot: %v", err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("screenshot does not decode: %v", err)
	}
	if b := img.Bounds(); b.Dx() != 1200 || b.Dy() != 1600 {
		t.Errorf("screenshot is %dx%d, want 1200x1600", b.Dx(), b.Dy())
	}
	// Colours from the report's own styles: level lines rgb(0,158,115)
	// in the figure, table headers #eef4f9, the warnings' bar #e69f00.
	for name, c := range map[string][3]int{"figure (level lines)": {0, 158, 115}, "table header": {0xee, 0xf4, 0xf9}, "warnings bar": {0xe6, 0x9f, 0x00}} {
		if n := countNear(img, c, 40); n < 20 {
			t.Errorf("screenshot has %d pixels of the %s colour %v; it is not shown", n, name, c)
		}
	}
	// The warnings and failed points come first: their bar starts above
	// the figure, in the top quarter of the page.
	warn, fig := firstRowNear(img, [3]int{0xe6, 0x9f, 0x00}, 30), firstRowNear(img, [3]int{0, 158, 115}, 40)
	if warn < 0 || fig < 0 || warn > fig || warn > img.Bounds().Dy()/4 {
		t.Errorf("warnings bar starts at row %d, figure at row %d (page height %d); want the warnings at the top", warn, fig, img.Bounds().Dy())
	}
}

// firstRowNear is the first pixel row with a pixel within dist of c; −1
// when there is none.
func firstRowNear(img image.Image, c [3]int, dist int) int {
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			r, g, bl, _ := img.At(x, y).RGBA()
			dr, dg, db := int(r>>8)-c[0], int(g>>8)-c[1], int(bl>>8)-c[2]
			if dr*dr+dg*dg+db*db < dist*dist {
				return y - b.Min.Y
			}
		}
	}
	return -1
}

// countNear counts the pixels within dist (RGB, 0–255 per channel) of c.
func countNear(img image.Image, c [3]int, dist int) int {
	n := 0
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			r, g, bl, _ := img.At(x, y).RGBA()
			dr, dg, db := int(r>>8)-c[0], int(g>>8)-c[1], int(bl>>8)-c[2]
			if dr*dr+dg*dg+db*db < dist*dist {
				n++
			}
		}
	}
	return n
}
