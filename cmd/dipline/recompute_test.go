package main

import (
	"encoding/hex"
	"path/filepath"
	"strings"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"
)

// `store verify --recompute` runs the stored steps again from their stored inputs: on a
// fresh store every one gives the same bits (exit 0); a step key pointed, behind the tool's
// back, at another step's valid result is caught and named (exit 2: the store holds what it
// does not claim), which plain re-hashing cannot see.
func TestVerifyRecomputesTheStoredSteps(t *testing.T) {
	f := newFolder(t)
	if code, out, errs := f.dipline("run"); code != exitOK {
		t.Fatalf("run: exit %d\n%s%s", code, out, errs)
	}
	code, out, errs := f.dipline("store", "verify", "--recompute")
	if code != exitOK || !strings.Contains(out, "3 of 3 steps run again gave the same bits") || !strings.Contains(out, "same bits          search.dips") {
		t.Fatalf("fresh store: exit %d\n%s%s", code, out, errs)
	}
	code, out, _ = f.dipline("store", "verify", "--recompute", "--sample", "1", "--sample-seed", "7")
	if code != exitOK || !strings.Contains(out, "a sample of 1 stored steps (sample seed 7)") || !strings.Contains(out, "1 of 1 steps run again") {
		t.Fatalf("a sample: exit %d\n%s", code, out)
	}

	// Point the search's step key at the detrend's result (the bucket layout of cache/store.go).
	rf := f.results()
	search, detrend := stepIn(t, rf, "search.dips"), stepIn(t, rf, "detrend.quiet")
	sk, _ := hex.DecodeString(search.StepKey)
	rk, _ := hex.DecodeString(detrend.ResultKey)
	db, err := bolt.Open(filepath.Join(f.dir, ".dipline", "store.db"), 0o644, &bolt.Options{Timeout: time.Second})
	if err != nil {
		t.Fatal(err)
	}
	if err := db.Update(func(tx *bolt.Tx) error { return tx.Bucket([]byte("steps")).Put(sk, rk) }); err != nil {
		t.Fatal(err)
	}
	db.Close()
	code, out, errs = f.dipline("store", "verify", "--recompute")
	if code != exitBadUser || !strings.Contains(out, "search.dips") || !strings.Contains(out, detrend.ResultKey[:12]) {
		t.Fatalf("swapped mapping: exit %d\n%s%s", code, out, errs)
	}
	// Plain verify sees it too (the mapping against its provenance, nothing run), and
	// --drop-damaged removes it, so the next run computes the search afresh.
	code, out, _ = f.dipline("store", "verify")
	if code != exitBadUser || !strings.Contains(out, "the mapping disagrees with the provenance: step key "+search.StepKey) {
		t.Fatalf("plain verify: exit %d\n%s", code, out)
	}
	if code, out, _ = f.dipline("store", "verify", "--drop-damaged"); code != exitOK || !strings.Contains(out, "removed 1 damaged entries") {
		t.Fatalf("drop: exit %d\n%s", code, out)
	}
	if code, out, _ = f.dipline("run"); code != exitOK || !strings.Contains(out, "computed  search.dips") {
		t.Fatalf("run after the drop: exit %d\n%s", code, out)
	}
	if p, ok := figureIn(stepIn(t, f.results(), "search.dips"), "signal1.period"); !ok || p < 2.4 || p > 2.6 {
		t.Errorf("the search after the drop finds %v (present %v), want the 2.5-d dips", p, ok)
	}
}

// `check` reads the data too: a light curve a run would refuse is refused before anything
// runs, with its file and row, and exit 2; the good one passes.
func TestCheckInspectsTheData(t *testing.T) {
	f := newFolder(t)
	if code, out, errs := f.dipline("check"); code != exitOK || !strings.Contains(out, "no mistakes found in the workflow or its data") {
		t.Fatalf("good data: exit %d\n%s%s", code, out, errs)
	}
	f.write("lc.csv", "time,flux,flux_err\n0.0,1.0,0.0003\n0.02,oops,0.0003\n0.04,1.0,0.0003\n")
	code, out, errs := f.dipline("check")
	if code != exitBadUser || !strings.Contains(errs, `photometry.raw: lc.csv:3: column flux: "oops" is not a number`) || !strings.Contains(out, "the data of 1 would be refused") {
		t.Fatalf("bad data: exit %d\n%s%s", code, out, errs)
	}
}
