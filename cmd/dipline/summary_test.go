package main

import (
	"bytes"
	"math"
	"strings"
	"testing"

	"dipline/cache"
	"dipline/steps"
	"dipline/workflow"
)

// figs is an artifact with the given figures.
type figs []steps.Figure

func (f figs) Encode() []byte          { return nil }
func (f figs) Figures() []steps.Figure { return f }

// The run summary never prints an undefined number: it names the figure with the reason.
// A figure with a lopsided interval prints both sides; a what-if run says so first.
func TestTheSummaryNamesUndefinedFiguresAndWhatIfRuns(t *testing.T) {
	art := figs{
		{Name: "b.radius_earth", Value: 2.31, Sigma: 0.15, Lower: 0.12, Upper: 0.18, Unit: "R_earth"},
		{Name: "b.k", Value: 0.0412, Sigma: 0.0011, Lower: 0.0011, Upper: 0.0011},
		{Name: "b.on_c.radius_earth", Value: math.NaN(), Unit: "R_earth", Reason: "the radius of C is not known"},
		{Name: "noise.beta", Value: math.Inf(1)},
	}
	rep := &workflow.Report{
		Run: cache.Run{Overrides: map[string]string{"fit.planets.max_steps": "2500"}},
		Outcomes: []*workflow.Outcome{{Step: &workflow.Step{Addr: "derive.planets"},
			Status: workflow.StatusComputed, Artifact: art}},
	}
	var out bytes.Buffer
	c := &cli{out: &out}
	c.printSummary(rep)
	s := out.String()
	for _, want := range []string{
		"what-if run", "--set fit.planets.max_steps=2500",
		"  b.radius_earth             2.31 +0.18 −0.12 R_earth\n",
		"  b.k                        0.0412 ± 0.0011 \n",
		"  b.on_c.radius_earth is not given: the radius of C is not known\n",
		"  noise.beta is not given: it could not be computed from these data\n",
	} {
		if !strings.Contains(s, want) {
			t.Errorf("summary lacks %q:\n%s", want, s)
		}
	}
	for _, bad := range []string{"NaN", "Inf"} {
		if strings.Contains(s, bad) {
			t.Errorf("summary prints %s:\n%s", bad, s)
		}
	}
	if i, j := strings.Index(s, "what-if"), strings.Index(s, "derive.planets"); i < 0 || i > j {
		t.Errorf("the what-if sentence should come first:\n%s", s)
	}

	out.Reset()
	rep.Run.Overrides = nil
	c.printSummary(rep)
	if strings.Contains(out.String(), "what-if") {
		t.Errorf("a run without --set calls itself a what-if run:\n%s", out.String())
	}
}

// verdictList is an artifact that judges, for verdictCounts.
type verdictList []steps.Verdict

func (v verdictList) Verdicts() []steps.Verdict { return v }
func (verdictList) Encode() []byte              { return nil }
func (verdictList) Figures() []steps.Figure     { return nil }

// TestACountOfFewTestsSaysHowFewRan: a dip resting on one transit leaves most of the vet's
// tests unable to run, and "0 of 3 tests disagree" alone would read as a clean bill; the
// line leads with how few ran. A subject none of whose tests ran says that instead.
func TestACountOfFewTestsSaysHowFewRan(t *testing.T) {
	var v verdictList
	add := func(subject, verdict string, n int) {
		for range n {
			v = append(v, steps.Verdict{Subject: subject, Test: "t", Verdict: verdict})
		}
	}
	add("signal1", steps.VerdictAgree, 3)
	add("signal1", steps.VerdictNotRun, 6)
	add("signal2", steps.VerdictDisagree, 1)
	add("signal2", steps.VerdictCaution, 1)
	add("signal2", steps.VerdictAgree, 3)
	add("signal2", steps.VerdictNotRun, 2)
	add("signal3", steps.VerdictNotRun, 2)
	add("signal4", steps.VerdictAgree, 2)
	got := verdictCounts(v)
	want := []string{
		"signal1: only 3 of 9 tests could run (the report says why not): 0 disagree, no cautions",
		"signal2: 1 of 5 tests disagree, 1 caution; 2 could not run",
		"signal3: none of the 2 tests could run (the report says why)",
		"signal4: 0 of 2 tests disagree, no cautions",
	}
	if strings.Join(got, "\n") != strings.Join(want, "\n") {
		t.Errorf("counted\n%s\nwant\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
	}
}
