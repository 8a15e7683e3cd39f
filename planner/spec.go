package planner

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/BurntSushi/toml"
)

// Spec is a decoded and validated scan spec (scan.toml). Build it with
// Decode or Load; the zero value is not usable. A Spec is read-only after
// Decode returns and may be shared between goroutines.
type Spec struct {
	Title         string       `toml:"title"`
	MoleculeInput MoleculeSpec `toml:"molecule"`
	Scan          []ScanSpec   `toml:"scan"`
	Refine        RefineSpec   `toml:"refine"`
	Engine        EngineSpec   `toml:"engine"`
	Queue         QueueSpec    `toml:"queue"`
	Checks        ChecksSpec   `toml:"checks"`
	// ForceFieldInput is the [forcefield] table (see forcefield.go); a
	// spec has either [[scan]] blocks or [forcefield].
	ForceFieldInput ForceFieldSpec `toml:"forcefield"`
	Relax           RelaxSpec      `toml:"relax"`

	// Filled by Decode.
	file   string // file name used in messages
	dir    string // directory relative paths are resolved against
	text   []byte // the spec as written
	meta   toml.MetaData
	units  LengthUnit
	mol    Molecule
	coords []Coordinate
	axes   [][]float64 // initial grid per coordinate, in spec units, rounded to key precision
	refine RefineSettings
	files  *fileHashes // hash of the files the engine reads, computed once
	ff     *FF         // nil for a coordinate scan
	notes  []string    // remarks that are not errors (Notes)
	single bool        // one geometry to optimise, no [[scan]] (LoadSingle)
}

// MoleculeSpec is the [molecule] table.
type MoleculeSpec struct {
	Charge       int    `toml:"charge"`
	Multiplicity int    `toml:"multiplicity"` // 0: lowest consistent with the electron count
	Units        string `toml:"units"`        // "angstrom" (default) or "bohr"
	Geometry     string `toml:"geometry"`     // inline "element x y z" lines
	File         string `toml:"file"`         // an XYZ file, relative to the spec's directory
	// Isotopes maps a 1-based atom index (as a TOML key) to an isotope
	// label such as "2H" or "13C"; atoms not listed get the most abundant
	// isotope. Masses matter only for frequencies, not for energies.
	Isotopes map[string]string `toml:"isotopes"`
}

// ScanSpec is one [[scan]] block: a coordinate and its grid. Exactly one
// of Bond, Angle, Torsion, Bonds, Angles, Torsions is set; the plural forms
// tie several coordinates to one value. Lengths are in the molecule's
// units, angles and torsions in degrees.
type ScanSpec struct {
	Name     string  `toml:"name"`
	Bond     []int   `toml:"bond"`
	Angle    []int   `toml:"angle"`
	Torsion  []int   `toml:"torsion"`
	Bonds    [][]int `toml:"bonds"`
	Angles   [][]int `toml:"angles"`
	Torsions [][]int `toml:"torsions"`
	// Moving lists the 1-based atoms that move: a flat list for a single
	// coordinate, a list of lists (one per member) for tied ones. Default:
	// the fragment on the far side, found from covalent radii.
	Moving any `toml:"moving"`

	From   *float64  `toml:"from"`
	To     *float64  `toml:"to"`
	Step   *float64  `toml:"step"`
	Count  *int      `toml:"count"`
	Values []float64 `toml:"values"`
	// Growth > 1 makes the step grow geometrically from From toward To
	// (each step Growth times the one before), for scans out toward
	// dissociation.
	Growth *float64 `toml:"growth"`
	// Period (degrees), torsions only: the period of the potential when
	// the rotating group is a symmetric rotor (120 for a methyl group,
	// 180 for a planar two-fold rotor). It must divide 360 and rotating
	// the moving atoms by it must map them onto atoms of the same
	// elements. Default 360.
	Period *float64 `toml:"period"`
	// Relax = true makes the scan relaxed: at every point the other
	// coordinates are optimised (see RelaxSpec). Default rigid.
	Relax *bool `toml:"relax"`
}

