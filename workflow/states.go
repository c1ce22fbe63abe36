package workflow

// dipline's words for where a step stands: one set, used by every command, by the results
// file, by the events and by the run record. Before a run, `pending` says what a run would
// do with each step; after it, `run` says what it did; `diff` says how a step stands in two
// runs. Each word is plain English of our own, and each describes the step's result, so
// the three read as one story: a step that pending calls *stored* is *reused* by the run;
// one *to compute* is *computed* (or fails); one that *depends* is either, as the result it
// waits for turns out.

// What a run would do with a step (Pending, `dipline pending`).
const (
	// PendingStored: its step key maps to a result in the store that checks out and reads
	// as its kind's result (findStored); a run takes it as it is.
	PendingStored = "stored"
	// PendingToCompute: a run will compute it; the reasons say why (a setting, a file, a
	// version, an upstream result, or a stored result that cannot be used).
	PendingToCompute = "to compute"
	// PendingDepends: it reads a step that is to compute (or depends itself), so its step
	// key is known only once that result is: unchanged bytes leave it stored, new ones make
	// it computed.
	PendingDepends = "depends"
)

// What a run did with a step (Run: `run`'s lines, Outcome.Status, the results file's
// "status" and "statuses", the events, the run record's step lines).
const (
	StatusComputed = "computed" // ran and stored its result
	StatusReused   = "reused"   // its step key was stored with a usable result; that result was used
	StatusFailed   = "failed"   // it returned an error
	StatusSkipped  = "skipped"  // it did not run: a step it reads did not finish, or the run was stopped
)

// How a step stands in two runs (Diff, `dipline diff`).
const (
	// DiffUnchanged: the same step key in both runs, so the same result.
	DiffUnchanged = "unchanged"
	// DiffSameResult: another step key, and a byte-identical result.
	DiffSameResult = "same result"
	// DiffNewResult: another step key and another result; its numbers are compared.
	DiffNewResult = "new result"
	// DiffUnfinished: it gave a result in at most one of the runs (it failed or was
	// skipped in the other); the reasons say in which.
	DiffUnfinished = "unfinished"
	// DiffNewStep: the step is only in the newer run.
	DiffNewStep = "new step"
	// DiffGone: the step is only in the older run.
	DiffGone = "gone"
)
