package workflow

import (
	"fmt"
	"math"
	"sort"

	"dipline/cache"
	"dipline/steps"
)

// StepDiff compares one step between two runs.
type StepDiff struct {
	Step string // kind.label
	// State is DiffUnchanged, DiffSameResult, DiffNewResult, DiffUnfinished, DiffNewStep
	// or DiffGone (states.go).
	State string
	// Why lists what differs in the step's own inputs: settings old → new, file digests,
	// catalogue values, the kind's version, and which upstream results changed; for an
	// unfinished step, in which run it did not finish.
	Why []string
	// Shifts compares the step's figures, for a changed result.
	Shifts []Shift
}

// Shift is how far one reported number moved between two runs.
type Shift struct {
	Name, Unit string
	Old, New   Figure
	// Delta is New − Old; InSigma is Delta over the old number's σ (NaN when it has none).
	Delta, InSigma float64
	// MCError is the Monte Carlo error of Delta: the two numbers' own Monte Carlo errors
	// added in quadrature (0 when both are exact). A shift within a few MCError may be
	// nothing but sampling noise.
	MCError float64
}

// Figure is the part of a steps.Figure a diff shows.
type Figure struct{ Value, Sigma, MCError float64 }

// DiffReport compares two runs.
type DiffReport struct {
	Old, New cache.Run
	// Overrides lists command-line settings that differ between the runs.
	Overrides []string
	Steps     []StepDiff
}

// Diff compares two runs of a store, given by id, prefix, "latest" or "previous".
func Diff(store *cache.Store, reg steps.Registry, oldRef, newRef string) (*DiffReport, error) {
	oldRun, err := store.FindRun(oldRef)
	if err != nil {
		return nil, err
	}
	newRun, err := store.FindRun(newRef)
	if err != nil {
		return nil, err
	}
	rep := &DiffReport{Old: oldRun, New: newRun}
	for _, k := range unionKeys(oldRun.Overrides, newRun.Overrides) {
		a, had := oldRun.Overrides[k]
		b, has := newRun.Overrides[k]
		switch {
		case had && has && a != b:
			rep.Overrides = append(rep.Overrides, fmt.Sprintf("--set %s: %s → %s", k, a, b))
		case had && !has:
			rep.Overrides = append(rep.Overrides, fmt.Sprintf("--set %s=%s only in the old run", k, a))
		case !had && has:
			rep.Overrides = append(rep.Overrides, fmt.Sprintf("--set %s=%s only in the new run", k, b))
		}
	}
	olds := map[string]cache.RunStep{}
	for _, s := range oldRun.Steps {
		olds[s.Step] = s
	}
	seen := map[string]bool{}
	for _, ns := range newRun.Steps {
		seen[ns.Step] = true
		os, ok := olds[ns.Step]
		if !ok {
			rep.Steps = append(rep.Steps, StepDiff{Step: ns.Step, State: DiffNewStep})
			continue
		}
		d, err := diffStep(store, reg, os, ns)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", ns.Step, err)
		}
		rep.Steps = append(rep.Steps, d)
	}
	for _, os := range oldRun.Steps {
		if !seen[os.Step] {
			rep.Steps = append(rep.Steps, StepDiff{Step: os.Step, State: DiffGone})
		}
	}
	return rep, nil
}

