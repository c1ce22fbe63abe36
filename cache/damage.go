package cache

import (
	"errors"
	"fmt"
	"io"
	"os"
	"runtime/debug"
	"strings"
	"time"

	bolt "go.etcd.io/bbolt"
)

// ErrDamaged: the store's file is damaged (cut short, or pages or records that do not
// read). Nothing in dipline caused it and nothing can mend it in place; Salvage copies what
// still reads into a new store.
var ErrDamaged = errors.New("store file damaged")

// ErrInternal: a fault of the program while it read or wrote the store (a panic inside the
// store's code on a file that checks out).
var ErrInternal = errors.New("internal error in the store")

// DamagedError says which store file is damaged and what is wrong with it. It wraps
// ErrDamaged.
type DamagedError struct {
	Path    string
	Problem string // what is wrong, in a sentence
}

func (e *DamagedError) Error() string {
	return fmt.Sprintf("the store %s is damaged: %s. dipline changed nothing in it; "+
		"`dipline store salvage --into NEW.db` copies everything that still reads into a new store and lists what it cannot", e.Path, e.Problem)
}

// Unwrap lets errors.Is(err, ErrDamaged) recognise a DamagedError.
func (e *DamagedError) Unwrap() error { return ErrDamaged }

// FaultError is a panic inside the store's code on a file that, examined afterwards, shows
// no damage: a fault of the program. It wraps ErrInternal.
type FaultError struct {
	Path  string
	Panic any
	Stack string // where it happened, for a report
}

func (e *FaultError) Error() string {
	return fmt.Sprintf("internal error (please report it) while using the store %s: %v; the file itself shows no damage", e.Path, e.Panic)
}

// Unwrap lets errors.Is(err, ErrInternal) recognise a FaultError.
func (e *FaultError) Unwrap() error { return ErrInternal }

// damaged builds a DamagedError from a list of page problems, naming the first few.
func damaged(path string, problems []PageProblem) *DamagedError {
	const shown = 3
	parts := make([]string, 0, shown+1)
	for i, p := range problems {
		if i == shown {
			parts = append(parts, fmt.Sprintf("and %d more", len(problems)-shown))
			break
		}
		parts = append(parts, p.String())
	}
	return &DamagedError{Path: path, Problem: fmt.Sprintf("%d of its pages cannot be read (%s)", len(problems), strings.Join(parts, "; "))}
}

// guarded runs fn, which uses bbolt on the store file at path, so that nothing bbolt does
// on a damaged file reaches the user as a crash. bbolt maps the file into memory and
// trusts its bytes: a damaged page makes it panic, and a file that shrinks under it makes
// the memory read fault, which debug.SetPanicOnFault turns into a panic in this goroutine
// (it holds for the calling goroutine only, and bbolt's transactions run in it). A panic is
// recovered; release is called to let go of the file, and the file is examined with our
// own reader: if its layout or pages are damaged the error is a *DamagedError, otherwise
// the panic was ours and the error is a *FaultError.
func guarded(path string, release func(), fn func() error) (err error) {
	defer func() {
		p := recover()
		if p == nil {
			return
		}
		stack := string(debug.Stack())
		if release != nil {
			release()
		}
		err = diagnose(path, p, stack)
	}()
	defer debug.SetPanicOnFault(debug.SetPanicOnFault(true))
	return fn()
}

// diagnose examines the store file after a panic inside bbolt.
func diagnose(path string, p any, stack string) error {
	if err := check(path, true); err != nil {
		return err
	}
	return &FaultError{Path: path, Panic: p, Stack: stack}
}

// closeSoon closes a database that a panic left in an unknown state. bbolt's Close takes
// its internal locks, which a panic in the middle of a commit may have left held, so it is
// given a moment in its own goroutine; the file itself is closed in any case, which lets go
// of bbolt's file lock.
func closeSoon(db *bolt.DB, f *os.File) {
	if db != nil {
		done := make(chan struct{})
		go func() {
			defer close(done)
			defer func() { recover() }()
			defer debug.SetPanicOnFault(debug.SetPanicOnFault(true))
			db.Close()
		}()
		select {
		case <-done:
		case <-time.After(time.Second):
		}
	}
	if f != nil {
		f.Close()
	}
}

// CheckFile checks the store file's size and header pages, as every call does before bbolt
// maps the file: a file cut short is a *DamagedError, and a file that is not a store at all
// a *NotAStoreError. It reads two pages, so commands can call it first to refuse a damaged
// store before they start. An absent or empty file is a store not written yet, and fine.
func (s *Store) CheckFile() error { return check(s.path, false) }

// CheckPages is CheckFile, and then it walks every page of the store's tree and its list
// of free pages with dipline's own reader, as Verify does first: the page headers and
// element tables, not the values (a result's continuation pages are not read). A damaged
// page is a *DamagedError naming it. A run and pending call it before they start: bbolt
// reads only the pages a call reaches, so a damaged page elsewhere in the file would
// otherwise go unnoticed while the run wrote to the file. It holds bbolt's shared lock
// for the walk, so no commit changes pages under it. Its cost is two small reads per page
// of the tree, whatever the values' size: on a shared 2-core machine about 2 ms for the
// demo's 8 MB store and 3 ms for 64 results of 1 MB, and 0.15–0.3 s for 50 000 results
// of 1 KiB (a 150 MB file; BenchmarkCheckPagesManyEntries), against 0.4 s for a full
// Verify of that store and about as long as bbolt's own Tx.Check, which reads through the
// memory map and panics on a damaged page rather than naming it.
func (s *Store) CheckPages() error { return check(s.path, true) }

