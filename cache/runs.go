package cache

import (
	"crypto/rand"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"sort"
	"strings"
	"time"
	"unicode"

	bolt "go.etcd.io/bbolt"
)

// Run is the record of one run of a workflow: what was asked and which keys each step had.
// It is stored as JSON under its ID.
type Run struct {
	ID        string            `json:"id"`
	Started   time.Time         `json:"started"`
	Workflow  string            `json:"workflow_digest"`     // digest of the workflow file's bytes
	File      string            `json:"workflow_file"`       // the path as the user gave it
	Overrides map[string]string `json:"overrides,omitempty"` // command-line settings, name → value
	Steps     []RunStep         `json:"steps"`
}

// RunStep is one step's line in a run record.
type RunStep struct {
	Address   string    `json:"address"` // kind.label as written in the workflow
	Kind      string    `json:"kind"`
	StepKey   StepKey   `json:"step_key"`
	ResultKey ResultKey `json:"result_key,omitzero"` // zero when the step gave no result
	Status    string    `json:"status"`              // the engine's word for what happened
	Seconds   float64   `json:"seconds"`             // time spent computing (0 when reused)
}

// The run references FindRun understands besides ids and id prefixes.
const (
	RefLatest   = "latest"
	RefPrevious = "previous"
)

// maxRunIDLen bounds run ids; they are typed by users.
const maxRunIDLen = 128

// NewRunID returns a fresh run id for a run started at t: the UTC time to the second and
// eight random hex digits, e.g. "20250314-093000-5f3a9c1e". Ids sort by time, read well in
// a listing, and a prefix such as "20250314" selects a day. The random part keeps ids of
// survey shards started in the same second apart when their stores are merged.
func NewRunID(t time.Time) string {
	var b [4]byte
	if _, err := rand.Read(b[:]); err != nil {
		// crypto/rand does not fail on supported systems; fall back to the nanoseconds.
		return fmt.Sprintf("%s-%08x", t.UTC().Format("20060102-150405"), uint32(t.Nanosecond()))
	}
	return t.UTC().Format("20060102-150405") + "-" + hex.EncodeToString(b[:])
}

func checkRunID(id string) error {
	switch {
	case id == "":
		return errors.New("run id is empty")
	case len(id) > maxRunIDLen:
		return fmt.Errorf("run id %q is longer than %d bytes", clip(id), maxRunIDLen)
	case id == RefLatest || id == RefPrevious:
		return fmt.Errorf("run id %q is reserved", id)
	case strings.IndexFunc(id, func(r rune) bool { return unicode.IsSpace(r) || !unicode.IsPrint(r) }) >= 0:
		return fmt.Errorf("run id %q contains spaces or control characters", clip(id))
	}
	return nil
}

// PutRun stores a run record, replacing one with the same ID (the engine may write the
// record when a run starts and again when it ends). Prune keeps only entries that some run
// record refers to, so the engine should write the record even for an interrupted run.
func (s *Store) PutRun(r Run) error {
	if err := checkRunID(r.ID); err != nil {
		return err
	}
	data, err := json.Marshal(r)
	if err != nil {
		return fmt.Errorf("run %s: %w", r.ID, err)
	}
	return s.update(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketRuns).Put([]byte(r.ID), data)
	})
}

// Runs returns every run record, oldest first (by start time, then id).
func (s *Store) Runs() ([]Run, error) {
	var runs []Run
	err := s.view(func(tx *bolt.Tx) error {
		var err error
		runs, err = readRuns(tx)
		return err
	})
	return runs, err
}

func readRuns(tx *bolt.Tx) ([]Run, error) {
	var runs []Run
	if b := tx.Bucket(bucketRuns); b != nil {
		err := b.ForEach(func(k, v []byte) error {
			var r Run
			if err := json.Unmarshal(v, &r); err != nil {
				return fmt.Errorf("run record %q: %w", clip(string(k)), err)
			}
			r.ID = string(k)
			runs = append(runs, r)
			return nil
		})
		if err != nil {
			return nil, err
		}
	}
	sortRuns(runs)
	return runs, nil
}

func sortRuns(runs []Run) {
	sort.SliceStable(runs, func(i, j int) bool {
		if !runs[i].Started.Equal(runs[j].Started) {
			return runs[i].Started.Before(runs[j].Started)
		}
		return runs[i].ID < runs[j].ID
	})
}

// FindRun returns the run named by ref: a full id, a prefix matching exactly one id,
// "latest" (the most recently started run) or "previous" (the one before it).
func (s *Store) FindRun(ref string) (Run, error) {
	runs, err := s.Runs()
	if err != nil {
		return Run{}, err
	}
	if len(runs) == 0 {
		return Run{}, fmt.Errorf("run %q: the store holds no runs: %w", clip(ref), ErrMissing)
	}
	switch ref {
	case RefLatest:
		return runs[len(runs)-1], nil
	case RefPrevious:
		if len(runs) < 2 {
			return Run{}, fmt.Errorf("run %q: the store holds only one run: %w", ref, ErrMissing)
		}
		return runs[len(runs)-2], nil
	case "":
		return Run{}, errors.New("no run given")
	}
	var matches []Run
	for _, r := range runs {
		if r.ID == ref {
			return r, nil
		}
		if strings.HasPrefix(r.ID, ref) {
			matches = append(matches, r)
		}
	}
	switch len(matches) {
	case 0:
		return Run{}, fmt.Errorf("run %q: no run id starts so: %w", clip(ref), ErrMissing)
	case 1:
		return matches[0], nil
	}
	ids := make([]string, 0, 4)
	for i, r := range matches {
		if i == 3 {
			ids = append(ids, "…")
			break
		}
		ids = append(ids, r.ID)
	}
	return Run{}, fmt.Errorf("run %q is ambiguous: %d runs start so (%s); give more of the id",
		ref, len(matches), strings.Join(ids, ", "))
}

// Pin marks a run as one to keep (for instance the run behind a publication), with a note
// saying why. Prune never drops a pinned run nor anything it refers to. Pinning a pinned run
// replaces its note.
func (s *Store) Pin(runID, note string) error {
	return s.update(func(tx *bolt.Tx) error {
		if tx.Bucket(bucketRuns).Get([]byte(runID)) == nil {
			return fmt.Errorf("pin run %q: %w", clip(runID), ErrMissing)
		}
		return tx.Bucket(bucketPins).Put([]byte(runID), []byte(note))
	})
}

// Unpin removes a run's pin; the run itself stays until a prune drops it.
func (s *Store) Unpin(runID string) error {
	return s.update(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketPins)
		if b.Get([]byte(runID)) == nil {
			return fmt.Errorf("run %q is not pinned: %w", clip(runID), ErrMissing)
		}
		return b.Delete([]byte(runID))
	})
}

// Pins returns the pinned runs, run id → note.
func (s *Store) Pins() (map[string]string, error) {
	pins := map[string]string{}
	err := s.view(func(tx *bolt.Tx) error {
		var err error
		pins, err = readPins(tx)
		return err
	})
	return pins, err
}

func readPins(tx *bolt.Tx) (map[string]string, error) {
	pins := map[string]string{}
	if b := tx.Bucket(bucketPins); b != nil {
		err := b.ForEach(func(k, v []byte) error {
			pins[string(k)] = string(v)
			return nil
		})
		return pins, err
	}
	return pins, nil
}
