package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/kinds"
	"dipline/workflow"
)

// Toy step kinds added to the real ones for these tests: trouble panics; judge gives
// verdicts and a caution.

type toyArtifact struct{ tag string }

func (a toyArtifact) Encode() []byte { return []byte(a.tag) }
func (a toyArtifact) Figures() []steps.Figure {
	return []steps.Figure{{Name: "toy.value", Value: 1, Doc: "a toy number"}}
}

// Cautions and Verdicts: signal1 fails one test of three and gets a caution from another;
// signal2 passes its one test and cannot run another.
func (a toyArtifact) Cautions() []string { return []string{"the toy caution"} }
func (a toyArtifact) Verdicts() []steps.Verdict {
	return []steps.Verdict{
		{Subject: "signal1", Test: "a", Verdict: steps.VerdictAgree},
		{Subject: "signal1", Test: "b", Verdict: steps.VerdictDisagree},
		{Subject: "signal2", Test: "a", Verdict: steps.VerdictAgree},
		{Subject: "signal1", Test: "c", Verdict: steps.VerdictCaution},
		{Subject: "signal2", Test: "d", Verdict: steps.VerdictNotRun},
	}
}

// afterConfig is the configuration of the command line's toy kinds: the steps to run after.
type afterConfig struct {
	After []steps.Ref `step:"after"`
}

type toyKind struct{ name string }

func (k toyKind) Name() string             { return k.name }
func (k toyKind) Version() int             { return 1 }
func (k toyKind) Doc() string              { return "a toy for the command line's tests" }
func (k toyKind) Random() bool             { return false }
func (k toyKind) Check(*afterConfig) error { return nil }
func (k toyKind) Run(ctx context.Context, cfg *afterConfig, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	if k.name == "trouble" {
		var m map[string]int
		m["x"] = 1 // a deliberate nil-map panic
	}
	return toyArtifact{tag: k.name}, nil
}
func (k toyKind) Decode(b []byte) (steps.Artifact, error) {
	if string(b) != k.name {
		return nil, errors.New("not a toy artifact")
	}
	return toyArtifact{tag: k.name}, nil
}

// withToys adds the toy kinds to the registry for the test's duration.
func withToys(t *testing.T) {
	t.Cleanup(func() { registry = kinds.Registry })
	registry = func() (steps.Registry, error) {
		r, err := kinds.Registry()
		if err != nil {
			return nil, err
		}
		r["trouble"], r["judge"] = steps.Define[afterConfig](toyKind{"trouble"}), steps.Define[afterConfig](toyKind{"judge"})
		return r, nil
	}
}

// fitBlock is a short fit of the test light curve's one planet, with extra settings.
func fitBlock(extra string) string {
	return `
fit "planets" {
  light_curve = detrend.quiet
  signals     = search.dips
  planets     = 1
  max_steps   = 200
` + extra + `}
`
}

// results reads the folder's results file.
func (f *folder) results() workflow.ResultsFile {
	f.t.Helper()
	b, err := os.ReadFile(filepath.Join(f.dir, "results", "results.json"))
	if err != nil {
		f.t.Fatalf("no results file: %v", err)
	}
	var rf workflow.ResultsFile
	if err := json.Unmarshal(b, &rf); err != nil {
		f.t.Fatal(err)
	}
	return rf
}

func stepIn(t *testing.T, rf workflow.ResultsFile, step string) workflow.StepResults {
	t.Helper()
	for _, s := range rf.Steps {
		if s.Step == step {
			return s
		}
	}
	t.Fatalf("no step %s in the results file", step)
	return workflow.StepResults{}
}

func figureIn(s workflow.StepResults, name string) (float64, bool) {
	for _, f := range s.Figures {
		if f.Name == name && f.Value != nil {
			return *f.Value, true
		}
	}
	return 0, false
}

