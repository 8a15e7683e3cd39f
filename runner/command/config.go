package command

import (
	"errors"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"text/template"
	"time"

	"wellscan/parsers"
)

// Config says how to drive an external program for one point. Build it
// with [DecodeConfig] from a spec, or fill it in directly and call
// [Config.Validate]. It is plain data; the zero value is not valid.
type Config struct {
	// Template is the path of the input template file (text/template).
	// Errors name it as written here.
	Template string
	// InputName is the file name the rendered input gets inside the
	// point's directory.
	InputName string
	// Args is the program and its arguments, Args[0] being the program:
	// a bare name is looked up in wellscan's own PATH; a name with a slash
	// is a path. No shell is involved; no argument is templated.
	// [DecodeConfig] makes an argument that names an existing file in the
	// spec's directory absolute (see Resolved).
	Args []string
	// Resolved lists the arguments DecodeConfig replaced by an absolute
	// path because they named a file or directory in the spec's
	// directory; the program, which runs in the point's directory, finds
	// them there.
	Resolved []ResolvedArg
	// Shell opts in to running Script with /bin/sh. Args must then be
	// empty: the script gets the point's values only as WELLSCAN_*
	// environment variables and as files in its working directory.
	Shell bool
	// Script is the path of the fixed shell script run when Shell is set.
	Script string
	// Env holds extra environment variables for the program, on top of
	// wellscan's own environment. Names starting with WELLSCAN_ are
	// reserved.
	Env map[string]string
	// Timeout bounds one run; zero means no limit.
	Timeout time.Duration
	// KillGrace is the time between SIGTERM and SIGKILL when a run is
	// stopped; zero means DefaultKillGrace.
	KillGrace time.Duration
	// Outputs are the files (names relative to the point's directory) the
	// program must leave behind; a missing one fails the point.
	Outputs []string
	// Energy says how to find the energy.
	Energy parsers.ExtractorSpec
	// EnergyFrom is "stdout" (the default when empty), "stderr", or the
	// name of a file in the point's directory to read the energy from.
	EnergyFrom string
	// AllowPositive accepts a positive extracted energy (a relative
	// energy); otherwise a positive value fails the point as invalid.
	AllowPositive bool
	// Gradient, when set, says how to read the nuclear gradient (or
	// forces) that relaxed scans need; without it they differentiate the
	// program's energies by central differences.
	Gradient *parsers.GradientSpec
	// GradientFrom is like EnergyFrom, for the gradient.
	GradientFrom string

	// parsed is the template as read once by [Config.Load] (nil: Render
	// reads the file each time). A scan reads it once, so that every
	// point of a run uses the text its fingerprint hashed.
	parsed *template.Template
}

// Load reads and parses the template once; later renders use that text
// even if the file changes.
func (c *Config) Load() error {
	t, err := c.parseTemplate()
	if err != nil {
		return err
	}
	c.parsed = t
	return nil
}

// ResolvedArg is one argument of the command that named a file in the
// spec's directory: Index into Args, the text as written, and the
// absolute path it was replaced by.
type ResolvedArg struct {
	Index   int
	Written string
	Path    string
}

// DefaultKillGrace is the time a stopped program has between SIGTERM and
// SIGKILL to clean up.
const DefaultKillGrace = 5 * time.Second

// File names wellscan writes in each point's directory.
const (
	StdoutFile     = "stdout"
	StderrFile     = "stderr"
	ExitStatusFile = "exit-status"
	GeometryFile   = "point.xyz"
)

// RunRecordFile is the record of the program running for a point (see
// the runner's process records); ResultFile is the runner's result file.
const (
	RunRecordFile = "running.json"
	ResultFile    = "result.json"
)

// ReservedNames lists the file names wellscan itself writes in a point's
// directory; no input, output or energy file may take one.
func ReservedNames() []string {
	return []string{StdoutFile, StderrFile, ExitStatusFile, GeometryFile, RunRecordFile, ResultFile}
}

// Stdout is the EnergyFrom value that reads the energy from standard output.
const Stdout = "stdout"

