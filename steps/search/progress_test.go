package search

import (
	"bytes"
	"context"
	"sync"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/steptest"
)

// The search counts its progress over every pass it may make; the fixture holds one
// signal, so the search stops before max_signals passes and then reports the whole as
// done. Blocks run on four workers, so they finish out of order.
func TestSearchReportsProgressAndOnlyWatches(t *testing.T) {
	cfg := steptest.MustConfig(New(), defaults())
	in := steps.Inputs{Refs: map[string][]steps.Artifact{"light_curve": {curveArtifact{fixture()}}}}
	type call struct{ done, total int }
	var (
		mu    sync.Mutex
		calls []call
	)
	env := steps.Env{Pool: steps.NewPool(4), Progress: func(done, total int) {
		mu.Lock()
		calls = append(calls, call{done, total})
		mu.Unlock()
	}}
	watched, err := New().Run(context.Background(), cfg, in, env)
	if err != nil {
		t.Fatal(err)
	}
	t.Run("progress never goes back, stays within its total and ends there", func(t *testing.T) {
		if len(calls) < 2 {
			t.Fatalf("%d progress calls", len(calls))
		}
		for i, c := range calls {
			if c.total <= 0 || c.done > c.total || (i > 0 && (c.done < calls[i-1].done || c.total != calls[i-1].total)) {
				t.Fatalf("call %d: %d of %d (before it %v)", i, c.done, c.total, calls[max(0, i-1)])
			}
		}
		if last := calls[len(calls)-1]; last.done != last.total {
			t.Errorf("the last call is %d of %d", last.done, last.total)
		}
	})
	t.Run("the artifact's bytes are the same with progress reported and without", func(t *testing.T) {
		plain, err := New().Run(context.Background(), cfg, in, steps.Env{Pool: steps.NewPool(4)})
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(plain.Encode(), watched.Encode()) {
			t.Error("reporting progress changed the search's result")
		}
	})
}
