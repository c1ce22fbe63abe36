package cache

import (
	"fmt"
	"os"

	bolt "go.etcd.io/bbolt"
)

// CorruptForTest damages the stored bytes of result k in place (it flips the bits of the
// first byte, or stores one byte for an empty result), as a failing disk might. It exists
// for tests of the store and of the engine's recovery; dipline itself never calls it.
func CorruptForTest(path string, k ResultKey) error {
	s := &Store{path: path}
	return s.update(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketResults)
		v := b.Get(k[:])
		if v == nil {
			return fmt.Errorf("corrupt result %s: %w", k.Short(), ErrMissing)
		}
		bad := append([]byte{}, v...)
		if len(bad) == 0 {
			bad = []byte{0}
		} else {
			bad[0] ^= 0xff
		}
		return b.Put(k[:], bad)
	})
}

// PageDamage names the field of a page header that DamagePageForTest spoils.
type PageDamage int

// The fields of a page header (fileformat.go).
const (
	DamageID    PageDamage = iota // the page's own id
	DamageKind                    // its kind (branch, leaf, …)
	DamageCount                   // its number of elements
)

// DamagePageForTest flips the bits of one byte of a field in the header of the first page
// of a bucket's tree ("steps", "results", "provenance", "runs"), as a failing disk might,
// and returns the page's id. It exists for tests of damaged stores; dipline never calls it.
func DamagePageForTest(path, bucket string, what PageDamage) (uint64, error) {
	f, err := os.OpenFile(path, os.O_RDWR, 0)
	if err != nil {
		return 0, err
	}
	defer f.Close()
	fi, err := f.Stat()
	if err != nil {
		return 0, err
	}
	l, err := checkLayout(f, fi.Size())
	if err != nil {
		return 0, err
	}
	w := newWalker(&pageReader{r: f, pageSize: l.pageSize, pages: l.pages()}, func(PageProblem) {})
	ref, ok := w.buckets(l.meta.root)[bucket]
	if !ok || ref.root == 0 {
		return 0, fmt.Errorf("bucket %q has no page of its own to damage", bucket)
	}
	at := int64(ref.root)*l.pageSize + []int64{0, 8, 10}[what]
	b := make([]byte, 1)
	if _, err := f.ReadAt(b, at); err != nil {
		return 0, err
	}
	b[0] ^= 0xff
	if _, err := f.WriteAt(b, at); err != nil {
		return 0, err
	}
	return ref.root, f.Sync()
}

// CorruptInPlaceForTest flips the bits of the first byte of result k where it lies in the
// file, as a failing disk would, leaving no intact copy elsewhere in the file (CorruptForTest
// rewrites the value, and bbolt keeps the old page until it is reused). For tests of
// salvage; dipline never calls it.
func CorruptInPlaceForTest(path string, k ResultKey) error {
	f, err := os.OpenFile(path, os.O_RDWR, 0)
	if err != nil {
		return err
	}
	defer f.Close()
	fi, err := f.Stat()
	if err != nil {
		return err
	}
	inv := readInventory(f, fi.Size(), false)
	for _, e := range inv.results {
		if key, err := e.key(); err == nil && ResultKey(key) == k && e.valLen > 0 {
			b := make([]byte, 1)
			if _, err := f.ReadAt(b, e.valAt); err != nil {
				return err
			}
			b[0] ^= 0xff
			if _, err := f.WriteAt(b, e.valAt); err != nil {
				return err
			}
			return f.Sync()
		}
	}
	return fmt.Errorf("corrupt result %s: %w", k.Short(), ErrMissing)
}

// PutRawForTest stores value under key in a bucket as it is, bypassing every check, as a
// record written by a faulty program or damaged on disk would be. For tests of what reads
// records; dipline never calls it.
func PutRawForTest(path, bucket string, key, value []byte) error {
	s := &Store{path: path}
	return s.update(func(tx *bolt.Tx) error { return tx.Bucket([]byte(bucket)).Put(key, value) })
}
