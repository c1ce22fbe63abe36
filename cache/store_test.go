package cache

import (
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	bolt "go.etcd.io/bbolt"
)

// newStore opens a store in a fresh temporary folder.
func newStore(t testing.TB) *Store {
	t.Helper()
	s, err := Open(filepath.Join(t.TempDir(), "shards", "store.db"))
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// stepKey makes a step key from a name; the store never looks inside step keys.
func stepKey(name string) StepKey { return sha256.Sum256([]byte("step:" + name)) }

// entry makes a consistent Entry for step name with data and a small provenance record.
func entry(name string, data []byte) Entry {
	return Entry{Step: stepKey(name), Result: ResultKeyOf(data), Data: data, Provenance: []byte("made by " + name)}
}

// blob returns n deterministic bytes seeded by seed (their content does not matter, only
// that different seeds give different bytes).
func blob(seed uint64, n int) []byte {
	b := make([]byte, n)
	x := seed*0x9e3779b97f4a7c15 + 1
	for i := 0; i+8 <= n; i += 8 {
		x ^= x << 13
		x ^= x >> 7
		x ^= x << 17
		binary.LittleEndian.PutUint64(b[i:], x)
	}
	return b
}

func mustCommit(t testing.TB, s *Store, es ...Entry) {
	t.Helper()
	if err := s.Commit(es...); err != nil {
		t.Fatal(err)
	}
}

func TestCommitLookupGetRoundTrip(t *testing.T) {
	tests := []struct {
		name string
		data []byte
	}{
		{"a short result comes back byte for byte", []byte("periodogram")},
		{"an empty result comes back empty", []byte{}},
		{"a result larger than a page comes back byte for byte", blob(1, 3<<20)},
	}
	s := newStore(t)
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			e := entry(tc.name, tc.data)
			mustCommit(t, s, e)
			rk, ok, err := s.Lookup(e.Step)
			if err != nil || !ok || rk != e.Result {
				t.Fatalf("Lookup = %s, %v, %v; want %s", rk.Short(), ok, err, e.Result.Short())
			}
			got, err := s.Get(rk)
			if err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(got, tc.data) {
				t.Errorf("Get returned %d bytes differing from the %d committed", len(got), len(tc.data))
			}
			prov, ok, err := s.Provenance(e.Step)
			if err != nil || !ok || string(prov) != string(e.Provenance) {
				t.Errorf("Provenance = %q, %v, %v", prov, ok, err)
			}
		})
	}
}

func TestAFreshStoreIsEmptyAndReadsCreateNoFile(t *testing.T) {
	s := newStore(t)
	if _, ok, err := s.Lookup(stepKey("x")); ok || err != nil {
		t.Errorf("Lookup on an empty store: ok=%v err=%v", ok, err)
	}
	if _, err := s.Get(ResultKeyOf(nil)); !errors.Is(err, ErrMissing) {
		t.Errorf("Get on an empty store: %v, want ErrMissing", err)
	}
	if _, ok, err := s.Provenance(stepKey("x")); ok || err != nil {
		t.Errorf("Provenance on an empty store: ok=%v err=%v", ok, err)
	}
	st, err := s.Stats()
	if err != nil || st != (Stats{}) {
		t.Errorf("Stats = %+v, %v; want zero", st, err)
	}
	runs, err := s.Runs()
	if err != nil || len(runs) != 0 {
		t.Errorf("Runs = %v, %v", runs, err)
	}
	if _, err := os.Stat(s.Path()); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("reading created the database file: %v", err)
	}
}

func TestAResultSharedByTwoStepsIsStoredOnce(t *testing.T) {
	s := newStore(t)
	data := blob(7, 100_000)
	mustCommit(t, s, entry("detrend.a", data))
	mustCommit(t, s, entry("detrend.b", data))
	st, err := s.Stats()
	if err != nil {
		t.Fatal(err)
	}
	want := Stats{StepKeys: 2, Results: 1, ResultBytes: int64(len(data)), Provenance: 2, FileBytes: st.FileBytes}
	if st != want {
		t.Errorf("Stats = %+v, want %+v", st, want)
	}
	for _, name := range []string{"detrend.a", "detrend.b"} {
		if rk, ok, _ := s.Lookup(stepKey(name)); !ok || rk != ResultKeyOf(data) {
			t.Errorf("%s maps to %s, %v", name, rk.Short(), ok)
		}
	}
}

