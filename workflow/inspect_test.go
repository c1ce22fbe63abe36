package workflow

import (
	"context"
	"path/filepath"
	"strings"
	"testing"

	"dipline/steps"
)

// reader is the toy source with an inspection: it reads its files as Run does.
type reader struct{ source }

func (reader) Name() string { return "reader" }
func (r reader) Inspect(cfg *sourceConfig, in steps.Inputs) error {
	_, err := r.Run(context.Background(), cfg, in, steps.Env{})
	return err
}

// panicky inspects by panicking, as a faulty kind might.
type panicky struct{ source }

func (panicky) Name() string                              { return "panicky" }
func (panicky) Inspect(*sourceConfig, steps.Inputs) error { panic("boom") }

// Inspect hands each inspecting step the bytes Run would get and collects what it refuses
// (file and line, as Run says it), leaves the other kinds alone, and turns a panic into an
// error for that step.
func TestInspectFindsWhatARunWouldRefuse(t *testing.T) {
	p := newProject(t, map[string]string{
		"good.txt": "1\n2\n",
		"bad.txt":  "1\ntwo\n",
		"analysis.hcl": `analysis "x" {
  seed = 1
}
reader "good" {
  files = ["good.txt"]
}
reader "bad" {
  files = ["bad.txt"]
}
source "plain" {
  files = ["bad.txt"]
}
panicky "odd" {
  files = ["good.txt"]
}
`})
	reg := toyRegistry()
	reg["reader"], reg["panicky"] = steps.Define[sourceConfig](reader{}), steps.Define[sourceConfig](panicky{})
	w, diags := LoadWith(filepath.Join(p.dir, "analysis.hcl"), reg, nil)
	if diags.HasErrors() {
		t.Fatal(diags)
	}
	got := Inspect(w)
	if len(got) != 2 {
		t.Fatalf("%d refusals, want 2 (reader.bad, panicky.odd): %+v", len(got), got)
	}
	if got[0].Step.Addr != "reader.bad" || !strings.Contains(got[0].Err.Error(), `bad.txt:2: "two" is not a number`) || !steps.IsInputError(got[0].Err) {
		t.Errorf("first refusal %s: %v", got[0].Step.Addr, got[0].Err)
	}
	if got[1].Step.Addr != "panicky.odd" || !strings.Contains(got[1].Err.Error(), "internal error while inspecting") {
		t.Errorf("second refusal %s: %v", got[1].Step.Addr, got[1].Err)
	}
}
