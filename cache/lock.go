package cache

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"
)

// lockPoll is how often a waiting LockRun tries the lock again: short enough that the
// next run starts promptly, long enough to cost nothing.
const lockPoll = 100 * time.Millisecond

// RunLock is held by a dipline run for its whole duration, so that two runs never work on
// one store at once. It is a lock file beside the database (its path plus ".lock"), apart
// from bbolt's own lock, which the Store takes only for single transactions; read-only
// commands therefore never need the RunLock.
type RunLock struct {
	f    *os.File
	path string
}

// holder is what a lock holder writes into the lock file so that a waiter can say who it
// is waiting for.
type holder struct {
	PID   int       `json:"pid"`
	Host  string    `json:"host,omitempty"`
	Since time.Time `json:"since"`
}

func (h holder) String() string {
	s := fmt.Sprintf("pid %d", h.PID)
	if host, _ := os.Hostname(); h.Host != "" && h.Host != host {
		s += " on " + h.Host
	}
	return s + ", since " + h.Since.Local().Format("2006-01-02 15:04:05")
}

// BusyError is LockRun's error when the store stayed in use for the whole wait. It wraps
// ErrBusy.
type BusyError struct {
	Store  string        // the database path
	Holder string        // who holds it, e.g. "pid 4242, since 2025-03-14 09:30:00"
	Waited time.Duration // how long LockRun waited
}

func (e *BusyError) Error() string {
	return fmt.Sprintf("the store %s is in use by another dipline run (%s); gave up after %s",
		e.Store, e.Holder, e.Waited.Round(time.Millisecond))
}

// Unwrap lets errors.Is(err, ErrBusy) recognise a BusyError.
func (e *BusyError) Unwrap() error { return ErrBusy }

// ErrNotALock: a file where the run lock belongs holds something else. LockRun leaves it
// exactly as it is.
var ErrNotALock = errors.New("not a dipline run lock")

// maxLockBytes bounds a lock file that can be ours: a holder record is under 200 bytes.
const maxLockBytes = 4096

// IsRunLock tells whether data, the content of a lock file, can be dipline's: empty (no run
// holds it, or one has just created it) or a holder record.
func IsRunLock(data []byte) bool {
	t := bytes.TrimSpace(data)
	if len(t) == 0 {
		return true
	}
	var h holder
	return len(data) <= maxLockBytes && json.Unmarshal(t, &h) == nil && h.PID > 0
}

// LockRun takes the run lock of the store at storePath. If another process (or another
// goroutine: each LockRun opens the file anew) holds it, LockRun calls onWait once with a
// description of the holder, then tries again every 100 ms until wait has passed and
// returns a *BusyError. A wait of 0 tries once; a negative wait waits for ever. onWait may
// be nil.
//
// The lock file is opened without truncating it and without following a symbolic link; a
// file there that is not a run lock (IsRunLock) is left intact and LockRun fails with
// ErrNotALock, so that a store named beside someone's file cannot damage it.
func LockRun(storePath string, wait time.Duration, onWait func(holder string)) (*RunLock, error) {
	path := storePath + ".lock"
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		return nil, fmt.Errorf("cannot make the store's folder: %w", err)
	}
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE|openNoFollow, 0o644)
	if err != nil {
		return nil, fmt.Errorf("run lock: %w", err)
	}
	if err := checkOurs(f, path, false); err != nil {
		f.Close()
		return nil, err
	}
	start := time.Now()
	waited := false
	for {
		ok, err := tryLock(f)
		if err != nil {
			f.Close()
			return nil, fmt.Errorf("run lock %s: %w", path, err)
		}
		if ok {
			// The content is read under the lock only: a holder writes its record under it.
			if err := checkOurs(f, path, true); err != nil {
				unlock(f)
				f.Close()
				return nil, err
			}
			break
		}
		who := readHolder(f)
		if !waited && onWait != nil {
			onWait(who)
		}
		waited = true
		elapsed := time.Since(start)
		if wait >= 0 && elapsed >= wait {
			f.Close()
			return nil, &BusyError{Store: storePath, Holder: who, Waited: elapsed}
		}
		pause := lockPoll
		if wait >= 0 && wait-elapsed < pause {
			pause = wait - elapsed
		}
		time.Sleep(pause)
	}
	host, _ := os.Hostname()
	rec, _ := json.Marshal(holder{PID: os.Getpid(), Host: host, Since: time.Now().UTC().Truncate(time.Second)})
	// The record is informative only; failing to write it does not make the lock invalid.
	if f.Truncate(0) == nil {
		f.WriteAt(append(rec, '\n'), 0)
	}
	return &RunLock{f: f, path: path}, nil
}

// checkOurs fails with ErrNotALock when the lock file is not a regular file or is too large
// to be a run lock and, when content is set, when it holds something other than a run lock.
// It reads at most maxLockBytes and writes nothing.
func checkOurs(f *os.File, path string, content bool) error {
	st, err := f.Stat()
	if err != nil {
		return fmt.Errorf("run lock %s: %w", path, err)
	}
	if !st.Mode().IsRegular() {
		return fmt.Errorf("%s is %w (it is not a regular file); dipline leaves it as it is: move it aside or name another store", path, ErrNotALock)
	}
	if st.Size() > maxLockBytes {
		return fmt.Errorf("%s is %w (it holds %d bytes of other data); dipline leaves it as it is: move it aside or name another store",
			path, ErrNotALock, st.Size())
	}
	if !content {
		return nil
	}
	buf := make([]byte, maxLockBytes+1)
	n, err := f.ReadAt(buf, 0)
	if err != nil && !errors.Is(err, io.EOF) {
		return fmt.Errorf("run lock %s: %w", path, err)
	}
	if !IsRunLock(buf[:n]) {
		return fmt.Errorf("%s is %w (it holds %d bytes of other data); dipline leaves it as it is: move it aside or name another store",
			path, ErrNotALock, st.Size())
	}
	return nil
}

// readHolder describes the lock's holder from the lock file; the holder may be writing it
// at this moment, so a record that does not parse is reported as unknown.
func readHolder(f *os.File) string {
	buf := make([]byte, 512)
	n, _ := f.ReadAt(buf, 0)
	var h holder
	if err := json.Unmarshal([]byte(strings.TrimSpace(string(buf[:n]))), &h); err != nil || h.PID == 0 {
		return "holder unknown"
	}
	return h.String()
}

// Release gives the lock up. It is safe to call more than once. The lock file stays (removing
// it would let a waiter lock a file that no longer has a name); its holder record is cleared.
func (l *RunLock) Release() error {
	if l == nil || l.f == nil {
		return nil
	}
	l.f.Truncate(0)
	err := unlock(l.f)
	if cerr := l.f.Close(); err == nil {
		err = cerr
	}
	l.f = nil
	return err
}
