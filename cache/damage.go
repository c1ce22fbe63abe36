package cache

import (
	"errors"
	"fmt"
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
	if err := examine(path); err != nil {
		return err
	}
	return &FaultError{Path: path, Panic: p, Stack: stack}
}

// examine checks a store file's layout and every page of its tree with our own reader,
// holding bbolt's shared lock so that no commit changes pages under the walk. It returns a
// *DamagedError, another error when the file cannot be examined, or nil when the file is
// sound (or absent).
func examine(path string) error {
	f, err := os.Open(path)
	if errors.Is(err, os.ErrNotExist) {
		return nil
	} else if err != nil {
		return fmt.Errorf("store %s: %w", path, err)
	}
	defer f.Close()
	ok, err := lockDB(f, false, openTimeout)
	if err != nil || !ok {
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
		return &DamagedError{Path: path, Problem: err.Error()}
	}
	if problems := checkStructure(f, l); len(problems) > 0 {
		return damaged(path, problems)
	}
	return nil
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
// maps the file: a file cut short, or not a store at all, is a *DamagedError. It reads two
// pages, so commands can call it first to refuse a damaged store before they start. An
// absent or empty file is a store not written yet, and fine.
func (s *Store) CheckFile() error {
	f, err := os.Open(s.path)
	if errors.Is(err, os.ErrNotExist) {
		return nil
	} else if err != nil {
		return fmt.Errorf("store %s: %w", s.path, err)
	}
	defer f.Close()
	if ok, err := lockDB(f, false, openTimeout); err != nil || !ok {
		return fmt.Errorf("store %s: another dipline command held it for more than %s: %w", s.path, openTimeout, ErrBusy)
	}
	return checkOpened(f, s.path, false)
}
