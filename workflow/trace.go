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
	t.Root, err = traceNode(store, rs.StepKey, map[string]*TraceNode{})
	return t, err
}

func traceNode(store *cache.Store, key cache.StepKey, seen map[string]*TraceNode) (*TraceNode, error) {
	if n := seen[key.String()]; n != nil {
		return n, nil
	}
	b, ok, err := store.Provenance(key)
	if err != nil {
		return nil, err
	}
	if !ok {
		return nil, fmt.Errorf("no provenance record for step key %s (pruned?)", key.Short())
	}
	n := &TraceNode{}
	if err := json.Unmarshal(b, &n.Provenance); err != nil {
		return nil, fmt.Errorf("provenance record %s: %w", key.Short(), err)
	}
	seen[key.String()] = n
	for _, in := range n.Provenance.Inputs {
		k, err := cache.ParseStepKey(in.StepKey)
		if err != nil {
			return nil, err
		}
		child, err := traceNode(store, k, seen)
		if err != nil {
			return nil, err
		}
		n.Inputs = append(n.Inputs, child)
	}
	return n, nil
}
