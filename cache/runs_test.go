package cache

import (
	"encoding/json"
	"errors"
	"reflect"
	"regexp"
	"strings"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"
)

// t0 is an arbitrary fixed time for the tests' run records.
var t0 = time.Date(2025, 3, 14, 9, 30, 0, 0, time.UTC)

func TestRunRecordsRoundTrip(t *testing.T) {
	s := newStore(t)
	want := Run{
		ID:        "20250314-093000-aaaa0001",
		Started:   t0,
		Workflow:  "sha256:" + abcDigest,
		File:      "analysis.hcl",
		Overrides: map[string]string{"seed": "4712", "detrend.quiet.span": "12 h"},
		Steps: []RunStep{
			{Step: "photometry.survey", Kind: "photometry", StepKey: stepKey("p"), ResultKey: ResultKeyOf([]byte("p")), Status: "reused"},
			{Step: "fit.main", Kind: "fit", StepKey: stepKey("f"), Status: "failed", Seconds: 12.5},
		},
	}
	if err := s.PutRun(want); err != nil {
		t.Fatal(err)
	}
	got, err := s.FindRun(want.ID)
	if err != nil {
		t.Fatal(err)
	}
	if !got.Started.Equal(want.Started) {
		t.Errorf("Started = %v, want %v", got.Started, want.Started)
	}
	got.Started = want.Started
	if !reflect.DeepEqual(got, want) {
		t.Errorf("read back\n%+v\nwant\n%+v", got, want)
	}
}

func TestFindRun(t *testing.T) {
	s := newStore(t)
	// Stored out of order: Runs must sort them by start time.
	for _, r := range []Run{
		{ID: "20250316-080000-cccc0003", Started: t0.Add(48 * time.Hour)},
		{ID: "20250314-093000-aaaa0001", Started: t0},
		{ID: "20250314-120000-bbbb0002", Started: t0.Add(150 * time.Minute)},
	} {
		if err := s.PutRun(r); err != nil {
			t.Fatal(err)
		}
	}
	runs, err := s.Runs()
	if err != nil {
		t.Fatal(err)
	}
	var ids []string
	for _, r := range runs {
		ids = append(ids, r.ID)
	}
	if want := []string{"20250314-093000-aaaa0001", "20250314-120000-bbbb0002", "20250316-080000-cccc0003"}; !reflect.DeepEqual(ids, want) {
		t.Fatalf("Runs order %v, want oldest first %v", ids, want)
	}

	tests := []struct {
		name, ref, want string
		missing         bool // error wraps ErrMissing
		errText         string
	}{
		{name: "a full id finds its run", ref: "20250314-120000-bbbb0002", want: "20250314-120000-bbbb0002"},
		{name: "a unique prefix finds its run", ref: "20250316", want: "20250316-080000-cccc0003"},
		{name: "latest is the most recently started run", ref: "latest", want: "20250316-080000-cccc0003"},
		{name: "previous is the run before it", ref: "previous", want: "20250314-120000-bbbb0002"},
		{name: "an ambiguous prefix is an error listing the candidates", ref: "20250314", errText: "20250314-093000-aaaa0001"},
		{name: "an unknown id is missing", ref: "2024", missing: true},
		{name: "an empty reference is an error", ref: "", errText: "no run given"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			r, err := s.FindRun(tc.ref)
			if tc.want != "" {
				if err != nil || r.ID != tc.want {
					t.Errorf("FindRun(%q) = %q, %v; want %q", tc.ref, r.ID, err, tc.want)
				}
				return
			}
			if err == nil {
				t.Fatalf("FindRun(%q) = %q, want an error", tc.ref, r.ID)
			}
			if tc.missing && !errors.Is(err, ErrMissing) {
				t.Errorf("error %v does not wrap ErrMissing", err)
			}
			if !strings.Contains(err.Error(), tc.errText) {
				t.Errorf("error %q lacks %q", err, tc.errText)
			}
		})
	}
}

func TestPreviousNeedsTwoRuns(t *testing.T) {
	s := newStore(t)
	if _, err := s.FindRun("latest"); !errors.Is(err, ErrMissing) {
		t.Errorf("latest of no runs: %v", err)
	}
	if err := s.PutRun(Run{ID: "only", Started: t0}); err != nil {
		t.Fatal(err)
	}
	if _, err := s.FindRun("previous"); !errors.Is(err, ErrMissing) {
		t.Errorf("previous of one run: %v", err)
	}
}

