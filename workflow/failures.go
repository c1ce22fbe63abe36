package workflow

import (
	"context"
	"errors"
	"fmt"
	"strings"

	"dipline/steps"
)

// The causes of a step that did not finish: what the results file says and what decides
// the command's exit status.
const (
	// CauseInput: the user's data or settings are at fault (a bad row, a truncated file, an
	// attribute the data cannot support). Fixing them and running again finishes the step.
	CauseInput = "input"
	// CauseProgram: a fault of the program (an internal error, a recovered panic) or of the
	// store.
	CauseProgram = "program"
	// CauseUpstream: skipped because a step it reads failed, directly or through others.
	CauseUpstream = "upstream"
	// CauseStopped: skipped or cut short because the run was interrupted or the store failed.
	CauseStopped = "stopped"
	// CauseNothing: the step found nothing to work on (a *steps.NothingToWorkOn), or reads one
	// that did. No failure: the run's exit status does not count it.
	CauseNothing = "nothing to work on"
)

// faultWords begin the message of every fault of the program: the user did nothing wrong,
// and a report helps.
const faultWords = "a fault in dipline, not in the workflow or its data (please report it): "

// internalError marks a program fault caught by the engine (a recovered panic, a step
// that returned neither a result nor an error). Its message begins with faultWords.
type internalError struct{ err error }

// programFault makes an internalError.
func programFault(format string, args ...any) error {
	return &internalError{fmt.Errorf(faultWords+format, args...)}
}

func (e *internalError) Error() string { return e.err.Error() }
func (e *internalError) Unwrap() error { return e.err }

// storeError marks a fault of the store, which stops the whole run.
type storeError struct{ err error }

func (e *storeError) Error() string { return "the store failed: " + e.err.Error() }
func (e *storeError) Unwrap() error { return e.err }

// Place is a line of the workflow file: where a setting a step refused was written.
type Place struct {
	File   string `json:"file"` // the workflow file, as the user named it
	Line   int    `json:"line"`
	Column int    `json:"column,omitempty"` // counted from 1 in characters; 0 when not known
}

// SettingError is a setting that a step refused when it ran, once it saw its inputs (a
// *steps.AttrError from the kind's Run: a fit asked to make planet c eccentric when only
// one planet is fitted). It is the user's mistake, like a setting refused at load, and it
// names the file and line where the setting is written, or the --set option it came from.
type SettingError struct {
	Step *Step
	// Place is the attribute's line (the block's when the attribute is not written, its
	// default being refused); nil when the setting came from the command line.
	Place *Place
	// Set says where the setting was given when not in the file: on the command line
	// ("on the command line (--set fit.planets.eccentric)") or by a survey target's row.
	Set string
	Err *steps.AttrError
}

// Error says the mistake in one line, beginning with its place:
// `analysis.hcl line 25, column 3: fit "planets": eccentric: "c" is not one of the 1 planet(s) fitted (b)`.
func (e *SettingError) Error() string {
	where := ""
	switch {
	case e.Set != "":
		where = "set " + e.Set + ": "
	case e.Place != nil:
		where = fmt.Sprintf("%s line %d: ", e.Place.File, e.Place.Line)
		if e.Place.Column > 0 {
			where = fmt.Sprintf("%s line %d, column %d: ", e.Place.File, e.Place.Line, e.Place.Column)
		}
	}
	return fmt.Sprintf("%s%s %q: %s: %s", where, e.Step.Kind.Name(), e.Step.Label, e.Err.Attr, e.Err.Msg)
}

func (e *SettingError) Unwrap() error { return e.Err }

// settingError places an error from a step's Run that names one of its attributes; any
// other error is returned as it is.
func (w *Workflow) settingError(s *Step, err error) error {
	var ae *steps.AttrError
	if !errors.As(err, &ae) {
		return err
	}
	se := &SettingError{Step: s, Err: ae}
	for _, o := range w.Overrides {
		if o.Addr == s.Addr && o.Attr == ae.Attr {
			se.Set = "on the command line (--set " + o.Addr + "." + o.Attr + ")"
			if w.SetBy != "" {
				se.Set = "by " + w.SetBy + ", column " + o.Addr + "." + o.Attr
			}
			return se
		}
	}
	r, ok := s.attrRanges[ae.Attr]
	if !ok {
		r = s.block
	}
	if r.Filename != "" {
		se.Place = &Place{File: r.Filename, Line: r.Start.Line, Column: r.Start.Column}
	}
	return se
}

