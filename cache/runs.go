package cache

import (
	"crypto/rand"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"regexp"
	"slices"
	"sort"
	"strings"
	"time"
	"unicode"

	bolt "go.etcd.io/bbolt"
)

// Run is the record of one run of a workflow: what was asked and which keys each step had.
// It is stored as JSON under its ID. The engine writes it when the run starts (State
// RunUnderWay), adds each step's line as the step finishes (CommitStep), and writes it
// whole when the run ends (State RunEnded); so a run that is killed leaves a record of
// everything it stored, and Prune keeps that for a while.
type Run struct {
	ID        string            `json:"id"`
	Started   time.Time         `json:"started"`
	Workflow  string            `json:"workflow_digest"`     // digest of the workflow file's bytes
	File      string            `json:"workflow_file"`       // the path as the user gave it
	Overrides map[string]string `json:"overrides,omitempty"` // command-line settings, name → value
	SetBy     string            `json:"set_by,omitempty"`    // where Overrides came from, when not the command line
	Steps     []RunStep         `json:"steps"`
	// State is RunUnderWay from the run's start until its end, then RunEnded. Records
	// written before runs had states have none, and count as ended.
	State string    `json:"state,omitempty"`
	Ended time.Time `json:"ended,omitzero"`
	// PID and Host name the process that made the run, so that a record still under way
	// can be told from the record of the run holding the store's run lock now.
	PID  int    `json:"pid,omitempty"`
	Host string `json:"host,omitempty"`
}

// A run record's states. RunInterrupted is never stored: it is what a record still
// RunUnderWay means when no live process holds the store's run lock for it.
const (
	RunUnderWay    = "under way"
	RunEnded       = "ended"
	RunInterrupted = "interrupted"
)

// HasEnded reports whether the run's record was completed at its end.
func (r Run) HasEnded() bool { return r.State != RunUnderWay }

// RunStep is one step's line in a run record.
type RunStep struct {
	Step      string    `json:"step"` // kind.label as written in the workflow
	Kind      string    `json:"kind"`
	StepKey   StepKey   `json:"step_key"`
	ResultKey ResultKey `json:"result_key,omitzero"` // zero when the step gave no result
	Status    string    `json:"status"`              // the engine's word for what happened
	Seconds   float64   `json:"seconds"`             // time spent computing (0 when reused)
}

// UnmarshalJSON reads a step line in either form: stores of format formatV1 name the step
// under "address", later ones under "step".
func (rs *RunStep) UnmarshalJSON(b []byte) error {
	type line RunStep // the same fields without this method
	return UnmarshalFormerStep(b, (*line)(rs), &rs.Step)
}

