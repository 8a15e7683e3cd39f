package runner_test

import (
	"errors"
	"path/filepath"
	"sync"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"

	"wellscan/runner"
)

// TestStore_Reopen: what one open commits, the next reads back exactly
// (records, their energies and the event log).
func TestStore_Reopen(t *testing.T) {
	dir := t.TempDir()
	st, err := runner.Open(dir, runner.OpenOptions{Timeout: time.Second})
	if err != nil {
		t.Fatal(err)
	}
	e := -1.125
	recs := []runner.PointRecord{
		{Key: "r=1.00000", Values: []float64{1.8897261}, State: runner.Done, Energy: &e, Attempts: 1},
		{Key: "r=1.10000", Values: []float64{2.0786987}, State: runner.Planned},
	}
	if err := st.Commit(recs, nil, []runner.Event{{Kind: "round", Round: 1, Message: "round 1"}}); err != nil {
		t.Fatal(err)
	}
	if err := st.Close(); err != nil {
		t.Fatal(err)
	}
	st, err = runner.Open(dir, runner.OpenOptions{ReadOnly: true, Timeout: time.Second})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	got, err := st.Points()
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != 2 || got[0].Key != "r=1.00000" || got[0].Energy == nil || *got[0].Energy != e || got[1].State != runner.Planned || got[0].Damaged != "" {
		t.Errorf("reopened records %+v, want the two committed ones unchanged", got)
	}
	evs, err := st.Events()
	if err != nil || len(evs) != 1 || evs[0].Seq != 1 || evs[0].Message != "round 1" {
		t.Errorf("events %+v (%v), want the one committed with sequence 1", evs, err)
	}
}

// TestStore_FormatVersion: a store of another format version is refused
// with ErrFormat, naming the file, before anything is read or written.
func TestStore_FormatVersion(t *testing.T) {
	dir := t.TempDir()
	st, err := runner.Open(dir, runner.OpenOptions{Timeout: time.Second})
	if err != nil {
		t.Fatal(err)
	}
	st.Close()
	db, err := bolt.Open(filepath.Join(dir, runner.DBFile), 0o600, &bolt.Options{Timeout: time.Second})
	if err != nil {
		t.Fatal(err)
	}
	if err := db.Update(func(tx *bolt.Tx) error { return tx.Bucket([]byte("scan")).Put([]byte("format"), []byte("99")) }); err != nil {
		t.Fatal(err)
	}
	db.Close()
	_, err = runner.Open(dir, runner.OpenOptions{ReadOnly: true, Timeout: time.Second})
	if !errors.Is(err, runner.ErrFormat) {
		t.Fatalf("open of a format-99 store: %v, want ErrFormat", err)
	}
}

// TestStore_ConcurrentReaders: several read-only opens at once all
// succeed (status, fit and report may run side by side), and a writer is
// refused while they hold the file, with ErrLocked.
func TestStore_ConcurrentReaders(t *testing.T) {
	dir := t.TempDir()
	st, err := runner.Open(dir, runner.OpenOptions{Timeout: time.Second})
	if err != nil {
		t.Fatal(err)
	}
	st.Close()
	var wg sync.WaitGroup
	errs := make([]error, 4)
	held := make([]*runner.Store, 4)
	for i := range 4 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			held[i], errs[i] = runner.Open(dir, runner.OpenOptions{ReadOnly: true, Timeout: time.Second})
		}()
	}
	wg.Wait()
	for i, err := range errs {
		if err != nil {
			t.Errorf("reader %d: %v", i, err)
		}
	}
	_, werr := runner.Open(dir, runner.OpenOptions{Timeout: 200 * time.Millisecond})
	for _, s := range held {
		if s != nil {
			s.Close()
		}
	}
	if !errors.Is(werr, runner.ErrLocked) {
		t.Errorf("writer while 4 readers hold the store: %v, want ErrLocked", werr)
	}
}
