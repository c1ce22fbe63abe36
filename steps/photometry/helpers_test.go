package photometry

import (
	"fmt"
	"os"
	"path/filepath"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/steptest"
)

// load reads fixtures by their path below testdata/ and names them as a workflow would.
func load(t testing.TB, paths ...string) []steps.File {
	t.Helper()
	var out []steps.File
	for _, p := range paths {
		b, err := os.ReadFile(filepath.Join("..", "..", "testdata", p))
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, steps.File{Name: filepath.Base(p), Data: b})
	}
	return out
}

// block is what a photometry block writes: the given attributes, and files naming those
// the test hands over.
func block(attrs map[string]any, files []steps.File) map[string]any {
	names := []string{}
	for _, f := range files {
		names = append(names, f.Name)
	}
	b := map[string]any{"files": names}
	for k, v := range attrs {
		b[k] = v
	}
	return b
}

// runKind configures and runs the kind as the engine would, collecting its notes.
func runKind(t testing.TB, attrs map[string]any, files []steps.File) (*Result, []string, error) {
	t.Helper()
	art, notes, err := steptest.Run(New(), block(attrs, files), steps.Inputs{Files: map[string][]steps.File{"files": files}}, steps.NewPool(2))
	if err != nil {
		return nil, notes, err
	}
	return art.(*Result), notes, nil
}

// DefaultConfig is the configuration of a block that sets nothing but its files, its
// defaults read from Config's tags: for tests that call Read directly.
func DefaultConfig() Config {
	cfg, err := New().Schema().New()
	if err != nil {
		// The tags are the program's, checked by every test that registers the kind.
		panic(fmt.Sprintf("photometry: the configuration's tags: %v", err))
	}
	return *cfg.(*Config)
}
