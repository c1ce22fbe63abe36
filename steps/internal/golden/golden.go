// Package golden guards step-kind versions: each kind's test computes its artifact on a
// fixture and calls Check, which compares (version, result key) with the file committed in
// testdata/golden/<kind>.json. Bytes that change without a version bump fail the test;
// after a deliberate bump, `go test ./steps/... -update-golden` rewrites the file.
package golden

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"flag"
	"os"
	"path/filepath"
	"runtime"
	"testing"
)

var update = flag.Bool("update-golden", false, "rewrite testdata/golden files after a version bump")

type record struct {
	Kind      string `json:"kind"`
	Version   int    `json:"version"`
	Arch      string `json:"arch"`
	ResultKey string `json:"result_key"`
}

// Check compares the SHA-256 of encoded with the golden record of kind. root is the path
// from the calling test's folder to the repository root (e.g. "../..").
func Check(t *testing.T, root, kind string, version int, encoded []byte) {
	t.Helper()
	sum := sha256.Sum256(encoded)
	got := record{Kind: kind, Version: version, Arch: runtime.GOARCH, ResultKey: hex.EncodeToString(sum[:])}
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
	if want.Arch != got.Arch {
		t.Skipf("golden record made on %s; floating-point results may differ on %s", want.Arch, got.Arch)
	}
	switch {
	case want.Version != version:
		t.Fatalf("%s: version is %d but the golden record is for %d; run the tests with -update-golden after checking the change", kind, version, want.Version)
	case want.ResultKey != got.ResultKey:
		t.Fatalf("%s: the artifact's bytes changed (result key %s, golden %s) but the version is still %d: bump the kind's version", kind, got.ResultKey[:12], want.ResultKey[:12], version)
	}
}
