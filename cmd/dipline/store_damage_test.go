package main

import (
	"bytes"
	"context"
	"crypto/sha256"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"dipline/cache"
	"dipline/steps"
	"dipline/steps/kinds"
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
		// run, pending and pin check every page before they start (CheckPages), so they
		// refuse damage anywhere in the file, not only on the pages they would read.
		{"a flipped page id in the results' tree", flip("results", cache.DamageID), []string{"store stats", "store verify", "store prune", "run", "pending", "pin"}},
		{"a flipped page kind in the step keys' tree", flip("steps", cache.DamageKind), []string{"store stats", "store verify", "store prune", "run", "pending", "pin"}},
		{"a flipped element count in the provenance tree", flip("provenance", cache.DamageCount), []string{"store stats", "store verify", "store prune", "run", "pending", "pin"}},
		{"a flipped page kind in the run records' tree", flip("runs", cache.DamageKind), []string{"store stats", "store verify", "store prune", "runs", "trace", "diff", "pin", "run", "pending"}},
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

// fileBytes reads a file of the test's folder, or nil when it is not there.
func (f *folder) fileBytes(name string) []byte {
	b, err := os.ReadFile(filepath.Join(f.dir, name))
	if err != nil {
		return nil
	}
	return b
}

// withResults puts a results file and page in the folder, as an earlier good run leaves
// them, and returns their bytes.
func (f *folder) withResults() (string, string) {
	f.t.Helper()
	if err := os.MkdirAll(filepath.Join(f.dir, "results"), 0o755); err != nil {
		f.t.Fatal(err)
	}
	json, page := `{"run": "the earlier good run"}`, "<p>the earlier good report</p>"
	f.write("results/results.json", json)
	f.write("results/report.html", page)
	return json, page
}

// leftAsItWas fails the test when the store file or the results folder changed.
func (f *folder) leftAsItWas(what string, store []byte, json, page string) {
	f.t.Helper()
	if !bytes.Equal(f.fileBytes(".dipline/store.db"), store) {
		f.t.Errorf("%s changed the store file", what)
	}
	if string(f.fileBytes("results/results.json")) != json || string(f.fileBytes("results/report.html")) != page {
		f.t.Errorf("%s replaced the results of the earlier run:\n%s", what, f.fileBytes("results/results.json"))
	}
}

func TestARunOnAStoreWithADamagedPageWritesNothing(t *testing.T) {
	// The probe's case: a page of the provenance tree, which a run that reuses every step
	// never passes through, is spoilt; before, the run exited 0 and added its record to
	// the file. Each tree and each field of a page header is tried.
	for _, bucket := range []string{"steps", "results", "provenance", "runs"} {
		for what, name := range map[cache.PageDamage]string{cache.DamageID: "id", cache.DamageKind: "kind", cache.DamageCount: "element count"} {
			t.Run("a flipped "+name+" in the "+bucket+" tree", func(t *testing.T) {
				f := withTwoRuns(t, true)
				page, err := cache.DamagePageForTest(f.storePath(), bucket, what)
				if err != nil {
					t.Fatal(err)
				}
				json, html := f.withResults()
				store := f.fileBytes(".dipline/store.db")
				for _, cmd := range []string{"run", "pending"} {
					code, out, errs := f.dipline(cmd)
					noCrashText(t, cmd, out+errs)
					// README, "Commands": a run on a damaged store exits 2 and writes
					// nothing to it; the message names the page, as verify does.
					if code != exitBadUser || !strings.Contains(errs, fmt.Sprintf("page %d (%s)", page, bucket)) ||
						!strings.Contains(errs, "is damaged") || !strings.Contains(errs, "salvage") {
						t.Errorf("%s: exit %d, want %d with the damaged page %d named\n%s%s", cmd, code, exitBadUser, page, out, errs)
					}
					f.leftAsItWas(cmd, store, json, html)
				}
				if _, _, errs := f.dipline("run"); !strings.Contains(errs, "nothing ran and nothing was stored; the results in results/ are left as they were") {
					t.Errorf("the run does not say it stored nothing:\n%s", errs)
				}
			})
		}
	}
}

func TestARunThatCannotUseItsStoreLeavesTheResults(t *testing.T) {
	for _, tc := range []struct {
		name   string
		spoil  func(t *testing.T, path string)
		code   int
		reason string
	}{
		{"a store cut to half its length", func(t *testing.T, path string) {
			fi, _ := os.Stat(path)
			if err := os.Truncate(path, fi.Size()/2); err != nil {
				t.Fatal(err)
			}
		}, exitBadUser, "it is cut short"},
		// A store of a later format cannot take the run's record, as a read-only one cannot
		// (these tests may run as root, whom a file's permissions do not stop).
		{"a store of another format", func(t *testing.T, path string) {
			if err := cache.PutRawForTest(path, "meta", []byte("format"), []byte("dipline store 9")); err != nil {
				t.Fatal(err)
			}
		}, exitFailed, `has format "dipline store 9"`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			f := withTwoRuns(t, false)
			tc.spoil(t, f.storePath())
			json, html := f.withResults()
			store := f.fileBytes(".dipline/store.db")
			code, out, errs := f.dipline("run")
			noCrashText(t, "run", out+errs)
			if code != tc.code || !strings.Contains(errs, tc.reason) {
				t.Errorf("exit %d (want %d), stderr lacks %q:\n%s%s", code, tc.code, tc.reason, out, errs)
			}
			f.leftAsItWas("run", store, json, html)
			if !strings.Contains(errs, "nothing ran and nothing was stored") || strings.Contains(out+errs, "are stored") {
				t.Errorf("the run does not say plainly that nothing was stored:\n%s%s", out, errs)
			}
		})
	}
}

