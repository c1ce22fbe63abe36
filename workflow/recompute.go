package workflow

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"runtime"
	"slices"
	"sort"
	"strconv"
	"strings"
	"sync"
	"time"

	"dipline/cache"
	"dipline/steps"
)

// What recomputing one stored step found, in words of our own.
const (
	// RecomputeSame: run again from its stored inputs, the step gave the result key the
	// store maps its step key to.
	RecomputeSame = "same bits"
	// RecomputeDifferent: run again from its stored inputs, the step gave another result.
	RecomputeDifferent = "different bits"
	// RecomputeDisagrees: the store maps the step key to a result its provenance does not
	// name; found before anything runs, and the step is not run.
	RecomputeDisagrees = "mapping disagrees"
	// RecomputeFailed: the step returned an error when run again.
	RecomputeFailed = "failed"
	// RecomputeDamaged: the store lacks what recomputing needs (the mapping, the provenance
	// record, an input result) or holds it damaged.
	RecomputeDamaged = "store damaged"
	// RecomputeCannot: the step cannot be run as it was, and this says nothing against the
	// store: a file changed since, or the workflow's step is no longer the stored one.
	RecomputeCannot = "cannot recompute"
)

// RecomputeOptions say which stored steps to recompute and on how many workers. None of
// them can change what a step gives.
type RecomputeOptions struct {
	// Run names the run whose steps are recomputed: an id, an id prefix, "latest" (the
	// default) or "previous".
	Run string
	// Sample, when above zero, recomputes only this many of the run's stored steps,
	// chosen by Seed; zero recomputes every one.
	Sample int
	// Seed chooses the sample: the same seed chooses the same steps.
	Seed uint64
	// Workers is the size of the token pool shared by the recomputed steps and their
	// numerical cores (default: the number of CPUs).
	Workers int
	// OnStep, when set, is called as each step's check ends, one call at a time.
	OnStep func(RecomputedStep)
}

// RecomputedStep is what recomputing one stored step found.
type RecomputedStep struct {
	Step    string // kind.label
	Kind    string
	State   string // RecomputeSame, RecomputeDifferent, …
	StepKey cache.StepKey
	// Stored is the result key the store maps the step key to (zero when it maps to none);
	// Named is the one its provenance names. They differ only when State is
	// RecomputeDisagrees.
	Stored cache.ResultKey
	Named  cache.ResultKey
	// Recomputed is the result key of the step run again; zero when it was not run.
	Recomputed cache.ResultKey
	// Why says in a sentence what was found, for every state but RecomputeSame.
	Why string
	// Seconds is the time spent running the step again.
	Seconds float64
}

// Fault reports whether the state speaks against the store or the program: different
// bits, a mapping that disagrees, a failure, a damaged store.
func (s RecomputedStep) Fault() bool {
	return s.State != RecomputeSame && s.State != RecomputeCannot
}

// RecomputeReport is what Recompute found.
type RecomputeReport struct {
	// Run is the id of the run whose steps were recomputed; Stored the number of its
	// steps with a stored result.
	Run    string
	Stored int
	// Steps are the steps checked (every stored step, or the sample), in the run's order.
	Steps []RecomputedStep
	// Mappings is the number of step key → result key entries checked against their
	// provenance, and Runs the number of run records whose steps were checked.
	Mappings int
	Runs     int
	// Problems are what the checks of the whole store found, apart from the steps above.
	Problems []string
}

// OK reports whether nothing speaks against the store: no step's check is a fault and the
// store's checks found no problem. A step that cannot be recomputed is not a fault.
func (r *RecomputeReport) OK() bool {
	for _, s := range r.Steps {
		if s.Fault() {
			return false
		}
	}
	return len(r.Problems) == 0
}

// Count returns how many steps ended in the given state.
func (r *RecomputeReport) Count(state string) int {
	n := 0
	for _, s := range r.Steps {
		if s.State == state {
			n++
		}
	}
	return n
}

