// Package cache is dipline's content store: it keeps artifacts' bytes by their result key,
// maps step keys to result keys, and holds provenance records, run records and pins, all in
// one bbolt file. It verifies a result's SHA-256 on every read, prunes runs nobody pinned,
// compacts the file, verifies it, salvages a damaged one into a new file, and merges the
// stores of survey shards.
//
// It knows no HCL and no astronomy: provenance records are opaque bytes from the engine,
// and it never decides what to compute. The main entry point is Open, which returns a Store;
// the engine calls Lookup and Get before a step and Commit after, and holds a RunLock for
// the whole run.
//
// The Store does not keep bbolt open. Every call opens the file, runs one transaction,
// copies the values out and closes it again, so read-only commands (statistics, tracing a
// number) can run while a long run is in progress; bbolt's own file lock only serialises
// the individual transactions (a waiting call blocks in the kernel and gets in between two
// commits). Whole runs are kept apart by the separate RunLock.
//
// A damaged file is an error, never a crash: before bbolt maps a file into memory its size
// and header pages are checked (fileformat.go), every call runs guarded against bbolt's
// panics and memory faults (damage.go), and what a damaged file still holds is read with
// dipline's own page reader (pagewalk.go), for Verify and Salvage.
package cache

import (
	"bytes"
	"crypto/sha256"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"time"

	bolt "go.etcd.io/bbolt"
	berrors "go.etcd.io/bbolt/errors"
)

// Sentinel errors; the store's errors wrap them, so test with errors.Is.
var (
	// ErrMissing: the key, run or pin is not in the store.
	ErrMissing = errors.New("not in the store")
	// ErrCorrupt: stored bytes no longer hash to their result key.
	ErrCorrupt = errors.New("stored bytes fail their checksum")
	// ErrBusy: another dipline process holds the store: its run lock, or the database
	// itself for more than ten seconds.
	ErrBusy = errors.New("store in use")
)

// openTimeout is how long one call waits for bbolt's file lock. Other commands hold it only
// for one transaction (a commit of a few hundred MB with fsync on a slow disk is seconds),
// so waiting longer than this means something is stuck and the user should be told. A
// variable so tests can shorten it.
var openTimeout = 10 * time.Second

// format is stored in the meta bucket; a store written in another layout is refused rather
// than misread. Format 2 names a step in run and provenance records "step" (format 1 said
// "address"); the records are otherwise alike, so this dipline reads a store of either
// format, and its first write marks a format-1 store as format 2: from then on it holds
// records that a dipline of format 1 would read as steps without a name, and it refuses
// the store instead.
const (
	format   = "dipline store 2"
	formatV1 = "dipline store 1"
)

// readable reports whether this dipline reads a store whose meta bucket names format v.
func readable(v []byte) bool { return string(v) == format || string(v) == formatV1 }

// Bucket names. The values are described beside each.
var (
	bucketMeta       = []byte("meta")       // "format" → format
	bucketSteps      = []byte("steps")      // step key (32 bytes) → result key (32 bytes)
	bucketResults    = []byte("results")    // result key (32 bytes) → artifact bytes
	bucketProvenance = []byte("provenance") // step key (32 bytes) → engine's record, opaque
	bucketRuns       = []byte("runs")       // run id → Run as JSON
	bucketPins       = []byte("pins")       // run id → note
	bucketParts      = []byte("parts")      // part key (32 bytes) → SHA-256 of the part, the part

	keyFormat = []byte("format")
)

var allBuckets = [][]byte{bucketMeta, bucketSteps, bucketResults, bucketProvenance, bucketRuns, bucketPins, bucketParts}

// Store is a content store in one bbolt file. It holds only the path; it is safe for
// concurrent use by several goroutines and processes (each call is one bbolt transaction).
type Store struct {
	path string
	keep *kept // the file it keeps to (Keep), or nil
}

// Open returns the store in the file at path. The file, and its folder, are made by the
// first write; reading a store that does not exist yet finds nothing rather than failing,
// and leaves no trace (a look at a fresh workflow makes no folders).
func Open(path string) (*Store, error) {
	if path == "" {
		return nil, errors.New("store path is empty")
	}
	if fi, err := os.Stat(path); err == nil && fi.IsDir() {
		return nil, fmt.Errorf("store %s is a folder, not a file", path)
	}
	return &Store{path: path}, nil
}

