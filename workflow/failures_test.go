package workflow

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"dipline/cache"
	"dipline/steps"
)

// runWith loads the project's workflow and runs it with the options, and returns the
// report, the results file read back and the run's error.
func (p *project) runWith(ctx context.Context, opt Options) (*Report, ResultsFile, error) {
	p.t.Helper()
	rep, err := p.start(ctx, opt)
	if rep == nil {
		p.t.Fatalf("no report (error %v)", err)
	}
	return rep, p.results(), err
}

// start loads the project's workflow and runs it with the options; it may be called from
// any goroutine.
func (p *project) start(ctx context.Context, opt Options) (*Report, error) {
	w, diags := LoadWith(filepath.Join(p.dir, "analysis.hcl"), toyRegistry(), nil)
	if diags.HasErrors() {
		return nil, diags
	}
	store, err := cache.Open(w.StorePath)
	if err != nil {
		return nil, err
	}
	if opt.Workers == 0 {
		opt.Workers = 2
	}
	calls.reset()
	return Run(ctx, w, store, opt)
}

// results reads the results file back.
func (p *project) results() ResultsFile {
	p.t.Helper()
	b, err := os.ReadFile(filepath.Join(p.dir, "results", "results.json"))
	if err != nil {
		p.t.Fatalf("no results file: %v", err)
	}
	var rf ResultsFile
	if err := json.Unmarshal(b, &rf); err != nil {
		p.t.Fatalf("results file: %v\n%s", err, b)
	}
	return rf
}

// stepResults returns the results file's line for a step.
func stepResults(t *testing.T, rf ResultsFile, step string) StepResults {
	t.Helper()
	for _, s := range rf.Steps {
		if s.Step == step {
			return s
		}
	}
	t.Fatalf("the results file has no step %s", step)
	return StepResults{}
}

// outcomeOf returns a step's outcome in a report.
func outcomeOf(t *testing.T, rep *Report, step string) *Outcome {
	t.Helper()
	for _, o := range rep.Outcomes {
		if o.Step.Addr == step {
			return o
		}
	}
	t.Fatalf("no step %s in the report", step)
	return nil
}

func runError(t *testing.T, err error) *RunError {
	t.Helper()
	var re *RunError
	if !errors.As(err, &re) {
		t.Fatalf("error %v (%T), want a *RunError", err, err)
	}
	return re
}

// branches has two independent branches: source.a → floor.fa → combine.sum finishes, while
// trouble.bad fails and trouble.later (after it) and trouble.last (after later and floor.fa)
// cannot run. combine.sum is floor(1.25 + 2.5) = 3.
const branches = `
analysis "toy" { seed = 1 }
source "a" { files = "a.txt" }
floor "fa" { input = source.a }
trouble "bad" { mode = "fail" }
trouble "later" {
  mode  = "hook"
  after = [trouble.bad]
}
trouble "last" {
  mode  = "hook"
  after = [trouble.later, floor.fa]
}
combine "sum" { inputs = [floor.fa] }
`