// Recompute proves stored results by computing them again. For each stored step of a run
// of w (the latest by default) it first checks, before anything runs, that the store maps
// the step key to the result its provenance names; then it runs the step from its stored
// inputs — the upstream results read from the store by the result keys in its provenance,
// its files as loaded with w (checked against the digests in its provenance), its
// catalogue rows as recorded, its seed — with the engine's own keying and seeds, and
// compares the new result key with the stored one. It also checks the whole store: every
// mapping against its provenance, and every run record's steps for a provenance record
// that names the same result. It writes nothing to the store.
//
// Load w with the run's command-line settings (RunOverrides) so that its steps are the
// ones that ran. The error is for a store that cannot be read or a cancelled ctx (the
// report then holds what was done).
func Recompute(ctx context.Context, w *Workflow, store *cache.Store, opt RecomputeOptions) (*RecomputeReport, error) {
	if opt.Workers <= 0 {
		opt.Workers = runtime.NumCPU()
	}
	if opt.Run == "" {
		opt.Run = cache.RefLatest
	}
	rep, plans, err := w.planAll(store, opt)
	if err != nil {
		return nil, err
	}
	var mu sync.Mutex
	emit := func(s RecomputedStep) {
		if opt.OnStep != nil {
			mu.Lock()
			defer mu.Unlock()
			opt.OnStep(s)
		}
	}
	for _, p := range plans {
		if p.step == nil {
			emit(p.out)
		}
	}
	err = w.runPlans(ctx, store, plans, opt.Workers, emit)
	for i, p := range plans {
		rep.Steps[i] = p.out
	}
	return rep, err
}

// planAll reads the store once and checks, before anything runs, the chosen steps of the
// run one by one and the whole store's mappings and run records.
func (w *Workflow) planAll(store *cache.Store, opt RecomputeOptions) (*RecomputeReport, []*recomputePlan, error) {
	// Runs first, then mappings and provenance: a run record is written after its
	// steps' commits, so every step of a run seen here has its entries in what follows.
	runs, err := store.Runs()
	if err != nil {
		return nil, nil, err
	}
	run, err := store.FindRun(opt.Run)
	if err != nil {
		return nil, nil, err
	}
	list, err := store.StepEntries()
	if err != nil {
		return nil, nil, err
	}
	entries := make(map[cache.StepKey]cache.StepEntry, len(list))
	for _, e := range list {
		entries[e.Step] = e
	}
	stored := storedSteps(run)
	chosen := sampleSteps(stored, opt.Sample, opt.Seed)
	rep := &RecomputeReport{Run: run.ID, Stored: len(stored), Steps: make([]RecomputedStep, len(chosen)), Runs: len(runs)}
	plans := make([]*recomputePlan, len(chosen))
	checked := map[cache.StepKey]bool{}
	for i, rs := range chosen {
		e, ok := entries[rs.StepKey]
		plans[i] = w.planRecompute(rs, e, ok)
		checked[rs.StepKey] = true
	}
	rep.Problems, _, rep.Mappings = entryProblems(list, checked)
	rep.Problems = append(rep.Problems, runProblems(runs, entries, checked)...)
	return rep, plans, nil
}

// Agreement is what StoreAgreement found.
type Agreement struct {
	// Problems are in plain sentences; Disagreeing the step keys whose entries are at odds
	// with their provenance (what DropDamaged removes); Mappings the mappings checked.
	Problems    []string
	Disagreeing []cache.StepKey
	Mappings    int
}

// StoreAgreement checks, without running anything, that the store agrees with itself:
// every step key maps to the result its provenance names (with a provenance record that
// reads and describes that key), and every step of every run record that gave a result has
// such an entry. `store verify` runs it; Recompute runs it for the steps it does not run
// again.
func StoreAgreement(store *cache.Store) (Agreement, error) {
	runs, err := store.Runs()
	if err != nil {
		return Agreement{}, err
	}
	list, err := store.StepEntries()
	if err != nil {
		return Agreement{}, err
	}
	entries := make(map[cache.StepKey]cache.StepEntry, len(list))
	for _, e := range list {
		entries[e.Step] = e
	}
	var a Agreement
	a.Problems, a.Disagreeing, a.Mappings = entryProblems(list, nil)
	a.Problems = append(a.Problems, runProblems(runs, entries, nil)...)
	return a, nil
}

