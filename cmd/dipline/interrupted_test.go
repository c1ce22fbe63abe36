package main

import (
	"context"
	"errors"
	"os"
	"os/exec"
	"strings"
	"syscall"
	"testing"
	"time"

	"dipline/cache"
	"dipline/steps"
	"dipline/steps/kinds"
)

// stall is a toy step kind that never finishes: a run reaching it stays under way until
// it is killed.
type stall struct{}

func (stall) Name() string             { return "stall" }
func (stall) Version() int             { return 1 }
func (stall) Doc() string              { return "waits until the run is stopped" }
func (stall) Random() bool             { return false }
func (stall) Check(*afterConfig) error { return nil }
func (stall) Run(ctx context.Context, cfg *afterConfig, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	<-ctx.Done()
	return nil, ctx.Err()
}
func (stall) Decode(b []byte) (steps.Artifact, error) {
	return nil, errors.New("a stall gives no result")
}

// childEnv names the folder in which TestHelperDiplineChild runs the command line.
const childEnv = "DIPLINE_TEST_CHILD_DIR"

// withStall is the registry of step kinds with the stall kind added.
func withStall() (steps.Registry, error) {
	r, err := kinds.Registry()
	if err == nil {
		r["stall"] = steps.Define[afterConfig](stall{})
	}
	return r, err
}

// TestHelperDiplineChild is not a test: it is the child process of the killed-run test,
// running dipline (with the stall kind) in the folder it is given, until it is killed.
func TestHelperDiplineChild(t *testing.T) {
	dir := os.Getenv(childEnv)
	if dir == "" {
		t.Skip("runs only as the child of TestAKilledRunsResultsSurviveAPrune")
	}
	registry = withStall
	os.Chdir(dir)
	os.Exit(realMain(strings.Fields(os.Getenv(childEnv+"_ARGS")), os.Stdout, os.Stderr))
}

func TestAKilledRunsResultsSurviveAPrune(t *testing.T) {
	t.Cleanup(func() { registry = kinds.Registry })
	registry = withStall
	f := newFolder(t)
	if code, out, errs := f.dipline("run"); code != exitOK {
		t.Fatalf("first run: exit %d\n%s%s", code, out, errs)
	}
	// The second run changes the detrend, then reaches a step that never ends; it is killed
	// with SIGKILL once the new detrend is stored, before its record is completed.
	f.write("analysis.hcl", secondWorkflow+"\nstall \"forever\" {\n  after = [detrend.quiet]\n}\n")
	child := exec.Command(os.Args[0], "-test.run=^TestHelperDiplineChild$")
	child.Env = append(os.Environ(), childEnv+"="+f.dir, childEnv+"_ARGS=run")
	if err := child.Start(); err != nil {
		t.Fatal(err)
	}
	exited := make(chan struct{})
	go func() { child.Wait(); close(exited) }()
	killed, ok := waitForStep(f.storePath(), "detrend.quiet", exited)
	child.Process.Signal(syscall.SIGKILL)
	<-exited
	if !ok {
		t.Fatalf("the child run ended, or took over 30 s, before storing detrend.quiet")
	}

	code, out, _ := f.dipline("runs")
	if code != exitOK || !strings.Contains(out, killed.ID) || !strings.Contains(lineOf(out, killed.ID), "[interrupted") {
		t.Fatalf("runs does not show the killed run as interrupted (exit %d):\n%s", code, out)
	}
	// An age of a microsecond selects every run: the finished one is dropped, the killed
	// one kept, with what it stored.
	code, out, errs := f.dipline("store", "prune", "--aged", "0.000001 s")
	if code != exitOK || !strings.Contains(out, "dropped 1 runs") || !strings.Contains(out, "kept run "+killed.ID) {
		t.Fatalf("prune: exit %d\n%s%s", code, out, errs)
	}
	code, out, _ = f.dipline("pending")
	if code != exitOK || !strings.Contains(out, "stored      detrend.quiet") || !strings.Contains(out, "stored      photometry.raw") {
		t.Errorf("the killed run's stored results did not survive the prune (exit %d):\n%s", code, out)
	}
	t.Run("with no time to spare they go", func(t *testing.T) {
		code, out, errs := f.dipline("store", "prune", "--aged", "0.000001 s", "--spare-interrupted", "0 s")
		if code != exitOK || !strings.Contains(out, "dropped 1 runs") {
			t.Fatalf("prune: exit %d\n%s%s", code, out, errs)
		}
		if _, out, _ := f.dipline("pending"); !strings.Contains(out, "to compute  photometry.raw") || !strings.Contains(out, "depends     detrend.quiet") {
			t.Errorf("the results survived a prune that spares nothing:\n%s", out)
		}
	})
}

// waitForStep polls the store until a run under way has stored step, and returns that
// run's record; false if the child exits first or 30 s pass.
func waitForStep(storePath, step string, exited <-chan struct{}) (cache.Run, bool) {
	deadline := time.After(30 * time.Second)
	for {
		if s, err := cache.Open(storePath); err == nil {
			runs, _ := s.Runs()
			for _, r := range runs {
				for _, st := range r.Steps {
					if !r.HasEnded() && st.Step == step && st.Status == "computed" {
						return r, true
					}
				}
			}
		}
		select {
		case <-exited:
			return cache.Run{}, false
		case <-deadline:
			return cache.Run{}, false
		case <-time.After(20 * time.Millisecond):
		}
	}
}

// lineOf returns the line of out that contains s.
func lineOf(out, s string) string {
	for _, l := range strings.Split(out, "\n") {
		if strings.Contains(l, s) {
			return l
		}
	}
	return ""
}