func TestALastStepThatFailsKeepsTheOthersResults(t *testing.T) {
	f := newFolder(t)
	// A limb-darkening prior for a band the light curve does not have (its segments have
	// none): a mistake in the settings that only the fit can see, once it has the light
	// curve, so it is the user's (exit 2), found after the search finished.
	text := workflowText + fitBlock(`  limb_darkening = { "survey-red" = "u1 = 0.35 ± 0.05, u2 = 0.25 ± 0.05" }
`)
	line := strings.Count(text[:strings.Index(text, "limb_darkening")], "\n") + 1
	f.write("analysis.hcl", text)
	code, out, errs := f.dipline("run", "--events", "events.jsonl")
	if code != exitBadUser {
		t.Fatalf("exit %d, want %d\n%s\n%s", code, exitBadUser, out, errs)
	}
	t.Run("the message names the file, line, block and attribute", func(t *testing.T) {
		want := fmt.Sprintf(`analysis.hcl line %d, column 20: fit "planets": limb_darkening: band "survey-red": no segment of the light curve has this band`, line)
		if !strings.Contains(out, want) || !strings.Contains(errs, want) {
			t.Errorf("output lacks %q:\n%s\n%s", want, out, errs)
		}
		if !strings.Contains(errs, "1 step failed;") {
			t.Errorf("stderr does not count the failure:\n%s", errs)
		}
	})
	t.Run("the summary prints what finished, then what did not", func(t *testing.T) {
		// The search became the end of the chain: its figures are printed. The injected
		// period is 2.5 d (lightCurveCSV), found within 0.0125 d as in TestRunThenReuse.
		if p := figure(t, out, "signal1.period"); math.Abs(p-2.5) > 0.0125 {
			t.Errorf("signal1.period %v, want 2.5", p)
		}
		i, j := strings.Index(out, "signal1.period"), strings.Index(out, "did not finish")
		if j < 0 || j < i || !strings.Contains(out[j:], "fit.planets failed: ") {
			t.Errorf("no list of what did not finish after the figures:\n%s", out)
		}
	})
	t.Run("the results file has the finished steps and the failure", func(t *testing.T) {
		rf := f.results()
		if rf.Schema != "dipline-results/4" {
			t.Errorf("schema %q", rf.Schema)
		}
		s := stepIn(t, rf, "search.dips")
		if p, ok := figureIn(s, "signal1.period"); s.Status != workflow.StatusComputed || !ok || math.Abs(p-2.5) > 0.0125 {
			t.Errorf("search.dips in the results file: %+v", s)
		}
		fit := stepIn(t, rf, "fit.planets")
		if fit.Status != workflow.StatusFailed || fit.Cause != workflow.CauseInput || len(fit.Figures) != 0 ||
			!strings.Contains(fit.Message, `fit "planets": limb_darkening:`) {
			t.Errorf("fit.planets in the results file: %+v", fit)
		}
		if len(rf.Failures) != 1 || rf.Failures[0].Step != "fit.planets" {
			t.Errorf("failures %+v, want fit.planets alone", rf.Failures)
		}
	})
	t.Run("the events name steps by step", func(t *testing.T) {
		b, err := os.ReadFile(filepath.Join(f.dir, "events.jsonl"))
		if err != nil {
			t.Fatal(err)
		}
		if strings.Count(string(b), `"step":"`) != 4 || strings.Contains(string(b), `"address"`) {
			t.Errorf("events:\n%s", b)
		}
	})
	t.Run("a run after the fix reuses what finished", func(t *testing.T) {
		f.write("analysis.hcl", workflowText+fitBlock(""))
		code, out, errs := f.dipline("run")
		if code != exitOK {
			t.Fatalf("exit %d\n%s\n%s", code, out, errs)
		}
		for _, want := range []string{"reused    photometry.raw", "reused    detrend.quiet", "reused    search.dips", "computed  fit.planets"} {
			if !strings.Contains(out, want) {
				t.Errorf("output lacks %q:\n%s", want, out)
			}
		}
		if rf := f.results(); len(rf.Failures) != 0 || rf.Statuses[workflow.StatusReused] != 3 {
			t.Errorf("failures %+v, statuses %v", rf.Failures, rf.Statuses)
		}
	})
}

func TestAPanickingStepExitsOneAndKeepsTheOthersResults(t *testing.T) {
	withToys(t)
	f := newFolder(t)
	f.write("analysis.hcl", workflowText+"\ntrouble \"x\" {\n  after = [search.dips]\n}\n")
	code, out, errs := f.dipline("run")
	if code != exitFailed {
		t.Fatalf("exit %d, want %d\n%s\n%s", code, exitFailed, out, errs)
	}
	if !strings.Contains(errs, "trouble.x failed: a fault in dipline, not in the workflow or its data (please report it): panic: ") {
		t.Errorf("stderr does not report the fault of the program:\n%s", errs)
	}
	if p := figure(t, out, "signal1.period"); math.Abs(p-2.5) > 0.0125 {
		t.Errorf("signal1.period %v, want 2.5", p)
	}
	rf := f.results()
	if s := stepIn(t, rf, "search.dips"); s.Status != workflow.StatusComputed || len(s.Figures) == 0 {
		t.Errorf("search.dips: %+v", s)
	}
	if x := stepIn(t, rf, "trouble.x"); x.Status != workflow.StatusFailed || x.Cause != workflow.CauseProgram {
		t.Errorf("trouble.x: %+v", x)
	}
}

func TestTheSummaryCountsTestsAndPrintsCautions(t *testing.T) {
	withToys(t)
	f := newFolder(t)
	f.write("analysis.hcl", workflowText+"\njudge \"v\" {\n  after = [search.dips]\n}\n")
	for _, run := range []string{"computed", "reused  "} {
		t.Run("when the step is "+strings.TrimSpace(run), func(t *testing.T) {
			code, out, errs := f.dipline("run")
			if code != exitOK || !strings.Contains(out, run+"  judge.v") {
				t.Fatalf("exit %d\n%s\n%s", code, out, errs)
			}
			for _, want := range []string{"tests and cautions\n", "  judge.v\n",
				"    signal1: 1 of 3 tests disagree, 1 caution\n",
				"    signal2: 0 of 1 test disagree, no cautions; 1 could not run\n",
				"    ! the toy caution\n",
				// The judging step reads search.dips without ending its chain: the search's
				// figures stay in the summary, and the judge's own are counted, not listed.
				"\nsearch.dips (step key "} {
				if !strings.Contains(out, want) {
					t.Errorf("summary lacks %q:\n%s", want, out)
				}
			}
			if strings.Contains(out, "\njudge.v (step key") {
				t.Errorf("the judging step's figures are listed:\n%s", out)
			}
		})
	}
}

func TestWrapKeepsWordsAndWidth(t *testing.T) {
	cases := []struct {
		name, in, want string
	}{
		{"a short sentence stays on one line", "one two", "  ! one two\n"},
		{"a long one breaks between words", "aaaa bbbb cccc dddd", "  ! aaaa bbbb\n    cccc dddd\n"},
		{"a word longer than the width stands alone", "aaaaaaaaaaaaaaaaaaaa b", "  ! aaaaaaaaaaaaaaaaaaaa\n    b\n"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := wrap(c.in, "  ! ", "    ", 14); got != c.want {
				t.Errorf("wrap gives %q, want %q", got, c.want)
			}
		})
	}
}