// RefineSpec is the [refine] table. Lengths in the molecule's units,
// angles in degrees.
type RefineSpec struct {
	Adaptive           *bool    `toml:"adaptive"`            // default true
	TargetStep         *float64 `toml:"target_step"`         // default: initial step / 25, at least the key precision
	Tolerance          *float64 `toml:"tolerance"`           // default 1e-4 Å (length) or 0.01° (angle)
	FrequencyTolerance *float64 `toml:"frequency_tolerance"` // cm⁻¹, default 0.5
	MaxRounds          *int     `toml:"max_rounds"`          // default 12
	MaxPoints          *int     `toml:"max_points"`          // default 400
	MaxExtensions      *int     `toml:"max_extensions"`      // per edge, default 6
	Maxima             *bool    `toml:"maxima"`              // also refine local maxima (barriers); default true for torsions
}

// EngineSpec is the [engine] table.
type EngineSpec struct {
	Kind string `toml:"kind"` // "builtin", "model" or "command"

	// Built-in Hartree–Fock settings.
	Method        string   `toml:"method"`         // "rhf", "uhf", "mp2" (RHF-MP2 for singlets, UMP2 otherwise), "ccsd" or "ccsd(t)" (closed shells)
	FrozenCore    *bool    `toml:"frozen_core"`    // mp2, ccsd, ccsd(t): leave the atoms' noble-gas cores uncorrelated (default true)
	Basis         string   `toml:"basis"`          // basis set name, e.g. "6-31G*"
	Cartesian     *bool    `toml:"cartesian"`      // override the basis set's d/f convention
	MaxIterations int      `toml:"max_iterations"` // SCF iteration limit, 0: engine default
	Convergence   *float64 `toml:"convergence"`    // SCF energy change threshold (hartree), nil: engine default
	Guess         string   `toml:"guess"`          // "neighbour" (default) or "fresh": continuation guess on/off
	// MemoryMB is the two-electron integral budget per point in MiB; 0:
	// derived from the machine's available memory. It changes how fast a
	// point runs, not its energy, so it is not part of the fingerprint.
	MemoryMB int `toml:"memory_mb"`

	// BasisLimit, instead of Basis, names two correlation-consistent sets
	// (["cc-pVTZ", "cc-pVQZ"]) whose energies are extrapolated to the
	// basis-set limit; CoreCorrection adds E(all electrons) − E(frozen
	// core) in a core–valence set ("cc-pCVTZ").
	BasisLimit     []string `toml:"basis_limit"`
	CoreCorrection string   `toml:"core_correction"`

	// Model potentials.
	Model ModelSpec `toml:"model"`

	// Command is the [engine.command] table, decoded by runner/command with
	// Spec.DecodePrimitive.
	Command toml.Primitive `toml:"command"`
}

// ModelSpec is [engine.model]: an analytic potential for tests, demos and
// pipeline checks. All constants are in atomic units: hartree, bohr,
// radians.
type ModelSpec struct {
	Offset float64  `toml:"offset"` // hartree, added to every energy
	Delay  Duration `toml:"delay"`  // sleep per point, to make tests and demos observable
	Fail   []string `toml:"fail"`   // point keys that always fail (for tests of failure handling)
	// Spikes adds an energy (hartree) to the listed point keys, for tests
	// and demos of the energy-jump check: a point on "another state".
	Spikes map[string]float64 `toml:"spikes"`
	Terms  []ModelTerm        `toml:"term"` // one or more [[engine.model.term]]
}

