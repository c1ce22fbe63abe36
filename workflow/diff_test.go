package workflow

import (
	"context"
	"strings"
	"testing"

	"dipline/cache"
)

// TestDiffSaysHowEachStepStands compares runs of the chain in which each diff state occurs.
func TestDiffSaysHowEachStepStands(t *testing.T) {
	p := chainProject(t)
	_, first := p.run()
	// 1.25 + 2.6 = 3.85 instead of 3.75: source.a gives a new result, which floor.fa rounds
	// down to the same 3, so combine.sum has its old step key.
	p.write("data/a.txt", "1.25\n2.6\n")
	_, second := p.run()
	// A step that fails is added, source.b is gone, and combine.sum reads floor.fa alone.
	p.write("analysis.hcl", thirdChain)
	third, _, _ := p.runWith(context.Background(), Options{})
	w, err := p.load()
	mustDo(t, err)
	store, err := cache.Open(w.StorePath)
	mustDo(t, err)

	states := func(a, b *Report) map[string]StepDiff {
		d, err := Diff(store, toyRegistry(), a.Run.ID, b.Run.ID)
		mustDo(t, err)
		out := map[string]StepDiff{}
		for _, s := range d.Steps {
			out[s.Step] = s
		}
		return out
	}
	t.Run("a new input with a byte-identical result downstream", func(t *testing.T) {
		got := states(first, second)
		want := map[string]string{"source.a": DiffNewResult, "floor.fa": DiffSameResult,
			"source.b": DiffUnchanged, "combine.sum": DiffUnchanged}
		for step, state := range want {
			if got[step].State != state {
				t.Errorf("%s is %q (%v), want %q", step, got[step].State, got[step].Why, state)
			}
		}
		if why := strings.Join(got["floor.fa"].Why, ";"); !strings.Contains(why, "the result of source.a changed") {
			t.Errorf("floor.fa: %q does not name the upstream result that changed", why)
		}
	})
	t.Run("a step added that fails, a step removed, a step that changed its inputs", func(t *testing.T) {
		got := states(second, third)
		want := map[string]string{"trouble.t": DiffNewStep, "source.b": DiffGone, "combine.sum": DiffNewResult,
			"source.a": DiffUnchanged}
		for step, state := range want {
			if got[step].State != state {
				t.Errorf("%s is %q (%v), want %q", step, got[step].State, got[step].Why, state)
			}
		}
	})
	t.Run("a step that failed in one run is unfinished", func(t *testing.T) {
		p.write("analysis.hcl", strings.Replace(thirdChain, `mode = "fail"`, `mode = "hook"`, 1))
		troubleHook = func() {}
		defer func() { troubleHook = nil }()
		_, fourth := p.run()
		got := states(third, fourth)["trouble.t"]
		if got.State != DiffUnfinished || strings.Join(got.Why, ";") != "it failed in the old run" {
			t.Errorf("trouble.t: %q %v", got.State, got.Why)
		}
	})
}

// thirdChain is chain without source.b, with a trouble step that fails.
const thirdChain = `
analysis "toy" {
  seed = 7
}

source "a" {
  files = ["data/a.txt"]
}

floor "fa" {
  input = source.a
}

trouble "t" {
  mode = "fail"
}

combine "sum" {
  inputs = [floor.fa]
  offset = "12 h"
}
`