// envPrefix starts the names of the variables wellscan sets for a program.
const envPrefix = "WELLSCAN_"

// Validate checks the config and compiles its energy extractor, so that
// every mistake shows before the first point runs. It does not look for
// the program or the template file (see [Config.Check]).
func (c Config) Validate() error {
	if c.Template == "" {
		return errors.New("command: no input template: set template to the path of the template file")
	}
	if err := checkFileName("input", c.InputName); err != nil {
		return err
	}
	if c.Shell {
		if c.Script == "" {
			return errors.New("command: shell is set but no script is named: set script to the path of the shell script")
		}
		if len(c.Args) > 0 {
			return errors.New("command: shell is set, so command must be empty: the script gets its values from WELLSCAN_* variables and files, never as spliced arguments")
		}
	} else {
		if c.Script != "" {
			return errors.New("command: script is named but shell is not set: set shell = true to run a script with /bin/sh, or give command as an argument list")
		}
		if len(c.Args) == 0 || c.Args[0] == "" {
			return errors.New("command: no program: set command to an argument list such as [\"myprog\", \"point.inp\"]")
		}
	}
	for i, a := range c.Args {
		if strings.ContainsRune(a, 0) {
			return fmt.Errorf("command: command argument %d contains a NUL byte", i+1)
		}
	}
	for k, v := range c.Env {
		switch {
		case k == "" || strings.ContainsAny(k, "=\x00"):
			return fmt.Errorf("command: environment variable name %q is not valid", k)
		case strings.HasPrefix(k, envPrefix):
			return fmt.Errorf("command: environment variable %s: names starting with %s are set by wellscan", k, envPrefix)
		case strings.ContainsRune(v, 0):
			return fmt.Errorf("command: environment variable %s contains a NUL byte", k)
		}
	}
	if c.Timeout < 0 {
		return fmt.Errorf("command: timeout %v is negative", c.Timeout)
	}
	if c.KillGrace < 0 {
		return fmt.Errorf("command: kill grace %v is negative", c.KillGrace)
	}
	reserved := ReservedNames()
	if slices.Contains(reserved, c.InputName) || strings.HasPrefix(c.InputName, "result.") {
		return fmt.Errorf("command: input: file name %q is one wellscan writes itself (%s, result.*); the rendered input would overwrite it or be overwritten", c.InputName, strings.Join(reserved, ", "))
	}
	for _, o := range c.Outputs {
		if err := checkFileName("output", o); err != nil {
			return err
		}
		if o == c.InputName || slices.Contains(reserved, o) {
			return fmt.Errorf("command: output %q is the input or a file wellscan writes itself; list the files the program writes", o)
		}
	}
	switch c.EnergyFrom {
	case "", Stdout, StderrFile:
	default:
		if err := checkFileName("energy_from", c.EnergyFrom); err != nil {
			return err
		}
		if c.EnergyFrom == c.InputName || slices.Contains(reserved, c.EnergyFrom) {
			return fmt.Errorf("command: energy_from %q is the input or a file wellscan writes itself; name stdout, stderr or a file the program writes", c.EnergyFrom)
		}
	}
	if _, err := c.Energy.Compile(); err != nil {
		return fmt.Errorf("command: energy: %w", err)
	}
	if c.Gradient != nil {
		if _, err := c.Gradient.Compile(); err != nil {
			return fmt.Errorf("command: gradient: %w", err)
		}
	}
	switch c.GradientFrom {
	case "", Stdout, StderrFile:
	default:
		if c.Gradient == nil {
			return errors.New("command: gradient_from is set but gradient is not: say how to read the gradient")
		}
		if err := checkFileName("gradient_from", c.GradientFrom); err != nil {
			return err
		}
		if c.GradientFrom == c.InputName || slices.Contains(reserved, c.GradientFrom) {
			return fmt.Errorf("command: gradient_from %q is the input or a file wellscan writes itself; name stdout, stderr or a file the program writes", c.GradientFrom)
		}
	}
	return nil
}

