package cache

import (
	"crypto/sha256"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"sort"

	bolt "go.etcd.io/bbolt"
)

// SalvageOptions tune Salvage.
type SalvageOptions struct {
	// CheckProvenance says whether a provenance record reads. The store treats records as
	// opaque bytes, so the engine judges; nil accepts every record.
	CheckProvenance func(k StepKey, rec []byte) error
}

// SalvageReport says what Salvage found, kept and dropped.
type SalvageReport struct {
	Into string // the new store's file
	// Damage says what is wrong with the old file: its layout, then each damaged page.
	Damage []string
	// What the new store holds. FromScan of the results were found by scanning every page
	// of a damaged file, not through its tree.
	FromScan    int
	Results     int
	ResultBytes int64
	StepKeys    int
	Provenance  int
	Runs        int
	Pins        int
	// Dropped lists every entry found but not kept, with the reason.
	Dropped []Dropped
	// Incomplete lists the runs kept whose records name results that were lost; their
	// steps are recomputed by the next run.
	Incomplete []string
}

// Lossless reports whether the old store was sound and everything in it was kept.
func (r SalvageReport) Lossless() bool { return len(r.Damage) == 0 && len(r.Dropped) == 0 }

// Dropped is one entry Salvage did not copy.
type Dropped struct {
	What string // "result", "step key", "provenance", "run" or "pin"
	Key  string // the key in hex, or the run id
	Why  string
}

func (d Dropped) String() string { return d.What + " " + clip(d.Key) + ": " + d.Why }

// Salvage reads the store file, however damaged, with dipline's own page reader (never
// through bbolt, which trusts the file's bytes) and writes a new store at into: every
// result whose bytes still hash to its key (including results on pages only a scan of the
// whole file finds), every step mapping that points at a kept result, every provenance
// record of a kept mapping that still reads, every run record that reads, and every pin of
// a kept run. Everything else is dropped and listed with the reason. The old file is not
// changed. into must not exist yet; the new store is written beside it under a temporary
// name and renamed into place once complete and synced.
//
// Salvage takes the old store's run lock and bbolt's shared lock on its file, so no run
// writes to it meanwhile.
func (s *Store) Salvage(into string, opt SalvageOptions) (SalvageReport, error) {
	rep := SalvageReport{Into: into}
	if err := checkInto(s.path, into); err != nil {
		return rep, err
	}
	lock, err := LockRun(s.path, 0, nil)
	if err != nil {
		return rep, err
	}
	defer lock.Release()
	f, err := os.Open(s.path)
	if err != nil {
		return rep, fmt.Errorf("salvage: %w", err)
	}
	defer f.Close()
	if ok, err := lockDB(f, false, openTimeout); err != nil || !ok {
		return rep, fmt.Errorf("salvage %s: another dipline command held it for more than %s: %w", s.path, openTimeout, ErrBusy)
	}
	fi, err := f.Stat()
	if err != nil {
		return rep, fmt.Errorf("salvage: %w", err)
	}
	if fi.Size() == 0 {
		return rep, fmt.Errorf("salvage: the store %s is empty: there is nothing to salvage", s.path)
	}
	inv := readInventory(f, fi.Size(), true)
	if inv.format != nil && !readable(inv.format) {
		return rep, fmt.Errorf("salvage: the store %s has format %q; this dipline reads %q and %q", s.path, clip(string(inv.format)), format, formatV1)
	}
	plan := planSalvage(inv, opt, &rep)
	tmp := into + ".salvaging"
	if err := writeSalvage(tmp, fi.Mode().Perm(), inv, plan, &rep); err != nil {
		os.Remove(tmp)
		return rep, fmt.Errorf("salvage into %s: %w", into, err)
	}
	if err := install(tmp, into); err != nil {
		os.Remove(tmp)
		return rep, fmt.Errorf("salvage into %s: %w", into, err)
	}
	return rep, nil
}

// install syncs the new file and gives it its name, so a crash leaves either no store at
// into or the complete one.
func install(tmp, into string) error {
	if err := syncFile(tmp); err != nil {
		return err
	}
	if err := os.Rename(tmp, into); err != nil {
		return err
	}
	return syncFile(filepath.Dir(into))
}

// checkInto refuses a target that exists, or that is the store itself.
func checkInto(path, into string) error {
	if into == "" {
		return errors.New("salvage: name the new store's file")
	}
	if _, err := os.Lstat(into); err == nil {
		return fmt.Errorf("salvage: %s exists; name a new file (the salvage never overwrites one)", into)
	}
	if fi, err := os.Stat(path); err != nil {
		return fmt.Errorf("salvage: %w", err)
	} else if fi.IsDir() {
		return fmt.Errorf("salvage: %s is a folder, not a store", path)
	}
	return os.MkdirAll(filepath.Dir(into), 0o755)
}

