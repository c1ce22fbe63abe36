package survey

import (
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
)

// Layout is where one survey keeps its parts: the folder surveys/<table name> beside the
// workflow (see the package comment).
type Layout struct{ Dir string }

// NewLayout returns the layout of the survey of table t run with the workflow in folder
// workflowDir.
func NewLayout(workflowDir string, t *Table) Layout {
	return Layout{Dir: filepath.Join(workflowDir, "surveys", t.Name)}
}

// Shard is the target's store.
func (l Layout) Shard(id string) string { return filepath.Join(l.Dir, "shards", id+".db") }

// TargetDir is the target's results folder.
func (l Layout) TargetDir(id string) string { return filepath.Join(l.Dir, "targets", id) }

// statePath is the target's state file.
func (l Layout) statePath(id string) string { return filepath.Join(l.TargetDir(id), "state.json") }

// SlurmDir holds the job scripts, the submitted jobs and the tasks' output.
func (l Layout) SlurmDir() string { return filepath.Join(l.Dir, "slurm") }

// TablePath is the survey table a merge writes.
func (l Layout) TablePath() string { return filepath.Join(l.Dir, "survey.csv") }

// CombinedPath is the table of what the targets' results add up to.
func (l Layout) CombinedPath() string { return filepath.Join(l.Dir, "combined.csv") }

// The states of a target, as its state file records them.
const (
	StateRunning = "running" // a run started and has not ended (or its process died)
	StateDone    = "done"    // every step finished
	StateFailed  = "failed"  // the run ended with a step failed or not run, or could not start
	StateNotRun  = "not run" // no state file: the target never started
	StateDamaged = "damaged" // the state file does not read
)

// State is what a target's state file says.
type State struct {
	ID     string `json:"id"`
	Status string `json:"status"`
	// Message says why a failed target failed: the steps that did not finish and why, or
	// why the run could not start.
	Message string `json:"message,omitempty"`
	// Run is the run's id in the target's shard; Host and PID say where it ran.
	Run  string `json:"run,omitempty"`
	Host string `json:"host,omitempty"`
	PID  int    `json:"pid,omitempty"`
}

// ReadState returns the target's state; StateNotRun when it never started and
// StateDamaged (with the reason) when its file does not read.
func (l Layout) ReadState(id string) State {
	b, err := os.ReadFile(l.statePath(id))
	if errors.Is(err, fs.ErrNotExist) {
		return State{ID: id, Status: StateNotRun}
	}
	var s State
	if err == nil {
		err = json.Unmarshal(b, &s)
	}
	if err == nil && s.ID != id {
		err = fmt.Errorf("it names target %q", s.ID)
	}
	if err != nil {
		return State{ID: id, Status: StateDamaged, Message: fmt.Sprintf("the state file %s does not read: %v", l.statePath(id), err)}
	}
	return s
}

// writeState writes the target's state whole or not at all (writeWhole), so a reader never
// sees half a file.
func (l Layout) writeState(s State) error {
	b, err := json.MarshalIndent(s, "", "  ")
	if err != nil {
		return err
	}
	return writeWhole(l.statePath(s.ID), append(b, '\n'))
}
