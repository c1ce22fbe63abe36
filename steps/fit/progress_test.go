package fit

import (
	"bytes"
	"context"
	"sync"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/steptest"
)

// runWatched runs the kind as runKind does, with progress reported to watch when it is
// not nil, and returns the artifact's bytes.
func runWatched(t *testing.T, maxSteps int, watch func(done, total int)) []byte {
	t.Helper()
	k := New()
	cfg, err := steptest.Config(k, map[string]any{"light_curve": "detrend.x", "signals": "search.x", "max_steps": maxSteps})
	if err != nil {
		t.Fatal(err)
	}
	lc := synthetic(hot, 7, 800e-6, 3)
	in := steps.Inputs{Refs: map[string][]steps.Artifact{
		"light_curve": {curveArtifact{lc}}, "signals": {searchArtifact{[]signals.Signal{start(hot)}}}}}
	art, err := k.Run(context.Background(), cfg, in, steps.Env{Seed: 99, Pool: steptest.Pool(2), Progress: watch})
	if err != nil {
		t.Fatal(err)
	}
	return art.Encode()
}

func TestFitReportsProgressAndOnlyWatches(t *testing.T) {
	type call struct{ done, total int }
	var (
		mu    sync.Mutex
		calls []call
	)
	watched := runWatched(t, 500, func(done, total int) {
		mu.Lock()
		calls = append(calls, call{done, total})
		mu.Unlock()
	})
	t.Run("progress never goes back, stays within its total and ends there", func(t *testing.T) {
		if len(calls) < 2 {
			t.Fatalf("%d progress calls", len(calls))
		}
		for i, c := range calls {
			if c.total <= 0 || c.done < 0 || c.done > c.total || (i > 0 && (c.done < calls[i-1].done || c.total != calls[i-1].total)) {
				t.Fatalf("call %d: %d of %d (before it %v)", i, c.done, c.total, calls[max(0, i-1)])
			}
		}
		if last := calls[len(calls)-1]; last.done != last.total {
			t.Errorf("the last call is %d of %d", last.done, last.total)
		}
	})
	t.Run("the artifact's bytes are the same with progress reported and without", func(t *testing.T) {
		if plain := runWatched(t, 500, nil); !bytes.Equal(plain, watched) {
			t.Error("reporting progress changed the fit's result")
		}
	})
}
