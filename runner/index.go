package runner

import (
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
func (r *scanRun) index() *pointIndex {
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
func (r *scanRun) indexPoint(rec *PointRecord) {
	if r.idx == nil {
		return
	}
	r.idx.all.insert(rec.Values, rec.Key)
	if rec.State == Done && rec.Orbitals != "" {
		r.idx.done.insert(rec.Values, rec.Key)
	}
}
