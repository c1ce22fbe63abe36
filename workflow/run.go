package workflow

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"sort"
	"sync"
	"time"

	"dipline/cache"
	"dipline/steps"
)

// Options tune a run; none of them can change a result.
type Options struct {
	// Workers is the size of the token pool shared by steps and numerical cores
	// (default: the number of CPUs).
	Workers int
	// OnEvent is called as each step ends, from the step's goroutine, one call at a time.
	OnEvent func(Event)
	// OnProgress, when set, is told how far a computing step is: done out of total units
	// of its own work (steps.Env.Progress), never going back, ending at done = total when
	// the step reports to the end. It is called from the steps' goroutines, for several
	// steps at once, so it must be safe for concurrent use, and quick. What it is told
	// reaches no key, record or result.
	OnProgress func(step string, done, total int)
	// Events, when set, receives one JSON object per line per step.
	Events io.Writer
	// Now gives the time for run and provenance records (default time.Now).
	Now func() time.Time
}

// Event is one step's outcome in a run.
type Event struct {
	Step      string  `json:"step"` // kind.label
	Kind      string  `json:"kind"`
	Status    string  `json:"status"`
	StepKey   string  `json:"step_key"`
	ResultKey string  `json:"result_key,omitempty"`
	Seconds   float64 `json:"seconds"`
	// Notes are derived defaults and other facts the step reported (recorded in its
	// provenance; repeated from there when the step is reused).
	Notes []string `json:"notes,omitempty"`
	// Warning says what went wrong with a stored result that had to be recomputed.
	Warning string `json:"warning,omitempty"`
	// Error says why a step failed or was skipped (the outcome's Message).
	Error string `json:"error,omitempty"`
}

// Outcome is what a run produced for one step.
type Outcome struct {
	Step      *Step
	Status    string
	StepKey   cache.StepKey // zero when the step stopped before its key was known
	ResultKey cache.ResultKey
	Artifact  steps.Artifact
	Seconds   float64
	// Err is why the step failed or was skipped; Cause classifies it (CauseInput, …) and
	// Message says it for the user (an attribute's mistake names the block and attribute).
	Err     error
	Cause   string
	Message string
	// Place is the line of the workflow holding the setting a step refused when it ran (a
	// *SettingError); nil otherwise.
	Place *Place
	// Warning says why a stored result could not be used and the step was computed again.
	Warning string
	// failedUpstream lists, for a step skipped because of failures upstream, the steps
	// that failed, so a skip further down names them rather than the skip between.
	failedUpstream []string
}

// Finished reports whether the step has a result (computed or reused).
func (o *Outcome) Finished() bool { return o.Artifact != nil }

// Report is the outcome of a whole run.
type Report struct {
	Run      cache.Run
	Outcomes []*Outcome // in the workflow's order
	// ResultsPath is the results file written, or "" when it could not be written.
	ResultsPath string
	// ReportPath is the page written beside it (report.html, present.go), or "".
	ReportPath string
}

// Run computes or reuses every step of w, storing each computed result at once (so an
// interrupted run keeps its finished work), then writes the run record and the results
// file. A step that fails stops only the steps that read its result, directly or through
// others: they are skipped with the reason, and every other step still runs. Only an
// interruption (ctx cancelled) or a fault of the store stops the whole run. The run record
// and the results file are written in every case once the run's record is in the store,
// with every finished step's figures and each failure and skip; when any step did not
// finish, or the record or the file could not be written, the error is a *RunError. When
// the store cannot take the run's record at the start, nothing runs and nothing is
// written: Run returns no report, only the error. The caller holds the store's run lock.
func Run(ctx context.Context, w *Workflow, store *cache.Store, opt Options) (*Report, error) {
	if opt.Workers <= 0 {
		opt.Workers = runtime.NumCPU()
	}
	if opt.Now == nil {
		opt.Now = time.Now
	}
	runCtx, stop := context.WithCancelCause(ctx)
	defer stop(nil)
	pool := steps.NewPool(opt.Workers)

	r := &runner{w: w, store: store, pool: pool, opt: opt, parent: ctx, stop: stop, done: map[*Step]chan struct{}{},
		out: map[*Step]*Outcome{}, run: startRecord(w, opt.Now())}
	for _, s := range w.Order {
		r.done[s] = make(chan struct{})
		r.out[s] = &Outcome{Step: s}
	}
	runErr := &RunError{}
	// The record is written before any step runs, and each step's line is added as it
	// finishes, so a run that is killed leaves a record of all it stored (cache.Run). A
	// store that cannot take it (cut short, not writable) can keep nothing of the run:
	// nothing runs, and the results folder is left as it was rather than replaced by a file
	// of a run no store knows.
	if err := store.PutRun(r.run); err != nil {
		return nil, fmt.Errorf("writing the run record: %w", err)
	}
	r.runAll(runCtx)

	rep := &Report{}
	run := r.run
	run.State, run.Ended = cache.RunEnded, opt.Now().UTC()
	for _, s := range w.Steps {
		o := r.out[s]
		rep.Outcomes = append(rep.Outcomes, o)
		run.Steps = append(run.Steps, stepLine(o))
		runErr.add(o)
		runErr.Interrupted = runErr.Interrupted || (o.Cause == CauseStopped && ctx.Err() != nil)
	}
	rep.Run = run
	if err := store.PutRun(run); err != nil {
		runErr.Faults = append(runErr.Faults, fmt.Errorf("writing the run record: %w", err))
	}
	path := filepath.Join(w.OutputDir, "results.json")
	if err := writeAtomic(path, marshal(resultsOf(w, run.ID, rep.Outcomes))); err != nil {
		runErr.Faults = append(runErr.Faults, fmt.Errorf("writing the results file: %w", err))
	} else {
		rep.ResultsPath = path
	}
	if page, err := writeReport(w, store, run, rep.Outcomes); err != nil {
		runErr.Faults = append(runErr.Faults, fmt.Errorf("writing the report: %w", err))
	} else {
		rep.ReportPath = page
	}
	if runErr.empty() {
		return rep, nil
	}
	return rep, runErr
}

