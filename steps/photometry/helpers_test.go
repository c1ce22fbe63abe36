package photometry

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"testing"

	"dipline/steps"
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
func values(attrs map[string]any) steps.Values {
	v := steps.Values{}
	for _, p := range (Kind{}).Params() {
		if p.Default != nil {
			v[p.Name] = p.Default
		}
	}
	for k, a := range attrs {
		v[k] = a
	}
	return v
}

// runKind prepares and runs the kind as the engine would, collecting its notes.
func runKind(t testing.TB, attrs map[string]any, files []steps.File) (*Result, []string, error) {
	t.Helper()
	cfg, err := Kind{}.Prepare(values(attrs))
	if err != nil {
		return nil, nil, err
	}
	var notes []string
	env := steps.Env{Pool: steps.NewPool(2), Notef: func(f string, a ...any) { notes = append(notes, fmt.Sprintf(f, a...)) }}
	art, err := Kind{}.Run(context.Background(), cfg, steps.Inputs{Files: map[string][]steps.File{"files": files}}, env)
	if err != nil {
		return nil, notes, err
	}
	return art.(*Result), notes, nil
}