// checkFileName accepts a relative path that stays inside the point's
// directory.
func checkFileName(what, name string) error {
	switch {
	case name == "":
		return fmt.Errorf("command: %s file name is empty", what)
	case strings.ContainsRune(name, 0):
		return fmt.Errorf("command: %s file name %q contains a NUL byte", what, name)
	case filepath.IsAbs(name) || !filepath.IsLocal(name):
		return fmt.Errorf("command: %s file name %q must be a relative path inside the point's directory", what, name)
	}
	return nil
}

// configKeys are the keys DecodeConfig accepts, in the order the README
// lists them.
var configKeys = []string{"kind", "template", "input", "command", "shell", "script", "env", "timeout", "kill_grace", "outputs", "energy", "energy_from", "allow_positive", "gradient", "gradient_from"}

var gradientKeys = []string{"kind", "label", "pattern", "path", "match", "unit", "sign"}

var energyKeys = []string{"kind", "pattern", "label", "path", "match", "unit"}

// DecodeConfig reads a config from a decoded TOML table (as
// BurntSushi/toml's PrimitiveDecode into a map[string]any gives it). file
// is the spec file: relative template and script paths, and a program path
// with a slash, are taken relative to its directory; errors name it and
// table, the table's key path (for example "engine"). A "kind" key, if
// present, must be "command".
//
// Keys: template, input, command (array of strings), shell (bool), script,
// env (table of strings), timeout and kill_grace (a duration string like
// "90s" or "2h", or a number of seconds), outputs (array of strings),
// energy (table: kind, pattern, label, path, match, unit), energy_from,
// allow_positive (bool).
func DecodeConfig(m map[string]any, file, table string) (Config, error) {
	d := decoder{file: file, table: table}
	var c Config
	for k := range m {
		if !slices.Contains(configKeys, k) {
			return Config{}, d.errf(k, "unknown key; expected one of %s", strings.Join(configKeys, ", "))
		}
	}
	if v, ok := m["kind"]; ok {
		if s, err := d.str("kind", v); err != nil {
			return Config{}, err
		} else if s != "command" {
			return Config{}, d.errf("kind", "is %q; this backend reads only kind = \"command\"", s)
		}
	}
	base := filepath.Dir(file)
	rel := func(p string) string {
		if p == "" || filepath.IsAbs(p) {
			return p
		}
		return filepath.Join(base, p)
	}
	var err error
	get := func(key string, into func(v any) error) {
		if err != nil {
			return
		}
		if v, ok := m[key]; ok {
			err = into(v)
		}
	}
	get("template", func(v any) (e error) { c.Template, e = d.str("template", v); c.Template = rel(c.Template); return })
	get("input", func(v any) (e error) { c.InputName, e = d.str("input", v); return })
	get("command", func(v any) (e error) { c.Args, e = d.strs("command", v); return })
	get("shell", func(v any) (e error) { c.Shell, e = d.boolean("shell", v); return })
	get("script", func(v any) (e error) { c.Script, e = d.str("script", v); c.Script = rel(c.Script); return })
	get("env", func(v any) (e error) { c.Env, e = d.strMap("env", v); return })
	get("timeout", func(v any) (e error) { c.Timeout, e = d.duration("timeout", v); return })
	get("kill_grace", func(v any) (e error) { c.KillGrace, e = d.duration("kill_grace", v); return })
	get("outputs", func(v any) (e error) { c.Outputs, e = d.strs("outputs", v); return })
	get("energy_from", func(v any) (e error) { c.EnergyFrom, e = d.str("energy_from", v); return })
	get("allow_positive", func(v any) (e error) { c.AllowPositive, e = d.boolean("allow_positive", v); return })
	get("energy", func(v any) (e error) { c.Energy, e = d.energy(v); return })
	get("gradient", func(v any) (e error) { c.Gradient, e = d.gradient(v); return })
	get("gradient_from", func(v any) (e error) { c.GradientFrom, e = d.str("gradient_from", v); return })
	if err != nil {
		return Config{}, err
	}
	if len(c.Args) > 0 && strings.ContainsRune(c.Args[0], '/') {
		c.Args[0] = rel(c.Args[0])
	}
	c.resolveArgs(base)
	// A bare program name is looked up in PATH only; one that is not
	// there but sits next to the spec was almost surely meant as that file.
	if len(c.Args) > 0 && c.Args[0] != "" && !strings.ContainsRune(c.Args[0], '/') {
		if _, lerr := exec.LookPath(c.Args[0]); lerr != nil {
			if st, serr := os.Stat(filepath.Join(base, c.Args[0])); serr == nil && !st.IsDir() {
				return Config{}, d.errf("command", "program %q is not in PATH but is a file in the spec's directory: write it as \"./%s\"", c.Args[0], c.Args[0])
			}
		}
	}
	if _, ok := m["energy"]; !ok {
		return Config{}, d.errf("energy", "missing: say how to find the energy, e.g. energy = { label = \"total energy\", unit = \"eV\" }")
	}
	if err := c.Validate(); err != nil {
		// Validate's errors are plain text (no sentinels): re-prefix them
		// with the file and table.
		return Config{}, fmt.Errorf("command: %s: [%s]: %s", file, table, strings.TrimPrefix(err.Error(), "command: "))
	}
	return c, nil
}

