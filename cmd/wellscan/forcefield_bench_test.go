package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// BenchmarkForcefield_WaterQFF runs the whole water RHF/6-31G* quartic
// force-field job (36 energies after symmetry: 14 for the Hessian, 22 for
// the quartic force field) on the local queue with 2 workers, store,
// result files and the closing analysis included. The machine's load is
// not controlled; report it with the numbers.
func BenchmarkForcefield_WaterQFF(b *testing.B) {
	text := ffSpecText(2)
	b.ReportAllocs()
	for b.Loop() {
		dir := b.TempDir()
		if err := os.WriteFile(filepath.Join(dir, "scan.toml"), []byte(text), 0o644); err != nil {
			b.Fatal(err)
		}
		var out, errb bytes.Buffer
		if code := run([]string{"run", "-q", dir}, strings.NewReader(""), &out, &errb); code != 0 {
			b.Fatalf("run: exit %d: %s\n%s", code, errb.String(), out.String())
		}
	}
}