// ModelTerm is one [[engine.model.term]]: a potential in one scanned
// coordinate. The energy of a point is Offset + Σ terms.
type ModelTerm struct {
	Coordinate string  `toml:"coordinate"` // scan name; default the first
	Shape      string  `toml:"shape"`      // "morse", "lennard-jones", "harmonic", "double-well"
	Depth      float64 `toml:"depth"`      // morse: D_e; lennard-jones: ε; double-well: barrier height (hartree)
	Center     float64 `toml:"center"`     // morse/harmonic: minimum; double-well: barrier top (bohr or rad)
	Width      float64 `toml:"width"`      // morse: a (1/bohr or 1/rad); double-well: half the minima separation
	Sigma      float64 `toml:"sigma"`      // lennard-jones σ (bohr)
	Force      float64 `toml:"force"`      // harmonic force constant k (hartree/bohr² or /rad²), E = k/2 (q−c)²
	Tilt       float64 `toml:"tilt"`       // double-well linear tilt (hartree per bohr or rad)
	Fold       int     `toml:"fold"`       // cosine: wells per turn n, E = depth/2 (1 − cos n(q − center))
}

// ChecksSpec is the [checks] table: plausibility rules the runner applies
// to the finished points of a scan.
type ChecksSpec struct {
	// MaxJumpHartree: a done interior point of a scan line whose energy is
	// more than this above (or below) both of its neighbours, and this far
	// from the curve interpolated through its neighbours, is marked failed
	// ("energy-jump"). nil: DefaultMaxJump; 0 turns the check off.
	MaxJumpHartree *float64 `toml:"max_jump_hartree"`
}

// QueueSpec is the [queue] table.
type QueueSpec struct {
	Kind     string   `toml:"kind"`     // "local" (default), "slurm", or "batch" (another scheduler through a profile)
	Workers  int      `toml:"workers"`  // concurrent points, 0: all CPUs
	Threads  int      `toml:"threads"`  // engine threads per point, 0: split the CPUs
	Attempts int      `toml:"attempts"` // tries per point, default 3
	Timeout  Duration `toml:"timeout"`  // per point, 0: none
	// Slurm is the [queue.slurm] table, decoded by the batch queue.
	Slurm toml.Primitive `toml:"slurm"`
	// Batch is the [queue.batch] table (kind "batch"): the same keys plus
	// scheduler and profile.
	Batch toml.Primitive `toml:"batch"`
}

// Duration is a time.Duration written as text in a spec ("90s", "2h").
type Duration struct{ time.Duration }

// UnmarshalText implements encoding.TextUnmarshaler.
func (d *Duration) UnmarshalText(b []byte) error {
	v, err := time.ParseDuration(string(b))
	if err != nil {
		return fmt.Errorf("expected a duration such as \"30s\" or \"2h\", got %q", b)
	}
	if v < 0 {
		return fmt.Errorf("duration %q is negative", b)
	}
	d.Duration = v
	return nil
}

// MarshalText implements encoding.TextMarshaler.
func (d Duration) MarshalText() ([]byte, error) { return []byte(d.String()), nil }

// SpecError is a problem in a spec at a key. Line is 0 when unknown.
type SpecError struct {
	File string
	Line int
	Key  string
	Msg  string
}

func (e *SpecError) Error() string {
	loc := e.File
	if e.Line > 0 {
		loc += ":" + strconv.Itoa(e.Line)
	}
	if e.Key != "" {
		return fmt.Sprintf("planner: %s: %s: %s", loc, e.Key, e.Msg)
	}
	return fmt.Sprintf("planner: %s: %s", loc, e.Msg)
}

// ErrSpec is matched (errors.Is) by every error Decode returns about the
// content of a spec.
var ErrSpec = errors.New("planner: invalid spec")

// Is makes errors.Is(err, ErrSpec) true for a *SpecError.
func (e *SpecError) Is(target error) bool { return target == ErrSpec }

// Load reads and decodes the spec at path.
func Load(path string) (*Spec, error) {
	data, err := readCapped(path, MaxSpecBytes, "a spec")
	if err != nil {
		return nil, err
	}
	return decode(data, path, filepath.Dir(path), false)
}

// Decode decodes and validates a spec. filename labels errors and is the
// base for relative paths (an XYZ file); it need not exist.
func Decode(data []byte, filename string) (*Spec, error) {
	if len(data) > MaxSpecBytes {
		return nil, fmt.Errorf("planner: %s: %d bytes, more than the %d a spec may have", filename, len(data), MaxSpecBytes)
	}
	return decode(data, filename, filepath.Dir(filename), false)
}