// salvagePlan is what Salvage keeps.
type salvagePlan struct {
	results []leafElem // each a distinct key, checked to hash to it when copied
	steps   []rawEntry
	prov    []rawEntry
	runs    []rawEntry
	pins    []rawEntry
}

// planSalvage decides what to keep. Results are kept when their bytes hash to their key,
// wherever they were found: in the tree, or, on a damaged file, by the scan of every page
// (under a damaged branch page, or an intact earlier copy of a result damaged since).
func planSalvage(inv *inventory, opt SalvageOptions, rep *SalvageReport) *salvagePlan {
	if inv.layout != "" {
		rep.Damage = append(rep.Damage, inv.layout)
	}
	if !inv.walked {
		rep.Damage = append(rep.Damage, "neither header page reads, so only results could be looked for, page by page; step keys, provenance, runs and pins are lost")
	}
	for _, p := range inv.problems {
		d := p.String()
		if p.Lost {
			d += "; the entries below it could not be read"
		}
		rep.Damage = append(rep.Damage, d)
	}
	plan := &salvagePlan{}
	good := map[ResultKey]bool{}
	var hurt []ResultKey
	for _, e := range inv.results {
		if rk, ok := verifiedResult(e); ok && !good[rk] {
			good[rk] = true
			plan.results = append(plan.results, e)
		} else if !ok {
			hurt = append(hurt, rk)
		}
	}
	runs := keptRuns(inv, rep, plan)
	for _, e := range inv.orphans {
		if rk, ok := verifiedResult(e); ok && !good[rk] {
			good[rk] = true
			plan.results = append(plan.results, e)
			rep.FromScan++
		}
	}
	for _, rk := range hurt {
		if !good[rk] { // an intact older copy may have turned up in the scan
			rep.Dropped = append(rep.Dropped, Dropped{"result", rk.String(), "its bytes no longer hash to its key"})
		}
	}
	readable := readableProvenance(inv, opt, rep)
	keptSteps := planSteps(inv, good, readable, plan, rep)
	planProvenance(inv, keptSteps, readable, plan, rep)
	noteIncomplete(runs, good, rep)
	planPins(inv, runs, plan, rep)
	return plan
}

// verifiedResult reads a result entry's key and bytes and checks the one hashes to the
// other. It reads the value twice when kept (here and when copying) rather than hold every
// result in memory.
func verifiedResult(e leafElem) (ResultKey, bool) {
	var rk ResultKey
	k, err := e.key()
	if err != nil {
		return rk, false
	}
	copy(rk[:], k)
	v, err := e.value()
	return rk, err == nil && sha256.Sum256(v) == rk
}

func keptRuns(inv *inventory, rep *SalvageReport, plan *salvagePlan) map[string]Run {
	runs := map[string]Run{}
	for _, e := range inv.runs {
		r, err := decodeRun(e.key, e.value)
		if err != nil {
			rep.Dropped = append(rep.Dropped, Dropped{"run", string(e.key), "its record does not read: " + err.Error()})
			continue
		}
		runs[r.ID] = r
		plan.runs = append(plan.runs, e)
	}
	return runs
}

// planSteps keeps a step mapping when its result was kept and its provenance record reads:
// a mapping without its record would be reused by the next run and never explained, so it
// is dropped and the step computed again.
func planSteps(inv *inventory, good map[ResultKey]bool, readable map[StepKey]bool, plan *salvagePlan, rep *SalvageReport) map[StepKey]bool {
	kept := map[StepKey]bool{}
	for _, e := range inv.steps {
		key := fmt.Sprintf("%x", e.key)
		switch {
		case len(e.key) != len(StepKey{}) || len(e.value) != len(ResultKey{}):
			rep.Dropped = append(rep.Dropped, Dropped{"step key", key, "the entry is malformed"})
		case !good[ResultKey(e.value)]:
			rep.Dropped = append(rep.Dropped, Dropped{"step key", key,
				fmt.Sprintf("its result %x was lost or damaged; the step will be recomputed", e.value[:shortLen/2])})
		case !readable[StepKey(e.key)]:
			rep.Dropped = append(rep.Dropped, Dropped{"step key", key,
				"its provenance record was lost or does not read; the step will be recomputed"})
		default:
			kept[StepKey(e.key)] = true
			plan.steps = append(plan.steps, e)
		}
	}
	return kept
}