// runPlans runs the planned steps that are ready, each on a token of one pool of the
// given size, and reports each as it ends. The error is the first failure to read the
// store, or ctx's when it ended.
func (w *Workflow) runPlans(ctx context.Context, store *cache.Store, plans []*recomputePlan, workers int, emit func(RecomputedStep)) error {
	pool := steps.NewPool(workers)
	var (
		wg    sync.WaitGroup
		mu    sync.Mutex
		fault error
	)
	for _, p := range plans {
		if p.step == nil {
			continue
		}
		wg.Add(1)
		go func() {
			defer wg.Done()
			err := w.recomputeOne(ctx, store, pool, p)
			if err == nil {
				emit(p.out)
				return
			}
			mu.Lock()
			defer mu.Unlock()
			if fault == nil {
				fault = err
			}
		}()
	}
	wg.Wait()
	if ctx.Err() != nil {
		return ctx.Err()
	}
	return fault
}

// RunOverrides returns the command-line settings a run was made with, in name order, as
// overrides to load the workflow with, so that its steps are the ones that ran.
func RunOverrides(run cache.Run) ([]Override, error) {
	names := make([]string, 0, len(run.Overrides))
	for n := range run.Overrides {
		names = append(names, n)
	}
	sort.Strings(names)
	out := make([]Override, 0, len(names))
	for _, n := range names {
		o, err := ParseOverride(n + "=" + run.Overrides[n])
		if err != nil {
			return nil, fmt.Errorf("run %s: %w", run.ID, err)
		}
		out = append(out, o)
	}
	return out, nil
}

// storedSteps returns the steps of a run that have a stored result, in the run's order.
func storedSteps(run cache.Run) []cache.RunStep {
	var out []cache.RunStep
	for _, rs := range run.Steps {
		if !rs.ResultKey.IsZero() && !rs.StepKey.IsZero() {
			out = append(out, rs)
		}
	}
	return out
}

// sampleSeedTag separates the hash that ranks steps for a sample from every other hash.
const sampleSeedTag = "dipline-recompute-sample/1"

// sampleSteps picks n of the steps (all when n is zero or not below their number): those
// whose SHA-256 of the seed and their name (kind.label) ranks lowest. The same seed picks the same
// steps whatever the order of the run record and however many steps ran; they are
// returned in the run's order.
func sampleSteps(list []cache.RunStep, n int, seed uint64) []cache.RunStep {
	if n <= 0 || n >= len(list) {
		return list
	}
	type ranked struct {
		rank [32]byte
		at   int
	}
	r := make([]ranked, len(list))
	for i, rs := range list {
		b := binary.LittleEndian.AppendUint64([]byte(sampleSeedTag+"\x00"), seed)
		r[i] = ranked{sha256.Sum256(append(append(b, 0), rs.Step...)), i}
	}
	slices.SortFunc(r, func(a, b ranked) int { return bytes.Compare(a.rank[:], b.rank[:]) })
	at := make([]int, n)
	for i := range at {
		at[i] = r[i].at
	}
	slices.Sort(at)
	out := make([]cache.RunStep, n)
	for i, j := range at {
		out[i] = list[j]
	}
	return out
}

// recomputePlan is one step made ready to run again: the workflow's step with its
// catalogue rows as recorded, and the result keys of its inputs from its provenance. When
// step is nil the check has ended and out says why.
type recomputePlan struct {
	out      RecomputedStep
	step     *Step
	upstream map[string]cache.ResultKey
}