// causeOf classifies a step's own error: the user's input (a *steps.InputError, a
// *steps.AttrError or a *SettingError) or a fault of the program (anything else, including
// a recovered panic).
func causeOf(err error) string {
	var ie *internalError
	var se *storeError
	var ae *steps.AttrError
	switch {
	case errors.As(err, &ie) || errors.As(err, &se):
		return CauseProgram
	case steps.IsInputError(err) || errors.As(err, &ae):
		return CauseInput
	}
	return CauseProgram
}

// message says a step's failure for the user: a setting it refused with its place (see
// SettingError), a fault of the program as such (faultWords), anything else as it is.
func message(err error) string {
	var ie *internalError
	var se *storeError
	if causeOf(err) == CauseProgram && !errors.As(err, &ie) && !errors.As(err, &se) {
		return faultWords + err.Error()
	}
	return err.Error()
}

// stopReason says why a step did not run, or did not finish when it had started, once the
// run's context has ended.
func (r *runner) stopReason(ctx context.Context, started bool) error {
	what := "not run"
	if started {
		what = "stopped"
	}
	if r.parent.Err() != nil {
		return fmt.Errorf("%s: the run was interrupted", what)
	}
	return fmt.Errorf("%s: the run ended after a fault of the store (%v)", what, context.Cause(ctx))
}

// RunError is the error of a run in which some step did not finish, or whose run record or
// results file could not be written. The finished steps' results are stored and in the
// results file all the same.
type RunError struct {
	// Failed are the steps that failed, Skipped those that did not run (each with its
	// reason), in the workflow's order.
	Failed, Skipped []*Outcome
	// Interrupted says the caller stopped the run before every step had finished.
	Interrupted bool
	// Faults are failures to write the run record or the results file.
	Faults []error
}

func (e *RunError) add(o *Outcome) {
	if o.Cause == CauseNothing {
		return
	}
	switch o.Status {
	case StatusFailed:
		e.Failed = append(e.Failed, o)
	case StatusSkipped:
		e.Skipped = append(e.Skipped, o)
	}
}

func (e *RunError) empty() bool {
	return len(e.Failed) == 0 && len(e.Skipped) == 0 && !e.Interrupted && len(e.Faults) == 0
}

// Program reports whether any failure is a fault of the program or of the store, rather
// than of the user's input.
func (e *RunError) Program() bool {
	if len(e.Faults) > 0 {
		return true
	}
	for _, o := range e.Failed {
		if o.Cause == CauseProgram {
			return true
		}
	}
	return false
}

// Error says which steps failed and why, and how many others did not run.
func (e *RunError) Error() string {
	var parts []string
	if e.Interrupted {
		parts = append(parts, "the run was interrupted")
	}
	for _, o := range e.Failed {
		parts = append(parts, fmt.Sprintf("%s failed: %s", o.Step.Addr, o.Message))
	}
	if n := len(e.Skipped); n > 0 {
		parts = append(parts, fmt.Sprintf("%d %s not run", n, plural(n, "step was", "steps were")))
	}
	for _, f := range e.Faults {
		parts = append(parts, f.Error())
	}
	return strings.Join(parts, "; ")
}

// Unwrap gives the failed steps' own errors and the faults, so that errors.Is and
// errors.As reach them.
func (e *RunError) Unwrap() []error {
	var errs []error
	if e.Interrupted {
		errs = append(errs, context.Canceled)
	}
	for _, o := range e.Failed {
		errs = append(errs, o.Err)
	}
	return append(errs, e.Faults...)
}

func plural(n int, one, many string) string {
	if n == 1 {
		return one
	}
	return many
}

// joinAnd joins names as "a", "a and b", "a, b and c".
func joinAnd(names []string) string {
	if len(names) < 2 {
		return strings.Join(names, "")
	}
	return strings.Join(names[:len(names)-1], ", ") + " and " + names[len(names)-1]
}

// appendNew appends s to list unless it is already there.
func appendNew(list []string, s string) []string {
	for _, x := range list {
		if x == s {
			return list
		}
	}
	return append(list, s)
}
