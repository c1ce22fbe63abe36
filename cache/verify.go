package cache

import (
	"bytes"
	"crypto/sha256"
	"fmt"
	"slices"

	bolt "go.etcd.io/bbolt"
)

// scanBatchBytes bounds how many bytes of results one read transaction copies out while
// scanning the whole store, so a long scan never holds bbolt's lock for long and a run
// committing at the same time is only delayed by one batch. A variable so tests can make
// batches small.
var scanBatchBytes = 64 << 20

// VerifyReport is what Verify found.
type VerifyReport struct {
	Results int         // results checked
	Bytes   int64       // their bytes
	Corrupt []ResultKey // results whose bytes fail their checksum (or whose key is malformed)
	Missing []StepKey   // step keys whose result is not stored
}

// OK reports whether Verify found nothing wrong.
func (r VerifyReport) OK() bool { return len(r.Corrupt) == 0 && len(r.Missing) == 0 }

// Verify re-hashes every stored result and checks that every step key's result is present.
// It reads in batches, each in its own short transaction, so it can run beside a run. It
// changes nothing; DropDamaged removes what it found.
func (s *Store) Verify() (VerifyReport, error) {
	var rep VerifyReport
	// Step mappings first: a commit writes a mapping and its result together, so a mapping
	// seen now has its result stored by the time the results are scanned below.
	steps := map[StepKey]ResultKey{}
	err := s.view(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketSteps)
		if b == nil {
			return nil
		}
		return b.ForEach(func(k, v []byte) error {
			var sk StepKey
			var rk ResultKey
			copy(sk[:], k)
			copy(rk[:], v)
			if len(k) != len(sk) || len(v) != len(rk) {
				rk = ResultKey{} // malformed: reported as missing
			}
			steps[sk] = rk
			return nil
		})
	})
	if err != nil {
		return rep, err
	}
	present := map[ResultKey]bool{}
	err = s.scan(bucketResults, func(k, v []byte) {
		rep.Results++
		rep.Bytes += int64(len(v))
		var rk ResultKey
		copy(rk[:], k)
		if len(k) != len(rk) || sha256.Sum256(v) != rk {
			rep.Corrupt = append(rep.Corrupt, rk)
			return
		}
		present[rk] = true
	})
	if err != nil {
		return rep, err
	}
	corrupt := map[ResultKey]bool{}
	for _, k := range rep.Corrupt {
		corrupt[k] = true
	}
	for sk, rk := range steps {
		if !present[rk] && !corrupt[rk] {
			rep.Missing = append(rep.Missing, sk)
		}
	}
	sortKeys(rep.Missing)
	return rep, nil
}

// DropDamaged deletes what a Verify found: corrupt results, and the step keys that map to
// a corrupt or missing result, so the next run recomputes them cleanly. Each entry is checked
// again inside the write transaction, so one repaired in the meantime is kept. It returns
// the number of entries deleted.
func (s *Store) DropDamaged(r VerifyReport) (int, error) {
	if r.OK() {
		return 0, nil
	}
	dropped := 0
	err := s.update(func(tx *bolt.Tx) error {
		dropped = 0
		steps, results := tx.Bucket(bucketSteps), tx.Bucket(bucketResults)
		bad := map[ResultKey]bool{}
		for _, rk := range r.Corrupt {
			v := results.Get(rk[:])
			if v == nil || sha256.Sum256(v) == rk {
				continue
			}
			if err := results.Delete(rk[:]); err != nil {
				return err
			}
			bad[rk] = true
			dropped++
		}
		// Step keys pointing at a deleted result.
		var stale [][]byte
		c := steps.Cursor()
		for k, v := c.First(); k != nil; k, v = c.Next() {
			var rk ResultKey
			copy(rk[:], v)
			if bad[rk] {
				stale = append(stale, bytes.Clone(k))
			}
		}
		for _, sk := range r.Missing {
			if v := steps.Get(sk[:]); v != nil && (len(v) != len(ResultKey{}) || results.Get(v) == nil) {
				stale = append(stale, bytes.Clone(sk[:]))
			}
		}
		for _, k := range stale {
			if steps.Get(k) == nil {
				continue // listed twice
			}
			if err := steps.Delete(k); err != nil {
				return err
			}
			dropped++
		}
		return nil
	})
	if err != nil {
		return 0, fmt.Errorf("drop damaged entries: %w", err)
	}
	return dropped, nil
}

// scan calls fn for every entry of a bucket, reading in batches of about scanBatchBytes,
// each batch in its own read transaction. fn gets copies and runs outside any transaction.
func (s *Store) scan(bucket []byte, fn func(k, v []byte)) error {
	var after []byte
	for {
		batch, next, err := readBatch(s, bucket, after)
		if err != nil {
			return err
		}
		for _, kv := range batch {
			fn(kv.k, kv.v)
		}
		if next == nil {
			return nil
		}
		after = next
	}
}

type kv struct{ k, v []byte }

// readBatch copies entries of bucket whose key sorts after `after` (all when nil), up to
// about scanBatchBytes, and returns the last key read, or nil when the bucket is exhausted.
func readBatch(s *Store, bucket, after []byte) ([]kv, []byte, error) {
	var batch []kv
	var last []byte
	err := s.view(func(tx *bolt.Tx) error {
		batch, last = copyBatch(tx, bucket, after)
		return nil
	})
	return batch, last, err
}

func copyBatch(tx *bolt.Tx, bucket, after []byte) ([]kv, []byte) {
	b := tx.Bucket(bucket)
	if b == nil {
		return nil, nil
	}
	c := b.Cursor()
	var k, v []byte
	if after == nil {
		k, v = c.First()
	} else {
		k, v = c.Seek(after)
		if k != nil && bytes.Equal(k, after) {
			k, v = c.Next()
		}
	}
	var batch []kv
	var size int
	for ; k != nil; k, v = c.Next() {
		if size > 0 && size+len(v) > scanBatchBytes {
			return batch, bytes.Clone(batch[len(batch)-1].k)
		}
		batch = append(batch, kv{bytes.Clone(k), append([]byte{}, v...)})
		size += len(k) + len(v)
	}
	return batch, nil
}

func sortKeys[K ~[32]byte](keys []K) {
	slices.SortFunc(keys, func(a, b K) int { return bytes.Compare(a[:], b[:]) })
}