// vanishKind is a toy step kind whose Run calls vanishHook: the tests remove the store's
// file there, as a user might while a run is under way.
type vanishKind struct{}

var vanishHook func()

func (vanishKind) Name() string             { return "vanish" }
func (vanishKind) Version() int             { return 1 }
func (vanishKind) Doc() string              { return "a toy that calls the test's hook" }
func (vanishKind) Random() bool             { return false }
func (vanishKind) Check(*afterConfig) error { return nil }
func (vanishKind) Run(ctx context.Context, cfg *afterConfig, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	if vanishHook != nil {
		vanishHook()
	}
	return toyArtifact{tag: "vanish"}, nil
}
func (vanishKind) Decode(b []byte) (steps.Artifact, error) { return toyArtifact{tag: string(b)}, nil }

func TestAStoreRemovedDuringARunIsNoticed(t *testing.T) {
	t.Cleanup(func() { registry = kinds.Registry; vanishHook = nil })
	registry = func() (steps.Registry, error) {
		r, err := kinds.Registry()
		if err != nil {
			return nil, err
		}
		r["vanish"], r["judge"] = steps.Define[afterConfig](vanishKind{}), steps.Define[afterConfig](toyKind{"judge"})
		return r, nil
	}
	f := newFolder(t)
	f.write("analysis.hcl", workflowText+"\nvanish \"v\" {\n  after = [search.dips]\n}\njudge \"j\" {\n  after = [vanish.v]\n}\n")
	vanishHook = func() {
		if err := os.Remove(f.storePath()); err != nil {
			t.Error(err)
		}
	}
	code, out, errs := f.dipline("run")
	noCrashText(t, "run", out+errs)
	if code != exitFailed || !strings.Contains(errs, "was removed while this run was using it") {
		t.Errorf("exit %d (want %d), the removal is not reported:\n%s%s", code, exitFailed, out, errs)
	}
	// The closing line must not claim the finished steps are stored: they went with the
	// removed file.
	if strings.Contains(errs, "results are stored") || !strings.Contains(errs, "nothing this run computed is stored") {
		t.Errorf("the closing line does not say the results are lost:\n%s", errs)
	}
	// Nothing is written in the removed file's place (before, a new store held a record
	// of steps it had no results for, and verify failed on it).
	if _, err := os.Stat(f.storePath()); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("a new store was made in the removed one's place (%v)", err)
	}
	vanishHook = nil
	if code, out, errs := f.dipline("run"); code != exitOK || strings.Count(out, "computed ") != 5 {
		t.Errorf("the next run does not compute every step afresh: exit %d\n%s%s", code, out, errs)
	}
}

func TestAStoreThatIsNotAStoreIsRefusedWithItsLine(t *testing.T) {
	for _, name := range []string{"lc.csv", "analysis.hcl"} {
		t.Run("store = "+name, func(t *testing.T) {
			f := newFolder(t)
			text := strings.Replace(workflowText, "  seed = 1\n", "  seed = 1\n  store = \""+name+"\"\n", 1)
			f.write("analysis.hcl", text)
			before := f.fileBytes(name)
			for _, cmd := range []string{"check", "run", "pending", "runs", "store verify"} {
				code, out, errs := f.dipline(strings.Fields(cmd)...)
				noCrashText(t, cmd, out+errs)
				// The line of `store =` is line 3 of the workflow (workflowText above).
				want := "analysis.hcl line 3, column 11: store names " + name + ", which is not a dipline store"
				if code != exitBadUser || !strings.Contains(errs, want) || strings.Contains(errs, "damaged") || strings.Contains(errs, "salvage") {
					t.Errorf("%s: exit %d (want %d), stderr lacks %q or calls the file damaged:\n%s%s", cmd, code, exitBadUser, want, out, errs)
				}
			}
			if !bytes.Equal(f.fileBytes(name), before) {
				t.Errorf("%s was changed", name)
			}
			if f.fileBytes(name+".lock") != nil {
				t.Errorf("a lock file %s.lock was left beside it", name)
			}
		})
	}
}
