package cache

import (
	"bytes"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"time"

	bolt "go.etcd.io/bbolt"
)

// compactTxBytes bounds one transaction of the compaction's copy, so that compacting a large
// store does not hold all of it in memory at once.
const compactTxBytes = 64 << 20

// PrunePolicy says which runs Prune drops. With both limits set a run must match both to be
// dropped (it is older than OlderThan and not among the KeepLast newest), so a policy never
// drops more than either limit alone. With neither set no run is dropped, and Prune only
// removes entries no run refers to and compacts the file. A pinned run is never dropped.
type PrunePolicy struct {
	OlderThan time.Duration // drop runs started more than this before Now; 0: no age limit
	KeepLast  int           // drop all but the KeepLast most recently started runs; 0: no count limit
	Now       time.Time     // the time ages are measured from; zero means time.Now()
}

// PruneReport says what Prune removed.
type PruneReport struct {
	Dropped     []string // ids of the runs dropped, oldest first
	KeptRuns    int      // runs remaining (pinned ones included)
	StepKeys    int      // step key entries deleted
	Provenance  int      // provenance records deleted
	Results     int      // results deleted
	ResultBytes int64    // their bytes
	FileBefore  int64    // database file size before, in bytes
	FileAfter   int64    // and after compaction
}

// Prune drops the runs the policy selects (never a pinned one), deletes every step key,
// provenance record and result that no remaining run refers to, and compacts the file
// (bbolt never shrinks a file by itself): it copies the store into a new file, syncs it and
// renames it over the old one.
//
// Prune takes the store's run lock for its whole duration and fails at once with a
// *BusyError if a run holds it: entries a run has committed but not yet recorded in its run
// record would otherwise look unreferenced.
func (s *Store) Prune(p PrunePolicy) (PruneReport, error) {
	var rep PruneReport
	lock, err := LockRun(s.path, 0, nil)
	if err != nil {
		return rep, err
	}
	defer lock.Release()

	fi, err := os.Stat(s.path)
	if errors.Is(err, os.ErrNotExist) {
		return rep, nil
	} else if err != nil {
		return rep, err
	}
	rep.FileBefore = fi.Size()
	if p.Now.IsZero() {
		p.Now = time.Now()
	}

	db, err := openDB(s.path, false)
	if err != nil {
		return rep, err
	}
	defer db.Close()
	err = db.Update(func(tx *bolt.Tx) error {
		rep = PruneReport{FileBefore: rep.FileBefore}
		if err := prepare(tx, s.path); err != nil {
			return err
		}
		return pruneTx(tx, p, &rep)
	})
	if err != nil {
		return rep, fmt.Errorf("prune %s: %w", s.path, err)
	}
	// Compact while still holding bbolt's lock on the old file, so nobody writes to it
	// between the copy and the rename (openDB re-opens a file replaced under it).
	if err := compactInto(db, s.path, fi.Mode().Perm()); err != nil {
		return rep, fmt.Errorf("prune %s: compaction failed (the pruned store is intact, only not smaller): %w", s.path, err)
	}
	if fi, err := os.Stat(s.path); err == nil {
		rep.FileAfter = fi.Size()
	}
	return rep, nil
}

func pruneTx(tx *bolt.Tx, p PrunePolicy, rep *PruneReport) error {
	runs, err := readRuns(tx)
	if err != nil {
		return err
	}
	pins, err := readPins(tx)
	if err != nil {
		return err
	}
	keepSteps := map[StepKey]bool{}
	keepResults := map[ResultKey]bool{}
	for i, r := range runs {
		newer := len(runs) - 1 - i // runs started after this one
		old := p.OlderThan > 0 && p.Now.Sub(r.Started) > p.OlderThan
		beyond := p.KeepLast > 0 && newer >= p.KeepLast
		limited := p.OlderThan > 0 || p.KeepLast > 0
		drop := limited && (old || p.OlderThan == 0) && (beyond || p.KeepLast == 0)
		if _, pinned := pins[r.ID]; drop && !pinned {
			if err := tx.Bucket(bucketRuns).Delete([]byte(r.ID)); err != nil {
				return err
			}
			rep.Dropped = append(rep.Dropped, r.ID)
			continue
		}
		rep.KeptRuns++
		for _, st := range r.Steps {
			keepSteps[st.StepKey] = true
			if !st.ResultKey.IsZero() {
				keepResults[st.ResultKey] = true
			}
		}
	}

	steps := tx.Bucket(bucketSteps)
	var dead [][]byte
	c := steps.Cursor()
	for k, v := c.First(); k != nil; k, v = c.Next() {
		var sk StepKey
		copy(sk[:], k)
		if len(k) == len(sk) && keepSteps[sk] {
			var rk ResultKey
			copy(rk[:], v)
			keepResults[rk] = true
			continue
		}
		dead = append(dead, bytes.Clone(k))
	}
	if err := deleteAll(steps, dead); err != nil {
		return err
	}
	rep.StepKeys = len(dead)

	prov := tx.Bucket(bucketProvenance)
	dead = dead[:0]
	c = prov.Cursor()
	for k, _ := c.First(); k != nil; k, _ = c.Next() {
		var sk StepKey
		copy(sk[:], k)
		if len(k) != len(sk) || !keepSteps[sk] {
			dead = append(dead, bytes.Clone(k))
		}
	}
	if err := deleteAll(prov, dead); err != nil {
		return err
	}
	rep.Provenance = len(dead)

	results := tx.Bucket(bucketResults)
	dead = dead[:0]
	c = results.Cursor()
	for k, v := c.First(); k != nil; k, v = c.Next() {
		var rk ResultKey
		copy(rk[:], k)
		if len(k) != len(rk) || !keepResults[rk] {
			dead = append(dead, bytes.Clone(k))
			rep.ResultBytes += int64(len(v))
		}
	}
	if err := deleteAll(results, dead); err != nil {
		return err
	}
	rep.Results = len(dead)
	return nil
}

func deleteAll(b *bolt.Bucket, keys [][]byte) error {
	for _, k := range keys {
		if err := b.Delete(k); err != nil {
			return err
		}
	}
	return nil
}

// compactInto copies src into a new file beside path, syncs it and renames it over path.
// The caller holds src open (and so bbolt's lock on the old file) throughout.
func compactInto(src *bolt.DB, path string, perm os.FileMode) error {
	tmp := path + ".compacting"
	if err := os.Remove(tmp); err != nil && !errors.Is(err, os.ErrNotExist) {
		return err
	}
	dst, err := bolt.Open(tmp, perm, &bolt.Options{Timeout: openTimeout})
	if err != nil {
		return err
	}
	if err := bolt.Compact(dst, src, compactTxBytes); err != nil {
		dst.Close()
		os.Remove(tmp)
		return err
	}
	if err := dst.Close(); err != nil {
		os.Remove(tmp)
		return err
	}
	// Each commit of the copy was already synced; sync the whole file once more before it
	// takes the old one's name, so a crash leaves either the old store or the complete new one.
	if err := syncFile(tmp); err != nil {
		os.Remove(tmp)
		return err
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return err
	}
	return syncFile(filepath.Dir(path))
}

func syncFile(path string) error {
	f, err := os.Open(path)
	if err != nil {
		return err
	}
	err = f.Sync()
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	return err
}
