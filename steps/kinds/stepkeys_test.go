package kinds_test

import (
	"encoding/hex"
	"flag"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"dipline/cache"
	"dipline/steps/kinds"
	"dipline/workflow"
)

var updateKeys = flag.Bool("update-step-keys", false, "rewrite testdata/step_keys.golden")

// stepKeyWorkflows are the workflows whose step keys are pinned: the demo as shipped, and a
// fixture that writes out every parameter of every kind (mostly at values other than the
// defaults), so that each parameter type's key encoding is covered.
var stepKeyWorkflows = []struct {
	name, hcl string
	data      []string
}{
	{"demo", "../../examples/fernwell/analysis.hcl", []string{
		"data/fw3318.csv", "data/nearby_stars.csv", "data/fw3318_imaging.csv"}},
	{"every_param", "testdata/every_param.hcl", []string{
		"fw3318.csv", "nearby_stars.csv", "fw3318_imaging.csv"}},
}

// TestStepKeysAreStable pins every step's key on the pinned workflows. A step key must not
// change for the same inputs unless its kind's version is bumped (with the reason in the
// commit): every store holding results under the old key would silently stop reusing them.
// Result keys need a run; here each step's upstream result key is stood in for by its step
// key, which changes whenever anything upstream does, so the chain is covered without
// running a step.
func TestStepKeysAreStable(t *testing.T) {
	reg, err := kinds.Registry()
	if err != nil {
		t.Fatal(err)
	}
	var lines []string
	for _, wf := range stepKeyWorkflows {
		dir := t.TempDir()
		copyFile(t, wf.hcl, filepath.Join(dir, "analysis.hcl"))
		for _, d := range wf.data {
			src := filepath.Join("../../examples/fernwell/data", filepath.Base(d))
			if err := os.MkdirAll(filepath.Join(dir, filepath.Dir(d)), 0o755); err != nil {
				t.Fatal(err)
			}
			copyFile(t, src, filepath.Join(dir, d))
		}
		w, diags := workflow.Load(filepath.Join(dir, "analysis.hcl"), reg)
		if diags.HasErrors() {
			for _, d := range diags {
				t.Errorf("%s: %v", wf.name, d)
			}
			t.FailNow()
		}
		upstream := map[string]cache.ResultKey{}
		for _, s := range w.Order {
			key, err := w.StepKey(s, upstream)
			if err != nil {
				t.Fatalf("%s %s: %v", wf.name, s.Addr, err)
			}
			upstream[s.Addr] = cache.ResultKey(key)
			lines = append(lines, wf.name+" "+s.Addr+" "+hex.EncodeToString(key[:]))
		}
	}
	sort.Strings(lines)
	got := strings.Join(lines, "\n") + "\n"
	const golden = "testdata/step_keys.golden"
	if *updateKeys {
		if err := os.WriteFile(golden, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(golden)
	if err != nil {
		t.Fatal(err)
	}
	if got != string(want) {
		t.Errorf("step keys changed (bump the kind's version if its numbers changed, then -update-step-keys):\n got:\n%s\nwant:\n%s", got, want)
	}
}

func copyFile(t *testing.T, from, to string) {
	t.Helper()
	b, err := os.ReadFile(from)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(to, b, 0o644); err != nil {
		t.Fatal(err)
	}
}
