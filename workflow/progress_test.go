package workflow

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"sync"
	"testing"

	"dipline/cache"
	"dipline/steps"
)

// counted is a toy kind that reports progress in five steps, then gives its input.
type counted struct{ toyBase }

func (counted) Name() string          { return "counted" }
func (counted) Doc() string           { return "reports progress" }
func (counted) Check(*oneInput) error { return nil }
func (counted) Run(ctx context.Context, cfg *oneInput, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	for i := 1; i <= 5; i++ {
		if env.Progress != nil {
			env.Progress(i, 5)
		}
	}
	return in.Ref("input"), nil
}

const countedFlow = `
analysis "toy" {
  seed = 7
}

source "a" {
  files = ["data/a.txt"]
}

counted "one" {
  input = source.a
}

source "b" {
  files = ["data/b.txt"]
}

counted "two" {
  input = source.b
}
`

// runCounted runs countedFlow in a fresh folder with the given OnProgress and returns the
// results file's bytes.
func runCounted(t *testing.T, onProgress func(step string, done, total int)) []byte {
	t.Helper()
	p := newProject(t, map[string]string{"analysis.hcl": countedFlow, "data/a.txt": "1\n2\n", "data/b.txt": "5\n"})
	reg, err := steps.NewRegistry(steps.Define[sourceConfig](source{}), steps.Define[oneInput](counted{}))
	if err != nil {
		t.Fatal(err)
	}
	w, diags := LoadWith(filepath.Join(p.dir, "analysis.hcl"), reg, nil)
	if diags.HasErrors() {
		t.Fatal(diags)
	}
	store, err := cache.Open(w.StorePath)
	if err != nil {
		t.Fatal(err)
	}
	rep, err := Run(context.Background(), w, store, Options{Workers: 2, OnProgress: onProgress})
	if err != nil {
		t.Fatal(err)
	}
	results, err := os.ReadFile(rep.ResultsPath)
	if err != nil {
		t.Fatal(err)
	}
	return results
}

func TestTheEngineHandsEachStepItsOwnProgress(t *testing.T) {
	var (
		mu   sync.Mutex
		seen = map[string][]int{}
	)
	results := runCounted(t, func(step string, done, total int) {
		mu.Lock()
		defer mu.Unlock()
		if total != 5 {
			t.Errorf("%s: total %d, want 5", step, total)
		}
		seen[step] = append(seen[step], done)
	})
	t.Run("each step's progress arrives under its own name, in order", func(t *testing.T) {
		for _, step := range []string{"counted.one", "counted.two"} {
			if got := seen[step]; len(got) != 5 || got[0] != 1 || got[4] != 5 {
				t.Errorf("%s: %v", step, got)
			}
		}
		if len(seen) != 2 {
			t.Errorf("progress from %d steps, want the two that report it: %v", len(seen), seen)
		}
	})
	t.Run("nothing of it reaches the results file", func(t *testing.T) {
		if bytes.Contains(results, []byte("progress")) {
			t.Errorf("the results file mentions progress:\n%s", results)
		}
	})
}
