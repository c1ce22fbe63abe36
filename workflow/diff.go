package workflow

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"sort"

	"dipline/cache"
	"dipline/steps"
)

// StepDiff compares one step between two runs.
type StepDiff struct {
	Address string
	// State is "same" (equal step keys), "recomputed" (new key, equal result), "changed"
	// (new result), "added" or "removed".
	State string
	// Why lists what differs in the step's own inputs: settings old → new, file digests,
	// catalogue values, the kind's version, and which upstream results changed.
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
		olds[s.Address] = s
	}
	seen := map[string]bool{}
	for _, ns := range newRun.Steps {
		seen[ns.Address] = true
		os, ok := olds[ns.Address]
		if !ok {
			rep.Steps = append(rep.Steps, StepDiff{Address: ns.Address, State: "added"})
			continue
		}
		d, err := diffStep(store, reg, os, ns)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", ns.Address, err)
		}
		rep.Steps = append(rep.Steps, d)
	}
	for _, os := range oldRun.Steps {
		if !seen[os.Address] {
			rep.Steps = append(rep.Steps, StepDiff{Address: os.Address, State: "removed"})
		}
	}
	return rep, nil
}

func diffStep(store *cache.Store, reg steps.Registry, os, ns cache.RunStep) (StepDiff, error) {
	d := StepDiff{Address: ns.Address, State: "same"}
	if os.StepKey == ns.StepKey {
		return d, nil
	}
	d.State = "recomputed"
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
	if os.ResultKey == ns.ResultKey || os.ResultKey.IsZero() || ns.ResultKey.IsZero() {
		return d, nil
	}
	d.State = "changed"
	kind := reg[ns.Kind]
	if kind == nil || reg[os.Kind] != kind {
		return d, nil
	}
	oldF, errO := figuresOf(store, kind, os.ResultKey)
	newF, errN := figuresOf(store, kind, ns.ResultKey)
	if errO != nil || errN != nil {
		// A result that is gone or damaged stops only this step's comparison.
		d.Why = append(d.Why, "its numbers cannot be compared: "+errors.Join(errO, errN).Error())
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
		oldIn[in.Param+"\x00"+in.Address] = in.ResultKey
	}
	for _, in := range newP.Inputs {
		if rk, ok := oldIn[in.Param+"\x00"+in.Address]; ok && rk != in.ResultKey {
			why = append(why, fmt.Sprintf("the result of %s changed", in.Address))
		}
	}
	if oldP.Seed != nil && newP.Seed != nil && *oldP.Seed != *newP.Seed {
		why = append(why, fmt.Sprintf("its seed changed: %d → %d", *oldP.Seed, *newP.Seed))
	}
	return why
}

// provenanceOf reads one provenance record. A record that is missing or does not read is
// no error: it gives a nil record and says why ("" when it read). Only a failure of the
// store itself is an error.
func provenanceOf(store *cache.Store, key cache.StepKey) (*Provenance, string, error) {
	b, ok, err := store.Provenance(key)
	if err != nil {
		return nil, "", err
	}
	if !ok {
		return nil, "provenance record is missing (pruned?)", nil
	}
	var p Provenance
	if err := json.Unmarshal(b, &p); err != nil {
		return nil, fmt.Sprintf("provenance record cannot be read (%v)", err), nil
	}
	return &p, "", nil
}

func figuresOf(store *cache.Store, kind steps.Kind, rk cache.ResultKey) ([]steps.Figure, error) {
	data, err := store.Get(rk)
	if err != nil {
		return nil, err
	}
	art, err := kind.Decode(data)
	if err != nil {
		return nil, err
	}
	return art.Figures(), nil
}
