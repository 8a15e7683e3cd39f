package runner

import (
	"errors"
	"fmt"
	"slices"
	"sort"
	"strings"
	"time"

	"wellscan/planner"
)

// isPermanent reports whether a failed record may be retried only on the
// user's request.
func isPermanent(rec *PointRecord) bool {
	return rec.Permanent || permanentClasses[rec.Class] || !retriable(rec.Class)
}

// retryIfAllowed plans a failed point again when its failure may pass on
// another try and the spec now allows more attempts than it has had (the
// user raised [queue] attempts).
func (r *scanRun) retryIfAllowed(rec *PointRecord) {
	if isPermanent(rec) || rec.Attempts >= r.Spec.Queue.Attempts {
		return
	}
	rec.State = Planned
	r.touch(rec)
	r.emit(Event{Kind: EventRetry, Key: rec.Key, Round: rec.Round, Message: fmt.Sprintf("failed after %d attempt(s) (%s); queue.attempts is now %d, so it is tried again", rec.Attempts, rec.Class, r.Spec.Queue.Attempts)})
}

// Selection picks failed points for RetryPoints: every failed point, the
// listed keys, or the points whose last failure has one of the classes.
type Selection struct {
	All     bool
	Keys    []string
	Classes []FailureClass
}

func (s Selection) match(rec *PointRecord) bool {
	switch {
	case s.All:
		return true
	case len(s.Keys) > 0 && !slices.Contains(s.Keys, rec.Key):
		return false
	case len(s.Classes) > 0 && !slices.Contains(s.Classes, rec.Class):
		return false
	}
	return len(s.Keys) > 0 || len(s.Classes) > 0
}

// ErrNothingSelected is returned by RetryPoints and DropPoints when no
// point matches.
var ErrNothingSelected = errors.New("runner: no point matches")

// openForChange opens dir's store for a change by the user: the spec's
// fingerprint must match the store's.
func openForChange(dir string, spec *planner.Spec) (*Store, error) {
	st, err := Open(dir, OpenOptions{Timeout: 500 * time.Millisecond})
	if err != nil {
		return nil, err
	}
	if err := CheckFingerprint(st, spec); err != nil {
		st.Close()
		return nil, err
	}
	return st, nil
}

// RetryPoints plans the selected failed (or dropped) points of dir's scan
// again with fresh attempts, whatever their failure class, and records
// that in the store's event log. The next `run` computes them. It returns
// the keys planned again; ErrNothingSelected when none matches (the error
// lists the failed points and their classes).
func RetryPoints(dir string, spec *planner.Spec, sel Selection, now time.Time) ([]string, error) {
	st, err := openForChange(dir, spec)
	if err != nil {
		return nil, err
	}
	defer st.Close()
	recs, err := st.Points()
	if err != nil {
		return nil, err
	}
	var changed []PointRecord
	var events []Event
	var keys, failed []string
	known := map[string]bool{}
	for i := range recs {
		rec := &recs[i]
		known[rec.Key] = true
		if rec.State != Failed && rec.State != Dropped {
			continue
		}
		failed = append(failed, fmt.Sprintf("%s (%s)", rec.Key, orWord(string(rec.Class), string(rec.State))))
		if !sel.match(rec) {
			continue
		}
		was := rec.State
		rec.State, rec.Attempts, rec.Jumps, rec.Permanent, rec.Damaged = Planned, 0, 0, false, ""
		changed = append(changed, *rec)
		keys = append(keys, rec.Key)
		events = append(events, Event{Time: now, Kind: EventRetry, Key: rec.Key, Round: rec.Round,
			Message: fmt.Sprintf("planned again by request (was %s: %s); attempts start afresh", was, orWord(string(rec.Class), "dropped"))})
	}
	for _, k := range sel.Keys {
		if !known[k] {
			return nil, fmt.Errorf("%w: the scan has no point %s", ErrNothingSelected, k)
		}
	}
	if len(keys) == 0 {
		if len(failed) == 0 {
			return nil, fmt.Errorf("%w: the scan has no failed or dropped point", ErrNothingSelected)
		}
		return nil, fmt.Errorf("%w: the failed or dropped points are %s", ErrNothingSelected, strings.Join(failed, ", "))
	}
	sort.Strings(keys)
	return keys, st.Commit(changed, nil, events)
}

