package main

import (
	"crypto/sha256"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"

	"dipline/cache"
)

// storePath is where the test workflow keeps its store (workflow.Load's default).
func (f *folder) storePath() string { return filepath.Join(f.dir, ".dipline", "store.db") }

// twoRuns is a store after two runs of the test workflow (the second with another detrend
// span), made once and copied into each test's folder: the runs take most of a second.
// padded adds 200 invented steps and 60 invented runs, so that every part of the store has
// pages of its own for the damage tests to spoil (the two runs alone fit the step keys,
// provenance and runs inside their buckets' headers).
var twoRuns = sync.OnceValues(func() (map[bool][]byte, error) {
	dir, err := os.MkdirTemp("", "dipline-tworuns-")
	if err != nil {
		return nil, err
	}
	defer os.RemoveAll(dir)
	f := &folder{t: &testing.T{}, dir: dir}
	f.write("analysis.hcl", workflowText)
	f.write("lc.csv", lightCurveCSV())
	f.dipline("run")
	f.write("analysis.hcl", secondWorkflow)
	f.dipline("run")
	plain, err := os.ReadFile(f.storePath())
	if err != nil {
		return nil, err
	}
	if err := pad(f.storePath()); err != nil {
		return nil, err
	}
	padded, err := os.ReadFile(f.storePath())
	return map[bool][]byte{false: plain, true: padded}, err
})

// secondWorkflow is the test workflow with another detrend span.
var secondWorkflow = strings.Replace(workflowText, `span        = "0.5 d"`, `span        = "0.6 d"`, 1)

// pad adds invented entries and older runs to a store.
func pad(path string) error {
	s, err := cache.Open(path)
	if err != nil {
		return err
	}
	var es []cache.Entry
	for i := range 200 {
		data := []byte(fmt.Sprintf("invented result %d", i))
		step := cache.StepKey(sha256.Sum256([]byte(fmt.Sprint("invented step ", i))))
		es = append(es, cache.Entry{Step: step, Result: cache.ResultKeyOf(data), Data: data,
			Provenance: []byte(fmt.Sprintf(`{"step":"invented.x%d","step_key":"%s"}`, i, step))})
	}
	if err := s.Commit(es...); err != nil {
		return err
	}
	for i := range 60 {
		r := cache.Run{ID: fmt.Sprintf("20200101-0000%02d-00000000", i), Started: time.Date(2020, 1, 1, 0, 0, i, 0, time.UTC)}
		for _, e := range es[i*3 : i*3+3] {
			r.Steps = append(r.Steps, cache.RunStep{Step: "invented.x", StepKey: e.Step, ResultKey: e.Result, Status: "computed"})
		}
		if err := s.PutRun(r); err != nil {
			return err
		}
	}
	return nil
}

