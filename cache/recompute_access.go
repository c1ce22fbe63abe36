package cache

import (
	"bytes"
	"slices"

	bolt "go.etcd.io/bbolt"
)

// StepEntry is what the store holds under one step key: the result key it maps to and the
// engine's provenance record. The engine reads them together to check that a mapping
// agrees with its provenance before it recomputes the step.
type StepEntry struct {
	Step StepKey
	// Result is the result key the step key maps to; Mapped says whether it maps to one.
	Result ResultKey
	Mapped bool
	// Malformed is set when the mapping's key or value, or the provenance record's key,
	// has the wrong length; Step and Result then hold the bytes that fitted.
	Malformed bool
	// Provenance is a copy of the provenance record, or nil when there is none.
	Provenance []byte
}

// StepEntries returns every step key that has a mapping or a provenance record, in key
// order. It reads the mappings first, in one transaction, and the provenance records after
// them in batches as Verify reads results, so a mapping committed meanwhile is seen with
// its record and a long read never holds the file for long. It changes nothing.
func (s *Store) StepEntries() ([]StepEntry, error) {
	byKey := map[StepKey]*StepEntry{}
	err := s.view(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketSteps)
		if b == nil {
			return nil
		}
		return b.ForEach(func(k, v []byte) error {
			e := &StepEntry{Mapped: true, Malformed: len(k) != len(StepKey{}) || len(v) != len(ResultKey{})}
			copy(e.Step[:], k)
			copy(e.Result[:], v)
			byKey[e.Step] = e
			return nil
		})
	})
	if err != nil {
		return nil, err
	}
	err = s.scan(bucketProvenance, func(k, v []byte) {
		var sk StepKey
		copy(sk[:], k)
		e := byKey[sk]
		if e == nil {
			e = &StepEntry{Step: sk}
			byKey[sk] = e
		}
		e.Malformed = e.Malformed || len(k) != len(sk)
		e.Provenance = v // scan hands over copies
	})
	if err != nil {
		return nil, err
	}
	out := make([]StepEntry, 0, len(byKey))
	for _, e := range byKey {
		out = append(out, *e)
	}
	sortEntries(out)
	return out, nil
}

func sortEntries(list []StepEntry) {
	slices.SortFunc(list, func(a, b StepEntry) int { return bytes.Compare(a.Step[:], b.Step[:]) })
}
