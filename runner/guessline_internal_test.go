package runner

import (
	"path/filepath"
	"testing"
)

func TestGuessLine_PicksPointsOnTheLine(t *testing.T) {
	done := func(key string, v ...float64) *PointRecord {
		return &PointRecord{Key: key, Values: v, State: Done, Orbitals: "points/" + key + "/orbitals.bin"}
	}
	r := &scanRun{Runner: Runner{Dir: "/scan"}, recs: map[string]*PointRecord{}}
	for _, p := range []*PointRecord{
		done("a", 1.0, 2.0), done("b", 1.2, 2.0), done("c", 1.4, 2.0), done("d", 3.0, 2.0), // row y = 2
		done("e", 1.6, 2.5), // off the row
		{Key: "f", Values: []float64{1.8, 2.0}, State: Failed}, // not done
	} {
		r.recs[p.Key] = p
	}
	rec := &PointRecord{Key: "x", Values: []float64{1.6, 2.0}}
	line, at := r.guessLine(rec, r.recs["c"])
	if at != 1.6 || len(line) != 3 {
		t.Fatalf("line %+v at %g, want c, b, a at 1.6", line, at)
	}
	for i, want := range []struct {
		key string
		at  float64
	}{{"c", 1.4}, {"b", 1.2}, {"a", 1.0}} {
		if line[i].At != want.at || line[i].Path != filepath.Join("/scan", "points", want.key, "orbitals.bin") {
			t.Errorf("line[%d] = %+v, want %s at %g", i, line[i], want.key, want.at)
		}
	}
	// Farther than 4× the neighbour's distance: for a point at 2.8 next to
	// d, c is not used; a neighbour off the axis gives no line.
	if line, _ := r.guessLine(&PointRecord{Key: "y", Values: []float64{2.8, 2.0}}, r.recs["d"]); len(line) != 1 {
		t.Errorf("line from d for 2.8: %+v, want d alone (c is 1.4 away, more than 4 × 0.2)", line)
	}
	// c differs only in y here: the line is the column x = 1.4, which holds only c.
	if line, _ := r.guessLine(&PointRecord{Key: "z", Values: []float64{1.4, 2.5}}, r.recs["c"]); len(line) != 1 {
		t.Errorf("column line %+v, want c alone", line)
	}
	if line, _ := r.guessLine(&PointRecord{Key: "w", Values: []float64{1.5, 2.5}}, r.recs["c"]); line != nil {
		t.Errorf("diagonal neighbour gave a line %+v, want none", line)
	}
}
