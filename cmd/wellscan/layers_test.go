package main

import (
	"encoding/json"
	"fmt"
	"io"
	"os/exec"
	"sort"
	"strings"
	"testing"
)

// The rooms of the project and which of them each may import (see
// DEVELOPERS.md, "Rooms"): dependencies point one way, cmd → runner →
// planner, with fit and parsers as leaves.
//
//   - fit and parsers import no wellscan package (fit/… sub-packages may
//     import fit);
//   - planner imports parsers and fit;
//   - runner imports planner, parsers and fit, never its own sub-packages
//     (cmd builds engines and queues and passes them in);
//   - a runner sub-package imports runner, planner, parsers, fit and its
//     own sub-tree; engines (hf, command, model) and queues (local, slurm)
//     never import each other; runner/analysis is pure numerics over the
//     planner's coordinates (planner, fit only); runner/report may use
//     runner/analysis;
//   - nothing imports cmd.
func layerViolation(pkg, imp string) string {
	const mod = "wellscan/"
	if !strings.HasPrefix(imp, mod) {
		return ""
	}
	p, i := strings.TrimPrefix(pkg, mod), strings.TrimPrefix(imp, mod)
	under := func(x, root string) bool { return x == root || strings.HasPrefix(x, root+"/") }
	room := func(x string) string {
		switch {
		case under(x, "runner/hf"), under(x, "runner/command"), under(x, "runner/model"):
			return "engine"
		case under(x, "runner/local"), under(x, "runner/slurm"):
			return "queue"
		case under(x, "runner/analysis"):
			return "analysis"
		case under(x, "runner/report"):
			return "report"
		case strings.HasPrefix(x, "runner/"):
			return "runner-sub"
		}
		return strings.SplitN(x, "/", 2)[0]
	}
	rp, ri := room(p), room(i)
	if strings.HasPrefix(i, "cmd") {
		return "nothing imports cmd"
	}
	sameTree := func(root string) bool { return under(p, root) && under(i, root) }
	switch {
	case under(p, "fit"):
		if !sameTree("fit") {
			return "fit is a leaf: it imports no other wellscan package"
		}
	case under(p, "parsers"):
		if !sameTree("parsers") {
			return "parsers is a leaf: it imports no other wellscan package"
		}
	case under(p, "planner"):
		if !(under(i, "parsers") || under(i, "fit") || sameTree("planner")) {
			return "planner imports only parsers and fit"
		}
	case p == "runner":
		if strings.HasPrefix(i, "runner/") {
			return "runner never imports its sub-packages; cmd builds engines and queues and passes them in"
		}
	case rp == "analysis":
		if !(under(i, "planner") || under(i, "fit") || sameTree("runner/analysis")) {
			return "runner/analysis uses only planner and fit"
		}
	case rp == "engine" || rp == "queue" || rp == "report" || rp == "runner-sub":
		top := strings.Join(strings.SplitN(p, "/", 3)[:2], "/")
		ok := i == "runner" || under(i, "planner") || under(i, "parsers") || under(i, "fit") || sameTree(top)
		if rp == "report" && ri == "analysis" {
			ok = true
		}
		if !ok {
			return fmt.Sprintf("a runner %s imports runner, planner, parsers, fit and its own sub-tree only (not %s)", rp, ri)
		}
	}
	return ""
}

func TestLayers_Fixture(t *testing.T) {
	// Each wrong-way import is caught, each allowed one passes.
	tests := []struct {
		pkg, imp string
		bad      bool
	}{
		{"wellscan/fit", "wellscan/planner", true},
		{"wellscan/parsers", "wellscan/fit", true},
		{"wellscan/planner", "wellscan/runner", true},
		{"wellscan/runner", "wellscan/runner/hf", true},
		{"wellscan/runner/hf", "wellscan/runner/slurm", true},
		{"wellscan/runner/local", "wellscan/runner/model", true},
		{"wellscan/runner/analysis", "wellscan/runner", true},
		{"wellscan/runner/report", "wellscan/cmd/wellscan", true},
		{"wellscan/planner", "wellscan/fit", false},
		{"wellscan/runner", "wellscan/planner", false},
		{"wellscan/runner/hf", "wellscan/runner/hf/basis", false},
		{"wellscan/runner/report", "wellscan/runner/analysis", false},
		{"wellscan/fit/forcefield", "wellscan/fit", false},
		{"wellscan/cmd/wellscan", "wellscan/runner/hf", false},
	}
	for _, tc := range tests {
		if got := layerViolation(tc.pkg, tc.imp) != ""; got != tc.bad {
			t.Errorf("%s → %s: violation %v, want %v", tc.pkg, tc.imp, got, tc.bad)
		}
	}
}

func TestLayers_Tree(t *testing.T) {
	out, err := exec.Command("go", "list", "-json", "wellscan/...").Output()
	if err != nil {
		t.Skipf("go list: %v", err)
	}
	dec := json.NewDecoder(strings.NewReader(string(out)))
	var bad []string
	for {
		var p struct {
			ImportPath string
			Imports    []string
		}
		if err := dec.Decode(&p); err == io.EOF {
			break
		} else if err != nil {
			t.Fatal(err)
		}
		for _, i := range p.Imports {
			if why := layerViolation(p.ImportPath, i); why != "" {
				bad = append(bad, fmt.Sprintf("%s imports %s: %s", p.ImportPath, i, why))
			}
		}
	}
	sort.Strings(bad)
	for _, b := range bad {
		t.Error(b)
	}
}