// withTwoRuns makes a folder holding the second workflow and the store of the two runs,
// padded or not.
func withTwoRuns(t *testing.T, padded bool) *folder {
	t.Helper()
	b, err := twoRuns()
	if err != nil || len(b[padded]) == 0 {
		t.Fatalf("making the store of two runs: %v", err)
	}
	f := newFolder(t)
	f.write("analysis.hcl", secondWorkflow)
	if err := os.MkdirAll(filepath.Dir(f.storePath()), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(f.storePath(), b[padded], 0o644); err != nil {
		t.Fatal(err)
	}
	return f
}

// noCrashText fails the test when output shows a crash or a stack.
func noCrashText(t *testing.T, what, out string) {
	t.Helper()
	for _, bad := range []string{"panic", "goroutine ", "runtime error", "SIGSEGV", "SIGBUS", "fault address", "internal error", "fault in dipline"} {
		if strings.Contains(out, bad) {
			t.Errorf("%s printed %q:\n%s", what, bad, out)
		}
	}
}

func TestADamagedStoreIsAClearMessageWithItsExitStatus(t *testing.T) {
	cut := func(fraction float64) func(t *testing.T, path string) {
		return func(t *testing.T, path string) {
			fi, _ := os.Stat(path)
			if err := os.Truncate(path, int64(fraction*float64(fi.Size()))); err != nil {
				t.Fatal(err)
			}
		}
	}
	flip := func(bucket string, what cache.PageDamage) func(t *testing.T, path string) {
		return func(t *testing.T, path string) {
			if _, err := cache.DamagePageForTest(path, bucket, what); err != nil {
				t.Fatal(err)
			}
		}
	}
	cases := []struct {
		name   string
		damage func(t *testing.T, path string)
		// always lists the commands that must fail, whatever part of the file they read;
		// the others may succeed when they do not touch the damaged page.
		always []string
	}{
		{"a flipped page id in the results' tree", flip("results", cache.DamageID), []string{"store stats", "store verify", "store prune"}},
		{"a flipped page kind in the step keys' tree", flip("steps", cache.DamageKind), []string{"store stats", "store verify", "store prune", "run"}},
		{"a flipped element count in the provenance tree", flip("provenance", cache.DamageCount), []string{"store stats", "store verify", "store prune"}},
		{"a flipped page kind in the run records' tree", flip("runs", cache.DamageKind), []string{"store stats", "store verify", "store prune", "runs", "trace", "diff", "pin", "run"}},
		{"a store cut to half its length", cut(0.5), []string{"store stats", "store verify", "store prune", "run", "runs", "trace", "diff", "pin", "pending"}},
		{"a store cut inside its header pages", cut(0.0005), []string{"store stats", "store verify", "store prune", "run", "runs", "trace", "diff", "pin", "pending"}},
	}
	commands := map[string][]string{
		"store stats":  {"store", "stats"},
		"store verify": {"store", "verify"},
		"store prune":  {"store", "prune", "--spare", "1"},
		"runs":         {"runs"},
		"trace":        {"trace", "search.dips/signal1.period"},
		"diff":         {"diff"},
		"pin":          {"pin", "latest"},
		"run":          {"run"},
		"pending":      {"pending"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			for _, name := range []string{"store stats", "store verify", "store prune", "runs", "trace", "diff", "pin", "run", "pending"} {
				if name == "pending" && !slices.Contains(tc.always, name) {
					// pending exits 1 on any error of the store (commands.go, pending);
					// it is checked on the stores cut short, which every command refuses
					// at once.
					continue
				}
				t.Run(name+" fails clearly with status 2 or succeeds", func(t *testing.T) {
					f := withTwoRuns(t, true)
					tc.damage(t, f.storePath())
					code, out, errs := f.dipline(commands[name]...)
					noCrashText(t, name, out+errs)
					mustFail := false
					for _, a := range tc.always {
						mustFail = mustFail || a == name
					}
					switch {
					case code == exitOK && !mustFail:
					case code != exitBadUser:
						// README, "Commands": a damaged store exits 2.
						t.Errorf("exit %d, want %d\n%s%s", code, exitBadUser, out, errs)
					case !strings.Contains(out+errs, "damaged"):
						t.Errorf("the message does not say the store is damaged:\n%s%s", out, errs)
					case !strings.Contains(out+errs, "salvage"):
						t.Errorf("the message does not point at the salvage:\n%s%s", out, errs)
					case name != "store verify" && !strings.Contains(errs, f.storePath()):
						t.Errorf("the message does not name the store file:\n%s", errs)
					}
				})
			}
		})
	}
}

