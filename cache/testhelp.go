package cache

import (
	"fmt"

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
