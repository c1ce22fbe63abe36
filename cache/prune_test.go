package cache

import (
	"bytes"
	"errors"
	"fmt"
	"os"
	"reflect"
	"sync/atomic"
	"testing"
	"time"
)

// putRun commits the entries and records a run that used them.
func putRun(t *testing.T, s *Store, id string, started time.Time, es ...Entry) {
	t.Helper()
	mustCommit(t, s, es...)
	r := Run{ID: id, Started: started}
	for _, e := range es {
		r.Steps = append(r.Steps, RunStep{Step: "x." + id, StepKey: e.Step, ResultKey: e.Result})
	}
	if err := s.PutRun(r); err != nil {
		t.Fatal(err)
	}
}

func present(t *testing.T, s *Store, e Entry) bool {
	t.Helper()
	rk, ok, err := s.Lookup(e.Step)
	if err != nil {
		t.Fatal(err)
	}
	data, err := s.Get(e.Result)
	if err != nil && !errors.Is(err, ErrMissing) {
		t.Fatal(err)
	}
	return ok && rk == e.Result && bytes.Equal(data, e.Data)
}

func TestPruneByAgeKeepsPinnedRunsAndWhatTheyUse(t *testing.T) {
	s := newStore(t)
	shared := []byte("a result two runs share")
	a1, aShared := entry("a1", []byte("a1")), entry("a.shared", shared)
	b1, bShared := entry("b1", []byte("b1")), entry("b.shared", shared)
	c1 := entry("c1", []byte("c1"))
	orphan := entry("orphan", []byte("committed by a run that never wrote its record"))

	putRun(t, s, "A", t0, a1, aShared)
	putRun(t, s, "B", t0.Add(time.Hour), b1, bShared)
	putRun(t, s, "C", t0.Add(10*24*time.Hour), c1)
	mustCommit(t, s, orphan)
	if err := s.Pin("A", "the paper"); err != nil {
		t.Fatal(err)
	}

	rep, err := s.Prune(PrunePolicy{Aged: 5 * 24 * time.Hour, Now: t0.Add(10*24*time.Hour + time.Hour)})
	if err != nil {
		t.Fatal(err)
	}
	// Deleted: step keys b1, b.shared, orphan with their provenance; results b1 and orphan.
	want := PruneReport{
		Dropped: []string{"B"}, KeptRuns: 2, StepKeys: 3, Provenance: 3, Results: 2,
		ResultBytes: int64(len(b1.Data) + len(orphan.Data)),
		FileBefore:  rep.FileBefore, FileAfter: rep.FileAfter,
	}
	if !reflect.DeepEqual(rep, want) {
		t.Errorf("report\n%+v\nwant\n%+v", rep, want)
	}
	for _, tc := range []struct {
		name string
		e    Entry
		kept bool
	}{
		{"the pinned run's own entry is kept", a1, true},
		{"the pinned run's shared result is kept", aShared, true},
		{"the recent run's entry is kept", c1, true},
		{"the dropped run's own entry is gone", b1, false},
		{"the dropped run's step key for the shared result is gone", bShared, false},
		{"an entry no run refers to is gone", orphan, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if got := present(t, s, tc.e); got != tc.kept {
				t.Errorf("present = %v, want %v", got, tc.kept)
			}
			if _, ok, _ := s.Provenance(tc.e.Step); ok != tc.kept {
				t.Errorf("provenance present = %v, want %v", ok, tc.kept)
			}
		})
	}
	if pins, _ := s.Pins(); pins["A"] != "the paper" {
		t.Errorf("pins after prune: %v", pins)
	}
}

func TestPruneByCountAndAge(t *testing.T) {
	// Four runs a day apart, r1 the oldest and pinned.
	tests := []struct {
		name    string
		policy  PrunePolicy
		dropped []string
	}{
		{"keeping the last one drops all older but the pinned", PrunePolicy{Spare: 1}, []string{"r2", "r3"}},
		{"keeping the last three drops nothing since the fourth is pinned", PrunePolicy{Spare: 3}, nil},
		{"with both limits a run must be old and beyond the count",
			PrunePolicy{Spare: 1, Aged: 36 * time.Hour, Now: t0.Add(3 * 24 * time.Hour)}, []string{"r2"}},
		{"an age limit alone drops the old runs", PrunePolicy{Aged: 36 * time.Hour, Now: t0.Add(3 * 24 * time.Hour)}, []string{"r2"}},
		{"no limit drops no run", PrunePolicy{}, nil},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			s := newStore(t)
			var es []Entry
			for i := range 4 {
				id := fmt.Sprintf("r%d", i+1)
				e := entry(id, []byte(id))
				es = append(es, e)
				putRun(t, s, id, t0.Add(time.Duration(i)*24*time.Hour), e)
			}
			if err := s.Pin("r1", ""); err != nil {
				t.Fatal(err)
			}
			rep, err := s.Prune(tc.policy)
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(rep.Dropped, tc.dropped) {
				t.Errorf("dropped %v, want %v", rep.Dropped, tc.dropped)
			}
			runs, _ := s.Runs()
			if len(runs) != 4-len(tc.dropped) || rep.KeptRuns != len(runs) {
				t.Errorf("%d runs remain, report says %d kept", len(runs), rep.KeptRuns)
			}
			dropped := map[string]bool{}
			for _, id := range tc.dropped {
				dropped[id] = true
			}
			for i, e := range es {
				id := fmt.Sprintf("r%d", i+1)
				if present(t, s, e) == dropped[id] {
					t.Errorf("run %s's entry present=%v, dropped=%v", id, !dropped[id], dropped[id])
				}
			}
		})
	}
}