// planRecompute checks one stored step before anything runs: its mapping against its
// provenance, then whether the workflow's step, fed the inputs its provenance records,
// has the stored step key.
func (w *Workflow) planRecompute(rs cache.RunStep, e cache.StepEntry, found bool) *recomputePlan {
	p := &recomputePlan{out: RecomputedStep{Step: rs.Step, Kind: rs.Kind, StepKey: rs.StepKey}}
	o := &p.out
	end := func(state, format string, args ...any) *recomputePlan {
		o.State, o.Why = state, fmt.Sprintf(format, args...)
		return p
	}
	switch {
	case !found || !e.Mapped:
		return end(RecomputeDamaged, "its step key %s maps to no result in the store", rs.StepKey.Short())
	case e.Malformed:
		return end(RecomputeDamaged, "the store's entry for its step key %s is malformed", rs.StepKey.Short())
	case e.Provenance == nil:
		return end(RecomputeDamaged, "its step key %s has no provenance record", rs.StepKey.Short())
	}
	o.Stored = e.Result
	prov, named, err := readProvenance(rs.StepKey, e.Provenance)
	if err != nil {
		return end(RecomputeDamaged, "%v", err)
	}
	o.Named = named
	if named != e.Result {
		return end(RecomputeDisagrees, "the mapping disagrees with the provenance: step key %s maps to result %s, but its provenance names result %s",
			rs.StepKey, e.Result, named)
	}
	s := w.Step(rs.Step)
	switch {
	case s == nil:
		return end(RecomputeCannot, "the workflow has no step %s now", rs.Step)
	case s.Kind.Name() != prov.Kind:
		return end(RecomputeCannot, "%s is a %s step in the workflow now, a %s step when stored", rs.Step, s.Kind.Name(), prov.Kind)
	}
	rows, err := recordedRows(s, prov)
	if err != nil {
		return end(RecomputeDamaged, "%v", err)
	}
	upstream, err := recordedInputs(s, prov)
	if err != nil {
		return end(RecomputeDamaged, "%v", err)
	}
	recorded := *s
	recorded.Rows = rows
	if key, err := w.StepKey(&recorded, upstream); err != nil || key != rs.StepKey {
		return end(RecomputeCannot, "%s", strings.Join(w.departures(&recorded, prov, key), "; "))
	}
	p.step, p.upstream = &recorded, upstream
	return p
}

// readProvenance decodes a provenance record and checks it describes the step key it is
// stored under.
func readProvenance(key cache.StepKey, data []byte) (*Provenance, cache.ResultKey, error) {
	var prov Provenance
	if err := json.Unmarshal(data, &prov); err != nil {
		return nil, cache.ResultKey{}, fmt.Errorf("the provenance record of step key %s cannot be read: %v", key.Short(), err)
	}
	if prov.StepKey != key.String() {
		return nil, cache.ResultKey{}, fmt.Errorf("the provenance record under step key %s describes step key %.12s", key.Short(), prov.StepKey)
	}
	named, err := cache.ParseResultKey(prov.ResultKey)
	if err != nil {
		return nil, cache.ResultKey{}, fmt.Errorf("the provenance record of step key %s names no valid result: %v", key.Short(), err)
	}
	return &prov, named, nil
}

// departures says why the workflow's step, given its recorded inputs, does not have the
// stored step key: the differences its provenance shows (settings, file digests, the
// kind's version), its seed, the architecture.
func (w *Workflow) departures(s *Step, prov *Provenance, key cache.StepKey) []string {
	why := recordChanges(prov, s.record())
	if s.Kind.Random() && prov.Seed != nil && *prov.Seed != w.StepSeed(s) {
		why = append(why, fmt.Sprintf("its seed changed (the analysis seed is %d now)", w.Seed))
	}
	if _, arch, _ := strings.Cut(prov.Tool.Arch, "/"); arch != "" && arch != numericsTag {
		why = append(why, fmt.Sprintf("it was computed on %s, and this is %s", arch, numericsTag))
	}
	switch {
	case len(why) > 0:
	case key.IsZero():
		why = append(why, "it reads steps the stored step did not")
	default:
		why = append(why, fmt.Sprintf("its step key as the workflow stands is %s, not %.12s, for a reason its provenance does not show",
			key.Short(), prov.StepKey))
	}
	return why
}