// UnmarshalFormerStep decodes a record into v, a pointer to a type without an
// UnmarshalJSON of its own, and when that leaves *step empty takes it from the "address"
// field under which stores of format formatV1 named a step.
func UnmarshalFormerStep(b []byte, v any, step *string) error {
	if err := json.Unmarshal(b, v); err != nil {
		return err
	}
	if *step != "" {
		return nil
	}
	var former struct {
		Address string `json:"address"`
	}
	if err := json.Unmarshal(b, &former); err != nil {
		return err
	}
	*step = former.Address
	return nil
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

// BadRecord is a run or provenance record that cannot be read. Commands report it and go
// on without it; Verify lists it; Salvage drops it.
type BadRecord struct {
	Bucket string // "runs" or "provenance"
	Key    string // the run id, or the step key in hex
	Why    string
	// Keys are the step and result keys that can still be made out in the record's bytes
	// (every stretch of 64 hex digits in them): Prune keeps what they name, since it
	// cannot tell what the record referred to.
	Keys []string
	sum  [32]byte // SHA-256 of the bytes found, so DropDamaged deletes only those
}

func (b BadRecord) String() string {
	what := "run record"
	if b.Bucket == string(bucketProvenance) {
		what = "provenance record of step key"
	}
	return fmt.Sprintf("%s %s cannot be read: %s", what, clip(b.Key), b.Why)
}

// ProvenanceProblem makes the BadRecord of a provenance record that the engine cannot read,
// for Verify's report and DropDamaged.
func ProvenanceProblem(k StepKey, rec []byte, why error) BadRecord {
	return badRecord(bucketProvenance, k.String(), why, rec)
}

// EachProvenance calls fn with every provenance record, one at a time, in step-key order.
// It reads in batches, each in its own short transaction, and fn gets copies. A key of the
// wrong length is passed as far as it fits.
func (s *Store) EachProvenance(fn func(k StepKey, rec []byte)) error {
	return s.scan(bucketProvenance, func(k, v []byte) {
		var sk StepKey
		copy(sk[:], k)
		fn(sk, v)
	})
}

// Runs returns every run record that reads, oldest first (by start time, then id). A record
// that does not read is skipped; RunRecords lists those too.
func (s *Store) Runs() ([]Run, error) {
	runs, _, err := s.RunRecords()
	return runs, err
}

// RunRecords returns every run record that reads, oldest first, and every one that does
// not, each with what is wrong. One bad record never hides the others.
func (s *Store) RunRecords() ([]Run, []BadRecord, error) {
	var runs []Run
	var bad []BadRecord
	err := s.view(func(tx *bolt.Tx) error {
		runs, bad = readRuns(tx)
		return nil
	})
	return runs, bad, err
}

// readRuns decodes the run records one by one.
func readRuns(tx *bolt.Tx) ([]Run, []BadRecord) {
	var runs []Run
	var bad []BadRecord
	if b := tx.Bucket(bucketRuns); b != nil {
		b.ForEach(func(k, v []byte) error {
			r, err := decodeRun(k, v)
			if err != nil {
				bad = append(bad, badRecord(bucketRuns, string(k), err, v))
				return nil
			}
			runs = append(runs, r)
			return nil
		})
	}
	sortRuns(runs)
	return runs, bad
}

// decodeRun reads one run record. Its key is its id; the id inside must agree.
func decodeRun(k, v []byte) (Run, error) {
	var r Run
	if err := json.Unmarshal(v, &r); err != nil {
		return r, fmt.Errorf("not a run record (%v)", err)
	}
	if r.ID != "" && r.ID != string(k) {
		return r, fmt.Errorf("it holds the record of run %q", clip(r.ID))
	}
	r.ID = string(k)
	for i, st := range r.Steps {
		if st.Step == "" && st.StepKey.IsZero() {
			return r, fmt.Errorf("its step line %d is empty", i+1)
		}
	}
	return r, nil
}

// hexRun finds runs of 64 hex digits: the keys a damaged JSON record still names.
var hexRun = regexp.MustCompile(`[0-9a-fA-F]{64}`)

func badRecord(bucket []byte, key string, err error, v []byte) BadRecord {
	b := BadRecord{Bucket: string(bucket), Key: key, Why: err.Error(), sum: sha256.Sum256(v)}
	for _, m := range hexRun.FindAll(v, -1) {
		b.Keys = append(b.Keys, strings.ToLower(string(m)))
	}
	return b
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
// "latest" (the most recently started run that has ended) or "previous" (the ended run
// before it). A run that is under way or was interrupted is named by its id. A record that
// does not read is skipped, unless ref names it, which is an error saying what is wrong.
func (s *Store) FindRun(ref string) (Run, error) {
	runs, bad, err := s.RunRecords()
	if err != nil {
		return Run{}, err
	}
	switch ref {
	case RefLatest, RefPrevious:
		return pickEnded(runs, ref)
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
		for _, b := range bad {
			if strings.HasPrefix(b.Key, ref) {
				return Run{}, fmt.Errorf("run %q: the %v", clip(ref), b)
			}
		}
		if len(runs) == 0 {
			return Run{}, fmt.Errorf("run %q: the store holds no runs: %w", clip(ref), ErrMissing)
		}
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

// pickEnded returns the latest or previous of the runs that have ended.
func pickEnded(runs []Run, ref string) (Run, error) {
	ended := make([]Run, 0, len(runs))
	for _, r := range runs {
		if r.HasEnded() {
			ended = append(ended, r)
		}
	}
	switch {
	case len(ended) == 0 && len(runs) > 0:
		return Run{}, fmt.Errorf("run %q: no run in the store has ended (%d did not finish; name one by its id): %w", ref, len(runs), ErrMissing)
	case len(ended) == 0:
		return Run{}, fmt.Errorf("run %q: the store holds no runs: %w", ref, ErrMissing)
	case ref == RefLatest:
		return ended[len(ended)-1], nil
	case len(ended) < 2:
		return Run{}, fmt.Errorf("run %q: the store holds only one run that has ended: %w", ref, ErrMissing)
	}
	return ended[len(ended)-2], nil
}

// CommitStep stores a step's entries (as Commit does) and puts step lines into the record
// of run runID, in one transaction: a run killed right after it still has a record naming
// what it stored. The record must exist (the engine writes it when the run starts); a line
// for a step already there replaces it.
func (s *Store) CommitStep(runID string, lines []RunStep, entries ...Entry) error {
	if err := checkEntries(entries); err != nil {
		return err
	}
	return s.update(func(tx *bolt.Tx) error {
		if err := putEntries(tx, entries); err != nil {
			return err
		}
		b := tx.Bucket(bucketRuns)
		v := b.Get([]byte(runID))
		if v == nil {
			return fmt.Errorf("run %q has no record to add its steps to: %w", clip(runID), ErrMissing)
		}
		r, err := decodeRun([]byte(runID), v)
		if err != nil {
			return &DamagedError{Path: s.path, Problem: fmt.Sprintf("the record of run %s cannot be read (%v)", clip(runID), err)}
		}
		for _, st := range lines {
			r.Steps = slices.DeleteFunc(r.Steps, func(x RunStep) bool { return x.Step == st.Step })
			r.Steps = append(r.Steps, st)
		}
		data, err := json.Marshal(r)
		if err != nil {
			return err
		}
		return b.Put([]byte(runID), data)
	})
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
