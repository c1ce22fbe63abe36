package cache

import (
	"bytes"
	"encoding/hex"
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
// dropped (it is older than Aged and not among the Spare newest), so a policy never drops
// more than either limit alone. With neither set no run is dropped, and Prune only removes
// entries no run refers to and compacts the file. A pinned run is never dropped, nor an
// interrupted one younger than SpareInterrupted.
type PrunePolicy struct {
	Aged  time.Duration // drop runs started more than this before Now; 0: no age limit
	Spare int           // never drop the Spare most recently started runs; 0: no count limit
	// SpareInterrupted: a run whose record is still under way (during a prune no run is
	// live, so it was interrupted) and that started less than this before Now is never
	// dropped, so the results it stored wait for the run that finishes its work.
	SpareInterrupted time.Duration
	Now              time.Time // the time ages are measured from; zero means time.Now()
}

// PruneReport says what Prune removed and what it kept that a policy alone would not.
type PruneReport struct {
	Dropped  []string // ids of the runs dropped, oldest first
	KeptRuns int      // runs remaining (pinned ones included)
	// Spared lists the interrupted runs the policy selected but SpareInterrupted kept,
	// oldest first.
	Spared []string
	// Unreadable lists the run records that cannot be read: each is kept, and so is every
	// entry whose key can still be made out in its bytes.
	Unreadable  []BadRecord
	StepKeys    int   // step key entries deleted
	Provenance  int   // provenance records deleted
	Results     int   // results deleted
	ResultBytes int64 // their bytes
	FileBefore  int64 // database file size before, in bytes
	FileAfter   int64 // and after compaction
}

// Prune drops the runs the policy selects (never a pinned one, nor an interrupted one
// younger than the policy's SpareInterrupted), deletes every step key, provenance record
// and result that no remaining run refers to, and compacts the file (bbolt never shrinks a
// file by itself): it copies the store into a new file, syncs it and renames it over the
// old one. A run record that cannot be read does not stop it: the record is kept with
// every entry it still names, and reported.
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
	var h handle
	release := func() {
		closeSoon(h.db, h.f)
		os.Remove(s.path + ".compacting")
	}
	err = guarded(s.path, release, func() error { return s.pruneAndCompact(p, fi.Mode().Perm(), &h, &rep) })
	return rep, err
}

func (s *Store) pruneAndCompact(p PrunePolicy, perm os.FileMode, h *handle, rep *PruneReport) error {
	if err := openDB(s.path, false, h); err != nil {
		return err
	}
	err := s.pruneOpen(p, perm, h.db, rep)
	if cerr := h.db.Close(); err == nil && cerr != nil {
		err = fmt.Errorf("prune %s: %w", s.path, cerr)
	}
	return err
}

// pruneOpen prunes and compacts the database db, which the caller opened and closes.
func (s *Store) pruneOpen(p PrunePolicy, perm os.FileMode, db *bolt.DB, rep *PruneReport) error {
	err := db.Update(func(tx *bolt.Tx) error {
		*rep = PruneReport{FileBefore: rep.FileBefore}
		if err := prepare(tx, s.path); err != nil {
			return err
		}
		return pruneTx(tx, p, rep)
	})
	if err != nil {
		return fmt.Errorf("prune %s: %w", s.path, err)
	}
	// Compact while still holding bbolt's lock on the old file, so nobody writes to it
	// between the copy and the rename (openDB re-opens a file replaced under it).
	if err := compactInto(db, s.path, perm); err != nil {
		return fmt.Errorf("prune %s: compaction failed (the pruned store is intact, only not smaller): %w", s.path, err)
	}
	if fi, err := os.Stat(s.path); err == nil {
		rep.FileAfter = fi.Size()
	}
	return nil
}

// keepSet is what the remaining runs refer to.
type keepSet struct {
	steps   map[StepKey]bool
	results map[ResultKey]bool
}

func (k keepSet) run(r Run) {
	for _, st := range r.Steps {
		k.steps[st.StepKey] = true
		if !st.ResultKey.IsZero() {
			k.results[st.ResultKey] = true
		}
	}
}

// hexKeys keeps every key named in an unreadable record, as a step key and as a result key
// (the record cannot say which it was).
func (k keepSet) hexKeys(keys []string) {
	for _, h := range keys {
		var b [32]byte
		if _, err := hex.Decode(b[:], []byte(h)); err == nil {
			k.steps[b] = true
			k.results[b] = true
		}
	}
}

// selectRuns decides which runs the policy drops; the others' entries are kept.
func selectRuns(tx *bolt.Tx, p PrunePolicy, rep *PruneReport, keep keepSet) error {
	runs, bad := readRuns(tx)
	pins, err := readPins(tx)
	if err != nil {
		return err
	}
	for _, b := range bad {
		rep.Unreadable = append(rep.Unreadable, b)
		rep.KeptRuns++
		keep.hexKeys(b.Keys)
	}
	limited := p.Aged > 0 || p.Spare > 0
	for i, r := range runs {
		newer := len(runs) - 1 - i // runs started after this one
		age := p.Now.Sub(r.Started)
		old := p.Aged > 0 && age > p.Aged
		beyond := p.Spare > 0 && newer >= p.Spare
		drop := limited && (old || p.Aged == 0) && (beyond || p.Spare == 0)
		_, pinned := pins[r.ID]
		spared := drop && !pinned && !r.HasEnded() && age < p.SpareInterrupted
		if drop && !pinned && !spared {
			if err := tx.Bucket(bucketRuns).Delete([]byte(r.ID)); err != nil {
				return err
			}
			rep.Dropped = append(rep.Dropped, r.ID)
			continue
		}
		if spared {
			rep.Spared = append(rep.Spared, r.ID)
		}
		rep.KeptRuns++
		keep.run(r)
	}
	return nil
}

func pruneTx(tx *bolt.Tx, p PrunePolicy, rep *PruneReport) error {
	keep := keepSet{steps: map[StepKey]bool{}, results: map[ResultKey]bool{}}
	if err := selectRuns(tx, p, rep, keep); err != nil {
		return err
	}
	keepSteps, keepResults := keep.steps, keep.results

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