func TestAFailureStopsOnlyTheStepsThatReadIt(t *testing.T) {
	p := newProject(t, map[string]string{"analysis.hcl": branches, "a.txt": "1.25\n2.5\n"})
	var events bytes.Buffer
	rep, rf, err := p.runWith(context.Background(), Options{Events: &events})
	re := runError(t, err)

	t.Run("the independent branch finishes", func(t *testing.T) {
		for _, s := range []string{"source.a", "floor.fa", "combine.sum"} {
			if st := outcomeOf(t, rep, s).Status; st != StatusComputed {
				t.Errorf("%s %s, want computed", s, st)
			}
		}
		sum := stepResults(t, rf, "combine.sum")
		if len(sum.Figures) != 1 || sum.Figures[0].Value == nil || *sum.Figures[0].Value != 3 || sum.Status != StatusComputed {
			t.Errorf("combine.sum in the results file: %+v, want one figure of value 3", sum)
		}
	})
	t.Run("the failing step is in the results file with its cause", func(t *testing.T) {
		bad := stepResults(t, rf, "trouble.bad")
		if bad.Status != StatusFailed || bad.Cause != CauseProgram || bad.Message != faultWords+"told to fail" || len(bad.Figures) != 0 {
			t.Errorf("trouble.bad: %+v", bad)
		}
		if bad.StepKey == "" || bad.ResultKey != "" {
			t.Errorf("a failed step should keep its step key and have no result key: %+v", bad)
		}
	})
	t.Run("steps downstream are skipped, naming the step that failed", func(t *testing.T) {
		for _, s := range []string{"trouble.later", "trouble.last"} {
			sr := stepResults(t, rf, s)
			if sr.Status != StatusSkipped || sr.Cause != CauseUpstream || sr.Message != "not run: trouble.bad failed" {
				t.Errorf("%s: %+v", s, sr)
			}
		}
		if n := calls.reset()["trouble"]; n != 1 {
			t.Errorf("trouble ran %d times, want once (the failing step only)", n)
		}
	})
	t.Run("the summary lists every failure and skip", func(t *testing.T) {
		want := map[string]int{StatusComputed: 3, StatusReused: 0, StatusFailed: 1, StatusSkipped: 2}
		for st, n := range want {
			if rf.Statuses[st] != n {
				t.Errorf("statuses %v, want %v", rf.Statuses, want)
				break
			}
		}
		var got []string
		for _, f := range rf.Failures {
			got = append(got, f.Step+" "+f.Status+" "+f.Cause)
		}
		if strings.Join(got, ", ") != "trouble.bad failed program, trouble.later skipped upstream, trouble.last skipped upstream" {
			t.Errorf("failures %q", got)
		}
	})
	t.Run("the error names the failure and counts the skipped", func(t *testing.T) {
		if len(re.Failed) != 1 || len(re.Skipped) != 2 || re.Interrupted || !re.Program() {
			t.Errorf("run error %+v", re)
		}
		if !strings.Contains(err.Error(), "trouble.bad failed: a fault in dipline, not in the workflow or its data (please report it): told to fail") || !strings.Contains(err.Error(), "2 steps were not run") {
			t.Errorf("error text %q", err)
		}
		if rep.ResultsPath == "" {
			t.Error("the report does not name the results file")
		}
	})
	t.Run("the events name each step by step, not by address", func(t *testing.T) {
		lines := strings.Split(strings.TrimSpace(events.String()), "\n")
		if len(lines) != 6 {
			t.Fatalf("%d event lines, want 6:\n%s", len(lines), events.String())
		}
		for _, l := range lines {
			var m map[string]any
			if err := json.Unmarshal([]byte(l), &m); err != nil {
				t.Fatal(err)
			}
			if _, ok := m["step"]; !ok || m["address"] != nil {
				t.Errorf("event %s", l)
			}
			if m["step"] == "trouble.later" && m["error"] != "not run: trouble.bad failed" {
				t.Errorf("the skipped step's event gives no reason: %s", l)
			}
		}
	})
}

func TestTheCauseOfAFailure(t *testing.T) {
	cases := []struct {
		name, mode, cause string
		// message must contain each of these
		message []string
	}{
		{"an error of the program is the program's", "fail", CauseProgram, []string{"told to fail"}},
		{"bad data are the user's input", "bad_input", CauseInput, []string{"data.txt:3: told the data are bad"}},
		{"an attribute the step refuses names the file, line, block and attribute", "attr", CauseInput,
			[]string{"analysis.hcl line 5, column 11: ", `trouble "x": mode: told the setting does not suit the data`}},
		{"a panic is a fault of the program", "panic", CauseProgram, []string{"a fault in dipline, not in the workflow or its data (please report it): panic: "}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := newProject(t, map[string]string{
				"analysis.hcl": "analysis \"toy\" { seed = 1 }\nsource \"a\" { files = \"a.txt\" }\ntrouble \"x\" {\n  after = [source.a]\n  mode  = \"" + c.mode + "\"\n}\n",
				"a.txt":        "4\n",
			})
			rep, rf, err := p.runWith(context.Background(), Options{})
			re := runError(t, err)
			o := outcomeOf(t, rep, "trouble.x")
			if o.Status != StatusFailed || o.Cause != c.cause {
				t.Fatalf("status %s, cause %s; want failed, %s", o.Status, o.Cause, c.cause)
			}
			for _, m := range c.message {
				if !strings.Contains(o.Message, m) {
					t.Errorf("message %q lacks %q", o.Message, m)
				}
			}
			if re.Program() != (c.cause == CauseProgram) {
				t.Errorf("Program() = %v for a %s cause", re.Program(), c.cause)
			}
			if c.cause == CauseInput && !steps.IsInputError(err) {
				var ae *steps.AttrError
				if !errors.As(err, &ae) {
					t.Errorf("the run's error does not reach the step's own: %v", err)
				}
			}
			if a := stepResults(t, rf, "source.a"); a.Status != StatusComputed || len(a.Figures) != 1 || *a.Figures[0].Value != 4 {
				t.Errorf("the finished step is not in the results file: %+v", a)
			}
		})
	}
}

