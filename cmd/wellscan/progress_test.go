package main

import (
	"bufio"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestRun_NonTerminalOutput: progress written to a pipe or file carries
// no terminal control sequences and every line is time-stamped; --json
// gives one JSON object per line ending with a summary event.
func TestRun_NonTerminalOutput(t *testing.T) {
	spec, err := os.ReadFile("../../testdata/examples/morse-model/scan.toml")
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "scan.toml"), spec, 0o644); err != nil {
		t.Fatal(err)
	}
	code, _, errs := runCLI(t, "", "run", dir)
	if code != 0 {
		t.Fatalf("run: exit %d: %s", code, errs)
	}
	if strings.ContainsAny(errs, "\x1b\r") {
		t.Errorf("non-terminal progress contains control characters: %q", errs)
	}
	for _, line := range strings.Split(strings.TrimSpace(errs), "\n") {
		if len(line) < 20 || line[4] != '-' || line[13] != ':' {
			t.Errorf("progress line without a time stamp: %q", line)
		}
	}
	dir2 := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir2, "scan.toml"), spec, 0o644); err != nil {
		t.Fatal(err)
	}
	code, out, errs := runCLI(t, "", "run", dir2, "--json")
	if code != 0 {
		t.Fatalf("run --json: exit %d: %s", code, errs)
	}
	sc := bufio.NewScanner(strings.NewReader(out))
	var last map[string]any
	n := 0
	for sc.Scan() {
		last = nil
		if err := json.Unmarshal(sc.Bytes(), &last); err != nil {
			t.Fatalf("line %d is not JSON: %q", n+1, sc.Text())
		}
		n++
	}
	if n < 3 || last["kind"] != "summary" {
		t.Errorf("%d JSON lines, last %v; want several ending with kind summary", n, last)
	}
	if c, ok := last["computed"].(float64); !ok || c < 3 || last["from_earlier_runs"] != 0.0 {
		t.Errorf("summary %v: want computed ≥ 3 and from_earlier_runs 0", last)
	}
}