// recordedRows returns the step's catalogue rows with the values its provenance records,
// so that the step recomputes from what it read even if the catalogue was edited since. A
// row the workflow names differently is kept as it is now: the step key then tells.
func recordedRows(s *Step, prov *Provenance) (map[string]*RowInput, error) {
	recs := map[string]RowRecord{}
	for _, r := range prov.Rows {
		recs[r.Param] = r
	}
	rows := make(map[string]*RowInput, len(s.Rows))
	for param, now := range s.Rows {
		rec, ok := recs[param]
		if !ok || rec.Row != now.Address() {
			rows[param] = now
			continue
		}
		in := *now
		in.Path, in.Line, in.Overridden = rec.Path, rec.Line, rec.Overridden
		in.Names, in.Values = make([]string, 0, len(rec.Values)), map[string]float64{}
		for name, text := range rec.Values {
			in.Names = append(in.Names, name)
			if text == "" {
				continue // a blank cell
			}
			v, err := strconv.ParseFloat(text, 64)
			if err != nil {
				return nil, fmt.Errorf("its provenance records column %s of %s as %q, which is not a number", name, rec.Row, text)
			}
			in.Values[name] = v
		}
		sort.Strings(in.Names)
		if in.record(param).Digest != rec.Digest {
			return nil, fmt.Errorf("its provenance's values of %s do not match their digest", rec.Row)
		}
		rows[param] = &in
	}
	return rows, nil
}

// recordedInputs returns, by step, the result keys of the steps it reads as its
// provenance records them, matched parameter by parameter and in order (a step with the
// same key may have been stored from another block that read steps of other names).
func recordedInputs(s *Step, prov *Provenance) (map[string]cache.ResultKey, error) {
	recs := map[string][]InputRecord{}
	for _, in := range prov.Inputs {
		recs[in.Param] = append(recs[in.Param], in)
	}
	params := make([]string, 0, len(s.Refs))
	for p := range s.Refs {
		params = append(params, p)
	}
	sort.Strings(params)
	upstream := map[string]cache.ResultKey{}
	for _, param := range params {
		for i, addr := range s.Refs[param] {
			if i >= len(recs[param]) {
				break // the workflow reads more than was stored: the step key tells
			}
			rk, err := cache.ParseResultKey(recs[param][i].ResultKey)
			if err != nil {
				return nil, fmt.Errorf("its provenance names input %s by a malformed result key: %v", recs[param][i].Step, err)
			}
			if had, ok := upstream[addr]; ok && had != rk {
				return nil, fmt.Errorf("its provenance names two results for %s: %s and %s", addr, had.Short(), rk.Short())
			}
			upstream[addr] = rk
		}
	}
	return upstream, nil
}

// recomputeOne runs a planned step again on one token of the pool, from its inputs read
// back from the store, and compares the result key. The error is for a store that cannot
// be read or a cancelled ctx.
func (w *Workflow) recomputeOne(ctx context.Context, store *cache.Store, pool *steps.Pool, p *recomputePlan) error {
	o := &p.out
	if err := pool.Acquire(ctx); err != nil {
		o.State, o.Why = RecomputeCannot, "the check was interrupted before the step ran"
		return err
	}
	defer pool.Release(1)
	arts, err := w.storedArtifacts(store, p.step, p.upstream)
	if err != nil {
		var dmg *damage
		if errors.As(err, &dmg) {
			o.State, o.Why = RecomputeDamaged, err.Error()
			return nil
		}
		o.State, o.Why = RecomputeDamaged, "the store could not be read: "+err.Error()
		return err
	}
	in := stepInputs(p.step, func(addr string) steps.Artifact { return arts[addr] })
	env := w.stepEnv(p.step, pool, func(string, ...any) {}, nil)
	t0 := time.Now()
	art, err := runGuarded(ctx, p.step, in, env)
	o.Seconds = time.Since(t0).Seconds()
	if err != nil {
		if ctx.Err() != nil {
			o.State, o.Why = RecomputeCannot, "the check was interrupted while the step ran"
			return ctx.Err()
		}
		o.State, o.Why = RecomputeFailed, "run again from its stored inputs, it failed: "+err.Error()
		return nil
	}
	o.Recomputed = cache.ResultKeyOf(art.Encode())
	if o.Recomputed == o.Stored {
		o.State = RecomputeSame
		return nil
	}
	o.State = RecomputeDifferent
	o.Why = fmt.Sprintf("step key %s: the store holds result %s, and running it again from its stored inputs gives result %s",
		o.StepKey, o.Stored, o.Recomputed)
	return nil
}

