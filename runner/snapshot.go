package runner

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"time"

	"wellscan/planner"
)

// Snapshot is the content of status.json: what `wellscan status` shows,
// readable without the store's lock.
type Snapshot struct {
	V       int            `json:"v"`
	Title   string         `json:"title,omitempty"`
	State   string         `json:"state"` // "running", "finished", "interrupted", or "stored" when built from the store
	Updated time.Time      `json:"updated"`
	PID     int            `json:"pid,omitempty"`
	Host    string         `json:"host,omitempty"`
	Round   int            `json:"round"`
	Counts  map[string]int `json:"counts"`
	Total   int            `json:"total"`
	// Refine is the refinement status of the last finished round.
	Refine     *RefineJSON       `json:"refine,omitempty"`
	Extrema    []ExtremumJSON    `json:"extrema"`
	Points     []PointJSON       `json:"points"`
	LastErrors []PointErrorJSON  `json:"last_errors"`
	Units      map[string]string `json:"units"` // coordinate name → unit of its values
	// Suspects are done points that break with their neighbours (see
	// [FindDiscontinuities]).
	Suspects []Suspect `json:"suspects,omitempty"`
	// Fingerprint is the spec fingerprint of the run that wrote the
	// snapshot (SpecFingerprint), so that readers can tell a snapshot of
	// another spec.
	Fingerprint string `json:"fingerprint,omitempty"`
	// Damaged lists points whose stored record failed its checksum; their
	// energies are left out.
	Damaged []string `json:"damaged,omitempty"`
	// Warnings are the scan's warnings, most serious first ([ScanWarnings]).
	Warnings []Warning `json:"warnings,omitempty"`
}

// RefineJSON is a round's refinement status.
type RefineJSON struct {
	Round  int    `json:"round"`
	Status string `json:"status"`
	Reason string `json:"reason"`
}

// ExtremumJSON is an extremum estimate in display units.
type ExtremumJSON struct {
	Kind          string             `json:"kind"`
	Coordinates   map[string]float64 `json:"coordinates"`
	EnergyHartree float64            `json:"energy_hartree"`
	AtEdge        bool               `json:"at_edge"`
	Converged     bool               `json:"converged"`
	Note          string             `json:"note,omitempty"`
}

// PointJSON is one point in display units.
type PointJSON struct {
	Key           string             `json:"key"`
	Coordinates   map[string]float64 `json:"coordinates"`
	Values        []float64          `json:"values"` // internal units (bohr, radian), in [[scan]] order
	State         State              `json:"state"`
	EnergyHartree *float64           `json:"energy_hartree"`
	Round         int                `json:"round"`
	Attempts      int                `json:"attempts"`
	// Diagnostics of a done point, where the backend reported them.
	Iterations int      `json:"scf_iterations,omitempty"`
	SSquared   *float64 `json:"s_squared,omitempty"`
}

// PointErrorJSON is the last error of a point.
type PointErrorJSON struct {
	Key   string       `json:"key"`
	Class FailureClass `json:"class"`
	Error string       `json:"error"`
	State State        `json:"state"`
}

