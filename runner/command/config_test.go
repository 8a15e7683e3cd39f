package command

import (
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
	"time"

	"wellscan/parsers"
	"wellscan/runner"
)

// fullTable is an [engine] table as a TOML decoder gives it to DecodeConfig.
func fullTable() map[string]any {
	return map[string]any{
		"kind":        "command",
		"template":    "templates/point.tmpl",
		"input":       "point.inp",
		"command":     []any{"./bin/toyprog", "--input", "point.inp"},
		"env":         map[string]any{"OMP_NUM_THREADS": "1"},
		"timeout":     "30m",
		"kill_grace":  int64(10),
		"outputs":     []any{"toy.out"},
		"energy_from": "toy.out",
		"energy":      map[string]any{"label": "total energy", "unit": "eV", "match": int64(-1)},
	}
}

func TestDecodeConfig_Full(t *testing.T) {
	got, err := DecodeConfig(fullTable(), "scans/co/scan.toml", "engine")
	if err != nil {
		t.Fatal(err)
	}
	want := Config{
		Template:   filepath.Join("scans/co", "templates/point.tmpl"),
		InputName:  "point.inp",
		Args:       []string{filepath.Join("scans/co", "bin/toyprog"), "--input", "point.inp"},
		Env:        map[string]string{"OMP_NUM_THREADS": "1"},
		Timeout:    30 * time.Minute,
		KillGrace:  10 * time.Second,
		Outputs:    []string{"toy.out"},
		EnergyFrom: "toy.out",
		Energy:     parsers.ExtractorSpec{Label: "total energy", Unit: "eV", Match: "-1"},
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("DecodeConfig =\n%+v\nwant\n%+v", got, want)
	}
}

func TestDecodeConfig_Shell(t *testing.T) {
	m := map[string]any{
		"template": "/abs/point.tmpl", "input": "point.inp", "shell": true, "script": "run-point.sh",
		"energy": map[string]any{"pattern": `E = (?P<energy>\S+)`, "unit": "hartree"},
	}
	c, err := DecodeConfig(m, "scan.toml", "engine")
	if err != nil {
		t.Fatal(err)
	}
	if !c.Shell || c.Script != "run-point.sh" || c.Template != "/abs/point.tmpl" || c.Args != nil {
		t.Errorf("DecodeConfig = %+v", c)
	}
}

func TestDecodeConfig_Errors(t *testing.T) {
	tests := []struct {
		name string
		edit func(m map[string]any)
		want string
	}{
		{"unknown key", func(m map[string]any) { m["comand"] = []any{"x"} }, "[engine] comand: unknown key; expected one of kind, template"},
		{"other kind", func(m map[string]any) { m["kind"] = "builtin" }, `[engine] kind: is "builtin"`},
		{"command as string", func(m map[string]any) { m["command"] = "toyprog point.inp" }, "[engine] command: expected an array of strings such as"},
		{"command element", func(m map[string]any) { m["command"] = []any{"toyprog", int64(3)} }, "[engine] command: element 2: expected a string, got the integer 3"},
		{"bad timeout", func(m map[string]any) { m["timeout"] = "half an hour" }, `[engine] timeout: expected a duration such as "90s"`},
		{"negative timeout", func(m map[string]any) { m["timeout"] = int64(-5) }, "[engine] timeout: -5s is negative"},
		{"env not strings", func(m map[string]any) { m["env"] = map[string]any{"N": int64(2)} }, "[engine] env.N: expected a string"},
		{"reserved env", func(m map[string]any) { m["env"] = map[string]any{"WELLSCAN_KEY": "x"} }, "names starting with WELLSCAN_ are set by wellscan"},
		{"no energy", func(m map[string]any) { delete(m, "energy") }, "[engine] energy: missing"},
		{"energy unknown key", func(m map[string]any) { m["energy"] = map[string]any{"regex": "x", "unit": "eV"} }, "[engine] energy.regex: unknown key"},
		{"energy bad unit", func(m map[string]any) { m["energy"] = map[string]any{"label": "e", "unit": "Ry"} }, `[engine] energy: parsers: unknown energy unit "Ry"`},
		{"energy no group", func(m map[string]any) { m["energy"] = map[string]any{"pattern": `E = (\S+)`, "unit": "eV"} }, "has no group named energy"},
		{"no template", func(m map[string]any) { delete(m, "template") }, "command: scan.toml: [engine]: no input template"},
		{"input escapes", func(m map[string]any) { m["input"] = "../point.inp" }, `input file name "../point.inp" must be a relative path inside`},
		{"input reserved", func(m map[string]any) { m["input"] = "stdout" }, `input: file name "stdout" is one wellscan writes itself`},
		// Issue 15 item 2: the rendered input would be overwritten by the
		// result file (and the result by the next render).
		{"input is the result file", func(m map[string]any) { m["input"] = "result.json" }, `input: file name "result.json" is one wellscan writes itself`},
		{"input is a kept result", func(m map[string]any) { m["input"] = "result.energy-jump-1.json" }, `input: file name "result.energy-jump-1.json" is one wellscan writes itself`},
		{"input is the run record", func(m map[string]any) { m["input"] = "running.json" }, `input: file name "running.json" is one wellscan writes itself`},
		{"shell without script", func(m map[string]any) { m["shell"] = true }, "shell is set but no script is named"},
		{"shell with command", func(m map[string]any) { m["shell"], m["script"] = true, "run.sh" }, "shell is set, so command must be empty"},
		{"script without shell", func(m map[string]any) { delete(m, "command"); m["script"] = "run.sh" }, "script is named but shell is not set"},
		{"shell not bool", func(m map[string]any) { m["shell"] = "yes" }, `[engine] shell: expected true or false, got the string "yes"`},
		{"energy_from reserved", func(m map[string]any) { m["energy_from"] = "exit-status" }, `energy_from "exit-status" is the input or a file wellscan writes`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			m := fullTable()
			tc.edit(m)
			_, err := DecodeConfig(m, "scan.toml", "engine")
			if err == nil || !strings.Contains(err.Error(), tc.want) || !strings.Contains(err.Error(), "scan.toml") {
				t.Errorf("DecodeConfig error %v, want one naming scan.toml and containing %q", err, tc.want)
			}
		})
	}
}