// Path returns the database file's path.
func (s *Store) Path() string { return s.path }

// Entry is one step's outcome for Commit.
type Entry struct {
	Step       StepKey
	Result     ResultKey // must equal SHA-256 of Data
	Data       []byte    // the artifact's encoded bytes
	Provenance []byte    // the engine's record; nil keeps an existing one
}

// Lookup returns the result key stored for a step key.
func (s *Store) Lookup(k StepKey) (ResultKey, bool, error) {
	var r ResultKey
	var ok bool
	err := s.view(func(tx *bolt.Tx) error {
		v := get(tx, bucketSteps, k[:])
		if v == nil {
			return nil
		}
		if len(v) != len(r) {
			return fmt.Errorf("step key %s: stored result key has %d bytes: %w", k.Short(), len(v), ErrCorrupt)
		}
		copy(r[:], v)
		ok = true
		return nil
	})
	return r, ok, err
}

// Get returns a copy of a result's bytes after checking they hash to k. It returns an
// error wrapping ErrMissing when the result is absent and ErrCorrupt when its bytes fail the
// check; either way the engine recomputes.
func (s *Store) Get(k ResultKey) ([]byte, error) {
	var data []byte
	err := s.view(func(tx *bolt.Tx) error {
		if v := get(tx, bucketResults, k[:]); v != nil {
			data = bytes.Clone(v)
			if data == nil {
				data = []byte{}
			}
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	if data == nil {
		return nil, fmt.Errorf("result %s: %w", k.Short(), ErrMissing)
	}
	if got := ResultKeyOf(data); got != k {
		return nil, fmt.Errorf("result %s: %w (the %d stored bytes hash to %s)", k.Short(), ErrCorrupt, len(data), got.Short())
	}
	return data, nil
}

// Provenance returns a copy of the provenance record stored for a step key.
func (s *Store) Provenance(k StepKey) ([]byte, bool, error) {
	var rec []byte
	err := s.view(func(tx *bolt.Tx) error {
		if v := get(tx, bucketProvenance, k[:]); v != nil {
			rec = append([]byte{}, v...)
		}
		return nil
	})
	return rec, rec != nil, err
}

// Commit writes entries in one transaction: either all of them are stored or none (a run
// interrupted mid-way leaves the store as it was before this call). Each entry's data must
// hash to its result key. A result already stored is written only if its stored bytes fail
// their checksum, so a damaged entry is repaired by recomputing it.
func (s *Store) Commit(entries ...Entry) error {
	if err := checkEntries(entries); err != nil {
		return err
	}
	if len(entries) == 0 {
		return nil
	}
	return s.update(func(tx *bolt.Tx) error { return putEntries(tx, entries) })
}

// checkEntries checks, before any transaction, that each entry's data hash to its result
// key and fit in the store.
func checkEntries(entries []Entry) error {
	for i, e := range entries {
		if got := ResultKeyOf(e.Data); got != e.Result {
			return fmt.Errorf("commit entry %d (step key %s): data hash to %s, not to its result key %s",
				i+1, e.Step.Short(), got.Short(), e.Result.Short())
		}
		if int64(len(e.Data)) > bolt.MaxValueSize {
			return fmt.Errorf("commit entry %d (step key %s): result of %d bytes exceeds the store's limit of %d",
				i+1, e.Step.Short(), len(e.Data), bolt.MaxValueSize)
		}
	}
	return nil
}

// putEntries writes checked entries in the transaction tx.
func putEntries(tx *bolt.Tx, entries []Entry) error {
	steps, results, prov := tx.Bucket(bucketSteps), tx.Bucket(bucketResults), tx.Bucket(bucketProvenance)
	for _, e := range entries {
		if old := results.Get(e.Result[:]); old == nil || sha256.Sum256(old) != e.Result {
			// Put keeps a reference to the value until commit; the caller's slice must
			// not change underneath it, so store a copy.
			if err := results.Put(e.Result[:], bytes.Clone(nonNil(e.Data))); err != nil {
				return err
			}
		}
		if err := steps.Put(e.Step[:], bytes.Clone(e.Result[:])); err != nil {
			return err
		}
		if e.Provenance != nil {
			if err := prov.Put(e.Step[:], bytes.Clone(e.Provenance)); err != nil {
				return err
			}
		}
	}
	return nil
}

// Stats are a store's counts and sizes.
type Stats struct {
	StepKeys    int   // step key → result key entries
	Results     int   // distinct results
	ResultBytes int64 // their bytes
	Provenance  int   // provenance records
	Runs        int   // run records
	Pins        int   // pinned runs
	Parts       int   // finished parts of steps' work (PutPart)
	FileBytes   int64 // size of the database file (0 if not created yet)
}

// Stats counts the store's entries.
func (s *Store) Stats() (Stats, error) {
	var st Stats
	err := s.view(func(tx *bolt.Tx) error {
		st.StepKeys = count(tx, bucketSteps)
		st.Provenance = count(tx, bucketProvenance)
		st.Runs = count(tx, bucketRuns)
		st.Pins = count(tx, bucketPins)
		st.Parts = count(tx, bucketParts)
		if b := tx.Bucket(bucketResults); b != nil {
			return b.ForEach(func(k, v []byte) error {
				st.Results++
				st.ResultBytes += int64(len(v))
				return nil
			})
		}
		return nil
	})
	if err != nil {
		return Stats{}, err
	}
	if fi, err := os.Stat(s.path); err == nil {
		st.FileBytes = fi.Size()
	}
	return st, nil
}

// view runs fn in a read-only transaction. If the database file does not exist yet (or is
// being created), fn is not called: the store is empty.
func (s *Store) view(fn func(tx *bolt.Tx) error) error {
	return s.withDB(true, func(db *bolt.DB) error {
		return db.View(func(tx *bolt.Tx) error {
			if err := checkFormat(tx, s.path); err != nil {
				return err
			}
			return fn(tx)
		})
	})
}

// update runs fn in one read-write transaction, with every bucket present.
func (s *Store) update(fn func(tx *bolt.Tx) error) error {
	return s.withDB(false, func(db *bolt.DB) error {
		return db.Update(func(tx *bolt.Tx) error {
			if err := prepare(tx, s.path); err != nil {
				return err
			}
			return fn(tx)
		})
	})
}

// withDB opens the database, calls fn and closes it again, all guarded (see guarded): a
// damaged file gives a *DamagedError, never a crash. A read-only call on a store whose file
// does not exist yet does not call fn.
func (s *Store) withDB(readOnly bool, fn func(db *bolt.DB) error) error {
	h := handle{keep: s.keep}
	return guarded(s.path, func() { closeSoon(h.db, h.f) }, func() error {
		if err := openDB(s.path, readOnly, &h); err != nil || h.db == nil {
			return err
		}
		err := fn(h.db)
		if cerr := h.db.Close(); err == nil && cerr != nil {
			err = fmt.Errorf("store %s: %w", s.path, cerr)
		}
		return err
	})
}

// prepare creates missing buckets and checks (or records) the store's format.
func prepare(tx *bolt.Tx, path string) error {
	if err := checkFormat(tx, path); err != nil {
		return err
	}
	for _, name := range allBuckets {
		if _, err := tx.CreateBucketIfNotExists(name); err != nil {
			return err
		}
	}
	if string(tx.Bucket(bucketMeta).Get(keyFormat)) != format {
		return tx.Bucket(bucketMeta).Put(keyFormat, []byte(format))
	}
	return nil
}

func checkFormat(tx *bolt.Tx, path string) error {
	if b := tx.Bucket(bucketMeta); b != nil {
		if v := b.Get(keyFormat); v != nil && !readable(v) {
			return fmt.Errorf("store %s has format %q; this dipline reads %q and %q", path, clip(string(v)), format, formatV1)
		}
	}
	return nil
}

// handle is an open database and the file under it, kept so that a panic can let go of
// the file (and its lock) even when bbolt cannot close cleanly.
type handle struct {
	db *bolt.DB
	f  *os.File
	// keep, when set, is the one file the store may be (Store.Keep): openDB refuses
	// another and never creates one in its place.
	keep *kept
}

// errEmpty: a read-only open found the file empty (its creator has not written the first
// pages yet); the store holds nothing.
var errEmpty = errors.New("store file is empty")

// openDB opens the bbolt file into h. A read-only open leaves h.db nil when the file does
// not exist or is still empty.
//
// Once bbolt's lock on the file is held, and before bbolt maps it into memory, the file's
// size and meta pages are checked (checkLayout): bbolt trusts them, and a file cut short
// would make it read past the end of the file. A damaged file gives a *DamagedError.
//
// After bbolt has locked the file, openDB checks that the path still names the same file:
// Prune compacts into a new file and renames it over the old one, and a process that opened
// the old file just before must not write into it after the rename.
func openDB(path string, readOnly bool, h *handle) error {
	deadline := time.Now().Add(openTimeout)
	for {
		known := h.keep.known()
		if readOnly || known != nil {
			fi, err := os.Stat(path)
			switch {
			case known != nil && errors.Is(err, os.ErrNotExist):
				return replaced(path, "removed")
			case known != nil && err == nil && !os.SameFile(known, fi):
				return replaced(path, "replaced by another file")
			case readOnly && (errors.Is(err, os.ErrNotExist) || (err == nil && fi.Size() == 0)):
				return nil
			}
		}
		if !readOnly && known == nil {
			if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
				return fmt.Errorf("cannot make the store's folder: %w", err)
			}
		}
		opts := &bolt.Options{
			Timeout:  openTimeout,
			ReadOnly: readOnly,
			OpenFile: func(name string, flag int, perm os.FileMode) (*os.File, error) {
				if known != nil {
					flag &^= os.O_CREATE // the file kept to, or none
				}
				f, err := os.OpenFile(name, flag, perm)
				if known != nil && errors.Is(err, os.ErrNotExist) {
					return nil, replaced(name, "removed")
				} else if err != nil {
					return nil, err
				}
				ok, err := lockDB(f, !readOnly, openTimeout)
				if err != nil || !ok {
					if err == nil {
						err = berrors.ErrTimeout // f is closed by lockDB's waiter
					} else {
						f.Close()
					}
					return nil, err
				}
				if err := checkKept(h.keep, f, name); err != nil {
					f.Close()
					return nil, err
				}
				if err := checkOpened(f, name, readOnly); err != nil {
					f.Close()
					return nil, err
				}
				h.f = f
				return f, nil
			},
		}
		db, err := bolt.Open(path, 0o644, opts)
		if err != nil {
			var de *DamagedError
			switch {
			case errors.As(err, &de), errors.Is(err, ErrReplaced), errors.Is(err, ErrNotAStore):
				return err
			case errors.Is(err, berrors.ErrTimeout):
				return fmt.Errorf("store %s: another dipline command held it for more than %s: %w", path, openTimeout, ErrBusy)
			case readOnly && (errors.Is(err, os.ErrNotExist) || errors.Is(err, errEmpty)):
				return nil
			}
			return fmt.Errorf("store %s: %w", path, err)
		}
		held, err1 := h.f.Stat()
		named, err2 := os.Stat(path)
		if err1 == nil && err2 == nil && os.SameFile(held, named) {
			h.db = db
			return nil
		}
		db.Close()
		h.f = nil
		if time.Now().After(deadline) {
			return fmt.Errorf("store %s: the file kept being replaced for %s while opening it: %w", path, openTimeout, ErrBusy)
		}
	}
}

// checkOpened checks a locked store file before bbolt reads it: an empty file is new (bbolt
// writes its first pages when opening it for writing), anything else must have sound meta
// pages and the length they give.
func checkOpened(f *os.File, path string, readOnly bool) error {
	fi, err := f.Stat()
	if err != nil {
		return err
	}
	if fi.Size() == 0 {
		if readOnly {
			return errEmpty
		}
		return nil
	}
	if _, err := checkLayout(f, fi.Size()); err != nil {
		return layoutError(f, fi.Size(), path, err)
	}
	return nil
}

func get(tx *bolt.Tx, bucket, key []byte) []byte {
	if b := tx.Bucket(bucket); b != nil {
		return b.Get(key)
	}
	return nil
}

func count(tx *bolt.Tx, bucket []byte) int {
	if b := tx.Bucket(bucket); b != nil {
		return b.Stats().KeyN
	}
	return 0
}

// nonNil returns data, or an empty slice for nil: bbolt stores a nil value as an empty one
// anyway, but we say so explicitly.
func nonNil(data []byte) []byte {
	if data == nil {
		return []byte{}
	}
	return data
}
