package workflow

import (
	"encoding/json"
	"errors"
	"fmt"

	"dipline/cache"
	"dipline/steps"
)

// Held says what the store holds for a step: the one reading of a store entry that Run,
// Pending and Diff (and Trace and Recompute, for a result read by its key) all share, so
// that pending never promises a result that the run will not take.
type Held int

const (
	// NotStored: the store maps the step key to no result.
	NotStored Held = iota
	// Usable: the result is there, hashes to its key and reads as a result of the step's
	// kind. Only a usable result is ever reused.
	Usable
	// ResultMissing: the step key maps to a result whose bytes are not in the store (a
	// prune or a salvage dropped them).
	ResultMissing
	// Damaged: the store's entry for the step key is malformed, or the result's bytes fail
	// their checksum.
	Damaged
	// Unreadable: the bytes hash to their key but do not read as a result of the step's
	// kind (they were stored under another kind's step key by a faulty program, or the
	// kind's decoding changed without a version bump).
	Unreadable
)

// Stored is what findStored found for one step key, or readResult for one result key.
type Stored struct {
	Held Held
	// Result is the result key the step key maps to; zero when it maps to none or its
	// entry is malformed.
	Result cache.ResultKey
	// Artifact is the decoded result when Held is Usable, else nil.
	Artifact steps.Artifact
	// Why says, for a result that is held but cannot be used, what is wrong with it:
	// "the stored result 1a2b3c4d5e6f fails its checksum". Empty for NotStored and Usable.
	Why string
}

// findStored reads what the store holds for step key key of a step of the given kind. Every
// kind of damage is a finding (Missing, Damaged, Unreadable) that sends the step to be
// computed again, never an error; the error is for a store that cannot be read at all (a
// damaged file, a fault, a lock held too long).
func findStored(store *cache.Store, kind steps.Kind, key cache.StepKey) (Stored, error) {
	rk, ok, err := store.Lookup(key)
	switch {
	case errors.Is(err, cache.ErrCorrupt): // the mapping itself is malformed
		return Stored{Held: Damaged, Why: fmt.Sprintf("the store's entry for step key %s is malformed", key.Short())}, nil
	case err != nil:
		return Stored{}, err
	case !ok:
		return Stored{Held: NotStored}, nil
	}
	return readResult(store, kind, rk)
}

// readResult reads result rk as a result of the given kind, as findStored does after the
// mapping: for a step key's result, and for a result named by a run record or a
// provenance record.
func readResult(store *cache.Store, kind steps.Kind, rk cache.ResultKey) (Stored, error) {
	st := Stored{Result: rk}
	data, err := store.Get(rk)
	switch {
	case errors.Is(err, cache.ErrMissing):
		st.Held, st.Why = ResultMissing, fmt.Sprintf("the stored result %s is missing", rk.Short())
		return st, nil
	case errors.Is(err, cache.ErrCorrupt):
		st.Held, st.Why = Damaged, fmt.Sprintf("the stored result %s fails its checksum", rk.Short())
		return st, nil
	case err != nil:
		return Stored{}, err
	}
	art, err := kind.Decode(data)
	if err != nil {
		st.Held, st.Why = Unreadable, fmt.Sprintf("the stored result %s does not read as a %s result (%v)", rk.Short(), kind.Name(), err)
		return st, nil
	}
	st.Held, st.Artifact = Usable, art
	return st, nil
}

// provenanceOf reads one provenance record. A record that is missing or does not read is
// no error: it gives a nil record and says why ("" when it read). Only a failure of the
// store itself is an error. Run (a reused step's notes), Pending, Diff and Trace read
// provenance through it.
func provenanceOf(store *cache.Store, key cache.StepKey) (*Provenance, string, error) {
	b, ok, err := store.Provenance(key)
	if err != nil {
		return nil, "", err
	}
	if !ok {
		return nil, "provenance record is missing (pruned, or dropped by a salvage)", nil
	}
	var p Provenance
	if err := json.Unmarshal(b, &p); err != nil {
		return nil, fmt.Sprintf("provenance record cannot be read (%v)", err), nil
	}
	return &p, "", nil
}