func TestConfig_Check_Program(t *testing.T) {
	c := morseConfig(t)
	if err := c.Check(); err != nil {
		t.Errorf("Check of the Morse config: %v", err)
	}
	c.Args = []string{"wellscan-test-no-such-program"}
	if err := c.Check(); ClassOf(err) != runner.ClassProgramMissing {
		t.Errorf("Check with a missing program = %v, want class %s", err, runner.ClassProgramMissing)
	}
}

func TestDecodeConfig_Gradient(t *testing.T) {
	base := func() map[string]any {
		return map[string]any{"template": "t.tmpl", "input": "p.inp", "command": []any{"prog"},
			"energy": map[string]any{"label": "E", "unit": "hartree"}}
	}
	m := base()
	m["gradient"] = map[string]any{"label": "forces", "unit": "eV/angstrom", "sign": "force"}
	m["gradient_from"] = "grad.out"
	c, err := DecodeConfig(m, "/scan/scan.toml", "engine.command")
	if err != nil {
		t.Fatal(err)
	}
	if c.Gradient == nil || c.Gradient.Sign != "force" || c.GradientFrom != "grad.out" {
		t.Errorf("decoded gradient %+v from %q", c.Gradient, c.GradientFrom)
	}
	for _, tc := range []struct {
		name string
		set  func(map[string]any)
		want string
	}{
		{"unknown key", func(m map[string]any) { m["gradient"] = map[string]any{"label": "g", "unit": "au", "scale": "2"} }, "gradient.scale: unknown key"},
		{"no unit", func(m map[string]any) { m["gradient"] = map[string]any{"label": "g"} }, "gradient unit missing"},
		{"from without gradient", func(m map[string]any) { m["gradient_from"] = "g.out" }, "gradient_from is set but gradient is not"},
		{"from outside", func(m map[string]any) {
			m["gradient"] = map[string]any{"label": "g", "unit": "au"}
			m["gradient_from"] = "../g.out"
		}, "inside the point's directory"},
	} {
		m := base()
		tc.set(m)
		if _, err := DecodeConfig(m, "/scan/scan.toml", "engine.command"); err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: %v; want %q", tc.name, err, tc.want)
		}
	}
}

// TestDecodeConfig_ArgsResolvedAgainstSpec: an argument naming a file in
// the spec's directory becomes its absolute path (the program runs in
// points/<key>/); the input, options, missing names and paths leaving the
// directory stay as written.
func TestDecodeConfig_ArgsResolvedAgainstSpec(t *testing.T) {
	dir := t.TempDir()
	for _, f := range []string{"morse.awk", "point.inp", "data/params.txt"} {
		if err := os.MkdirAll(filepath.Dir(filepath.Join(dir, f)), 0o700); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, f), []byte("x"), 0o600); err != nil {
			t.Fatal(err)
		}
	}
	m := fullTable()
	m["command"] = []any{"awk", "-f", "morse.awk", "data/params.txt", "-v", "point.inp", "absent.txt", "../morse.awk"}
	m["outputs"], m["energy_from"] = []any{}, "stdout"
	c, err := DecodeConfig(m, filepath.Join(dir, "scan.toml"), "engine.command")
	if err != nil {
		t.Fatal(err)
	}
	want := []string{"awk", "-f", filepath.Join(dir, "morse.awk"), filepath.Join(dir, "data/params.txt"), "-v", "point.inp", "absent.txt", "../morse.awk"}
	if !reflect.DeepEqual(c.Args, want) {
		t.Errorf("Args = %q, want %q", c.Args, want)
	}
	if len(c.Resolved) != 2 || c.Resolved[0] != (ResolvedArg{2, "morse.awk", filepath.Join(dir, "morse.awk")}) {
		t.Errorf("Resolved = %+v, want morse.awk and data/params.txt", c.Resolved)
	}
}

// TestDecodeConfig_BareProgramInSpecDir: a bare program name is looked up
// in PATH; one that is only a file next to the spec gets a hint.
func TestDecodeConfig_BareProgramInSpecDir(t *testing.T) {
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "toyprog"), []byte("#!/bin/sh\n"), 0o755); err != nil {
		t.Fatal(err)
	}
	m := fullTable()
	m["command"] = []any{"toyprog", "point.inp"}
	_, err := DecodeConfig(m, filepath.Join(dir, "scan.toml"), "engine.command")
	if err == nil || !strings.Contains(err.Error(), `write it as "./toyprog"`) {
		t.Errorf("DecodeConfig = %v, want a hint to write ./toyprog", err)
	}
}