func TestPruneShrinksTheFile(t *testing.T) {
	s := newStore(t)
	var old []Entry
	for i := range 40 {
		old = append(old, entry(fmt.Sprintf("old%d", i), blob(uint64(100+i), 256<<10)))
	}
	putRun(t, s, "old", t0, old...)
	keep := entry("new", blob(1, 4096))
	putRun(t, s, "new", t0.Add(48*time.Hour), keep)

	rep, err := s.Prune(PrunePolicy{Aged: 24 * time.Hour, Now: t0.Add(49 * time.Hour)})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Results != 40 || rep.ResultBytes != 40*256<<10 {
		t.Errorf("removed %d results of %d bytes, want 40 of %d", rep.Results, rep.ResultBytes, 40*256<<10)
	}
	// 10 MiB of results went; what remains is one 4 KiB result and bbolt's pages around it.
	t.Logf("file went from %d to %d bytes", rep.FileBefore, rep.FileAfter)
	if rep.FileAfter*4 > rep.FileBefore {
		t.Errorf("file went from %d to %d bytes; want under a quarter", rep.FileBefore, rep.FileAfter)
	}
	if fi, err := os.Stat(s.Path()); err != nil || fi.Size() != rep.FileAfter {
		t.Errorf("file is %v bytes, report says %d (%v)", fi.Size(), rep.FileAfter, err)
	}
	if !present(t, s, keep) {
		t.Error("the kept run's result is gone after compaction")
	}
	if vr, err := s.Verify(); err != nil || !vr.OK() || vr.Results != 1 {
		t.Errorf("Verify after compaction: %+v, %v", vr, err)
	}
	if _, err := os.Stat(s.Path() + ".compacting"); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("the compaction's temporary file remains: %v", err)
	}
	t.Run("the store stays writable after compaction", func(t *testing.T) {
		e := entry("later", []byte("later"))
		mustCommit(t, s, e)
		if !present(t, s, e) {
			t.Error("commit after compaction lost")
		}
	})
}

func TestPruneOfAStoreNotYetWritten(t *testing.T) {
	rep, err := newStore(t).Prune(PrunePolicy{Spare: 1})
	if err != nil || !reflect.DeepEqual(rep, PruneReport{}) {
		t.Errorf("Prune = %+v, %v", rep, err)
	}
}

func TestCommitsDuringACompactionAreNotLost(t *testing.T) {
	// A commit that opened the file just before Prune renamed the compacted copy over it
	// must notice and write into the new file. The run record names every entry first, so
	// Prune keeps them all.
	s := newStore(t)
	var es []Entry
	r := Run{ID: "w", Started: t0}
	for i := range 400 {
		e := entry(fmt.Sprintf("w%d", i), blob(uint64(i), 2000))
		es = append(es, e)
		r.Steps = append(r.Steps, RunStep{StepKey: e.Step, ResultKey: e.Result})
	}
	if err := s.PutRun(r); err != nil {
		t.Fatal(err)
	}
	var done atomic.Bool
	finished := make(chan struct{})
	go func() {
		defer close(finished)
		defer done.Store(true)
		for _, e := range es {
			if err := s.Commit(e); err != nil {
				t.Error(err)
				return
			}
		}
	}()
	prunes := 0
	for ; !done.Load(); prunes++ {
		if _, err := s.Prune(PrunePolicy{}); err != nil {
			t.Fatal(err)
		}
		time.Sleep(5 * time.Millisecond) // prunes are rare; give the writer its turn
	}
	<-finished
	t.Logf("%d prunes ran during the commits", prunes)
	for i, e := range es {
		if !present(t, s, e) {
			t.Errorf("entry %d of %d committed during the prunes is lost", i, len(es))
		}
	}
}