// startRecord is a run's record as it starts: under way, with no step yet.
func startRecord(w *Workflow, started time.Time) cache.Run {
	host, _ := os.Hostname()
	run := cache.Run{ID: cache.NewRunID(started), Started: started.UTC(), Workflow: hexKey(w.Digest), File: w.Path,
		Steps: []cache.RunStep{}, State: cache.RunUnderWay, PID: os.Getpid(), Host: host}
	if len(w.Overrides) > 0 {
		run.SetBy = w.SetBy
		run.Overrides = map[string]string{}
		for _, o := range w.Overrides {
			run.Overrides[o.Addr+"."+o.Attr] = o.Value
		}
	}
	return run
}

// stepLine is a step's line in the run record.
func stepLine(o *Outcome) cache.RunStep {
	return cache.RunStep{Step: o.Step.Addr, Kind: o.Step.Kind.Name(), StepKey: o.StepKey,
		ResultKey: o.ResultKey, Status: o.Status, Seconds: o.Seconds}
}

// runAll runs every step in its own goroutine and waits for them all.
func (r *runner) runAll(ctx context.Context) {
	var wg sync.WaitGroup
	for _, s := range r.w.Order {
		wg.Add(1)
		go func() {
			defer wg.Done()
			defer close(r.done[s])
			defer r.recoverStep(s)
			r.step(ctx, s)
		}()
	}
	wg.Wait()
}

// recoverStep turns a panic anywhere in a step's goroutine (the engine's own code around
// the step, not only the step's Run, which runGuarded covers) into the step's failure, a
// fault of the program: the run goes on, and no panic reaches the user.
func (r *runner) recoverStep(s *Step) {
	p := recover()
	if p == nil {
		return
	}
	o := r.out[s]
	err := programFault("panic: %v", p)
	o.Status, o.Err, o.Cause, o.Message = StatusFailed, err, CauseProgram, err.Error()
	o.Artifact, o.ResultKey = nil, cache.ResultKey{}
	r.emit(o, nil)
}

type runner struct {
	w     *Workflow
	store *cache.Store
	pool  *steps.Pool
	opt   Options
	// parent is the caller's context (cancelled on an interruption); stop ends the whole
	// run, and only a store fault calls it.
	parent context.Context
	stop   context.CancelCauseFunc
	done   map[*Step]chan struct{}
	out    map[*Step]*Outcome
	// run is the run's record as written at its start.
	run cache.Run
	// reused holds the lines of reused steps not yet in the stored record: they are
	// written before the next computation starts (and with the final record), which spares
	// a run that reuses everything a transaction per step.
	reused   []cache.RunStep
	reusedMu sync.Mutex

	evMu sync.Mutex
}

// emit reports a step's outcome, with the notes it made (or, reused, those its provenance
// keeps).
func (r *runner) emit(o *Outcome, notes []string) {
	ev := Event{Step: o.Step.Addr, Kind: o.Step.Kind.Name(), Status: o.Status, Seconds: o.Seconds,
		Notes: notes, Warning: o.Warning, Error: o.Message}
	if !o.StepKey.IsZero() {
		ev.StepKey = o.StepKey.String()
	}
	if !o.ResultKey.IsZero() {
		ev.ResultKey = o.ResultKey.String()
	}
	r.evMu.Lock()
	defer r.evMu.Unlock()
	if r.opt.Events != nil {
		b, _ := json.Marshal(ev)
		r.opt.Events.Write(append(b, '\n'))
	}
	if r.opt.OnEvent != nil {
		r.opt.OnEvent(ev)
	}
}

