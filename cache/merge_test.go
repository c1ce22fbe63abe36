package cache

import (
	"bytes"
	"reflect"
	"sort"
	"testing"
	"time"
)

func TestMergeOfTwoShards(t *testing.T) {
	ours, theirs := newStore(t), newStore(t)
	shared := []byte("the same science in both shards")
	aX, bX := entry("a.x", shared), entry("b.x", shared)
	b1 := entry("b1", []byte("only in theirs"))
	sameOurs, sameTheirs := entry("same", []byte("one result")), entry("same", []byte("another result"))
	damagedThere := entry("b.c", []byte("damaged in theirs"))
	damagedHere := entry("rep", []byte("damaged in ours"))

	putRun(t, ours, "ra", t0, aX, sameOurs, damagedHere)
	putRun(t, ours, "both", t0.Add(time.Hour))
	putRun(t, theirs, "rb", t0.Add(2*time.Hour), bX, b1, sameTheirs, damagedThere, damagedHere)
	putRun(t, theirs, "both", t0.Add(3*time.Hour)) // same id, another run
	for _, p := range []struct {
		s        *Store
		id, note string
	}{{theirs, "rb", "shard 2"}, {theirs, "both", "theirs"}} {
		if err := p.s.Pin(p.id, p.note); err != nil {
			t.Fatal(err)
		}
	}
	if err := CorruptForTest(theirs.Path(), damagedThere.Result); err != nil {
		t.Fatal(err)
	}
	if err := CorruptForTest(ours.Path(), damagedHere.Result); err != nil {
		t.Fatal(err)
	}

	rep, err := ours.Merge(theirs.Path())
	if err != nil {
		t.Fatal(err)
	}
	var conflicts []string
	for _, c := range rep.Conflicts {
		conflicts = append(conflicts, c.What+" "+c.Key)
	}
	sort.Strings(conflicts)
	wantConflicts := []string{
		"result key " + damagedThere.Result.String(),
		"run both",
		"step key " + damagedThere.Step.String(),
		"step key " + sameTheirs.Step.String(),
	}
	sort.Strings(wantConflicts)
	if !reflect.DeepEqual(conflicts, wantConflicts) {
		t.Errorf("conflicts\n%v\nwant\n%v\n(%v)", conflicts, wantConflicts, rep.Conflicts)
	}
	rep.Conflicts = nil
	// Copied: results b1 and the other "same" result; step keys b.x and b1 with their
	// provenance; run rb and its pin. Repaired: our damaged result.
	want := MergeReport{Results: 2, Repaired: 1, StepKeys: 2, Provenance: 2, Runs: 1, Pins: 1}
	if !reflect.DeepEqual(rep, want) {
		t.Errorf("report %+v, want %+v", rep, want)
	}

	for _, tc := range []struct {
		name string
		e    Entry
		want bool
	}{
		{"a step key only they had is copied", b1, true},
		{"their step key on a result both hold is copied", bX, true},
		{"our step key is still there", aX, true},
		{"in a conflict our mapping is kept", sameOurs, true},
		{"their damaged entry is not copied", damagedThere, false},
		{"our damaged result is repaired from theirs", damagedHere, true},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if got := present(t, ours, tc.e); got != tc.want {
				t.Errorf("present = %v, want %v", got, tc.want)
			}
		})
	}
	t.Run("runs and pins are copied, ours kept on a clash", func(t *testing.T) {
		r, err := ours.FindRun("both")
		if err != nil || !r.Started.Equal(t0.Add(time.Hour)) {
			t.Errorf("run both = %v, %v; want ours", r.Started, err)
		}
		if _, err := ours.FindRun("rb"); err != nil {
			t.Error(err)
		}
		pins, _ := ours.Pins()
		if !reflect.DeepEqual(pins, map[string]string{"rb": "shard 2"}) {
			t.Errorf("pins = %v", pins)
		}
	})
	t.Run("provenance comes with a copied step key", func(t *testing.T) {
		prov, ok, _ := ours.Provenance(b1.Step)
		if !ok || !bytes.Equal(prov, b1.Provenance) {
			t.Errorf("provenance = %q, %v", prov, ok)
		}
		if _, ok, _ := ours.Provenance(damagedThere.Step); ok {
			t.Error("provenance of a step key not copied was copied")
		}
	})
	t.Run("merging again copies nothing new", func(t *testing.T) {
		again, err := ours.Merge(theirs.Path())
		if err != nil {
			t.Fatal(err)
		}
		if again.Results+again.StepKeys+again.Provenance+again.Runs+again.Pins+again.Repaired != 0 {
			t.Errorf("second merge: %+v", again)
		}
	})
	t.Run("the merged store verifies", func(t *testing.T) {
		if vr, err := ours.Verify(); err != nil || !vr.OK() {
			t.Errorf("Verify: %+v, %v", vr, err)
		}
	})
}

func TestMergeRefusesItself(t *testing.T) {
	s := newStore(t)
	mustCommit(t, s, entry("a", []byte("a")))
	if _, err := s.Merge(s.Path()); err == nil {
		t.Error("a store merged into itself")
	}
}

func TestMergeIntoAStoreNotYetWritten(t *testing.T) {
	ours, theirs := newStore(t), newStore(t)
	e := entry("a", []byte("a"))
	putRun(t, theirs, "r", t0, e)
	rep, err := ours.Merge(theirs.Path())
	if err != nil {
		t.Fatal(err)
	}
	if rep.Results != 1 || rep.StepKeys != 1 || rep.Runs != 1 || !present(t, ours, e) {
		t.Errorf("report %+v", rep)
	}
}