// BuildSnapshot summarises records for status.json.
func BuildSnapshot(spec *planner.Spec, recs []PointRecord, rounds []RoundRecord, state string, now time.Time) Snapshot {
	host, _ := os.Hostname()
	snap := Snapshot{V: 1, Title: spec.Title, State: state, Updated: now, PID: os.Getpid(), Host: host,
		Counts: map[string]int{}, Total: len(recs), Units: map[string]string{},
		Extrema: []ExtremumJSON{}, Points: []PointJSON{}, LastErrors: []PointErrorJSON{},
		Suspects: FindDiscontinuities(recs, DiscontinuityOptions{}), Fingerprint: SpecFingerprint(spec)}
	for _, c := range spec.Coordinates() {
		snap.Units[c.Name] = c.UnitLabel(spec.Units())
	}
	for _, s := range States {
		snap.Counts[string(s)] = 0
	}
	m := map[string]*PointRecord{}
	for i := range recs {
		r := &recs[i]
		if r.Damaged != "" {
			// Never show or fit a number whose checksum failed.
			snap.Damaged = append(snap.Damaged, r.Key)
			c := *r
			c.Energy, c.State, c.LastError, c.Class = nil, Failed, r.Damaged, "damaged"
			r = &c
		}
		m[r.Key] = r
		snap.Counts[string(r.State)]++
		snap.Round = max(snap.Round, r.Round)
		snap.Points = append(snap.Points, PointJSON{Key: r.Key, Coordinates: coords(spec, r.Values), Values: r.Values, State: r.State,
			EnergyHartree: r.Energy, Round: r.Round, Attempts: r.Attempts, Iterations: r.Iterations, SSquared: r.SSquared})
		if r.LastError != "" {
			snap.LastErrors = append(snap.LastErrors, PointErrorJSON{Key: r.Key, Class: r.Class, Error: r.LastError, State: r.State})
		}
	}
	sort.Slice(snap.Points, func(a, b int) bool {
		pa, pb := m[snap.Points[a].Key], m[snap.Points[b].Key]
		for i := range pa.Values {
			if pa.Values[i] != pb.Values[i] {
				return pa.Values[i] < pb.Values[i]
			}
		}
		return pa.Key < pb.Key
	})
	sort.Slice(snap.LastErrors, func(a, b int) bool {
		return m[snap.LastErrors[a].Key].Finished.After(m[snap.LastErrors[b].Key].Finished)
	})
	if len(snap.LastErrors) > 10 {
		snap.LastErrors = snap.LastErrors[:10]
	}
	snap.Warnings = ScanWarnings(recs, rounds)
	sort.Slice(rounds, func(a, b int) bool { return rounds[a].Round < rounds[b].Round })
	for i := len(rounds) - 1; i >= 0; i-- {
		if rounds[i].Status != "" {
			snap.Refine = &RefineJSON{Round: rounds[i].Round, Status: rounds[i].Status, Reason: rounds[i].Reason}
			break
		}
	}
	// The current extremum estimate, from the points done so far.
	plan := planner.Refine(spec, Samples(m), snap.Round)
	for _, e := range plan.Extrema {
		ej := ExtremumJSON{Kind: e.Kind, Coordinates: coords(spec, e.Values), EnergyHartree: e.Energy, AtEdge: e.AtEdge, Converged: e.Converged, Note: e.Note}
		snap.Extrema = append(snap.Extrema, ej)
	}
	return snap
}

func coords(spec *planner.Spec, v []float64) map[string]float64 {
	out := map[string]float64{}
	cs := spec.Coordinates()
	disp := spec.DisplayValues(planner.Point{Values: v})
	for i, c := range cs {
		if i < len(disp) {
			out[c.Name] = disp[i]
		}
	}
	return out
}

// WriteSnapshot writes status.json atomically.
func WriteSnapshot(dir string, s Snapshot) error {
	b, err := snapshotJSON(s)
	if err != nil {
		return err
	}
	return writeInScan(dir, StatusFile, b, tmpSuffix(), true)
}

func snapshotJSON(s Snapshot) ([]byte, error) {
	b, err := json.MarshalIndent(s, "", "  ")
	if err != nil {
		return nil, fmt.Errorf("runner: status snapshot: %w", err)
	}
	return append(b, '\n'), nil
}

// ReadSnapshot reads status.json.
func ReadSnapshot(dir string) (Snapshot, error) {
	var s Snapshot
	b, err := os.ReadFile(filepath.Join(dir, StatusFile))
	if err != nil {
		return s, fmt.Errorf("runner: %w", err)
	}
	if err := json.Unmarshal(b, &s); err != nil {
		return s, fmt.Errorf("runner: %s: %w", filepath.Join(dir, StatusFile), err)
	}
	return s, nil
}

// StoreSnapshot builds a snapshot from a store opened read-only.
func StoreSnapshot(spec *planner.Spec, st *Store, now time.Time) (Snapshot, error) {
	recs, err := st.Points()
	if err != nil {
		return Snapshot{}, err
	}
	rounds, err := st.Rounds()
	if err != nil {
		return Snapshot{}, err
	}
	s := BuildSnapshot(spec, recs, rounds, "stored", now)
	s.PID, s.Host = 0, ""
	return s, nil
}
