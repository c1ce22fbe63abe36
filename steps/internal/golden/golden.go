// Package golden guards step-kind versions: each kind's test computes its artifact on a
// fixture and calls Check, which compares it with the record committed in
// testdata/golden/<kind>.json. On the architecture the record was made on, the artifact's
// bytes (its result key) must match: bytes that change without a version bump fail the
// test. On any other architecture floating-point results may differ in their last bits (a
// fused multiply-add here, a different math routine there), and a Monte Carlo chain that
// starts one bit apart wanders off, so there the record's figures are compared within
// tolerances instead: a laptop on another CPU still tests the numbers. After a deliberate
// bump, `go test ./steps/... -update-golden` rewrites the records.
package golden

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"flag"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"testing"

	"dipline/steps"
)

var update = flag.Bool("update-golden", false, "rewrite testdata/golden files after a version bump")

type record struct {
	Kind      string   `json:"kind"`
	Version   int      `json:"version"`
	Arch      string   `json:"arch"`
	ResultKey string   `json:"result_key"`
	Figures   []figure `json:"figures,omitempty"`
}

// figure is one of the artifact's figures as recorded; Value is nil for NaN (JSON has none).
type figure struct {
	Name    string   `json:"name"`
	Value   *float64 `json:"value"`
	MCError float64  `json:"mc_error,omitempty"`
}

// Tolerances for figures compared across architectures.
const (
	// relTol is the relative difference allowed for a figure that is exact given its
	// inputs: rounding differences of order 1e-16 grow through sorting, iteration and
	// refinement, but not to a millionth (common practice for cross-platform numerics).
	relTol = 1e-6
	// mcSigmas is how many standard errors of a difference of two independent Monte Carlo
	// estimates (√2 × MCError) a figure drawn from random numbers may move: a chain that
	// starts one bit apart is a different chain.
	mcSigmas = 5.0
)

// Check compares the artifact with the golden record of kind. root is the path from the
// calling test's folder to the repository root (e.g. "../..").
func Check(t *testing.T, root, kind string, version int, art steps.Artifact) {
	t.Helper()
	got := recordOf(kind, version, runtime.GOARCH, art)
	path := filepath.Join(root, "testdata", "golden", kind+".json")
	if *update {
		b, _ := json.MarshalIndent(got, "", "  ")
		if err := os.WriteFile(path, append(b, '\n'), 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("no golden record for %s (%v); create it with -update-golden", kind, err)
	}
	var want record
	if err := json.Unmarshal(b, &want); err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	if want.Version != version {
		t.Fatalf("%s: version is %d but the golden record is for %d; run the tests with -update-golden after checking the change", kind, version, want.Version)
	}
	if want.Arch == got.Arch {
		if want.ResultKey != got.ResultKey {
			t.Fatalf("%s: the artifact's bytes changed (result key %s, golden %s) but the version is still %d: bump the kind's version", kind, got.ResultKey[:12], want.ResultKey[:12], version)
		}
		return
	}
	for _, msg := range compareFigures(want.Figures, got.Figures) {
		t.Errorf("%s (golden record made on %s, this is %s): %s", kind, want.Arch, got.Arch, msg)
	}
	t.Logf("%s: golden record made on %s; on %s its %d figures were compared within tolerances, not its bytes", kind, want.Arch, got.Arch, len(want.Figures))
}

func recordOf(kind string, version int, arch string, art steps.Artifact) record {
	sum := sha256.Sum256(art.Encode())
	r := record{Kind: kind, Version: version, Arch: arch, ResultKey: hex.EncodeToString(sum[:])}
	for _, f := range art.Figures() {
		fr := figure{Name: f.Name, MCError: f.MCError}
		if !math.IsNaN(f.Value) && !math.IsInf(f.Value, 0) {
			v := f.Value
			fr.Value = &v
		}
		r.Figures = append(r.Figures, fr)
	}
	return r
}

// compareFigures lists, in our words, every recorded figure that is missing or lies outside
// its tolerance: relTol for exact figures, mcSigmas × √2 × MCError (the larger of the two
// records') for figures estimated from random draws.
func compareFigures(want, got []figure) []string {
	have := map[string]figure{}
	for _, f := range got {
		have[f.Name] = f
	}
	var out []string
	for _, w := range want {
		g, ok := have[w.Name]
		switch {
		case !ok:
			out = append(out, fmt.Sprintf("figure %s is missing", w.Name))
		case (w.Value == nil) != (g.Value == nil):
			out = append(out, fmt.Sprintf("figure %s is %s, golden %s", w.Name, show(g.Value), show(w.Value)))
		case w.Value != nil:
			a, b := *w.Value, *g.Value
			tol := relTol * math.Max(math.Abs(a), math.Abs(b))
			if mc := math.Max(w.MCError, g.MCError); mc > 0 {
				tol = math.Max(tol, mcSigmas*math.Sqrt2*mc)
			}
			if math.Abs(a-b) > tol {
				out = append(out, fmt.Sprintf("figure %s is %.10g, golden %.10g (tolerance %.3g)", w.Name, b, a, tol))
			}
		}
	}
	return out
}

func show(v *float64) string {
	if v == nil {
		return "undefined"
	}
	return fmt.Sprintf("%.10g", *v)
}
