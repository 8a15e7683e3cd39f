package runner

import (
	"math"
	"os"
	"path/filepath"
	"sort"
)

// guessSource reports whether key is a done point with orbitals (one a
// continuation guess may start from).
func (r *scanRun) guessSource(key string) bool {
	o := r.recs[key]
	return o != nil && o.State == Done && o.Orbitals != ""
}

// nearestDone returns the done point with orbitals nearest to rec (squared
// distance over the coordinate values, ties by key) and that squared
// distance; nil when there is none.
func (r *scanRun) nearestDone(rec *PointRecord) (*PointRecord, float64) {
	var best nnBest
	r.index().done.nearest(rec.Values, 0, func(k string) bool {
		return k != rec.Key && r.guessSource(k)
	}, &best)
	if !best.ok {
		return nil, math.Inf(1)
	}
	return r.recs[best.key], best.d
}

// setGuess fills the continuation guess of t (the task of rec): the
// orbitals of the nearest done neighbour, and the scan line through it.
func (r *scanRun) setGuess(t *Task, rec *PointRecord) {
	t.GuessPath, t.GuessLine, t.LineAt = "", nil, 0
	if r.Spec.Engine.Guess == "fresh" || rec.Jumps != 0 {
		return
	}
	nb, _ := r.nearestDone(rec)
	if nb == nil {
		return
	}
	t.GuessPath = filepath.Join(r.Dir, filepath.FromSlash(nb.Orbitals))
	t.GuessLine, t.LineAt = r.guessLine(rec, nb)
	if _, err := os.Stat(t.GuessPath); err != nil {
		// The neighbour's file is gone (points/ deleted under a running
		// scan): a cold start, not a failure.
		t.GuessPath, t.GuessLine, t.LineAt = "", nil, 0
	}
}

// guessLine returns the done points with orbitals on the line through rec
// and its nearest done neighbour nb (nb first, then by distance, at most
// three, none farther than four times nb's distance) and rec's position on
// that line; nil when nb differs from rec in more than one coordinate.
func (r *scanRun) guessLine(rec, nb *PointRecord) ([]LinePoint, float64) {
	axis := -1
	for i := range rec.Values {
		if math.Abs(nb.Values[i]-rec.Values[i]) > sameCoord {
			if axis >= 0 {
				return nil, 0
			}
			axis = i
		}
	}
	if axis < 0 {
		return nil, 0
	}
	x := rec.Values[axis]
	d1 := math.Abs(nb.Values[axis] - x)
	type cand struct {
		key string
		at  float64
	}
	var cs []cand
	// A slightly wider range than the test below, which decides.
	pad := 1e-9 * (1 + math.Abs(x) + 4*d1)
	r.index().done.lineRange(rec.Values, 0, axis, x-4*d1-pad, x+4*d1+pad, sameCoord+pad, func(k string) {
		o := r.recs[k]
		if o == nil || !r.guessSource(k) || k == rec.Key || k == nb.Key || len(o.Values) != len(rec.Values) {
			return
		}
		for i := range o.Values {
			if i != axis && math.Abs(o.Values[i]-rec.Values[i]) > sameCoord {
				return
			}
		}
		if math.Abs(o.Values[axis]-x) <= 4*d1 && math.Abs(o.Values[axis]-nb.Values[axis]) > sameCoord {
			cs = append(cs, cand{k, o.Values[axis]})
		}
	})
	sort.Slice(cs, func(a, b int) bool {
		da, db := math.Abs(cs[a].at-x), math.Abs(cs[b].at-x)
		if da != db {
			return da < db
		}
		return cs[a].key < cs[b].key
	})
	line := []LinePoint{{Path: filepath.Join(r.Dir, filepath.FromSlash(nb.Orbitals)), At: nb.Values[axis]}}
	for _, c := range cs {
		if len(line) == 3 {
			break
		}
		dup := false
		for _, l := range line {
			if math.Abs(l.At-c.at) <= sameCoord {
				dup = true
			}
		}
		if !dup {
			line = append(line, LinePoint{Path: filepath.Join(r.Dir, filepath.FromSlash(r.recs[c.key].Orbitals)), At: c.at})
		}
	}
	return line, x
}