func diffStep(store *cache.Store, reg steps.Registry, os, ns cache.RunStep) (StepDiff, error) {
	d := StepDiff{Step: ns.Step, State: DiffUnchanged}
	if os.StepKey == ns.StepKey {
		return d, nil
	}
	if os.ResultKey.IsZero() || ns.ResultKey.IsZero() {
		d.State = DiffUnfinished
		for _, r := range []struct {
			run string
			rs  cache.RunStep
		}{{"old", os}, {"new", ns}} {
			switch {
			case !r.rs.ResultKey.IsZero():
			case r.rs.Status == StatusFailed:
				d.Why = append(d.Why, "it failed in the "+r.run+" run")
			case r.rs.Status == StatusSkipped:
				d.Why = append(d.Why, "it was skipped in the "+r.run+" run")
			default:
				d.Why = append(d.Why, "it gave no result in the "+r.run+" run")
			}
		}
		return d, nil // a step with no result has no provenance to compare
	}
	oldP, whyO, err := provenanceOf(store, os.StepKey)
	if err != nil {
		return d, err
	}
	newP, whyN, err := provenanceOf(store, ns.StepKey)
	if err != nil {
		return d, err
	}
	if oldP != nil && newP != nil {
		d.Why = provenanceChanges(oldP, newP)
	} else {
		var why []string
		for _, w := range []struct{ run, why string }{{"old", whyO}, {"new", whyN}} {
			if w.why != "" {
				why = append(why, "the "+w.run+" run's "+w.why)
			}
		}
		d.Why = append(d.Why, "the cause cannot be shown: "+joinAnd(why))
	}
	if os.ResultKey == ns.ResultKey {
		d.State = DiffSameResult
		return d, nil
	}
	d.State = DiffNewResult
	kind := reg[ns.Kind]
	if kind == nil || reg[os.Kind] != kind {
		return d, nil
	}
	oldF, whyO, err := figuresOf(store, kind, os.ResultKey)
	if err != nil {
		return d, err
	}
	newF, whyN, err := figuresOf(store, kind, ns.ResultKey)
	if err != nil {
		return d, err
	}
	if whyO != "" || whyN != "" {
		// A result that is gone or damaged stops only this step's comparison.
		var why []string
		for _, w := range []struct{ run, why string }{{"old", whyO}, {"new", whyN}} {
			if w.why != "" {
				why = append(why, "in the "+w.run+" run, "+w.why)
			}
		}
		d.Why = append(d.Why, "its numbers cannot be compared: "+joinAnd(why))
		return d, nil
	}
	byName := map[string]steps.Figure{}
	for _, f := range oldF {
		byName[f.Name] = f
	}
	for _, nf := range newF {
		of, ok := byName[nf.Name]
		if !ok || (of.Value == nf.Value && of.Sigma == nf.Sigma) {
			continue
		}
		s := Shift{Name: nf.Name, Unit: nf.Unit,
			Old:     Figure{of.Value, of.Sigma, of.MCError},
			New:     Figure{nf.Value, nf.Sigma, nf.MCError},
			Delta:   nf.Value - of.Value,
			InSigma: math.NaN(),
			MCError: math.Hypot(of.MCError, nf.MCError)}
		if of.Sigma > 0 {
			s.InSigma = s.Delta / of.Sigma
		}
		d.Shifts = append(d.Shifts, s)
	}
	sort.SliceStable(d.Shifts, func(i, j int) bool {
		return shiftSize(d.Shifts[i]) > shiftSize(d.Shifts[j])
	})
	return d, nil
}

// shiftSize orders shifts: those measured against an uncertainty by |InSigma|, first.
func shiftSize(s Shift) float64 {
	if math.IsNaN(s.InSigma) {
		return -1
	}
	return math.Abs(s.InSigma)
}

// provenanceChanges lists what differs between a step's two provenance records: its own
// settings, files, rows and version, the upstream results it read, and its seed.
func provenanceChanges(oldP, newP *Provenance) []string {
	why := recordChanges(oldP, newP)
	oldIn := map[string]string{}
	for _, in := range oldP.Inputs {
		oldIn[in.Param+"\x00"+in.Step] = in.ResultKey
	}
	for _, in := range newP.Inputs {
		if rk, ok := oldIn[in.Param+"\x00"+in.Step]; ok && rk != in.ResultKey {
			why = append(why, fmt.Sprintf("the result of %s changed", in.Step))
		}
	}
	if oldP.Seed != nil && newP.Seed != nil && *oldP.Seed != *newP.Seed {
		why = append(why, fmt.Sprintf("its seed changed: %d → %d", *oldP.Seed, *newP.Seed))
	}
	return why
}

// figuresOf reads a step's figures from its stored result (readResult). A result that is
// missing, damaged or unreadable gives no figures and says why; only a failure of the store
// itself is an error.
func figuresOf(store *cache.Store, kind steps.Kind, rk cache.ResultKey) ([]steps.Figure, string, error) {
	held, err := readResult(store, kind, rk)
	if err != nil || held.Held != Usable {
		return nil, held.Why, err
	}
	return held.Artifact.Figures(), "", nil
}
