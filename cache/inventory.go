package cache

import (
	"fmt"
	"io"
	"os"
)

// inventory is what can still be read of a store file with our own page reader (pagewalk.go),
// however damaged the file: Salvage copies from it, and Verify reports from it when bbolt
// could not read the file.
type inventory struct {
	pageSize int64
	// layout says what is wrong with the file's header pages or size, "" when nothing.
	layout string
	// walked is false when neither header page reads: the tree could not be walked, and
	// only results found by scanning every page are known.
	walked   bool
	problems []PageProblem
	results  []leafElem // result entries, values not yet read (they may be large)
	steps    []rawEntry
	prov     []rawEntry
	runs     []rawEntry
	pins     []rawEntry
	format   []byte
	// orphans are result-like entries (a 32-byte key) on leaf pages the walk did not reach:
	// under a damaged branch page, or left over from an earlier version of the file.
	orphans []leafElem
}

type rawEntry struct{ key, value []byte }

// readInventory walks the store file's tree as far as it reads, collecting the entries of
// dipline's buckets; with orphans, on a damaged file, it also scans every page for result
// entries the walk did not reach.
func readInventory(r io.ReaderAt, size int64, orphans bool) *inventory {
	inv := &inventory{}
	l, err := checkLayout(r, size)
	if err != nil {
		inv.layout = err.Error()
	}
	if l.pageSize == 0 { // neither header page reads: guess the page size bbolt would use
		l = layout{size: size, pageSize: int64(os.Getpagesize()), meta: metaPage{hwm: ^uint64(0)}}
	} else {
		inv.walked = true
	}
	inv.pageSize = l.pageSize
	pr := &pageReader{r: r, pageSize: l.pageSize, pages: l.pages()}
	w := newWalker(pr, func(p PageProblem) { inv.problems = append(inv.problems, p) })
	if inv.walked {
		inv.walk(w, l.meta.root)
	}
	if orphans && (inv.layout != "" || len(inv.problems) > 0) {
		inv.scan(pr, w.inUse)
	}
	return inv
}

// walk collects the entries of dipline's buckets.
func (inv *inventory) walk(w *walker, root uint64) {
	refs := w.buckets(root)
	for _, name := range allBuckets {
		ref, ok := refs[string(name)]
		if !ok {
			continue
		}
		bucket := string(name)
		w.tree(bucket, ref.root, ref.inline, func(e leafElem) {
			if e.flags&bucketEntry != 0 {
				return // dipline's buckets hold no buckets
			}
			inv.add(w, bucket, e)
		})
	}
}

// add files one leaf entry under its bucket; values other than results are read at once.
func (inv *inventory) add(w *walker, bucket string, e leafElem) {
	if bucket == string(bucketResults) {
		if e.keyLen == int64(len(ResultKey{})) {
			inv.results = append(inv.results, e)
		} else {
			w.problem(PageProblem{Bucket: bucket, Page: e.page, What: fmt.Sprintf("an entry has a key of %d bytes, not a result key", e.keyLen), Lost: true})
		}
		return
	}
	k, err1 := e.key()
	v, err2 := e.value()
	if err1 != nil || err2 != nil {
		w.problem(PageProblem{Bucket: bucket, Page: e.page, What: "an entry cannot be read", Lost: true})
		return
	}
	re := rawEntry{k, v}
	switch bucket {
	case string(bucketSteps):
		inv.steps = append(inv.steps, re)
	case string(bucketProvenance):
		inv.prov = append(inv.prov, re)
	case string(bucketRuns):
		inv.runs = append(inv.runs, re)
	case string(bucketPins):
		inv.pins = append(inv.pins, re)
	case string(bucketMeta):
		if string(k) == string(keyFormat) {
			inv.format = v
		}
	}
}

// scan reads every page header of the file and collects the entries with 32-byte keys on
// leaf pages the walk did not reach. It cannot tell which bucket they were in; results
// tell themselves apart by hashing to their key, which Salvage checks.
func (inv *inventory) scan(pr *pageReader, inUse func(uint64) bool) {
	for id := uint64(2); id < pr.pages; id++ {
		if inUse(id) {
			continue
		}
		v, err := pr.header(id, leafPage)
		if err != nil {
			continue
		}
		elems, err := v.leaves()
		if err != nil || v.problem != "" {
			continue // a stale page may be half overwritten: take only whole ones
		}
		for _, e := range elems {
			if e.flags&bucketEntry == 0 && e.keyLen == int64(len(ResultKey{})) {
				inv.orphans = append(inv.orphans, e)
			}
		}
		id += uint64(v.overflow)
	}
}
