package workflow

import (
	"encoding/json"
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
	// node then holds what the record that led to it knew (address, kind, keys), with the
	// problem as a note, and the trace goes on with the other steps.
	Problem string
}

// TraceTarget is what a trace starts from: a step, and optionally one of its figures.
type TraceTarget struct {
	Address string
	Figure  *steps.Figure
	Run     cache.Run
	Root    *TraceNode
}

// SplitTarget reads "kind.label" or "kind.label/figure".
func SplitTarget(s string) (addr, figure string) {
	addr, figure, _ = strings.Cut(s, "/")
	return addr, figure
}

// Trace follows the step at addr in the given run ("latest" by default) down through its
// inputs to the files it read, using the stored provenance records.
func Trace(store *cache.Store, reg steps.Registry, runRef, target string) (*TraceTarget, error) {
	if runRef == "" {
		runRef = cache.RefLatest
	}
	run, err := store.FindRun(runRef)
	if err != nil {
		return nil, err
	}
	addr, figName := SplitTarget(target)
	var rs *cache.RunStep
	var addrs []string
	for i := range run.Steps {
		addrs = append(addrs, run.Steps[i].Address)
		if run.Steps[i].Address == addr {
			rs = &run.Steps[i]
		}
	}
	if rs == nil {
		return nil, fmt.Errorf("run %s has no step %s.%s", run.ID, addr, suggest(addr, addrs))
	}
	if rs.ResultKey.IsZero() {
		return nil, fmt.Errorf("%s gave no result in run %s (%s)", addr, run.ID, rs.Status)
	}
	t := &TraceTarget{Address: addr, Run: run}
	if figName != "" {
		kind := reg[rs.Kind]
		if kind == nil {
			return nil, fmt.Errorf("this build has no %s step kind", rs.Kind)
		}
		data, err := store.Get(rs.ResultKey)
		if err != nil {
			return nil, err
		}
		art, err := kind.Decode(data)
		if err != nil {
			return nil, err
		}
		var names []string
		for _, f := range art.Figures() {
			names = append(names, f.Name)
			if f.Name == figName {
				f := f
				t.Figure = &f
			}
		}
		if t.Figure == nil {
			return nil, fmt.Errorf("%s has no figure %q.%s", addr, figName, suggest(figName, names))
		}
	}
	t.Root, err = traceNode(store, stepRef{rs.Address, rs.Kind, rs.StepKey.String(), rs.ResultKey.String()}, map[string]*TraceNode{})
	return t, err
}

// stepRef is what leads a trace to a step: its address, kind and keys, as the run record
// or the reading step's provenance gives them.
type stepRef struct{ address, kind, stepKey, resultKey string }

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
	b, ok, err := store.Provenance(key)
	if err != nil {
		return nil, err
	}
	if !ok {
		return problemNode(ref, "no provenance record is stored for its step key (pruned, or dropped by a salvage)"), nil
	}
	n := &TraceNode{}
	if err := json.Unmarshal(b, &n.Provenance); err != nil {
		return problemNode(ref, fmt.Sprintf("its provenance record cannot be read (%v)", err)), nil
	}
	seen[ref.stepKey] = n
	for _, in := range n.Provenance.Inputs {
		child, err := traceNode(store, stepRef{in.Address, kindOf(in.Address), in.StepKey, in.ResultKey}, seen)
		if err != nil {
			return nil, err
		}
		n.Inputs = append(n.Inputs, child)
	}
	return n, nil
}

// problemNode stands for a step whose provenance cannot be shown.
func problemNode(ref stepRef, problem string) *TraceNode {
	return &TraceNode{Problem: problem, Provenance: Provenance{Address: ref.address, Kind: ref.kind,
		StepKey: ref.stepKey, ResultKey: ref.resultKey, Notes: []string{problem}}}
}

// kindOf is the kind in an address "kind.label".
func kindOf(addr string) string {
	kind, _, _ := strings.Cut(addr, ".")
	return kind
}