// check is CheckFile (pages false) and CheckPages (pages true).
func check(path string, pages bool) error {
	f, err := os.Open(path)
	if errors.Is(err, os.ErrNotExist) {
		return nil
	} else if err != nil {
		return fmt.Errorf("store %s: %w", path, err)
	}
	defer f.Close()
	if ok, err := lockDB(f, false, openTimeout); err != nil || !ok {
		return fmt.Errorf("store %s: another dipline command held it for more than %s: %w", path, openTimeout, ErrBusy)
	}
	fi, err := f.Stat()
	if err != nil {
		return fmt.Errorf("store %s: %w", path, err)
	}
	if fi.Size() == 0 {
		return nil
	}
	l, err := checkLayout(f, fi.Size())
	if err != nil {
		return layoutError(f, fi.Size(), path, err)
	}
	if !pages {
		return nil
	}
	if problems := checkStructure(f, l); len(problems) > 0 {
		return damaged(path, problems)
	}
	return nil
}

// ErrNotAStore: the file where a store should be is not a dipline store at all (a data
// file, a workflow, anything else): no copy of a store's header is found in it. dipline
// neither reads it as a store nor writes to it.
var ErrNotAStore = errors.New("not a dipline store")

// NotAStoreError names a file that is not a store. It wraps ErrNotAStore.
type NotAStoreError struct {
	Path string
}

func (e *NotAStoreError) Error() string {
	return fmt.Sprintf("%s is not a dipline store: it does not begin as a store file does (no copy of a store's header is in it), "+
		"and dipline leaves it as it is", e.Path)
}

// Unwrap lets errors.Is(err, ErrNotAStore) recognise a NotAStoreError.
func (e *NotAStoreError) Unwrap() error { return ErrNotAStore }

// layoutError is the error for a file whose header pages checkLayout refused (err): a
// *NotAStoreError when no copy of a store's header is found in it, else a *DamagedError.
func layoutError(r io.ReaderAt, size int64, path string, err error) error {
	if !hasStoreMarker(r, size) {
		return &NotAStoreError{Path: path}
	}
	return &DamagedError{Path: path, Problem: err.Error()}
}

// CheckIsStore reports, for a file that exists and is not empty, whether it can be a
// store: whether a store's marker is found where either copy of its header would be. A
// store whose header pages are damaged passes (it is a damaged store, and salvage is
// the answer); a data file or a workflow does not, and the error is a *NotAStoreError. An
// absent or empty file passes. It reads a few bytes and takes no lock, so a workflow can be
// checked before anything is opened for writing.
func CheckIsStore(path string) error {
	f, err := os.Open(path)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil
		}
		return fmt.Errorf("store %s: %w", path, err)
	}
	defer f.Close()
	fi, err := f.Stat()
	if err != nil {
		return fmt.Errorf("store %s: %w", path, err)
	}
	if fi.Size() == 0 || !fi.Mode().IsRegular() || hasStoreMarker(f, fi.Size()) {
		return nil
	}
	return &NotAStoreError{Path: path}
}

// hasStoreMarker reports whether anything in the file says it is (or was) a store: a
// store's marker (bbolt's magic number, fileformat.go) where the first header page keeps
// it, or where the second one would lie for any page size bbolt writes (readMetas searches
// the same places); or, when its start was overwritten, pages after the header pages that
// carry their own number and a kind of page bbolt writes (salvage reads those). A data
// file or a workflow has neither: its first bytes are text, and no eight of them spell a
// page's own number.
func hasStoreMarker(r io.ReaderAt, size int64) bool {
	at := []int64{0}
	for i := range 15 {
		at = append(at, int64(1024)<<i)
	}
	b := make([]byte, 4)
	for _, a := range at {
		if a+pageHeaderSize+4 > size {
			break
		}
		if _, err := r.ReadAt(b, a+pageHeaderSize); err == nil && order.Uint32(b) == boltMagic {
			return true
		}
	}
	return hasOwnPages(r, size)
}

// ownPagesLooked is how many pages after the two header pages hasOwnPages reads for each
// page size: a store's first data pages are its buckets' roots, rewritten on every commit,
// so those near the start are seldom free pages of another size.
const ownPagesLooked = 32

// hasOwnPages reports whether, for some page size bbolt writes, a page after the two
// header pages starts with its own number and a kind of page bbolt writes.
func hasOwnPages(r io.ReaderAt, size int64) bool {
	h := make([]byte, pageHeaderSize)
	for ps := int64(minPageSize); ps <= 1<<16; ps *= 2 {
		for id := int64(2); id < 2+ownPagesLooked && (id+1)*ps <= size; id++ {
			if _, err := r.ReadAt(h, id*ps); err != nil {
				break
			}
			switch order.Uint16(h[8:]) {
			case branchPage, leafPage, freelistPage:
				if order.Uint64(h) == uint64(id) {
					return true
				}
			}
		}
	}
	return false
}
