package cache

import (
	"bytes"
	"crypto/sha256"
	"errors"
	"fmt"
	"os"
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
	// Layout says what is wrong with the file's header pages or size ("" when nothing),
	// and Pages lists damaged pages: damage only Salvage can get round, since bbolt
	// cannot read past it. When either is set, the counts above cover what still reads.
	Layout string
	Pages  []PageProblem
	// BadRecords are run records that do not read; the engine adds the provenance
	// records that do not read (the store cannot judge them) before DropDamaged.
	BadRecords []BadRecord
	// Disagreeing are step keys whose mapping the engine found at odds with their
	// provenance (a result the provenance does not name, no provenance at all); the engine
	// adds them, and DropDamaged deletes their mapping and provenance so the next run
	// computes those steps afresh.
	Disagreeing []StepKey
}

// OK reports whether Verify found nothing wrong.
func (r VerifyReport) OK() bool {
	return len(r.Corrupt) == 0 && len(r.Missing) == 0 && !r.FileDamaged() && len(r.BadRecords) == 0 && len(r.Disagreeing) == 0
}

// FileDamaged reports whether the file's layout or pages are damaged, which DropDamaged
// cannot mend.
func (r VerifyReport) FileDamaged() bool { return r.Layout != "" || len(r.Pages) > 0 }

// Verify checks the file's layout and every page of its tree with dipline's own reader,
// re-hashes every stored result, checks that every step key's result is present and that
// every run record reads. On a sound file it reads through bbolt in batches, each in its
// own short transaction, so it can run beside a run; on a damaged one it reads what it
// can with its own reader instead and reports the damage. It changes nothing; DropDamaged
// removes what it found, and Salvage gets round damaged pages.
func (s *Store) Verify() (VerifyReport, error) {
	var rep VerifyReport
	if dr, err := s.verifyDamaged(); err != nil || dr != nil {
		if dr != nil {
			rep = *dr
		}
		return rep, err
	}
	// Step mappings first: a commit writes a mapping and its result together, so a mapping
	// seen now has its result stored by the time the results are scanned below.
	steps := map[StepKey]ResultKey{}
	err := s.view(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketSteps)
		if b == nil {
			return nil
		}
		return b.ForEach(func(k, v []byte) error {
			steps[stepKeyOf(k)] = mappedTo(k, v)
			return nil
		})
	})
	if err != nil {
		return rep, err
	}
	present := map[ResultKey]bool{}
	err = s.scan(bucketResults, func(k, v []byte) { rep.result(k, v, present) })
	if err != nil {
		return rep, err
	}
	rep.missing(steps, present)
	_, rep.BadRecords, err = s.RunRecords()
	return rep, err
}

// stepKeyOf and mappedTo read one step mapping; a malformed one maps to the zero key, which
// is reported as missing.
func stepKeyOf(k []byte) StepKey {
	var sk StepKey
	copy(sk[:], k)
	return sk
}

func mappedTo(k, v []byte) ResultKey {
	var rk ResultKey
	if len(k) != len(StepKey{}) || len(v) != len(rk) {
		return rk
	}
	copy(rk[:], v)
	return rk
}

// result re-hashes one stored result.
func (r *VerifyReport) result(k, v []byte, present map[ResultKey]bool) {
	r.Results++
	r.Bytes += int64(len(v))
	var rk ResultKey
	copy(rk[:], k)
	if len(k) != len(rk) || sha256.Sum256(v) != rk {
		r.Corrupt = append(r.Corrupt, rk)
		return
	}
	present[rk] = true
}

// missing lists the step keys whose result is neither present nor corrupt.
func (r *VerifyReport) missing(steps map[StepKey]ResultKey, present map[ResultKey]bool) {
	corrupt := map[ResultKey]bool{}
	for _, k := range r.Corrupt {
		corrupt[k] = true
	}
	for sk, rk := range steps {
		if !present[rk] && !corrupt[rk] {
			r.Missing = append(r.Missing, sk)
		}
	}
	sortKeys(r.Missing)
}

// verifyDamaged examines the store file with dipline's own reader, under bbolt's shared
// lock. On a sound file (or none) it returns nil; on a damaged one, the report of what
// still reads.
func (s *Store) verifyDamaged() (*VerifyReport, error) {
	f, err := os.Open(s.path)
	if errors.Is(err, os.ErrNotExist) {
		return nil, nil
	} else if err != nil {
		return nil, fmt.Errorf("store %s: %w", s.path, err)
	}
	defer f.Close()
	if ok, err := lockDB(f, false, openTimeout); err != nil || !ok {
		return nil, fmt.Errorf("store %s: another dipline command held it for more than %s: %w", s.path, openTimeout, ErrBusy)
	}
	fi, err := f.Stat()
	if err != nil || fi.Size() == 0 {
		return nil, err
	}
	if l, err := checkLayout(f, fi.Size()); err == nil && len(checkStructure(f, l)) == 0 {
		return nil, nil
	}
	rep := readInventory(f, fi.Size(), false).verify()
	return &rep, nil
}