func TestARerunAfterTheFixReusesWhatFinished(t *testing.T) {
	p := newProject(t, map[string]string{"analysis.hcl": chain, "data/a.txt": "1.25\n2.5\n", "data/b.txt": "ten\n"})
	rep, rf, err := p.runWith(context.Background(), Options{})
	if re := runError(t, err); re.Program() {
		t.Errorf("bad data counted as a program fault: %v", err)
	}
	if o := outcomeOf(t, rep, "source.b"); o.Status != StatusFailed || o.Cause != CauseInput {
		t.Fatalf("source.b %s (%s)", o.Status, o.Cause)
	}
	if s := stepResults(t, rf, "combine.sum"); s.Status != StatusSkipped || s.Message != "not run: source.b failed" {
		t.Fatalf("combine.sum: %+v", s)
	}
	p.write("data/b.txt", "10\n")
	st, rep := p.run()
	want := map[string]string{"source.a": StatusReused, "floor.fa": StatusReused, "source.b": StatusComputed, "combine.sum": StatusComputed}
	for s, w := range want {
		if st[s] != w {
			t.Errorf("after the fix %s %s, want %s", s, st[s], w)
		}
	}
	// floor(3.75) + 2·10 + 0.5 d = 23.5, as in TestRunComputesThenReuses.
	if got := valueOf(t, rep, "combine.sum"); got != 23.5 {
		t.Errorf("combine.sum = %v, want 23.5", got)
	}
	if rf := p.results(); len(rf.Failures) != 0 || rf.Statuses[StatusReused] != 2 {
		t.Errorf("results after the fix: failures %+v, statuses %v", rf.Failures, rf.Statuses)
	}
}

func TestAnInterruptionStopsTheRunAndKeepsWhatFinished(t *testing.T) {
	p := newProject(t, map[string]string{
		"analysis.hcl": "analysis \"toy\" { seed = 1 }\nsource \"a\" { files = \"x.txt\" }\ntrouble \"wait\" {\n mode = \"block\"\n after = [source.a]\n}\nfloor \"f\" { input = source.a }\ntrouble \"after\" {\n mode = \"hook\"\n after = [trouble.wait]\n}\n",
		"x.txt":        "1.5\n",
	})
	ctx, cancel := context.WithCancel(context.Background())
	go func() { time.Sleep(200 * time.Millisecond); cancel() }()
	rep, rf, err := p.runWith(ctx, Options{})
	re := runError(t, err)
	if !re.Interrupted || !errors.Is(err, context.Canceled) {
		t.Errorf("run error %+v does not say it was interrupted", re)
	}
	for s, msg := range map[string]string{"trouble.wait": "stopped: the run was interrupted", "trouble.after": "not run: the run was interrupted"} {
		o := outcomeOf(t, rep, s)
		if o.Status != StatusSkipped || o.Cause != CauseStopped || o.Message != msg {
			t.Errorf("%s: %s, %s, %q; want skipped, stopped, %q", s, o.Status, o.Cause, o.Message, msg)
		}
	}
	if f := stepResults(t, rf, "floor.f"); f.Status != StatusComputed || *f.Figures[0].Value != 1 {
		t.Errorf("floor.f, finished before the interruption, is not in the results file: %+v", f)
	}
}

