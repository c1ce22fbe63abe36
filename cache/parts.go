package cache

import (
	"bytes"
	"crypto/sha256"

	bolt "go.etcd.io/bbolt"
)

// PartKey names one finished part of a step's work: a piece that many runs may share, such
// as one injection of an injection–recovery, whose step result changes when more pieces are
// asked for while each piece stays what it was. The engine derives it from everything the
// piece depends on.
type PartKey [32]byte

// PutPart stores a finished part under its key, with its checksum, in one transaction of
// its own: a run stopped half-way keeps the parts it finished, each whole, and nothing of
// the one it was working on. Parts are a head start only: a step's result never depends on
// whether they were found, and prune leaves them (a part is a few hundred bytes).
func (s *Store) PutPart(k PartKey, part []byte) error {
	sum := sha256.Sum256(part)
	return s.update(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketParts).Put(k[:], append(sum[:], part...))
	})
}

// Part returns a copy of the part stored under k, and false when there is none or its
// bytes fail their checksum (the part is then computed again, and its Put repairs it).
func (s *Store) Part(k PartKey) ([]byte, bool, error) {
	var part []byte
	err := s.view(func(tx *bolt.Tx) error {
		v := get(tx, bucketParts, k[:])
		if len(v) < sha256.Size {
			return nil
		}
		if sum := sha256.Sum256(v[sha256.Size:]); bytes.Equal(sum[:], v[:sha256.Size]) {
			part = bytes.Clone(v[sha256.Size:])
			if part == nil {
				part = []byte{}
			}
		}
		return nil
	})
	return part, part != nil, err
}
