package workflow

import (
	"fmt"
	"strings"

	"dipline/cache"
	"dipline/steps"
)

// TraceNode is one step in the chain behind a result: its provenance and the steps it took
// results from.
type TraceNode struct {
	Provenance Provenance
	Inputs     []*TraceNode
	// Problem says why the step's provenance record is missing or cannot be read. The
	// node then holds what the record that led to it knew (step, kind, keys), with the
	// problem as a note, and the trace goes on with the other steps.
	Problem string
}

// TraceTarget is what a trace starts from: a step, and optionally one of its figures.
type TraceTarget struct {
	Step   string // kind.label
	Figure *steps.Figure
	Run    cache.Run
	Root   *TraceNode
}

// SplitTarget reads "kind.label" or "kind.label/figure".
func SplitTarget(s string) (step, figure string) {
	step, figure, _ = strings.Cut(s, "/")
	return step, figure
}

// Trace follows the step named by target in the given run ("latest" by default) down through its
// inputs to the files it read, using the stored provenance records.
func Trace(store *cache.Store, reg steps.Registry, runRef, target string) (*TraceTarget, error) {
	if runRef == "" {
		runRef = cache.RefLatest
	}
	run, err := store.FindRun(runRef)
	if err != nil {
		return nil, err
	}
	name, figName := SplitTarget(target)
	var rs *cache.RunStep
	var names []string
	for i := range run.Steps {
		names = append(names, run.Steps[i].Step)
		if run.Steps[i].Step == name {
			rs = &run.Steps[i]
		}
	}
	if rs == nil {
		return nil, fmt.Errorf("run %s has no step %s.%s", run.ID, name, suggest(name, names))
	}
	if rs.ResultKey.IsZero() {
		return nil, fmt.Errorf("%s gave no result in run %s (%s)", name, run.ID, rs.Status)
	}
	t := &TraceTarget{Step: name, Run: run}
	if figName != "" {
		kind := reg[rs.Kind]
		if kind == nil {
			return nil, fmt.Errorf("this build has no %s step kind", rs.Kind)
		}
		held, err := readResult(store, kind, rs.ResultKey)
		if err != nil {
			return nil, err
		}
		if held.Held != Usable {
			return nil, fmt.Errorf("%s in run %s: %s", name, run.ID, held.Why)
		}
		var figs []string
		for _, f := range held.Artifact.Figures() {
			figs = append(figs, f.Name)
			if f.Name == figName {
				f := f
				t.Figure = &f
			}
		}
		if t.Figure == nil {
			return nil, fmt.Errorf("%s has no figure %q.%s", name, figName, suggest(figName, figs))
		}
	}
	t.Root, err = traceNode(store, stepRef{rs.Step, rs.Kind, rs.StepKey.String(), rs.ResultKey.String()}, map[string]*TraceNode{})
	return t, err
}

// stepRef is what leads a trace to a step: its name (kind.label), kind and keys, as the run
// record or the reading step's provenance gives them.
type stepRef struct{ step, kind, stepKey, resultKey string }

// traceNode reads the provenance of the step ref names, then of the steps it read. A record
// that is missing or does not read becomes a node with its Problem; only a failure of the
// store itself stops the trace.
func traceNode(store *cache.Store, ref stepRef, seen map[string]*TraceNode) (*TraceNode, error) {
	if n := seen[ref.stepKey]; n != nil {
		return n, nil
	}
	key, err := cache.ParseStepKey(ref.stepKey)
	if err != nil {
		return problemNode(ref, fmt.Sprintf("the step key recorded for it does not read (%v)", err)), nil
	}
	p, why, err := provenanceOf(store, key)
	if err != nil {
		return nil, err
	}
	if p == nil {
		return problemNode(ref, "its "+why), nil
	}
	n := &TraceNode{Provenance: *p}
	seen[ref.stepKey] = n
	for _, in := range n.Provenance.Inputs {
		child, err := traceNode(store, stepRef{in.Step, kindOf(in.Step), in.StepKey, in.ResultKey}, seen)
		if err != nil {
			return nil, err
		}
		n.Inputs = append(n.Inputs, child)
	}
	return n, nil
}

// problemNode stands for a step whose provenance cannot be shown.
func problemNode(ref stepRef, problem string) *TraceNode {
	return &TraceNode{Problem: problem, Provenance: Provenance{Step: ref.step, Kind: ref.kind,
		StepKey: ref.stepKey, ResultKey: ref.resultKey, Notes: []string{problem}}}
}

// kindOf is the kind in a step's name "kind.label".
func kindOf(step string) string {
	kind, _, _ := strings.Cut(step, ".")
	return kind
}