var tomlErrRE = regexp.MustCompile(`^toml: line (\d+) \(last key "([^"]*)"\): (.*)$`)

func decode(data []byte, filename, dir string, single bool) (*Spec, error) {
	if err := checkTOMLShape(data, filename); err != nil {
		return nil, err
	}
	s := &Spec{file: filename, dir: dir, text: append([]byte(nil), data...), files: &fileHashes{}, single: single}
	md, err := toml.NewDecoder(bytes.NewReader(data)).Decode(s)
	if err != nil {
		var pe toml.ParseError
		if errors.As(err, &pe) {
			return nil, &SpecError{File: filename, Line: pe.Position.Line, Key: pe.LastKey, Msg: pe.Message}
		}
		if m := tomlErrRE.FindStringSubmatch(err.Error()); m != nil {
			line, _ := strconv.Atoi(m[1])
			return nil, &SpecError{File: filename, Line: line, Key: m[2], Msg: m[3]}
		}
		return nil, &SpecError{File: filename, Msg: strings.TrimPrefix(err.Error(), "toml: ")}
	}
	s.meta = md
	for _, k := range md.Undecoded() {
		// Sub-tables owned by other backends are decoded later.
		if len(k) >= 2 && ((k[0] == "engine" && k[1] == "command") || (k[0] == "queue" && (k[1] == "slurm" || k[1] == "batch"))) {
			continue
		}
		return nil, &SpecError{File: filename, Line: keyLine(data, k), Key: k.String(), Msg: "unknown key" + suggest(k)}
	}
	if err := s.validate(); err != nil {
		return nil, err
	}
	return s, nil
}

// suggest names the keys allowed where an unknown key appeared.
func suggest(k toml.Key) string {
	allowed := map[string]string{
		"":                  "title, molecule, scan, refine, engine, queue, checks",
		"molecule":          "charge, multiplicity, units, geometry, file, isotopes",
		"scan":              "name, bond, angle, torsion, bonds, angles, torsions, moving, from, to, step, count, values, growth, period",
		"refine":            "adaptive, target_step, tolerance, frequency_tolerance, max_rounds, max_points, max_extensions, maxima",
		"engine":            "kind, method, frozen_core, basis, cartesian, max_iterations, convergence, guess, model, command",
		"engine.model":      "offset, delay, fail, spikes, term",
		"engine.model.term": "coordinate, shape, depth, center, width, sigma, force, tilt, fold",
		"queue":             "kind, workers, threads, attempts, timeout, slurm",
		"checks":            "max_jump_hartree",
	}
	parent := strings.Join(k[:len(k)-1], ".")
	if a, ok := allowed[parent]; ok {
		return " (allowed here: " + a + ")"
	}
	return ""
}

// keyLine finds the line defining key k by following table headers; 0 if
// not found. toml's MetaData does not expose key positions.
func keyLine(data []byte, k toml.Key) int {
	var table []string
	for i, raw := range strings.Split(string(data), "\n") {
		line := strings.TrimSpace(raw)
		if line == "" || line[0] == '#' {
			continue
		}
		if strings.HasPrefix(line, "[") {
			h := strings.Trim(strings.SplitN(line, "#", 2)[0], " \t[]")
			table = splitDotted(h)
			if equalKeys(table, k) {
				return i + 1
			}
			continue
		}
		eq := strings.Index(line, "=")
		if eq < 0 {
			continue
		}
		full := append(append([]string(nil), table...), splitDotted(line[:eq])...)
		if len(full) <= len(k) && equalKeys(full, k[:len(full)]) {
			return i + 1
		}
	}
	return 0
}

func splitDotted(s string) []string {
	var out []string
	for _, p := range strings.Split(s, ".") {
		out = append(out, strings.Trim(strings.TrimSpace(p), `"'`))
	}
	return out
}

