package runner

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"sort"
	"time"

	"wellscan/planner"
)

// scanRun is the state of one [Runner.Run]: the records as this run
// knows them, the changes not yet committed, the counters of the summary.
// Only the goroutine running Run touches it.
type scanRun struct {
	// Runner holds the settings: a copy of the caller's, with the
	// defaults filled in.
	Runner

	// This process, for the result files it writes.
	fp     string // the spec's fingerprint (SpecFingerprint)
	host   string // this machine
	suffix string // temporary-file suffix of this process

	// The records as this run knows them, and what is not yet committed.
	recs      map[string]*PointRecord
	rounds    map[int]*RoundRecord
	dirty     map[string]bool // records changed since the last flush
	dirtyR    map[int]bool    // rounds changed since the last flush
	events    []Event         // events since the last flush
	lastFlush time.Time
	idx       *pointIndex // look-ups by coordinate values; built on first use (index.go)

	// Where the run is, and what its progress and summary count.
	round     int
	lastPlan  planner.RefinePlan
	start     time.Time
	computed  int
	reused    int
	earlier   int              // done in the store when Run started
	tally     map[State]int    // points per state, kept at each flush (tally.go)
	tallied   map[string]State // each point's state as counted in tally
	pointTime time.Duration    // summed compute time of the points computed by this run
	snapNext  time.Time        // wall clock: no running snapshot before this (tally.go)
	warned    map[string]bool  // convenience files already warned about (warnOnce)
	firsts    []Result         // the first completions of this run, while none is done (sameFailureStop)
	firstsOff bool             // sameFailureStop has decided
	home      *scanHome        // the scan directory as opened at the start (moved.go)
}

// newScanRun fills the defaults of the settings in cfg, starts watching
// the scan directory (close r.home when the run ends) and loads the
// store's records.
func newScanRun(cfg Runner) (*scanRun, error) {
	r := &scanRun{Runner: cfg}
	if err := checkQueue(r.Queue); err != nil {
		return nil, err
	}
	if r.Now == nil {
		r.Now = time.Now
	}
	if r.SnapshotEvery == 0 {
		r.SnapshotEvery = 2 * time.Second
	}
	if r.FlushEvery == 0 {
		r.FlushEvery = 20 * time.Millisecond
	}
	if r.CPUs == 0 {
		r.CPUs = runtime.NumCPU()
	}
	r.start = r.Now()
	// Every path handed to a backend (Task.Dir, guess files) is absolute,
	// so what a backend returns relative to the working directory cannot
	// be mistaken for a path relative to the point directory; paths stored
	// in the store and result files stay relative to the scan directory.
	if abs, err := filepath.Abs(r.Dir); err == nil {
		r.Dir = abs
	} else {
		return nil, fmt.Errorf("runner: scan directory %s: %w", r.Dir, err)
	}
	r.home = watchHome(r.Dir)
	r.host, _ = os.Hostname()
	r.suffix = tmpSuffix()
	fp, _ := json.Marshal(r.Spec.Fingerprint())
	r.fp = string(fp)
	r.dirty, r.dirtyR = map[string]bool{}, map[int]bool{}
	if err := r.load(); err != nil {
		r.home.close()
		return nil, err
	}
	return r, nil
}

func (r *scanRun) load() error {
	recs, err := r.Store.Points()
	if err != nil {
		return err
	}
	r.recs = map[string]*PointRecord{}
	for i := range recs {
		r.recs[recs[i].Key] = &recs[i]
		r.round = max(r.round, recs[i].Round)
		if recs[i].State == Done {
			r.earlier++
		}
	}
	if renamed, removed, evs := canonicalKeys(r.Spec, r.recs); len(removed) > 0 {
		put := make([]PointRecord, len(renamed))
		for i, rec := range renamed {
			put[i] = *rec
		}
		for i := range evs {
			evs[i].Time = r.Now()
		}
		if err := r.Store.Rekey(put, removed, evs); err != nil {
			return err
		}
		if r.OnEvent != nil {
			pr := r.progress()
			for _, e := range evs {
				e.Progress = &pr
				r.OnEvent(e)
			}
		}
	}
	rounds, err := r.Store.Rounds()
	if err != nil {
		return err
	}
	r.rounds = map[int]*RoundRecord{}
	for i := range rounds {
		r.rounds[rounds[i].Round] = &rounds[i]
	}
	return nil
}