// step brings one step to an outcome: skipped when an upstream step did not finish,
// reused when the store holds a usable result for its key, else computed and committed.
func (r *runner) step(ctx context.Context, s *Step) {
	o := r.out[s]
	upstream, ok := r.awaitUpstream(ctx, s, o)
	if !ok {
		return
	}
	key, err := r.w.StepKey(s, upstream)
	if err != nil {
		r.fail(o, err)
		return
	}
	o.StepKey = key
	if r.reuse(s, o) {
		return
	}
	// Before a computation, which may be long, the record gets the reused steps' lines, so
	// a run killed during it names every result it had used.
	if lines := r.noted(); len(lines) > 0 {
		if err := r.store.CommitStep(r.run.ID, lines); err != nil {
			r.storeFault(o, fmt.Errorf("recording the reused steps in the run record: %w", err))
			return
		}
	}
	r.compute(ctx, s, o, upstream)
}

// awaitUpstream waits for the steps s reads and collects their result keys; when one did
// not finish it skips s (saying which failed, or that the run stopped) and returns false.
func (r *runner) awaitUpstream(ctx context.Context, s *Step, o *Outcome) (map[string]cache.ResultKey, bool) {
	upstream := map[string]cache.ResultKey{}
	var failed, idle []string
	stopped := false
	for _, d := range s.Deps {
		<-r.done[d]
		do := r.out[d]
		switch {
		case do.Finished():
			upstream[d.Addr] = do.ResultKey
		case do.Cause == CauseStopped:
			stopped = true
		case do.Status == StatusFailed:
			failed = appendNew(failed, d.Addr)
		case do.Cause == CauseNothing:
			idle = appendNew(idle, d.Addr)
		default:
			for _, f := range do.failedUpstream {
				failed = appendNew(failed, f)
			}
		}
	}
	switch {
	case stopped:
		r.skip(o, CauseStopped, r.stopReason(ctx, false))
		return nil, false
	case len(failed) > 0:
		o.failedUpstream = failed
		r.skip(o, CauseUpstream, fmt.Errorf("not run: %s failed", joinAnd(failed)))
		return nil, false
	case len(idle) > 0:
		r.skip(o, CauseNothing, fmt.Errorf("not run: %s had nothing to work on", joinAnd(idle)))
		return nil, false
	case ctx.Err() != nil:
		r.skip(o, CauseStopped, r.stopReason(ctx, false))
		return nil, false
	}
	return upstream, true
}

// reuse takes the stored result of o's step key when findStored finds it usable, as Pending
// does, and reports whether it did (or the store failed, which ends the step too); any
// other stored entry is computed again, and the user told why.
func (r *runner) reuse(s *Step, o *Outcome) bool {
	held, err := findStored(r.store, s.Kind, o.StepKey)
	if err != nil {
		r.storeFault(o, err)
		return true
	}
	if held.Held == Usable {
		o.Status, o.ResultKey, o.Artifact = StatusReused, held.Result, held.Artifact
		r.note(stepLine(o))
		r.emit(o, r.storedNotes(o.StepKey))
		return true
	}
	if held.Why != "" {
		o.Warning = held.Why + "; computing it again"
	}
	return false
}

// compute runs the step on a pool token and commits its result with its provenance.
func (r *runner) compute(ctx context.Context, s *Step, o *Outcome, upstream map[string]cache.ResultKey) {
	in := stepInputs(s, func(a string) steps.Artifact { return r.out[r.w.byAddr[a]].Artifact })
	var (
		notes   []string
		notesMu sync.Mutex
	)
	env := r.w.stepEnv(s, r.pool, func(format string, args ...any) {
		notesMu.Lock()
		notes = append(notes, fmt.Sprintf(format, args...))
		notesMu.Unlock()
	}, r.progress(s))
	if base, err := r.w.partsBase(s, upstream); err == nil {
		env.Parts = &stepParts{store: r.store, base: base, notef: env.Notef}
	}
	if err := r.pool.Acquire(ctx); err != nil {
		r.skip(o, CauseStopped, r.stopReason(ctx, false))
		return
	}
	began := r.opt.Now()
	t0 := time.Now()
	art, err := runGuarded(ctx, s, in, env)
	o.Seconds = time.Since(t0).Seconds()
	r.pool.Release(1)
	if err != nil {
		if ctx.Err() != nil { // stopped while it ran
			r.skip(o, CauseStopped, r.stopReason(ctx, true))
			return
		}
		r.fail(o, err)
		return
	}
	data := art.Encode()
	rk := cache.ResultKeyOf(data)
	prov := r.provenance(s, o.StepKey, rk, upstream, env, notes, began, o.Seconds)
	line := cache.RunStep{Step: s.Addr, Kind: s.Kind.Name(), StepKey: o.StepKey, ResultKey: rk, Status: StatusComputed, Seconds: o.Seconds}
	entry := cache.Entry{Step: o.StepKey, Result: rk, Data: data, Provenance: marshal(prov)}
	if err := r.store.CommitStep(r.run.ID, append(r.noted(), line), entry); err != nil {
		r.storeFault(o, fmt.Errorf("storing the result: %w", err))
		return
	}
	o.Status, o.ResultKey, o.Artifact = StatusComputed, rk, art
	r.emit(o, notes)
}