// verify reports what the inventory of a damaged file holds.
func (inv *inventory) verify() VerifyReport {
	rep := VerifyReport{Layout: inv.layout, Pages: inv.problems}
	present := map[ResultKey]bool{}
	for _, e := range inv.results {
		k, err1 := e.key()
		v, err2 := e.value()
		if err1 != nil || err2 != nil {
			rep.Pages = append(rep.Pages, PageProblem{Bucket: string(bucketResults), Page: e.page, What: "a result cannot be read"})
			continue
		}
		rep.result(k, v, present)
	}
	steps := map[StepKey]ResultKey{}
	for _, e := range inv.steps {
		steps[stepKeyOf(e.key)] = mappedTo(e.key, e.value)
	}
	rep.missing(steps, present)
	for _, e := range inv.runs {
		if _, err := decodeRun(e.key, e.value); err != nil {
			rep.BadRecords = append(rep.BadRecords, badRecord(bucketRuns, string(e.key), err, e.value))
		}
	}
	return rep
}

// DropDamaged deletes what a Verify found: corrupt results, the step keys that map to a
// corrupt or missing result, run records that do not read, and provenance records that do
// not read together with their step keys, so the next run recomputes those steps cleanly.
// Each entry is checked again inside the write transaction, so one repaired in the meantime
// is kept. It returns the number of entries deleted. Damaged pages it cannot mend: on a
// report with FileDamaged it changes nothing and returns a *DamagedError.
func (s *Store) DropDamaged(r VerifyReport) (int, error) {
	if r.OK() {
		return 0, nil
	}
	if r.FileDamaged() {
		problem := r.Layout
		if problem == "" {
			return 0, damaged(s.path, r.Pages)
		}
		return 0, &DamagedError{Path: s.path, Problem: problem}
	}
	dropped := 0
	err := s.update(func(tx *bolt.Tx) error {
		var err error
		dropped, err = dropTx(tx, r)
		return err
	})
	if err != nil {
		return 0, fmt.Errorf("drop damaged entries: %w", err)
	}
	return dropped, nil
}

func dropTx(tx *bolt.Tx, r VerifyReport) (int, error) {
	steps, results := tx.Bucket(bucketSteps), tx.Bucket(bucketResults)
	dropped := 0
	bad := map[ResultKey]bool{}
	for _, rk := range r.Corrupt {
		v := results.Get(rk[:])
		if v == nil || sha256.Sum256(v) == rk {
			continue
		}
		if err := results.Delete(rk[:]); err != nil {
			return 0, err
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
	n, err := dropRecords(tx, r.BadRecords, &stale)
	if err != nil {
		return 0, err
	}
	dropped += n
	for _, sk := range r.Disagreeing {
		if err := tx.Bucket(bucketProvenance).Delete(sk[:]); err != nil {
			return 0, err
		}
		stale = append(stale, bytes.Clone(sk[:]))
	}
	for _, k := range stale {
		if steps.Get(k) == nil {
			continue // listed twice
		}
		if err := steps.Delete(k); err != nil {
			return 0, err
		}
		dropped++
	}
	return dropped, nil
}

// dropRecords deletes the bad records whose bytes are still those Verify found; a
// provenance record's step key joins stale, so the step is recomputed with a new record.
func dropRecords(tx *bolt.Tx, bad []BadRecord, stale *[][]byte) (int, error) {
	dropped := 0
	for _, b := range bad {
		key := []byte(b.Key)
		if b.Bucket == string(bucketProvenance) {
			sk, err := ParseStepKey(b.Key)
			if err != nil {
				continue
			}
			key = sk[:]
		}
		bk := tx.Bucket([]byte(b.Bucket))
		if bk == nil {
			continue
		}
		if v := bk.Get(key); v == nil || sha256.Sum256(v) != b.sum {
			continue // gone, or rewritten since
		}
		if err := bk.Delete(key); err != nil {
			return 0, err
		}
		dropped++
		if b.Bucket == string(bucketProvenance) {
			*stale = append(*stale, bytes.Clone(key))
		}
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
