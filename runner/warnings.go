package runner

import (
	"fmt"
	"sort"
	"strings"

	"wellscan/planner"
)

// Severity ranks a warning: what could mislead comes first.
type Severity int

const (
	// Serious: a number of the scan may be wrong without looking wrong
	// (a point on another electronic state). Reports show these in their
	// alarm box.
	Serious Severity = iota
	// Caution: something is missing or less certain than asked for
	// (failed points, refinement stopped by a budget), and says so.
	Caution
	// Note: worth knowing, changes no number (points still to compute).
	Note
)

func (s Severity) String() string {
	switch s {
	case Serious:
		return "serious"
	case Caution:
		return "caution"
	}
	return "note"
}

// MarshalText writes the severity's name in JSON.
func (s Severity) MarshalText() ([]byte, error) { return []byte(s.String()), nil }

// UnmarshalText reads a severity's name.
func (s *Severity) UnmarshalText(b []byte) error {
	switch string(b) {
	case "serious":
		*s = Serious
	case "caution":
		*s = Caution
	case "note":
		*s = Note
	default:
		return fmt.Errorf("runner: unknown warning severity %q", b)
	}
	return nil
}

// Warning is one thing a user must know before using a scan's numbers.
// `status`, `run`'s closing summary and the report all show the same
// list ([ScanWarnings]), most serious first.
type Warning struct {
	Severity Severity `json:"severity"`
	// Key is the point the warning concerns; empty for the whole scan.
	Key  string `json:"key,omitempty"`
	Text string `json:"text"`
}

// String is "serious: r=1.10000: ⟨S²⟩ jumps …".
func (w Warning) String() string {
	if w.Key != "" {
		return w.Severity.String() + ": " + w.Key + ": " + w.Text
	}
	return w.Severity.String() + ": " + w.Text
}

// ScanWarnings lists the warnings of a scan from its point and round
// records, most serious first: done points that break with their
// neighbours (energy or ⟨S²⟩, [FindDiscontinuities]), failed points,
// refinement stopped before it converged, points not computed yet.
func ScanWarnings(recs []PointRecord, rounds []RoundRecord) []Warning {
	var out []Warning
	for _, s := range FindDiscontinuities(recs, DiscontinuityOptions{}) {
		out = append(out, Warning{Severity: Serious, Key: s.Key, Text: s.Reason + " (another SCF state? recompute it with engine.guess = \"fresh\")"})
	}
	var failed []string
	waiting := 0
	for _, r := range recs {
		switch r.State {
		case Failed:
			c := string(r.Class)
			if c == "" {
				c = "failed"
			}
			failed = append(failed, r.Key+" ("+c+")")
		case Planned, Submitted, Running:
			waiting++
		}
	}
	sort.Strings(failed)
	if len(failed) > 0 {
		shown := failed
		more := ""
		if len(shown) > 8 {
			shown, more = shown[:8], fmt.Sprintf(" and %d more", len(failed)-8)
		}
		out = append(out, Warning{Severity: Caution, Text: fmt.Sprintf("%d point(s) failed and have no energy: %s%s", len(failed), strings.Join(shown, ", "), more)})
	}
	last := RoundRecord{}
	for _, r := range rounds {
		if r.Status != "" && r.Round >= last.Round {
			last = r
		}
	}
	switch planner.RefineStatus(last.Status) {
	case planner.RefineBudget, planner.RefineStalled:
		out = append(out, Warning{Severity: Caution, Text: fmt.Sprintf("refinement after round %d: %s — %s", last.Round, last.Status, last.Reason)})
	}
	if waiting > 0 {
		out = append(out, Warning{Severity: Note, Text: fmt.Sprintf("%d point(s) not computed yet (planned, submitted or running)", waiting)})
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].Severity < out[j].Severity })
	return out
}
