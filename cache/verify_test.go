package cache

import (
	"reflect"
	"testing"

	bolt "go.etcd.io/bbolt"
)

// deleteResultForTest removes a result's bytes, leaving the step keys that map to it, as an
// interrupted copy by hand might.
func deleteResultForTest(t *testing.T, s *Store, k ResultKey) {
	t.Helper()
	if err := s.update(func(tx *bolt.Tx) error { return tx.Bucket(bucketResults).Delete(k[:]) }); err != nil {
		t.Fatal(err)
	}
}

func TestVerifyFindsDamageAndDropDamagedRemovesIt(t *testing.T) {
	s := newStore(t)
	good := entry("good", []byte("good"))
	hurt := entry("hurt", blob(5, 5000))
	hurtToo := entry("hurt.too", hurt.Data) // a second step key on the damaged result
	lost := entry("lost", []byte("lost"))
	mustCommit(t, s, good, hurt, hurtToo, lost)
	if err := CorruptForTest(s.Path(), hurt.Result); err != nil {
		t.Fatal(err)
	}
	deleteResultForTest(t, s, lost.Result)

	rep, err := s.Verify()
	if err != nil {
		t.Fatal(err)
	}
	want := VerifyReport{
		Results: 2,
		Bytes:   int64(len(good.Data) + len(hurt.Data)),
		Corrupt: []ResultKey{hurt.Result},
		Missing: []StepKey{lost.Step},
	}
	if !reflect.DeepEqual(rep, want) {
		t.Fatalf("Verify = %+v\nwant %+v", rep, want)
	}
	if rep.OK() {
		t.Error("OK() is true for a damaged store")
	}

	n, err := s.DropDamaged(rep)
	if err != nil {
		t.Fatal(err)
	}
	// The corrupt result, the two step keys on it and the step key of the lost result.
	if n != 4 {
		t.Errorf("DropDamaged removed %d entries, want 4", n)
	}
	for _, tc := range []struct {
		name  string
		e     Entry
		found bool
	}{
		{"the intact entry is still found", good, true},
		{"a step key on the corrupt result is now a clean miss", hurt, false},
		{"the other step key on it is a miss too", hurtToo, false},
		{"the step key of the lost result is a miss", lost, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if _, ok, err := s.Lookup(tc.e.Step); ok != tc.found || err != nil {
				t.Errorf("Lookup found=%v err=%v, want found=%v", ok, err, tc.found)
			}
		})
	}
	if rep, err := s.Verify(); err != nil || !rep.OK() {
		t.Errorf("Verify after DropDamaged: %+v, %v", rep, err)
	}
}

func TestDropDamagedKeepsAnEntryRepairedMeanwhile(t *testing.T) {
	s := newStore(t)
	e := entry("fit.main", []byte("posterior"))
	mustCommit(t, s, e)
	if err := CorruptForTest(s.Path(), e.Result); err != nil {
		t.Fatal(err)
	}
	rep, err := s.Verify()
	if err != nil || len(rep.Corrupt) != 1 {
		t.Fatalf("Verify = %+v, %v", rep, err)
	}
	mustCommit(t, s, e) // a run recomputed it between Verify and DropDamaged
	if n, err := s.DropDamaged(rep); n != 0 || err != nil {
		t.Errorf("DropDamaged = %d, %v; want nothing removed", n, err)
	}
	if !present(t, s, e) {
		t.Error("the repaired entry was removed")
	}
}

func TestVerifyScansInSeveralBatches(t *testing.T) {
	defer func(n int) { scanBatchBytes = n }(scanBatchBytes)
	scanBatchBytes = 2500 // two 1000-byte results per batch
	s := newStore(t)
	var es []Entry
	for i := range 7 {
		es = append(es, entry(string(rune('a'+i)), blob(uint64(i), 1000)))
	}
	mustCommit(t, s, es...)
	for _, i := range []int{0, 3, 6} { // first, middle and last batch
		if err := CorruptForTest(s.Path(), es[i].Result); err != nil {
			t.Fatal(err)
		}
	}
	batches := 0
	for after := []byte(nil); ; batches++ {
		_, next, err := readBatch(s, bucketResults, after)
		if err != nil {
			t.Fatal(err)
		}
		if next == nil {
			batches++
			break
		}
		after = next
	}
	if batches != 4 {
		t.Errorf("7 results read in %d batches, want 4", batches)
	}
	rep, err := s.Verify()
	if err != nil {
		t.Fatal(err)
	}
	want := []ResultKey{es[0].Result, es[3].Result, es[6].Result}
	sortKeys(want)
	sortKeys(rep.Corrupt)
	if rep.Results != 7 || rep.Bytes != 7000 || !reflect.DeepEqual(rep.Corrupt, want) || len(rep.Missing) != 0 {
		t.Errorf("Verify = %d results, %d bytes, corrupt %v, missing %v", rep.Results, rep.Bytes, rep.Corrupt, rep.Missing)
	}
}