func TestRunIDs(t *testing.T) {
	t.Run("a new id starts with the UTC time and differs each time", func(t *testing.T) {
		at := time.Date(2025, 3, 14, 10, 30, 0, 0, time.FixedZone("CET", 3600))
		a, b := NewRunID(at), NewRunID(at)
		if !regexp.MustCompile(`^20250314-093000-[0-9a-f]{8}$`).MatchString(a) {
			t.Errorf("NewRunID = %q", a)
		}
		if a == b {
			t.Errorf("two ids for the same second are equal: %q", a)
		}
		if err := checkRunID(a); err != nil {
			t.Error(err)
		}
	})
	for _, bad := range []string{"", "latest", "previous", "two words", "tab\there", strings.Repeat("x", 129)} {
		t.Run("PutRun refuses the id "+clip(bad), func(t *testing.T) {
			if err := newStore(t).PutRun(Run{ID: bad}); err == nil {
				t.Errorf("PutRun accepted id %q", bad)
			}
		})
	}
}

func TestPins(t *testing.T) {
	s := newStore(t)
	if err := s.Pin("nope", "paper"); !errors.Is(err, ErrMissing) {
		t.Errorf("pinning an unknown run: %v", err)
	}
	for _, id := range []string{"r1", "r2"} {
		if err := s.PutRun(Run{ID: id, Started: t0}); err != nil {
			t.Fatal(err)
		}
	}
	if err := s.Pin("r1", "submitted"); err != nil {
		t.Fatal(err)
	}
	if err := s.Pin("r1", "accepted"); err != nil {
		t.Fatal(err)
	}
	if err := s.Pin("r2", ""); err != nil {
		t.Fatal(err)
	}
	pins, err := s.Pins()
	if err != nil || !reflect.DeepEqual(pins, map[string]string{"r1": "accepted", "r2": ""}) {
		t.Errorf("Pins = %v, %v", pins, err)
	}
	if err := s.Unpin("r2"); err != nil {
		t.Fatal(err)
	}
	if err := s.Unpin("r2"); !errors.Is(err, ErrMissing) {
		t.Errorf("unpinning twice: %v", err)
	}
	if pins, _ := s.Pins(); !reflect.DeepEqual(pins, map[string]string{"r1": "accepted"}) {
		t.Errorf("Pins after Unpin = %v", pins)
	}
}

func TestAStoreOfTheFirstFormatReadsAndIsMarkedOnItsFirstWrite(t *testing.T) {
	s := newStore(t)
	e := entry("fit.main", []byte("f"))
	mustCommit(t, s, e)
	// A run record as a dipline of format "dipline store 1" wrote it: each step line names
	// its step under "address".
	old := `{"id":"20250314-093000-aaaa0001","started":"2025-03-14T09:30:00Z","workflow_digest":"d",` +
		`"workflow_file":"analysis.hcl","steps":[{"address":"fit.main","kind":"fit","step_key":"` + e.Step.String() +
		`","result_key":"` + e.Result.String() + `","status":"computed","seconds":1.5}],"state":"ended"}`
	if err := PutRawForTest(s.Path(), "runs", []byte("20250314-093000-aaaa0001"), []byte(old)); err != nil {
		t.Fatal(err)
	}
	if err := PutRawForTest(s.Path(), "meta", keyFormat, []byte(formatV1)); err != nil {
		t.Fatal(err)
	}
	formatNow := func() string {
		var v string
		if err := s.view(func(tx *bolt.Tx) error { v = string(tx.Bucket(bucketMeta).Get(keyFormat)); return nil }); err != nil {
			t.Fatal(err)
		}
		return v
	}

	t.Run("its run record reads, with the step named", func(t *testing.T) {
		r, err := s.FindRun(RefLatest)
		if err != nil {
			t.Fatal(err)
		}
		if len(r.Steps) != 1 || r.Steps[0].Step != "fit.main" || r.Steps[0].StepKey != e.Step || r.Steps[0].ResultKey != e.Result {
			t.Errorf("step lines %+v", r.Steps)
		}
		if _, bad, err := s.RunRecords(); err != nil || len(bad) != 0 {
			t.Errorf("bad records %v, %v", bad, err)
		}
		if f := formatNow(); f != formatV1 {
			t.Errorf("reading changed the format to %q", f)
		}
	})
	t.Run("a step line added to it replaces the old one of the same step", func(t *testing.T) {
		line := RunStep{Step: "fit.main", Kind: "fit", StepKey: e.Step, ResultKey: e.Result, Status: "reused"}
		if err := s.CommitStep("20250314-093000-aaaa0001", []RunStep{line}); err != nil {
			t.Fatal(err)
		}
		r, err := s.FindRun("20250314-093000-aaaa0001")
		if err != nil || len(r.Steps) != 1 || r.Steps[0] != line {
			t.Errorf("step lines %+v, %v", r.Steps, err)
		}
	})
	t.Run("the first write marks it with this format", func(t *testing.T) {
		if f := formatNow(); f != format {
			t.Errorf("format %q after a write, want %q", f, format)
		}
	})
	t.Run("a new step line names the step under step", func(t *testing.T) {
		b, err := json.Marshal(RunStep{Step: "fit.main"})
		if err != nil || !strings.Contains(string(b), `"step":"fit.main"`) || strings.Contains(string(b), "address") {
			t.Errorf("JSON %s, %v", b, err)
		}
	})
}