func equalKeys(a []string, b []string) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// errAt builds a SpecError for key (dotted, e.g. "scan.from" for the
// index-th scan block), locating its line.
func (s *Spec) errAt(key string, format string, args ...any) error {
	return &SpecError{File: s.file, Line: s.lineOf(key), Key: key, Msg: fmt.Sprintf(format, args...)}
}

// lineOf finds the line of key; keys of the form "scan[2].from" find the
// second [[scan]] block's "from".
func (s *Spec) lineOf(key string) int {
	m := regexp.MustCompile(`^([\w.]+)\[(\d+)\]\.?(.*)$`).FindStringSubmatch(key)
	if m == nil {
		return keyLine(s.text, splitDotted(key))
	}
	idx, _ := strconv.Atoi(m[2])
	lines := strings.Split(string(s.text), "\n")
	seen := 0
	for i, raw := range lines {
		if strings.TrimSpace(strings.SplitN(raw, "#", 2)[0]) == "[["+m[1]+"]]" {
			seen++
			if seen == idx {
				if m[3] == "" {
					return i + 1
				}
				sub := keyLine([]byte(strings.Join(lines[i:], "\n")), append(splitDotted(m[1]), splitDotted(m[3])...))
				if sub > 0 {
					return i + sub
				}
				return i + 1
			}
		}
	}
	return 0
}

// File is the spec's file name as given to Decode or Load.
func (s *Spec) File() string { return s.file }

// Text is the spec as written.
func (s *Spec) Text() []byte { return append([]byte(nil), s.text...) }

// Units is the molecule's length unit; scan lengths use it too.
func (s *Spec) Units() LengthUnit { return s.units }

// Coordinates are the scanned coordinates, in [[scan]] order.
func (s *Spec) Coordinates() []Coordinate { return s.coords }

// Molecule returns the reference molecule (positions in bohr).
func (s *Spec) Molecule() (Molecule, error) { return s.mol.Clone(), nil }

// DecodePrimitive decodes a sub-table that Decode left alone
// (Engine.Command, Queue.Slurm) into v, and reports keys in it that v does
// not have, with file and line. prefix is the table's dotted path, e.g.
// "engine.command".
func (s *Spec) DecodePrimitive(p toml.Primitive, prefix string, v any) error {
	if err := s.meta.PrimitiveDecode(p, v); err != nil {
		if m := tomlErrRE.FindStringSubmatch(err.Error()); m != nil {
			line, _ := strconv.Atoi(m[1])
			return &SpecError{File: s.file, Line: line, Key: m[2], Msg: m[3]}
		}
		return &SpecError{File: s.file, Key: prefix, Msg: strings.TrimPrefix(err.Error(), "toml: ")}
	}
	if _, generic := v.(*map[string]any); generic {
		// Every key lands in the map; the caller checks the names.
		return nil
	}
	for _, k := range s.meta.Undecoded() {
		if strings.HasPrefix(k.String(), prefix+".") {
			return &SpecError{File: s.file, Line: keyLine(s.text, k), Key: k.String(), Msg: "unknown key"}
		}
	}
	return nil
}

// IsDefined reports whether the dotted key path is present in the spec.
func (s *Spec) IsDefined(key ...string) bool { return s.meta.IsDefined(key...) }