func (r *scanRun) keys() []string {
	ks := make([]string, 0, len(r.recs))
	for k := range r.recs {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	return ks
}

func (r *scanRun) roundRec(n int) *RoundRecord {
	rr, ok := r.rounds[n]
	if !ok {
		rr = &RoundRecord{Round: n, Started: r.Now()}
		r.rounds[n] = rr
	}
	r.dirtyR[n] = true
	return rr
}

func (r *scanRun) plan(p planner.Point, round int) {
	rec := &PointRecord{Key: p.Key, Values: p.Values, Round: round, State: Planned, Planned: r.Now(), Backend: r.Backend.Name()}
	r.recs[p.Key] = rec
	r.indexPoint(rec)
	r.touch(rec)
	r.emit(Event{Kind: EventPlanned, Key: p.Key, Round: round})
}

func (r *scanRun) touch(rec *PointRecord) { r.dirty[rec.Key] = true }

func (r *scanRun) emit(e Event) {
	e.Time = r.Now()
	r.events = append(r.events, e)
}

// flush commits every pending change in one transaction, then tells the
// observer.
func (r *scanRun) flush() error {
	if len(r.dirty) == 0 && len(r.dirtyR) == 0 && len(r.events) == 0 {
		return nil
	}
	recs := make([]PointRecord, 0, len(r.dirty))
	for k := range r.dirty {
		recs = append(recs, *r.recs[k])
	}
	rounds := make([]RoundRecord, 0, len(r.dirtyR))
	for n := range r.dirtyR {
		rounds = append(rounds, *r.rounds[n])
	}
	evs := r.events
	if err := r.Store.Commit(recs, rounds, evs); err != nil {
		return err
	}
	r.lastFlush = r.Now()
	r.retally()
	clear(r.dirty)
	clear(r.dirtyR)
	r.events = nil
	if r.OnEvent != nil {
		pr := r.progress()
		for _, e := range evs {
			e.Progress = &pr
			r.OnEvent(e)
		}
	}
	return nil
}

func (r *scanRun) pendingChanges() bool {
	return len(r.dirty) > 0 || len(r.dirtyR) > 0 || len(r.events) > 0
}

func (r *scanRun) counts() map[State]int {
	c := map[State]int{}
	for _, s := range States {
		c[s] = 0
	}
	for _, rec := range r.recs {
		c[rec.State]++
	}
	return c
}

func (r *scanRun) progress() Progress {
	c := r.tallyCounts()
	p := Progress{Round: r.round, Counts: c, Total: len(r.recs), Elapsed: r.Now().Sub(r.start)}
	p.ETA = r.eta(c[Planned] + c[Submitted] + c[Running])
	return p
}

// samples turns records into refinement input.
func (r *scanRun) samples() []planner.Sample {
	return Samples(r.recs)
}

// Samples converts point records to refinement samples (ordered by key).
func Samples(recs map[string]*PointRecord) []planner.Sample {
	ks := make([]string, 0, len(recs))
	for k := range recs {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	var out []planner.Sample
	for _, k := range ks {
		rec := recs[k]
		s := planner.Sample{Key: k, Values: rec.Values, Round: rec.Round, Energy: math.NaN()}
		switch rec.State {
		case Done:
			s.Energy = *rec.Energy
		case Failed, Dropped:
			// A dropped point is a known key the refinement must not
			// propose again; like a failed one it brackets the curve.
			s.Failed = true
		}
		out = append(out, s)
	}
	return out
}

func (r *scanRun) summary() Summary {
	s := Summary{Rounds: r.round, Counts: r.counts(), Status: r.lastPlan.Status, Reason: r.lastPlan.Reason,
		Extrema: r.lastPlan.Extrema, Computed: r.computed, Reused: r.reused, Earlier: r.earlier, Elapsed: r.Now().Sub(r.start)}
	recs := make([]PointRecord, 0, len(r.recs))
	for _, k := range r.keys() {
		recs = append(recs, *r.recs[k])
		if r.recs[k].State == Failed {
			s.Failed = append(s.Failed, *r.recs[k])
		}
	}
	rounds := make([]RoundRecord, 0, len(r.rounds))
	for _, rr := range r.rounds {
		rounds = append(rounds, *rr)
	}
	s.Warnings = ScanWarnings(recs, rounds)
	s.Points = recs
	return s
}

func (r *scanRun) snapshot(state string) {
	recs := make([]PointRecord, 0, len(r.recs))
	for _, k := range r.keys() {
		recs = append(recs, *r.recs[k])
	}
	rounds := make([]RoundRecord, 0, len(r.rounds))
	for _, rr := range r.rounds {
		rounds = append(rounds, *rr)
	}
	snap := BuildSnapshot(r.Spec, recs, rounds, state, r.Now())
	r.warnOnce("snapshot", r.writeSnapshot(snap))
}
