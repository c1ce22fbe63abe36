package workflow

import (
	"fmt"
	"strings"

	"github.com/hashicorp/hcl/v2"
)

func (w *Workflow) addresses() []string {
	out := make([]string, 0, len(w.Steps))
	for _, s := range w.Steps {
		out = append(out, s.Addr)
	}
	return out
}

// stepName is how a message names a step's block: search "dips".
func stepName(s *Step) string { return s.Kind.Name() + " " + quote(s.Label) }

// suggestRef is "Did you mean detrend.quiet?" for the closest of the addresses, or "".
func suggestRef(addr string, addrs []string) string {
	if near := nearest(addr, addrs); near != "" {
		return "Did you mean " + clip(near) + "?"
	}
	return ""
}

// resolve checks every reference, records dependencies and orders the steps.
func (w *Workflow) resolve() hcl.Diagnostics {
	var diags hcl.Diagnostics
	for _, s := range w.Steps {
		params := map[string][]string{}
		for _, p := range s.Kind.Params() {
			params[p.Name] = p.Kinds
		}
		seen := map[*Step]bool{}
		for _, name := range sortedKeys(s.Refs) {
			for _, addr := range s.Refs[name] {
				dep, d := w.target(s, name, addr, params[name], "reads", "result")
				if d != nil {
					diags = append(diags, d)
					continue
				}
				if !seen[dep] {
					seen[dep] = true
					s.Deps = append(s.Deps, dep)
				}
			}
		}
		for _, name := range sortedKeys(s.settingsAddr) {
			dep, d := w.target(s, name, s.settingsAddr[name], params[name], "takes the settings of", "settings")
			if d != nil {
				diags = append(diags, d)
				continue
			}
			s.Settings[name] = dep
		}
	}
	if diags.HasErrors() {
		return diags
	}
	order, cycle := topoOrder(w.Steps)
	if cycle != nil {
		path := make([]string, len(cycle))
		for i, s := range cycle {
			path[i] = s.Addr
		}
		first := cycle[0]
		return hcl.Diagnostics{{Severity: hcl.DiagError, Summary: "Steps depend on each other in a cycle: " + strings.Join(path, " → ") + ".",
			Detail:  "A step can only take the results of steps that do not need its own.",
			Subject: first.block.Ptr()}}
	}
	w.Order = order
	return nil
}

// target finds the step s names at addr for parameter name (which accepts kinds, or any
// kind when empty), or says in a diagnostic why it cannot: no such step, a step of another
// kind, or s itself. verb and what word the messages ("reads", "result").
func (w *Workflow) target(s *Step, name, addr string, kinds []string, verb, what string) (*Step, *hcl.Diagnostic) {
	r := s.attrRanges[name]
	dep := w.byAddr[addr]
	switch {
	case dep == nil:
		kind, label, _ := strings.Cut(addr, ".")
		var same []string
		for _, o := range w.Steps {
			if o.Kind.Name() == kind {
				same = append(same, kind+"."+o.Label)
			}
		}
		summary := fmt.Sprintf("%s %s %s for %s, and the workflow has no step %s.", stepName(s), verb, addr, name, addr)
		detail := suggestRef(addr, w.addresses())
		if len(same) > 0 {
			summary = fmt.Sprintf("%s %s %s for %s, and there is no %s step %s.", stepName(s), verb, addr, name, kind, quote(label))
			detail = suggestRef(addr, same)
		}
		return nil, attrDiag(r, summary, detail)
	case len(kinds) > 0 && !contains(kinds, dep.Kind.Name()):
		return nil, attrDiag(r, fmt.Sprintf("%s %s %s for %s, but %s takes a %s step, not a %s step.",
			stepName(s), verb, addr, name, name, strings.Join(kinds, " or "), dep.Kind.Name()), "")
	case dep == s:
		return nil, attrDiag(r, fmt.Sprintf("%s %s its own %s for %s.", stepName(s), verb, what, name),
			"A step can only take the "+strings.TrimSuffix(what, "s")+"s of other steps.")
	}
	return dep, nil
}

// topoOrder returns the steps so that each comes after its dependencies, keeping file
// order where the graph allows; or, when there is a cycle, the steps on it (first repeated
// at the end).
func topoOrder(list []*Step) (order, cycle []*Step) {
	const (
		unseen = iota
		active
		done
	)
	state := map[*Step]int{}
	var stack []*Step
	var visit func(s *Step) bool
	visit = func(s *Step) bool {
		switch state[s] {
		case done:
			return true
		case active:
			for i, t := range stack {
				if t == s {
					cycle = append(append([]*Step{}, stack[i:]...), s)
				}
			}
			return false
		}
		state[s] = active
		stack = append(stack, s)
		for _, d := range s.Deps {
			if !visit(d) {
				return false
			}
		}
		stack = stack[:len(stack)-1]
		state[s] = done
		order = append(order, s)
		return true
	}
	for _, s := range list {
		if !visit(s) {
			return nil, cycle
		}
	}
	return order, nil
}

// Dependants returns the steps that take s's result, directly or not.
func (w *Workflow) Dependants(s *Step) []*Step {
	var out []*Step
	reach := map[*Step]bool{s: true}
	for _, t := range w.Order {
		for _, d := range t.Deps {
			if reach[d] && !reach[t] {
				reach[t] = true
				out = append(out, t)
			}
		}
	}
	return out
}
