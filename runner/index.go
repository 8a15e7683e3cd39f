package runner

import (
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
)

// sameCoord is how close two coordinate values (bohr or radians) must be
// to count as the same value when points are matched to a scan line.
const sameCoord = 1e-9

// coordTree indexes points by their coordinate values, one level per
// coordinate: the root holds the sorted distinct values of coordinate 0,
// each with a subtree of the points sharing it, and so on; the last level
// holds the keys. On a grid every level is short and a look-up touches a
// few values per level, whatever the number of points; scattered points
// degrade it to a sorted list along coordinate 0, still searched with
// pruning. Keys are never removed: readers check the record's state.
type coordTree struct {
	vals []float64
	kids []*coordTree // levels above the last
	keys [][]string   // the last level: the keys at each value
}

// insert adds key at values v (len(v) ≥ 1); adding a key twice is a no-op.
func (t *coordTree) insert(v []float64, key string) {
	if len(v) == 0 {
		return
	}
	i, found := slices.BinarySearch(t.vals, v[0])
	if len(v) == 1 {
		if !found {
			t.vals = slices.Insert(t.vals, i, v[0])
			t.keys = slices.Insert(t.keys, i, []string{key})
			return
		}
		if !slices.Contains(t.keys[i], key) {
			t.keys[i] = append(t.keys[i], key)
		}
		return
	}
	if !found {
		t.vals = slices.Insert(t.vals, i, v[0])
		t.kids = slices.Insert(t.kids, i, &coordTree{})
	}
	t.kids[i].insert(v[1:], key)
}

// nnBest is the running answer of a nearest-neighbour search: the least
// squared distance, ties broken by the smaller key.
type nnBest struct {
	key string
	d   float64
	ok  bool
}

func (b *nnBest) offer(key string, d float64) {
	if !b.ok || d < b.d || (d == b.d && key < b.key) {
		b.key, b.d, b.ok = key, d, true
	}
}

// nearest finds the accepted key nearest to q (squared Euclidean distance
// in the coordinates' own units, summed in coordinate order, so the result
// is bit for bit what a linear scan computes); acc is the distance over
// the coordinates above this level.
func (t *coordTree) nearest(q []float64, acc float64, accept func(string) bool, best *nnBest) {
	if len(q) == 0 || len(t.vals) == 0 {
		return
	}
	i, _ := slices.BinarySearch(t.vals, q[0])
	visit := func(j int) bool {
		d := t.vals[j] - q[0]
		dd := acc + d*d
		if best.ok && dd > best.d {
			return false // farther along this coordinate only grows
		}
		if len(q) == 1 {
			for _, k := range t.keys[j] {
				if accept(k) {
					best.offer(k, dd)
				}
			}
		} else {
			t.kids[j].nearest(q[1:], dd, accept, best)
		}
		return true
	}
	for j := i; j < len(t.vals) && visit(j); j++ {
	}
	for j := i - 1; j >= 0 && visit(j); j-- {
	}
}

// lineRange calls f with every key whose coordinates other than axis lie
// within tol of q's and whose coordinate axis lies in [lo, hi]; depth is
// the index of this level's coordinate.
func (t *coordTree) lineRange(q []float64, depth, axis int, lo, hi, tol float64, f func(string)) {
	if depth >= len(q) {
		return
	}
	a, b := q[depth]-tol, q[depth]+tol
	if depth == axis {
		a, b = lo, hi
	}
	i := sort.SearchFloat64s(t.vals, a)
	for ; i < len(t.vals) && t.vals[i] <= b; i++ {
		if depth == len(q)-1 {
			for _, k := range t.keys[i] {
				f(k)
			}
		} else {
			t.kids[i].lineRange(q, depth+1, axis, lo, hi, tol, f)
		}
	}
}

// lineNext returns the keys of the points next to q on its scan line along
// axis, beyond q's own value (dir +1: the next larger value, −1: the next
// smaller), passing at most limit distinct values that hold no point on
// the line.
func (t *coordTree) lineNext(q []float64, axis, dir, limit int) []string {
	return t.lineNextAt(q, 0, axis, dir, limit)
}

func (t *coordTree) lineNextAt(q []float64, depth, axis, dir, limit int) []string {
	if depth >= len(q) {
		return nil
	}
	last := depth == len(q)-1
	if depth != axis {
		var out []string
		i := sort.SearchFloat64s(t.vals, q[depth]-sameCoord)
		for ; i < len(t.vals) && t.vals[i] <= q[depth]+sameCoord; i++ {
			if last {
				out = append(out, t.keys[i]...)
			} else {
				out = append(out, t.kids[i].lineNextAt(q, depth+1, axis, dir, limit)...)
			}
		}
		return out
	}
	var i int
	if dir > 0 {
		i = sort.SearchFloat64s(t.vals, q[depth]+sameCoord)
		for i < len(t.vals) && !(t.vals[i] > q[depth]+sameCoord) {
			i++
		}
	} else {
		i = sort.SearchFloat64s(t.vals, q[depth]-sameCoord) - 1
	}
	for n := 0; i >= 0 && i < len(t.vals) && n <= limit; i, n = i+dir, n+1 {
		var got []string
		if last {
			got = t.keys[i]
		} else {
			got = t.kids[i].lineRest(q, depth+1)
		}
		if len(got) > 0 {
			return got
		}
	}
	return nil
}

// lineRest returns the keys below this level whose remaining coordinates
// match q's within sameCoord.
func (t *coordTree) lineRest(q []float64, depth int) []string {
	var out []string
	i := sort.SearchFloat64s(t.vals, q[depth]-sameCoord)
	for ; i < len(t.vals) && t.vals[i] <= q[depth]+sameCoord; i++ {
		if depth == len(q)-1 {
			out = append(out, t.keys[i]...)
		} else {
			out = append(out, t.kids[i].lineRest(q, depth+1)...)
		}
	}
	return out
}

// pointIndex holds the runner's look-ups by coordinate values: every point
// (for scan-line neighbours) and the done points with orbitals (for the
// continuation guess). It is built from the records on first use and kept
// up to date by plan and apply; entries of records that left the done
// state stay and are skipped.
type pointIndex struct {
	all  coordTree
	done coordTree
}

// index returns the runner's point index, building it from the records
// the first time.
func (r *Runner) index() *pointIndex {
	if r.idx != nil {
		return r.idx
	}
	r.idx = &pointIndex{}
	for k, rec := range r.recs {
		r.idx.all.insert(rec.Values, k)
		if rec.State == Done && rec.Orbitals != "" {
			r.idx.done.insert(rec.Values, k)
		}
	}
	return r.idx
}

// indexPoint records rec in the index if the index has been built.
func (r *Runner) indexPoint(rec *PointRecord) {
	if r.idx == nil {
		return
	}
	r.idx.all.insert(rec.Values, rec.Key)
	if rec.State == Done && rec.Orbitals != "" {
		r.idx.done.insert(rec.Values, rec.Key)
	}
}

// guessSource reports whether key is a done point with orbitals (one a
// continuation guess may start from).
func (r *Runner) guessSource(key string) bool {
	o := r.recs[key]
	return o != nil && o.State == Done && o.Orbitals != ""
}

// nearestDone returns the done point with orbitals nearest to rec (squared
// distance over the coordinate values, ties by key) and that squared
// distance; nil when there is none.
func (r *Runner) nearestDone(rec *PointRecord) (*PointRecord, float64) {
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
func (r *Runner) setGuess(t *Task, rec *PointRecord) {
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
func (r *Runner) guessLine(rec, nb *PointRecord) ([]LinePoint, float64) {
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