func TestAStoreFaultStopsTheWholeRun(t *testing.T) {
	p := newProject(t, map[string]string{
		"analysis.hcl": "analysis \"toy\" { seed = 1 }\ntrouble \"breaker\" { mode = \"hook\" }\ntrouble \"wait\" { mode = \"block\" }\n",
	})
	w, err := p.load()
	if err != nil {
		t.Fatal(err)
	}
	// Once the waiting step runs (its stored result looked up), the breaker overwrites the
	// store with bytes bbolt cannot open, so its own result cannot be stored.
	troubleHook = func() {
		for deadline := time.Now().Add(5 * time.Second); time.Now().Before(deadline); time.Sleep(time.Millisecond) {
			calls.mu.Lock()
			n := calls.n["trouble"]
			calls.mu.Unlock()
			if n >= 2 {
				break
			}
		}
		if err := os.WriteFile(w.StorePath, bytes.Repeat([]byte("not a store "), 1000), 0o644); err != nil {
			t.Error(err)
		}
	}
	defer func() { troubleHook = nil }()
	done := make(chan struct{})
	var rep *Report
	go func() {
		defer close(done)
		rep, err = p.start(context.Background(), Options{Workers: 4})
	}()
	select {
	case <-done:
	case <-time.After(10 * time.Second):
		t.Fatal("a store fault did not stop the blocked step")
	}
	if rep == nil {
		t.Fatalf("no report: %v", err)
	}
	re := runError(t, err)
	if !re.Program() || re.Interrupted {
		t.Errorf("run error %+v: want a program fault, not an interruption", re)
	}
	if o := outcomeOf(t, rep, "trouble.breaker"); o.Status != StatusFailed || o.Cause != CauseProgram || !strings.Contains(o.Message, "the store failed") {
		t.Errorf("trouble.breaker: %s, %s, %q", o.Status, o.Cause, o.Message)
	}
	if o := outcomeOf(t, rep, "trouble.wait"); o.Status != StatusSkipped || o.Cause != CauseStopped || !strings.Contains(o.Message, "fault of the store") {
		t.Errorf("trouble.wait: %s, %s, %q", o.Status, o.Cause, o.Message)
	}
	if len(re.Faults) == 0 || !strings.Contains(err.Error(), "writing the run record") {
		t.Errorf("the broken store took the run record without a word: %v", err)
	}
	if rf := p.results(); len(rf.Failures) != 2 {
		t.Errorf("results file failures %+v, want the breaker and the stopped step", rf.Failures)
	}
}

func TestCautionsAndVerdictsReachTheResultsFile(t *testing.T) {
	p := newProject(t, map[string]string{
		"analysis.hcl": "analysis \"toy\" { seed = 1 }\nsource \"a\" { files = \"x.txt\" }\njudge \"j\" { input = source.a }\n",
		"x.txt":        "3\n",
	})
	for _, run := range []string{"computed", "reused"} {
		t.Run("when the step is "+run, func(t *testing.T) {
			_, rf, err := p.runWith(context.Background(), Options{})
			if err != nil {
				t.Fatal(err)
			}
			j := stepResults(t, rf, "judge.j")
			if j.Status != run {
				t.Fatalf("judge.j %s, want %s", j.Status, run)
			}
			if strings.Join(j.Cautions, "|") != "the number is odd" {
				t.Errorf("cautions %q", j.Cautions)
			}
			want := VerdictEntry{Subject: "value", Test: "parity", Verdict: steps.VerdictCaution, Threshold: "even; a toy rule", Reason: "the number is odd"}
			if len(j.Verdicts) != 1 || j.Verdicts[0] != want {
				t.Errorf("verdicts %+v, want %+v", j.Verdicts, want)
			}
			if a := stepResults(t, rf, "source.a"); a.Cautions != nil || a.Verdicts != nil {
				t.Errorf("a step without cautions or verdicts lists some: %+v", a)
			}
		})
	}
}

func TestAStepWithNothingToWorkOnIsNoFailure(t *testing.T) {
	// A fit handed a search that found nothing is the shape of it: the step and those that
	// read it are skipped with the reason, the rest run, and the run has no error (so the
	// command exits 0 and a survey counts the target done).
	p := newProject(t, map[string]string{
		"analysis.hcl": "analysis \"toy\" { seed = 1 }\nsource \"a\" { files = \"a.txt\" }\n" +
			"trouble \"x\" {\n  after = [source.a]\n  mode  = \"nothing\"\n}\n" +
			"trouble \"y\" {\n  after = [trouble.x]\n  mode  = \"fail\"\n}\n" +
			"trouble \"z\" {\n  after = [trouble.y]\n  mode  = \"fail\"\n}\n",
		"a.txt": "4\n",
	})
	rep, rf, err := p.runWith(context.Background(), Options{})
	if err != nil {
		t.Fatalf("the run's error: %v; want none", err)
	}
	for addr, want := range map[string]string{
		"trouble.x": "told there is nothing to work on",
		"trouble.y": "not run: trouble.x had nothing to work on",
		"trouble.z": "not run: trouble.y had nothing to work on",
	} {
		o := outcomeOf(t, rep, addr)
		if o.Status != StatusSkipped || o.Cause != CauseNothing || o.Message != want {
			t.Errorf("%s: %s, %s, %q; want skipped, %s, %q", addr, o.Status, o.Cause, o.Message, CauseNothing, want)
		}
	}
	if a := stepResults(t, rf, "source.a"); a.Status != StatusComputed {
		t.Errorf("source.a %s; want computed", a.Status)
	}
}
