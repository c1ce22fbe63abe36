package workflow

import (
	"fmt"

	"dipline/steps"
)

// Inspection is what Inspect found wrong with one step's data.
type Inspection struct {
	Step *Step
	Err  error
}

// Inspect asks every step whose kind can look at its files without running
// (steps.Inspector) whether it would accept them, in the workflow's order, and returns the
// refusals. Nothing is computed or stored; a panic in an inspection is reported as the
// step's error, never passed on.
func Inspect(w *Workflow) []Inspection {
	var out []Inspection
	for _, s := range w.Steps {
		in, ok := s.Kind.(steps.Inspector)
		if !ok {
			continue
		}
		if err := inspectGuarded(in, s); err != nil {
			out = append(out, Inspection{Step: s, Err: err})
		}
	}
	return out
}

func inspectGuarded(in steps.Inspector, s *Step) (err error) {
	defer func() {
		if p := recover(); p != nil {
			err = fmt.Errorf("internal error while inspecting (please report it): %v", p)
		}
	}()
	return in.Inspect(s.Config, stepInputs(s, nil))
}