// readableProvenance lists the step keys whose provenance record reads, and drops, with
// the reason, each record that does not.
func readableProvenance(inv *inventory, opt SalvageOptions, rep *SalvageReport) map[StepKey]bool {
	ok := map[StepKey]bool{}
	for _, e := range inv.prov {
		if len(e.key) != len(StepKey{}) {
			continue // dropped by planProvenance: no step key maps it
		}
		if opt.CheckProvenance != nil {
			if err := opt.CheckProvenance(StepKey(e.key), e.value); err != nil {
				rep.Dropped = append(rep.Dropped, Dropped{"provenance", fmt.Sprintf("%x", e.key), "the record does not read: " + err.Error()})
				continue
			}
		}
		ok[StepKey(e.key)] = true
	}
	return ok
}

// planProvenance keeps the readable record of every kept step mapping.
func planProvenance(inv *inventory, kept, readable map[StepKey]bool, plan *salvagePlan, rep *SalvageReport) {
	for _, e := range inv.prov {
		var k StepKey
		wellFormed := len(e.key) == len(k)
		if wellFormed {
			k = StepKey(e.key)
		}
		switch {
		case wellFormed && readable[k] && kept[k]:
			plan.prov = append(plan.prov, e)
		case !wellFormed || readable[k]: // an unreadable one is listed already
			rep.Dropped = append(rep.Dropped, Dropped{"provenance", fmt.Sprintf("%x", e.key), "no kept step key maps it to a result"})
		}
	}
}

func noteIncomplete(runs map[string]Run, good map[ResultKey]bool, rep *SalvageReport) {
	ids := make([]string, 0, len(runs))
	for id := range runs {
		ids = append(ids, id)
	}
	sort.Strings(ids)
	for _, id := range ids {
		lost := 0
		for _, st := range runs[id].Steps {
			if !st.ResultKey.IsZero() && !good[st.ResultKey] {
				lost++
			}
		}
		if lost > 0 {
			rep.Incomplete = append(rep.Incomplete, fmt.Sprintf("run %s: %d of its %d steps' results were lost", id, lost, len(runs[id].Steps)))
		}
	}
}

func planPins(inv *inventory, runs map[string]Run, plan *salvagePlan, rep *SalvageReport) {
	for _, e := range inv.pins {
		if _, ok := runs[string(e.key)]; !ok {
			rep.Dropped = append(rep.Dropped, Dropped{"pin", string(e.key), "its run's record was not kept"})
			continue
		}
		plan.pins = append(plan.pins, e)
	}
}

// writeSalvage writes the plan into a new store file at path: results in batches (a
// batch's transaction holds up to compactTxBytes), then the mappings and records.
func writeSalvage(path string, perm os.FileMode, inv *inventory, plan *salvagePlan, rep *SalvageReport) error {
	if err := os.Remove(path); err != nil && !errors.Is(err, os.ErrNotExist) {
		return err
	}
	dst := &Store{path: path}
	var batch []rawEntry
	size := 0
	flush := func() error {
		err := dst.update(func(tx *bolt.Tx) error { return putAll(tx.Bucket(bucketResults), batch) })
		batch, size = batch[:0], 0
		return err
	}
	for _, e := range plan.results {
		k, err1 := e.key()
		v, err2 := e.value()
		if err1 != nil || err2 != nil || sha256.Sum256(v) != ResultKey(k) {
			return fmt.Errorf("the result on page %d changed while it was copied", e.page)
		}
		batch = append(batch, rawEntry{k, v})
		size += len(v)
		rep.Results++
		rep.ResultBytes += int64(len(v))
		if size >= compactTxBytes {
			if err := flush(); err != nil {
				return err
			}
		}
	}
	if err := flush(); err != nil {
		return err
	}
	rep.StepKeys, rep.Provenance, rep.Runs, rep.Pins = len(plan.steps), len(plan.prov), len(plan.runs), len(plan.pins)
	if err := dst.update(func(tx *bolt.Tx) error {
		for _, b := range []struct {
			name    []byte
			entries []rawEntry
		}{{bucketSteps, plan.steps}, {bucketProvenance, plan.prov}, {bucketRuns, plan.runs}, {bucketPins, plan.pins}} {
			if err := putAll(tx.Bucket(b.name), b.entries); err != nil {
				return err
			}
		}
		return nil
	}); err != nil {
		return err
	}
	return os.Chmod(path, perm)
}

func putAll(b *bolt.Bucket, entries []rawEntry) error {
	for _, e := range entries {
		if err := b.Put(e.key, e.value); err != nil {
			return err
		}
	}
	return nil
}