// DropPoints takes the listed points out of dir's scan: they are never
// computed again (refinement does not propose them either), are not used
// by fits and do not count as failures. The store keeps them, with the
// reason, and RetryPoints brings them back. A point being computed by a
// run cannot be dropped (the store is locked then).
func DropPoints(dir string, spec *planner.Spec, keys []string, reason string, now time.Time) ([]string, error) {
	st, err := openForChange(dir, spec)
	if err != nil {
		return nil, err
	}
	defer st.Close()
	recs, err := st.Points()
	if err != nil {
		return nil, err
	}
	byKey := map[string]*PointRecord{}
	for i := range recs {
		byKey[recs[i].Key] = &recs[i]
	}
	var changed []PointRecord
	var events []Event
	for _, k := range keys {
		rec, ok := byKey[k]
		if !ok {
			return nil, fmt.Errorf("%w: the scan has no point %s", ErrNothingSelected, k)
		}
		if rec.State == Dropped {
			continue
		}
		msg := "dropped by request"
		if reason != "" {
			msg += ": " + reason
		}
		if rec.State == Done {
			msg += fmt.Sprintf(" (its energy, %.10f hartree, is kept in the store but no longer used)", *rec.Energy)
		}
		rec.State, rec.Class, rec.LastError = Dropped, "", msg
		changed = append(changed, *rec)
		events = append(events, Event{Time: now, Kind: EventDropped, Key: k, Round: rec.Round, Message: msg})
	}
	if len(changed) == 0 {
		return nil, nil
	}
	out := make([]string, len(changed))
	for i, c := range changed {
		out[i] = c.Key
	}
	return out, st.Commit(changed, nil, events)
}

func orWord(s, d string) string {
	if s == "" {
		return d
	}
	return s
}

// sameFailureCount is how many of a run's first completions must fail
// the same deterministic way before the round stops: enough that it is
// not one bad point, few enough to save the rest of the grid.
const sameFailureCount = 3

// ErrSameFailure is returned (wrapped) by Run when its first points all
// failed the same deterministic way and the round was stopped.
var ErrSameFailure = errors.New("runner: the first points all failed the same way")

// sameFailureStop watches the first completions of a run: when the first
// sameFailureCount of them are permanent failures of one set-up class, it
// returns an error that stops the round with one message (the remaining
// points stay planned, and their attempts are untouched). Once any point
// is done, or the first ones differ, it never fires.
func (r *scanRun) sameFailureStop(c Completion) error {
	if r.firstsOff || c.Interrupted || c.LeftRunning {
		return nil
	}
	res := c.Result
	if c.Reused || res.Status == ResultDone || !res.Permanent || !setupClasses[res.Class] ||
		(len(r.firsts) > 0 && r.firsts[0].Class != res.Class) {
		r.firstsOff = true
		return nil
	}
	r.firsts = append(r.firsts, res)
	if len(r.firsts) < sameFailureCount {
		return nil
	}
	r.firstsOff = true
	var keys []string
	for _, f := range r.firsts {
		keys = append(keys, f.Key)
	}
	msg := fmt.Sprintf("the first %d points (%s) all failed with %s, which comes back the same way at every point; the round is stopped so that the rest of the grid is not tried in vain. The error: %s. Fix the settings and run again: a change to [engine] is accepted while no point has finished, and the failed points are planned again",
		len(keys), strings.Join(keys, ", "), res.Class, res.Error)
	r.emit(Event{Kind: EventFailed, Round: r.round, Message: msg})
	return fmt.Errorf("%w: %s", ErrSameFailure, msg)
}