// progress is the step's reporter of progress, or nil when the run has no OnProgress.
func (r *runner) progress(s *Step) func(done, total int) {
	if r.opt.OnProgress == nil {
		return nil
	}
	return func(done, total int) { r.opt.OnProgress(s.Addr, done, total) }
}

// note keeps a reused step's line for the next commit.
func (r *runner) note(line cache.RunStep) {
	r.reusedMu.Lock()
	r.reused = append(r.reused, line)
	r.reusedMu.Unlock()
}

// noted takes the reused steps' lines kept so far.
func (r *runner) noted() []cache.RunStep {
	r.reusedMu.Lock()
	defer r.reusedMu.Unlock()
	lines := r.reused
	r.reused = nil
	return lines
}

// runGuarded runs a step, turning a panic into an error so that no panic reaches the user.
func runGuarded(ctx context.Context, s *Step, in steps.Inputs, env steps.Env) (art steps.Artifact, err error) {
	defer func() {
		if p := recover(); p != nil {
			art, err = nil, programFault("panic: %v", p)
		}
	}()
	art, err = s.Kind.Run(ctx, s.Config, in, env)
	if err == nil && art == nil {
		err = programFault("the step gave neither a result nor an error")
	}
	if err == nil && ctx.Err() != nil {
		err = ctx.Err()
	}
	return art, err
}

// fail records a step's own failure; it stops nothing but the steps that read its result.
// A setting the step refused becomes a *SettingError, placed in the workflow file.
func (r *runner) fail(o *Outcome, err error) {
	if steps.IsNothing(err) {
		r.skip(o, CauseNothing, err)
		return
	}
	err = r.w.settingError(o.Step, err)
	var se *SettingError
	if errors.As(err, &se) {
		o.Place = se.Place
	}
	o.Status, o.Err, o.Cause, o.Message = StatusFailed, err, causeOf(err), message(err)
	r.emit(o, nil)
}

// storeFault records a failure of the store and stops the whole run: a store that cannot
// be read or written cannot keep any further result.
func (r *runner) storeFault(o *Outcome, err error) {
	err = &storeError{err}
	r.stop(fmt.Errorf("%s: %w", o.Step.Addr, err))
	o.Status, o.Err, o.Cause, o.Message = StatusFailed, err, CauseProgram, err.Error()
	r.emit(o, nil)
}

// skip records a step that did not run, with the reason.
func (r *runner) skip(o *Outcome, cause string, why error) {
	o.Status, o.Err, o.Cause, o.Message = StatusSkipped, why, cause, why.Error()
	r.emit(o, nil)
}

// storedNotes are the notes a reused step's provenance keeps, repeated in its event.
func (r *runner) storedNotes(key cache.StepKey) []string {
	if p, _, err := provenanceOf(r.store, key); err == nil && p != nil {
		return p.Notes
	}
	return nil
}

func (r *runner) provenance(s *Step, key cache.StepKey, rk cache.ResultKey, upstream map[string]cache.ResultKey,
	env steps.Env, notes []string, began time.Time, secs float64) Provenance {
	p := Provenance{Step: s.Addr, Kind: s.Kind.Name(), Version: s.Kind.Version(), StepKey: key.String(),
		ResultKey: rk.String(), Config: s.Rendered(), Notes: notes, Tool: ToolInfo(), Started: began.UTC(), Seconds: secs}
	names := make([]string, 0, len(s.Refs))
	for n := range s.Refs {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		for _, a := range s.Refs[n] {
			p.Inputs = append(p.Inputs, InputRecord{Param: n, Step: a,
				StepKey: r.out[r.w.byAddr[a]].StepKey.String(), ResultKey: upstream[a].String()})
		}
	}
	names = names[:0]
	for n := range s.Files {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		for _, f := range s.Files[n] {
			p.Files = append(p.Files, FileRecord{Param: n, Path: f.Path, SHA256: hexKey(f.Digest), Bytes: len(f.Data)})
		}
	}
	for _, prm := range s.Kind.Params() {
		if row := s.Rows[prm.Name]; row != nil {
			p.Rows = append(p.Rows, row.record(prm.Name))
		}
	}
	if s.Kind.Random() {
		seed := env.Seed
		p.Seed = &seed
	}
	return p
}
