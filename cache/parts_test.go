package cache

import (
	"path/filepath"
	"testing"

	bolt "go.etcd.io/bbolt"
)

func TestAPartComesBackWholeOrNotAtAll(t *testing.T) {
	s, err := Open(filepath.Join(t.TempDir(), "store.db"))
	if err != nil {
		t.Fatal(err)
	}
	if _, ok, err := s.Part(PartKey{1}); ok || err != nil {
		t.Fatalf("a store without the file: found %v, error %v; want neither", ok, err)
	}
	if err := s.PutPart(PartKey{1}, []byte("injection 17 recovered")); err != nil {
		t.Fatal(err)
	}
	if err := s.PutPart(PartKey{2}, nil); err != nil {
		t.Fatal(err)
	}
	got, ok, err := s.Part(PartKey{1})
	if !ok || err != nil || string(got) != "injection 17 recovered" {
		t.Errorf("part 1: %q, %v, %v", got, ok, err)
	}
	if got, ok, _ := s.Part(PartKey{2}); !ok || got == nil || len(got) != 0 {
		t.Errorf("an empty part: %q, %v; want found and empty", got, ok)
	}
	// One flipped byte of the part: its checksum fails, and it is as if it were not there.
	if err := s.update(func(tx *bolt.Tx) error {
		b, k := tx.Bucket(bucketParts), PartKey{1}
		v := append([]byte{}, b.Get(k[:])...)
		v[len(v)-1] ^= 1
		return b.Put(k[:], v)
	}); err != nil {
		t.Fatal(err)
	}
	if got, ok, err := s.Part(PartKey{1}); ok || err != nil {
		t.Errorf("a damaged part came back: %q, %v, %v", got, ok, err)
	}
	if st, err := s.Stats(); err != nil || st.Parts != 2 {
		t.Errorf("stats count %d parts (%v), want 2", st.Parts, err)
	}
}