func TestCorruptionIsDetectedAndRepairedByRecomputation(t *testing.T) {
	s := newStore(t)
	e := entry("fit.main", blob(3, 10_000))
	mustCommit(t, s, e)
	if err := CorruptForTest(s.Path(), e.Result); err != nil {
		t.Fatal(err)
	}
	if _, err := s.Get(e.Result); !errors.Is(err, ErrCorrupt) {
		t.Fatalf("Get of a damaged result: %v, want ErrCorrupt", err)
	}
	mustCommit(t, s, e) // the engine recomputed the same bytes
	got, err := s.Get(e.Result)
	if err != nil || !bytes.Equal(got, e.Data) {
		t.Fatalf("after recommitting: %d bytes, %v", len(got), err)
	}
}

func TestCommitRefusesDataThatDoNotHashToTheirKey(t *testing.T) {
	s := newStore(t)
	good := entry("good", []byte("good bytes"))
	bad := entry("bad", []byte("claimed bytes"))
	bad.Data = []byte("other bytes")
	err := s.Commit(good, bad)
	if err == nil {
		t.Fatal("Commit accepted data with the wrong key")
	}
	if !strings.Contains(err.Error(), "entry 2") {
		t.Errorf("error %q does not name the entry", err)
	}
	t.Run("and nothing of the same commit is stored", func(t *testing.T) {
		if _, ok, _ := s.Lookup(good.Step); ok {
			t.Error("the good entry of a refused commit was stored")
		}
	})
}

func TestCommitKeepsExistingProvenanceWhenGivenNone(t *testing.T) {
	s := newStore(t)
	e := entry("search.periodic", []byte("x"))
	mustCommit(t, s, e)
	e.Provenance = nil
	mustCommit(t, s, e)
	if prov, ok, _ := s.Provenance(e.Step); !ok || string(prov) != "made by search.periodic" {
		t.Errorf("provenance = %q, %v", prov, ok)
	}
}

func TestAStoreOfAnotherFormatIsRefused(t *testing.T) {
	s := newStore(t)
	mustCommit(t, s, entry("a", []byte("a")))
	err := s.withDB(false, func(db *bolt.DB) error {
		return db.Update(func(tx *bolt.Tx) error { return tx.Bucket(bucketMeta).Put(keyFormat, []byte("dipline store 99")) })
	})
	if err != nil {
		t.Fatal(err)
	}
	if _, _, err := s.Lookup(stepKey("a")); err == nil || !strings.Contains(err.Error(), "dipline store 99") {
		t.Errorf("Lookup in a store of another format: %v", err)
	}
}

func TestOpenRefusesAFolder(t *testing.T) {
	if _, err := Open(t.TempDir()); err == nil {
		t.Error("Open accepted a folder as the database file")
	}
}

// benchmarkMB is the size of the benchmarks' result: 1 MB, a long light curve's worth.
const benchmarkMB = 1 << 20

func BenchmarkCommit1MB(b *testing.B) {
	s := newStore(b)
	data := blob(11, benchmarkMB)
	b.SetBytes(benchmarkMB)
	for i := 0; b.Loop(); i++ {
		binary.LittleEndian.PutUint64(data, uint64(i)) // a new result each time
		if err := s.Commit(entry("bench", data)); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkGet1MB(b *testing.B) {
	s := newStore(b)
	e := entry("bench", blob(12, benchmarkMB))
	mustCommit(b, s, e)
	b.SetBytes(benchmarkMB)
	for b.Loop() {
		if _, err := s.Get(e.Result); err != nil {
			b.Fatal(err)
		}
	}
}
