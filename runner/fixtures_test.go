package runner_test

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"text/template"
)

// coMorse fills testdata/specs/co-morse.toml.tmpl (as cmd/wellscan's twin
// loader does), the one copy of the
// CO-like Morse model the tests scan: each test names only its grid,
// refinement, model delay or failures and queue.
type coMorse struct {
	Title                string
	From, To, Step       string // Å, as written in the spec
	Count                int    // instead of Step when > 0
	Refine, Delay, Queue string // TOML lines of [refine], a model delay, the [queue] table(s)
	Fail                 []string
}

// String is the spec text; a broken template stops the test binary with
// the reason (it is read once, when the package's specs are built).
func (c coMorse) String() string {
	path := filepath.Join("..", "testdata", "specs", "co-morse.toml.tmpl")
	b, err := os.ReadFile(path)
	if err != nil {
		panic(fmt.Sprintf("test fixture %s: %v", path, err))
	}
	tmpl, err := template.New(path).Option("missingkey=error").Parse(string(b))
	if err != nil {
		panic(fmt.Sprintf("test fixture %s: %v", path, err))
	}
	var sb strings.Builder
	if err := tmpl.Execute(&sb, c); err != nil {
		panic(fmt.Sprintf("test fixture %s: %v", path, err))
	}
	return sb.String()
}
