package cache

import (
	"errors"
	"fmt"
	"os"
	"sync"
)

// ErrReplaced: the store's file was removed or replaced by another file while a run that
// keeps to it (Store.Keep) was under way. The run's results went into the old file, which
// is gone; nothing is written to the new one.
var ErrReplaced = errors.New("store file removed or replaced")

// kept is the identity of the one file a store keeps to, once known.
type kept struct {
	mu sync.Mutex
	fi os.FileInfo // nil until the file exists
}

// Keep makes every later call of s refuse a file at the store's path other than the one
// there now, or, when there is none yet, the one s's first write creates: a call that finds
// the file removed or replaced fails with an error wrapping ErrReplaced, and a write never
// creates a new file in its place. A run calls it once it holds the run lock, so that a
// store deleted or swapped under it is noticed at its next look-up or commit instead of
// receiving the rest of the run (no dipline command replaces a store while a run holds
// the lock: prune, the one that renames a new file into place, takes the lock too).
func (s *Store) Keep() error {
	k := &kept{}
	fi, err := os.Stat(s.path)
	switch {
	case err == nil:
		k.fi = fi
	case errors.Is(err, os.ErrNotExist):
		// None yet: the first write makes it.
	default:
		return fmt.Errorf("store %s: %w", s.path, err)
	}
	s.keep = k
	return nil
}

// known returns the identity kept, or nil when there is none yet (or k is nil).
func (k *kept) known() os.FileInfo {
	if k == nil {
		return nil
	}
	k.mu.Lock()
	defer k.mu.Unlock()
	return k.fi
}

// check compares the file a call has opened with the one kept, and keeps it when none is
// yet: a write has just created it.
func (k *kept) check(path string, opened os.FileInfo) error {
	if k == nil {
		return nil
	}
	k.mu.Lock()
	defer k.mu.Unlock()
	if k.fi == nil {
		k.fi = opened
		return nil
	}
	if !os.SameFile(k.fi, opened) {
		return replaced(path, "replaced by another file")
	}
	return nil
}

// ReplacedError says that a kept store's file went away or was swapped for another. It
// wraps ErrReplaced.
type ReplacedError struct {
	Path string
	How  string // "removed", or "replaced by another file"
}

func (e *ReplacedError) Error() string {
	return fmt.Sprintf("the store file %s was %s while this run was using it: what the run had stored went with the old file, "+
		"and dipline writes nothing in its place", e.Path, e.How)
}

// Unwrap lets errors.Is(err, ErrReplaced) recognise a ReplacedError.
func (e *ReplacedError) Unwrap() error { return ErrReplaced }

func replaced(path, how string) error { return &ReplacedError{Path: path, How: how} }

// checkKept checks the file a call has just opened and locked against the one the store
// keeps to (k nil: any file will do).
func checkKept(k *kept, f *os.File, path string) error {
	if k == nil {
		return nil
	}
	fi, err := f.Stat()
	if err != nil {
		return fmt.Errorf("store %s: %w", path, err)
	}
	return k.check(path, fi)
}

// OpenForRun opens the store a run will write to. Every page its tree reaches is checked
// first (CheckPages): bbolt reads only the pages a look-up or commit passes through, and a
// run must not add to a file with damage elsewhere in it. From then on the store keeps to
// this very file (Keep): one removed or replaced under it is noticed at the next look-up or
// commit, and nothing is written in its place.
func OpenForRun(path string) (*Store, error) {
	s, err := Open(path)
	if err == nil {
		err = s.CheckPages()
	}
	if err == nil {
		err = s.Keep()
	}
	return s, err
}
