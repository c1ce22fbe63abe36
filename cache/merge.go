package cache

import (
	"bytes"
	"crypto/sha256"
	"fmt"
	"os"

	bolt "go.etcd.io/bbolt"
)

// MergeReport says what Merge copied and what it refused.
type MergeReport struct {
	Results    int // results copied
	Repaired   int // results of ours that failed their checksum, replaced by the other's good bytes
	StepKeys   int // step key entries copied
	Provenance int // provenance records copied
	Runs       int // run records copied
	Pins       int // pins copied
	Conflicts  []Conflict
}

// Conflict is an entry Merge did not copy because the two stores disagree about it, or the
// other store's copy is damaged. The receiving store's entry is always kept.
type Conflict struct {
	What   string // "result key", "step key", "run" or "pin"
	Key    string // the key in hex, or the run id
	Reason string
}

func (c Conflict) String() string { return c.What + " " + c.Key + ": " + c.Reason }

// Merge copies into s every entry of the store at otherPath that s lacks: results, step keys,
// provenance records, runs and pins, as when gathering the stores of survey shards. An entry
// present in both with the same value is fine; with different values it is reported as a
// Conflict and ours is kept (a provenance record differing only by its times is not a
// conflict: ours is kept silently). The other store is only read.
//
// Merge copies in batches, results first and step keys after them, so an interrupted merge
// leaves s consistent, only incomplete; running it again finishes it. Like Prune it takes
// the run lock of s and fails with a *BusyError while a run holds it.
func (s *Store) Merge(otherPath string) (MergeReport, error) {
	var rep MergeReport
	ofi, err := os.Stat(otherPath)
	if err != nil {
		return rep, fmt.Errorf("merge: %w", err)
	}
	if fi, err := os.Stat(s.path); err == nil && os.SameFile(fi, ofi) {
		return rep, fmt.Errorf("merge: %s is this store itself", otherPath)
	}
	lock, err := LockRun(s.path, 0, nil)
	if err != nil {
		return rep, err
	}
	defer lock.Release()

	var h handle
	err = guarded(otherPath, func() { closeSoon(h.db, h.f) }, func() error {
		if err := openDB(otherPath, true, &h); err != nil || h.db == nil {
			return err // an error, or an empty store
		}
		err := mergeFrom(s, h.db, otherPath, &rep)
		h.db.Close()
		return err
	})
	return rep, err
}

// mergeFrom copies the entries of the other store's open database into s, bucket by bucket
// in batches.
func mergeFrom(s *Store, other *bolt.DB, otherPath string, rep *MergeReport) error {
	if err := other.View(func(tx *bolt.Tx) error { return checkFormat(tx, otherPath) }); err != nil {
		return err
	}
	for _, b := range []struct {
		name  []byte
		merge func(tx *bolt.Tx, k, v []byte) error
	}{
		{bucketResults, rep.mergeResult},
		{bucketSteps, rep.mergeStep},
		{bucketProvenance, rep.mergeProvenance},
		{bucketRuns, rep.mergeRun},
		{bucketPins, rep.mergePin},
	} {
		var after []byte
		for {
			var batch []kv
			var next []byte
			if err := other.View(func(tx *bolt.Tx) error {
				batch, next = copyBatch(tx, b.name, after)
				return nil
			}); err != nil {
				return err
			}
			if len(batch) > 0 {
				err := s.update(func(tx *bolt.Tx) error {
					for _, e := range batch {
						if err := b.merge(tx, e.k, e.v); err != nil {
							return err
						}
					}
					return nil
				})
				if err != nil {
					return fmt.Errorf("merge %s: %w", otherPath, err)
				}
			}
			if next == nil {
				break
			}
			after = next
		}
	}
	return nil
}

func (r *MergeReport) conflict(what string, key []byte, hexKey bool, reason string) {
	k := string(key)
	if hexKey {
		k = fmt.Sprintf("%x", key)
	}
	r.Conflicts = append(r.Conflicts, Conflict{What: what, Key: k, Reason: reason})
}

func (r *MergeReport) mergeResult(tx *bolt.Tx, k, v []byte) error {
	var rk ResultKey
	if len(k) != len(rk) {
		r.conflict("result key", k, true, "malformed key in the other store; not copied")
		return nil
	}
	copy(rk[:], k)
	if sha256.Sum256(v) != rk {
		r.conflict("result key", k, true, "the other store's bytes fail their checksum; not copied")
		return nil
	}
	b := tx.Bucket(bucketResults)
	ours := b.Get(k)
	switch {
	case ours == nil:
		r.Results++
	case bytes.Equal(ours, v):
		return nil
	default:
		// Both cannot hash to rk, and the other's do: ours is damaged.
		r.Repaired++
	}
	return b.Put(k, v)
}

func (r *MergeReport) mergeStep(tx *bolt.Tx, k, v []byte) error {
	b := tx.Bucket(bucketSteps)
	ours := b.Get(k)
	switch {
	case ours == nil:
		if len(k) != len(StepKey{}) || len(v) != len(ResultKey{}) {
			r.conflict("step key", k, true, "malformed entry in the other store; not copied")
			return nil
		}
		if tx.Bucket(bucketResults).Get(v) == nil {
			r.conflict("step key", k, true, fmt.Sprintf("its result %x is missing or damaged in the other store; not copied", v[:shortLen/2]))
			return nil
		}
		r.StepKeys++
		return b.Put(k, v)
	case !bytes.Equal(ours, v):
		r.conflict("step key", k, true, fmt.Sprintf("gives result %x here but %x in the other store; kept ours", ours[:min(len(ours), shortLen/2)], v[:min(len(v), shortLen/2)]))
	}
	return nil
}

func (r *MergeReport) mergeProvenance(tx *bolt.Tx, k, v []byte) error {
	b := tx.Bucket(bucketProvenance)
	if b.Get(k) != nil || tx.Bucket(bucketSteps).Get(k) == nil {
		return nil // ours is kept; or the step key itself was not copied
	}
	r.Provenance++
	return b.Put(k, v)
}

func (r *MergeReport) mergeRun(tx *bolt.Tx, k, v []byte) error {
	b := tx.Bucket(bucketRuns)
	ours := b.Get(k)
	switch {
	case ours == nil:
		r.Runs++
		return b.Put(k, v)
	case !bytes.Equal(ours, v):
		r.conflict("run", k, false, "a different run with the same id is here; kept ours")
	}
	return nil
}

func (r *MergeReport) mergePin(tx *bolt.Tx, k, v []byte) error {
	if tx.Bucket(bucketRuns).Get(k) == nil {
		return nil // the other store pins a run it does not hold
	}
	for _, c := range r.Conflicts {
		if c.What == "run" && c.Key == string(k) {
			return nil // the pin is for their run, not for ours of the same id
		}
	}
	b := tx.Bucket(bucketPins)
	ours := b.Get(k)
	switch {
	case ours == nil:
		r.Pins++
		return b.Put(k, v)
	case !bytes.Equal(ours, v):
		r.conflict("pin", k, false, "pinned here with another note; kept ours")
	}
	return nil
}