func TestSalvageCommand(t *testing.T) {
	t.Run("a sound store is copied whole and the status is 0", func(t *testing.T) {
		f := withTwoRuns(t, false)
		code, out, errs := f.dipline("store", "salvage", "--into", "copy.db")
		if code != exitOK || !strings.Contains(out, "nothing was damaged and everything was kept") {
			t.Fatalf("exit %d\n%s%s", code, out, errs)
		}
	})
	for _, tc := range []struct {
		name   string
		damage func(path string) error
		reuse  bool // whether the salvaged store still serves the next run
	}{
		{"after a flipped page kind in the results' tree", func(p string) error {
			_, err := cache.DamagePageForTest(p, "results", cache.DamageKind)
			return err
		}, true},
		{"after the store was cut to half its length", func(p string) error {
			fi, _ := os.Stat(p)
			return os.Truncate(p, fi.Size()/2)
		}, false},
	} {
		t.Run(tc.name+" keeps what reads, lists the rest, and exits 2", func(t *testing.T) {
			f := withTwoRuns(t, false)
			if err := tc.damage(f.storePath()); err != nil {
				t.Fatal(err)
			}
			code, out, errs := f.dipline("store", "salvage", "--into", "salvaged.db")
			noCrashText(t, "salvage", out+errs)
			if code != exitBadUser || !strings.Contains(out, "damage found:") || !strings.Contains(out, "kept ") {
				t.Fatalf("exit %d\n%s%s", code, out, errs)
			}
			// Put the new store in place of the old: the workflow runs on it.
			if err := os.Rename(filepath.Join(f.dir, "salvaged.db"), f.storePath()); err != nil {
				t.Fatal(err)
			}
			code, out, errs = f.dipline("run")
			if code != exitOK || (tc.reuse && !strings.Contains(out, "reused")) {
				t.Errorf("run on the salvaged store: exit %d\n%s%s", code, out, errs)
			}
			if code, out, _ := f.dipline("store", "verify"); code != exitOK {
				t.Errorf("verify of the salvaged store: exit %d\n%s", code, out)
			}
		})
	}
	t.Run("without --into it says what to add", func(t *testing.T) {
		f := withTwoRuns(t, false)
		if code, _, errs := f.dipline("store", "salvage"); code != exitBadUser || !strings.Contains(errs, "--into") {
			t.Errorf("exit %d: %s", code, errs)
		}
	})
}

func TestABadRunRecordBlocksNothing(t *testing.T) {
	f := withTwoRuns(t, false)
	if err := cache.PutRawForTest(f.storePath(), "runs", []byte("20200101-000000-badbad00"), []byte(`{"id": "20200101-000000-badbad00", "steps": [{"step_`)); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		args []string
		code int
		says string
	}{
		{[]string{"runs"}, exitOK, "20200101-000000-badbad00  its record cannot be read"},
		{[]string{"trace", "search.dips/signal1.period"}, exitOK, "photometry.raw"},
		{[]string{"diff"}, exitOK, "detrend.quiet"},
		{[]string{"pending"}, exitOK, "stored      search.dips"},
		{[]string{"store", "verify"}, exitBadUser, "run record 20200101-000000-badbad00 cannot be read"},
		{[]string{"store", "prune"}, exitOK, "kept the run record 20200101-000000-badbad00 cannot be read"},
		{[]string{"store", "verify", "--drop-damaged"}, exitOK, "removed 1 damaged entries"},
		{[]string{"store", "verify"}, exitOK, "every result matches its key"},
	} {
		t.Run(strings.Join(tc.args, " ")+" goes on", func(t *testing.T) {
			code, out, errs := f.dipline(tc.args...)
			if code != tc.code || !strings.Contains(out, tc.says) {
				t.Errorf("exit %d (want %d), output lacks %q:\n%s%s", code, tc.code, tc.says, out, errs)
			}
		})
	}
}

func TestTheHousekeepingOptionsAreOurOwn(t *testing.T) {
	f := withTwoRuns(t, false)
	for _, tc := range []struct {
		name string
		args []string
		code int
		says string
	}{
		{"the count of runs to keep is --spare", []string{"store", "prune", "--spare", "1"}, exitOK, "dropped 1 runs, kept 1"},
		{"an age is a quantity of time", []string{"store", "prune", "--aged", "30 d"}, exitOK, "dropped 0 runs"},
		{"an age without a unit is refused with the units", []string{"store", "prune", "--aged", "30"}, exitBadUser, "has no unit"},
		{"an age in an unknown unit is refused", []string{"store", "prune", "--aged", "30 days"}, exitBadUser, "unknown time unit"},
		{"the old count option is gone", []string{"store", "prune", "--keep-last", "1"}, exitBadUser, "there is no option --keep-last"},
		{"the old age option is gone", []string{"store", "prune", "--older-than", "720h"}, exitBadUser, "there is no option --older-than"},
		{"the old verify option is gone", []string{"store", "verify", "--repair"}, exitBadUser, "there is no option --repair"},
		{"the store's help lists the salvage", []string{"store", "help"}, exitOK, "dipline store salvage [workflow.hcl] --into NEW.db"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			code, out, errs := f.dipline(tc.args...)
			if code != tc.code || !strings.Contains(out+errs, tc.says) {
				t.Errorf("exit %d (want %d), output lacks %q:\n%s%s", code, tc.code, tc.says, out, errs)
			}
		})
	}
}
