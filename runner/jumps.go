package runner

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"

	"wellscan/planner"
)

// checkJumps applies the energy-jump rule ([FindJumps], threshold
// [checks] max_jump_hartree) to the done points. A point rejected for the
// first time goes back to planned for one more try from a fresh guess,
// whatever its attempts; a point rejected again fails for good. Either
// way its result file is moved aside (kept as evidence), so neither a
// worker nor a resumed run takes the rejected energy back. It returns how
// many points were planned again.
func (r *scanRun) checkJumps() int {
	limit := r.Spec.MaxJump()
	if !(limit > 0) {
		return 0
	}
	recs := make([]PointRecord, 0, len(r.recs))
	for _, k := range r.keys() {
		recs = append(recs, *r.recs[k])
	}
	replanned := 0
	var periods []float64
	for _, c := range r.Spec.Coordinates() {
		p := 0.0
		if c.Periodic() && c.FullPeriod {
			p = c.Period
		}
		periods = append(periods, p)
	}
	for _, j := range FindJumpsPeriodic(recs, limit, periods) {
		rec := r.recs[j.Key]
		rec.Jumps++
		msg := jumpMessage(r.Spec, rec, j, limit)
		res := filepath.Join(PointsDir, rec.Key, ResultFile)
		aside := filepath.Join(PointsDir, rec.Key, fmt.Sprintf("result.%s-%d.json", ClassEnergyJump, rec.Jumps))
		if err := renameInScan(r.Dir, res, aside); err != nil && !errors.Is(err, os.ErrNotExist) {
			msg += fmt.Sprintf(" (could not move %s aside: %v)", res, err)
		}
		rec.Energy, rec.Converged, rec.Class = nil, false, ClassEnergyJump
		r.touch(rec)
		if rec.Jumps == 1 {
			rec.State, rec.LastError = Planned, msg
			r.emit(Event{Kind: EventRetry, Key: rec.Key, Round: rec.Round, Message: msg + "; computing it once more from a fresh guess"})
			replanned++
			continue
		}
		rec.State, rec.Permanent = Failed, true
		rec.LastError = msg + "; it jumped again when recomputed from a fresh guess, so it stays failed"
		r.emit(Event{Kind: EventFailed, Key: rec.Key, Round: rec.Round, Message: rec.LastError})
	}
	return replanned
}

// jumpMessage is the error text of an energy-jump failure: the point, its
// coordinates, its energy, both neighbours' energies and the threshold,
// all labelled.
func jumpMessage(spec *planner.Spec, rec *PointRecord, j Jump, limit float64) string {
	where := ""
	if cs := spec.Coordinates(); j.Coordinate < len(cs) && len(cs) > 1 {
		where = " along " + cs[j.Coordinate].Name
	}
	dir := "above"
	if j.Energy < j.PrevEnergy {
		dir = "below"
	}
	return fmt.Sprintf("energy jump at %s (%s): E = %.10f hartree is %s both neighbours%s, %s with E = %.10f hartree (%+.6f) and %s with E = %.10f hartree (%+.6f), and %.6f hartree off the curve through its neighbours; [checks] max_jump_hartree = %g hartree",
		rec.Key, spec.Describe(rec.Values), j.Energy, dir, where, j.Prev, j.PrevEnergy, j.Energy-j.PrevEnergy, j.Next, j.NextEnergy, j.Energy-j.NextEnergy, math.Abs(j.Energy-j.Curve), limit)
}