// Fingerprint identifies everything in the spec that changes a point's
// energy: the molecule (elements, positions, charge, multiplicity), the
// scanned coordinates' definitions (atoms and moving sets, which decide
// the geometry a key stands for) and the engine settings. Grid extent,
// refinement and queue settings, isotopes (masses do not change
// Born–Oppenheimer energies) and the model's delay are left out, so
// changing them allows a resume.
func (s *Spec) Fingerprint() Fingerprint {
	h := func(v any) string {
		b, _ := json.Marshal(v)
		sum := sha256.Sum256(b)
		return hex.EncodeToString(sum[:8])
	}
	type atom struct {
		Z   int
		Pos [3]string
	}
	var atoms []atom
	for _, a := range s.mol.Atoms {
		var p [3]string
		for k := range p {
			p[k] = strconv.FormatFloat(a.Pos[k], 'g', 12, 64)
		}
		atoms = append(atoms, atom{a.Element.Z, p})
	}
	type coord struct {
		Name, Kind string
		Members    [][]int
		Moving     [][]int
	}
	var cs []coord
	for _, c := range s.coords {
		cs = append(cs, coord{c.Name, c.Kind.String(), c.Members, c.Moving})
	}
	eng := map[string]any{}
	var raw map[string]any
	if _, err := toml.Decode(string(s.text), &raw); err == nil {
		if e, ok := raw["engine"].(map[string]any); ok {
			eng = e
		}
	}
	eng = withoutKey(eng, "model", "delay")
	delete(eng, "memory_mb") // a copy: how fast, not what
	if r := s.relaxFingerprint(); r != nil {
		eng["relaxed scan"] = r
	}
	fh := s.files
	if fh == nil {
		fh = &fileHashes{}
	}
	fh.once.Do(func() { fh.sum = hashFiles(engineFiles(eng, s.dir), s.dir) })
	if s.ff != nil {
		// Only the parent's masses shape the stage-1 displacements; an
		// isotopologue added later only adds its own stage-2 points.
		return Fingerprint{
			Files: fh.sum,
			Molecule: h(struct {
				Atoms        []atom
				Charge, Mult int
				Masses       [][]float64
			}{atoms, s.mol.Charge, s.mol.Multiplicity, [][]float64{s.ff.Isos[0].Masses}}),
			Coordinates: h(struct {
				Order         string
				Hess, Quartic float64
				Ops, Basis    int
			}{s.ff.Order, s.ff.HessStep, s.ff.QuarticStep, len(s.ff.Ops), len(s.ff.Basis)}),
			Engine: h(eng),
		}
	}
	return Fingerprint{
		Files: fh.sum,
		Molecule: h(struct {
			Atoms        []atom
			Charge, Mult int
		}{atoms, s.mol.Charge, s.mol.Multiplicity}),
		Coordinates: h(cs),
		Engine:      h(eng),
	}
}

func withoutKey(m map[string]any, table, key string) map[string]any {
	out := map[string]any{}
	for k, v := range m {
		out[k] = v
	}
	if sub, ok := out[table].(map[string]any); ok {
		c := map[string]any{}
		for k, v := range sub {
			if k != key {
				c[k] = v
			}
		}
		out[table] = c
	}
	return out
}

// Fingerprint holds a short hash per energy-relevant part of a spec.
type Fingerprint struct {
	Molecule    string `json:"molecule"`
	Coordinates string `json:"coordinates"`
	Engine      string `json:"engine"`
	// Files hashes the contents of the files an external program's
	// energies depend on (template, script, files named in its arguments);
	// empty for engines that read none.
	Files string `json:"files,omitempty"`
}

// Diff names the parts that differ between two fingerprints, empty if
// none.
func (f Fingerprint) Diff(g Fingerprint) []string {
	var d []string
	if f.Molecule != g.Molecule {
		d = append(d, "molecule (atoms, geometry, charge or multiplicity)")
	}
	if f.Coordinates != g.Coordinates {
		d = append(d, "scan coordinates (atoms or moving atoms)")
	}
	if f.Engine != g.Engine {
		d = append(d, "engine settings")
	}
	if f.Files != g.Files {
		d = append(d, "the contents of the engine's files (input template, script or a file named in the command)")
	}
	return d
}

// String is the fingerprint as one token.
func (f Fingerprint) String() string {
	s := f.Molecule + "-" + f.Coordinates + "-" + f.Engine
	if f.Files != "" {
		s += "-" + f.Files
	}
	return s
}

func sortedKeys[M ~map[string]V, V any](m M) []string {
	ks := make([]string, 0, len(m))
	for k := range m {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	return ks
}
