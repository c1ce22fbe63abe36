package survey

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"time"

	"dipline/cache"
	"dipline/steps"
	"dipline/workflow"
)

// Env is what every target's run shares: the workflow file, the step kinds, the folders
// the user allowed beyond the workflow's own, the survey's layout, and the workflow's own
// store, into which a merge gathers the targets'.
type Env struct {
	Workflow  string
	Registry  steps.Registry
	Access    workflow.Access
	Layout    Layout
	StorePath string
	Table     string // the target table's path as given, for messages and results
}

// shardWait is how long a target's run waits for its shard's lock: a shard is one target's
// alone, so a holder is a run of the same target still going (a task re-submitted too soon).
const shardWait = 5 * time.Second

// fromTheRow rewrites load messages about a target's values, which the workflow package
// names as the --set options that would give them, to name the target table's column.
func fromTheRow(msgs string) string {
	lines := strings.Split(strings.TrimSpace(msgs), "\n")
	for i, l := range lines {
		if rest, ok := strings.CutPrefix(l, "--set "); ok {
			lines[i] = "column " + rest
		}
	}
	return strings.Join(lines, "\n")
}

// RunTarget runs the workflow for one target in its own shard and results folder and
// records its state. A target whose workflow does not load, or whose run leaves a step
// unfinished, is failed with the reason; the error returned is only for a state file that
// could not be written.
func (e Env) RunTarget(ctx context.Context, tg Target, workers int) (State, error) {
	host, _ := os.Hostname()
	st := State{ID: tg.ID, Status: StateRunning, Host: host, PID: os.Getpid()}
	if err := e.Layout.writeState(st); err != nil {
		return st, fmt.Errorf("target %s: %w", tg.ID, err)
	}
	st.Status, st.Message, st.Run = StateDone, "", ""
	if err := e.runOne(ctx, tg, workers, &st); err != nil {
		st.Status, st.Message = StateFailed, err.Error()
	}
	return st, e.Layout.writeState(st)
}

// runOne loads and runs the target's workflow, filling st.Run; the error says why the
// target failed.
func (e Env) runOne(ctx context.Context, tg Target, workers int, st *State) error {
	w, diags := workflow.LoadWithAccess(e.Workflow, e.Registry, tg.Overrides, e.Access)
	if diags.HasErrors() || w == nil {
		var b bytes.Buffer
		workflow.FormatDiagnostics(&b, diags)
		return fmt.Errorf("the workflow with this target's values (the target table's line %d) does not load:\n%s", tg.Line, fromTheRow(b.String()))
	}
	w.SetBy = fmt.Sprintf("row %s of the target table %s, line %d", tg.ID, e.Table, tg.Line)
	w.StorePath, w.OutputDir = e.Layout.Shard(tg.ID), e.Layout.TargetDir(tg.ID)
	if err := os.MkdirAll(filepath.Dir(w.StorePath), 0o755); err != nil {
		return err
	}
	lock, err := cache.LockRun(w.StorePath, shardWait, nil)
	if err != nil {
		return err
	}
	defer lock.Release()
	store, err := cache.OpenForRun(w.StorePath) // as dipline run does
	if err != nil {
		return err
	}
	rep, err := workflow.Run(ctx, w, store, workflow.Options{Workers: workers})
	if rep != nil {
		st.Run = rep.Run.ID
	}
	if err == nil {
		return nil
	}
	return unfinished(rep, err)
}

// unfinished says which steps of a run did not finish, and why.
func unfinished(rep *workflow.Report, err error) error {
	if rep == nil {
		return err
	}
	var lines []string
	for _, o := range rep.Outcomes {
		if !o.Finished() {
			lines = append(lines, fmt.Sprintf("%s %s: %s", o.Step.Addr, o.Status, o.Message))
		}
	}
	if len(lines) == 0 {
		return err
	}
	return fmt.Errorf("%s", strings.Join(lines, "; "))
}

// RunLocal runs the targets on this machine within a budget of workers: as many targets at
// once as there are workers (each with an equal share of them when targets are fewer), in
// table order. done, when not nil, is told each target's state as it ends, one call at a
// time. The states are returned in the targets' order; the error is the first state file
// that could not be written.
func (e Env) RunLocal(ctx context.Context, targets []Target, workers int, done func(State)) ([]State, error) {
	if workers < 1 {
		workers = 1
	}
	at := min(workers, len(targets))
	each := max(1, workers/max(at, 1))
	states := make([]State, len(targets))
	errs := make([]error, len(targets))
	sem := make(chan struct{}, at)
	var wg sync.WaitGroup
	var mu sync.Mutex
	for i, tg := range targets {
		sem <- struct{}{}
		wg.Add(1)
		go func() {
			defer func() { <-sem; wg.Done() }()
			states[i], errs[i] = e.RunTarget(ctx, tg, each)
			if done != nil {
				mu.Lock()
				done(states[i])
				mu.Unlock()
			}
		}()
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return states, err
		}
	}
	return states, nil
}