// resolveArgs replaces every argument after the program that names an
// existing file or directory in the spec's directory base by its absolute
// path, so that the program, started in the point's directory, finds it:
// paths in a spec are relative to the spec. Left as written are options
// (a leading "-"), paths that leave the directory ("..", absolute), names
// that exist nowhere there, and the point's own files (the input, the
// outputs, the energy file and the files wellscan writes), which live in
// the point's directory.
func (c *Config) resolveArgs(base string) {
	own := map[string]bool{c.InputName: true, c.EnergyFrom: true, StdoutFile: true, StderrFile: true, ExitStatusFile: true, GeometryFile: true}
	for _, o := range c.Outputs {
		own[o] = true
	}
	for i := 1; i < len(c.Args); i++ {
		a := c.Args[i]
		if a == "" || own[a] || strings.HasPrefix(a, "-") || !filepath.IsLocal(a) {
			continue
		}
		p := filepath.Join(base, a)
		if _, err := os.Stat(p); err != nil {
			continue
		}
		abs, err := filepath.Abs(p)
		if err != nil {
			continue
		}
		c.Args[i] = abs
		c.Resolved = append(c.Resolved, ResolvedArg{Index: i, Written: a, Path: abs})
	}
}

type decoder struct{ file, table string }

func (d decoder) errf(key, format string, args ...any) error {
	return fmt.Errorf("command: %s: [%s] %s: %s", d.file, d.table, key, fmt.Sprintf(format, args...))
}

func (d decoder) str(key string, v any) (string, error) {
	s, ok := v.(string)
	if !ok {
		return "", d.errf(key, "expected a string, got %s", tomlKind(v))
	}
	return s, nil
}

func (d decoder) boolean(key string, v any) (bool, error) {
	b, ok := v.(bool)
	if !ok {
		return false, d.errf(key, "expected true or false, got %s", tomlKind(v))
	}
	return b, nil
}

func (d decoder) strs(key string, v any) ([]string, error) {
	switch t := v.(type) {
	case []string:
		return slices.Clone(t), nil
	case []any:
		out := make([]string, len(t))
		for i, e := range t {
			s, ok := e.(string)
			if !ok {
				return nil, d.errf(key, "element %d: expected a string, got %s", i+1, tomlKind(e))
			}
			out[i] = s
		}
		return out, nil
	case string:
		return nil, d.errf(key, "expected an array of strings such as [\"prog\", \"-i\", \"point.inp\"], got the string %q (no shell splits it)", t)
	}
	return nil, d.errf(key, "expected an array of strings, got %s", tomlKind(v))
}