// damage is an input the store lacks or holds damaged: a finding about the store, not a
// failure to read it.
type damage struct{ msg string }

func (d *damage) Error() string { return d.msg }

// storedArtifacts reads back, by step, the results of the steps s reads (readResult, as a
// run reads a stored result).
func (w *Workflow) storedArtifacts(store *cache.Store, s *Step, upstream map[string]cache.ResultKey) (map[string]steps.Artifact, error) {
	arts := map[string]steps.Artifact{}
	for _, d := range s.Deps {
		held, err := readResult(store, d.Kind, upstream[d.Addr])
		if err != nil {
			return nil, err
		}
		if held.Held != Usable {
			return nil, &damage{fmt.Sprintf("its input %s: %s", d.Addr, held.Why)}
		}
		arts[d.Addr] = held.Artifact
	}
	return arts, nil
}

// entryProblems checks every step key's entries, apart from the keys already checked
// step by step: a malformed entry, a mapping without provenance, a provenance record that
// cannot be read or describes another key, a mapping to a result its provenance does not
// name. It returns the problems and the number of mappings.
func entryProblems(list []cache.StepEntry, checked map[cache.StepKey]bool) ([]string, []cache.StepKey, int) {
	var out []string
	var bad []cache.StepKey
	mappings := 0
	for _, e := range list {
		if e.Mapped {
			mappings++
		}
		if checked[e.Step] {
			continue
		}
		n := len(out)
		switch {
		case e.Malformed:
			out = append(out, fmt.Sprintf("the store's entry for step key %s is malformed", e.Step.Short()))
		case e.Provenance == nil:
			out = append(out, fmt.Sprintf("step key %s maps to result %s but has no provenance record", e.Step, e.Result))
		default:
			prov, named, err := readProvenance(e.Step, e.Provenance)
			switch {
			case err != nil:
				out = append(out, err.Error())
			case e.Mapped && named != e.Result:
				out = append(out, fmt.Sprintf("the mapping disagrees with the provenance: step key %s (%s) maps to result %s, but its provenance names result %s",
					e.Step, prov.Step, e.Result, named))
			}
		}
		if len(out) > n {
			bad = append(bad, e.Step)
		}
	}
	return out, bad, mappings
}

// runProblems checks that every step of every run record that gave a result has a
// provenance record naming that result. A step key checked step by step is not reported
// again for lacking a record.
func runProblems(runs []cache.Run, entries map[cache.StepKey]cache.StepEntry, checked map[cache.StepKey]bool) []string {
	var out []string
	for _, run := range runs {
		for _, rs := range storedSteps(run) {
			e := entries[rs.StepKey]
			if e.Provenance == nil {
				if !checked[rs.StepKey] {
					out = append(out, fmt.Sprintf("run %s: %s (step key %s) has no provenance record", run.ID, rs.Step, rs.StepKey.Short()))
				}
				continue
			}
			if _, named, err := readProvenance(rs.StepKey, e.Provenance); err == nil && named != rs.ResultKey {
				out = append(out, fmt.Sprintf("run %s: %s gave result %s, but the provenance of its step key %s names result %s",
					run.ID, rs.Step, rs.ResultKey, rs.StepKey.Short(), named))
			}
		}
	}
	return out
}
