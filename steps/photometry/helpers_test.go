package photometry

import (
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

// values applies the schema's defaults to the attributes given, as the engine does.
func values(attrs map[string]any) steps.Values { return steptest.Values(Kind{}, attrs) }

// runKind prepares and runs the kind as the engine would, collecting its notes.
func runKind(t testing.TB, attrs map[string]any, files []steps.File) (*Result, []string, error) {
	t.Helper()
	art, notes, err := steptest.Run(Kind{}, values(attrs), steps.Inputs{Files: map[string][]steps.File{"files": files}}, steps.NewPool(2))
	if err != nil {
		return nil, notes, err
	}
	return art.(*Result), notes, nil
}