func (d decoder) strMap(key string, v any) (map[string]string, error) {
	t, ok := v.(map[string]any)
	if !ok {
		return nil, d.errf(key, "expected a table of strings, got %s", tomlKind(v))
	}
	out := make(map[string]string, len(t))
	for k, e := range t {
		s, ok := e.(string)
		if !ok {
			return nil, d.errf(key+"."+k, "expected a string, got %s", tomlKind(e))
		}
		out[k] = s
	}
	return out, nil
}

func (d decoder) duration(key string, v any) (time.Duration, error) {
	var dur time.Duration
	switch t := v.(type) {
	case string:
		p, err := time.ParseDuration(t)
		if err != nil {
			return 0, d.errf(key, "expected a duration such as \"90s\", \"30m\" or \"2h\", got %q", t)
		}
		dur = p
	case int64:
		dur = time.Duration(t) * time.Second
		if t > math.MaxInt64/int64(time.Second) {
			return 0, d.errf(key, "%d seconds is too long", t)
		}
	case float64:
		if math.IsNaN(t) || t > float64(math.MaxInt64/int64(time.Second)) {
			return 0, d.errf(key, "%v seconds is not a usable duration", t)
		}
		dur = time.Duration(t * float64(time.Second))
	default:
		return 0, d.errf(key, "expected a duration such as \"30m\" or a number of seconds, got %s", tomlKind(v))
	}
	if dur < 0 {
		return 0, d.errf(key, "%v is negative", dur)
	}
	return dur, nil
}

func (d decoder) energy(v any) (parsers.ExtractorSpec, error) {
	t, ok := v.(map[string]any)
	if !ok {
		return parsers.ExtractorSpec{}, d.errf("energy", "expected a table such as { label = \"total energy\", unit = \"eV\" }, got %s", tomlKind(v))
	}
	var s parsers.ExtractorSpec
	fields := map[string]*string{"kind": &s.Kind, "pattern": &s.Pattern, "label": &s.Label, "path": &s.Path, "match": &s.Match, "unit": &s.Unit}
	for k, e := range t {
		p, ok := fields[k]
		if !ok {
			return s, d.errf("energy."+k, "unknown key; expected one of %s", strings.Join(energyKeys, ", "))
		}
		if n, isInt := e.(int64); isInt && k == "match" {
			*p = fmt.Sprint(n) // match = 2 as well as match = "2"
			continue
		}
		str, err := d.str("energy."+k, e)
		if err != nil {
			return s, err
		}
		*p = str
	}
	if _, err := s.Compile(); err != nil {
		return s, d.errf("energy", "%v", err)
	}
	return s, nil
}

func tomlKind(v any) string {
	switch t := v.(type) {
	case string:
		return fmt.Sprintf("the string %q", t)
	case bool:
		return fmt.Sprintf("the boolean %v", t)
	case int64, int:
		return fmt.Sprintf("the integer %v", t)
	case float64:
		return fmt.Sprintf("the number %v", t)
	case []any:
		return "an array"
	case map[string]any:
		return "a table"
	case time.Time:
		return "a date"
	}
	return fmt.Sprintf("a value of type %T", v)
}

func (d decoder) gradient(v any) (*parsers.GradientSpec, error) {
	t, ok := v.(map[string]any)
	if !ok {
		return nil, d.errf("gradient", "expected a table such as { label = \"gradient\", unit = \"hartree/bohr\" }, got %s", tomlKind(v))
	}
	var s parsers.GradientSpec
	fields := map[string]*string{"kind": &s.Kind, "label": &s.Label, "pattern": &s.Pattern, "path": &s.Path, "match": &s.Match, "unit": &s.Unit, "sign": &s.Sign}
	for k, e := range t {
		p, ok := fields[k]
		if !ok {
			return nil, d.errf("gradient."+k, "unknown key; expected one of %s", strings.Join(gradientKeys, ", "))
		}
		str, err := d.str("gradient."+k, e)
		if err != nil {
			return nil, err
		}
		*p = str
	}
	if _, err := s.Compile(); err != nil {
		return nil, d.errf("gradient", "%v", err)
	}
	return &s, nil
}
