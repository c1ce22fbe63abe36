package cache

import (
	"cmp"
	"crypto/sha256"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"
)

// fixtureStore makes a store in which every bucket has pages of its own: 300 results of
// 2 to 5 KB with their step keys and provenance, and 40 runs using them.
func fixtureStore(t *testing.T) (*Store, []Entry) {
	t.Helper()
	s := newStore(t)
	var es []Entry
	for i := range 300 {
		e := entry(fmt.Sprintf("step%03d", i), blob(uint64(i+1), 2000+10*i))
		e.Provenance = []byte(fmt.Sprintf(`{"step_key":%q,"note":"made by step %d"}`, e.Step, i))
		es = append(es, e)
	}
	mustCommit(t, s, es...)
	err := s.update(func(tx *bolt.Tx) error {
		for i := range 40 {
			r := Run{ID: fmt.Sprintf("run%02d", i), Started: t0.Add(time.Duration(i) * time.Hour), State: RunEnded}
			for _, e := range es[i*7 : i*7+7] {
				r.Steps = append(r.Steps, RunStep{Step: "step.x", StepKey: e.Step, ResultKey: e.Result, Status: "computed"})
			}
			b, _ := json.Marshal(r)
			if err := tx.Bucket(bucketRuns).Put([]byte(r.ID), b); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return s, es
}

func fileDigest(t *testing.T, path string) [32]byte {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return sha256.Sum256(b)
}

// The ways a store file is damaged in these tests: flipped bytes in page headers (as a
// failing disk or a stray write leaves them), a file cut short (a copy that did not finish,
// a full disk) and a file whose start was overwritten.
type damage struct {
	name  string
	apply func(t *testing.T, path string)
	says  string // what the error must say
}

func flipPage(bucket string, what PageDamage) func(t *testing.T, path string) {
	return func(t *testing.T, path string) {
		if _, err := DamagePageForTest(path, bucket, what); err != nil {
			t.Fatal(err)
		}
	}
}

func cutTo(fraction float64) func(t *testing.T, path string) {
	return func(t *testing.T, path string) {
		fi, err := os.Stat(path)
		if err != nil {
			t.Fatal(err)
		}
		if err := os.Truncate(path, int64(fraction*float64(fi.Size()))); err != nil {
			t.Fatal(err)
		}
	}
}

func overwriteStart(t *testing.T, path string) {
	f, err := os.OpenFile(path, os.O_RDWR, 0)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	junk := []byte(strings.Repeat("not a store ", 1000))
	if _, err := f.WriteAt(junk, 0); err != nil {
		t.Fatal(err)
	}
}

var damages = []damage{
	{"a flipped page id in the step keys' tree", flipPage("steps", DamageID), "calls itself page"},
	{"a flipped page kind in the results' tree", flipPage("results", DamageKind), "its kind is unknown"},
	{"a flipped element count in the provenance tree", flipPage("provenance", DamageCount), "element"},
	{"a flipped page kind in the run records' tree", flipPage("runs", DamageKind), "its kind is unknown"},
	{"a file cut to 60 % of its length", cutTo(0.6), "cut short"},
	{"a file cut inside its header pages", cutTo(0.001), "shorter than its own two header pages"},
	{"a file whose start was overwritten", overwriteStart, "not a store's header"},
}

func TestADamagedStoreGivesAClearErrorNeverACrash(t *testing.T) {
	// A crash here (a panic bbolt raises, or a fault reading past the end of a mapped file)
	// would kill the test binary: every case below must come back as an error.
	for _, d := range damages {
		t.Run(d.name, func(t *testing.T) {
			s, es := fixtureStore(t)
			d.apply(t, s.Path())
			before := fileDigest(t, s.Path())
			checkDamagedError := func(what string, err error, mustFail bool) {
				t.Helper()
				switch {
				case err == nil && mustFail:
					t.Errorf("%s on a damaged store succeeded", what)
				case err == nil:
				case !errors.Is(err, ErrDamaged):
					t.Errorf("%s: %v; want an error wrapping ErrDamaged", what, err)
				case !strings.Contains(err.Error(), s.Path()) || !strings.Contains(err.Error(), d.says) ||
					!strings.Contains(err.Error(), "dipline store salvage"):
					t.Errorf("%s: %q should name the file, say %q and point at the salvage", what, err, d.says)
				}
			}
			_, err := s.Stats() // reads every page
			checkDamagedError("Stats", err, true)
			_, _, err = s.Lookup(es[0].Step)
			checkDamagedError("Lookup", err, false)
			_, err = s.Get(es[299].Result)
			if !errors.Is(err, ErrCorrupt) && !errors.Is(err, ErrMissing) {
				checkDamagedError("Get", err, false)
			}
			_, err = s.Runs()
			checkDamagedError("Runs", err, false)
			rep, err := s.Verify()
			if err != nil || !rep.FileDamaged() || rep.OK() {
				t.Errorf("Verify = %+v, %v; want a report of a damaged file", rep.Pages, err)
			}
			if fileDigest(t, s.Path()) != before {
				t.Error("reading the damaged store changed its file")
			}
			_, err = s.Prune(PrunePolicy{Spare: 1}) // reads every page to compact
			checkDamagedError("Prune", err, true)
			_, err = newStore(t).Merge(s.Path())
			checkDamagedError("Merge from it", err, true)
			err = s.Commit(entry("later", []byte("later")))
			checkDamagedError("Commit", err, false)
		})
	}
}

func TestAFileCutShortWhileMappedFaultsIntoAnError(t *testing.T) {
	// bbolt reads through a memory map: a file that shrinks under an open transaction makes
	// the read fault (SIGBUS), which without debug.SetPanicOnFault kills the process.
	s, es := fixtureStore(t)
	err := s.view(func(tx *bolt.Tx) error {
		if err := os.Truncate(s.Path(), 4*4096); err != nil {
			return err
		}
		_ = bytesSum(tx.Bucket(bucketResults).Get(es[299].Result[:]))
		return errors.New("the read past the end of the file did not fault")
	})
	if !errors.Is(err, ErrDamaged) || !strings.Contains(err.Error(), "cut short") {
		t.Fatalf("reading a file cut short under the map: %v; want a damaged store, cut short", err)
	}
}

func bytesSum(b []byte) (n int) {
	for _, c := range b {
		n += int(c)
	}
	return n
}

func TestAPanicOnASoundFileIsAFaultOfTheProgram(t *testing.T) {
	s, es := fixtureStore(t)
	err := s.view(func(tx *bolt.Tx) error {
		var m map[string]int
		m["x"] = 1 // a deliberate nil-map panic, as a bug of ours would raise
		return nil
	})
	var fe *FaultError
	if !errors.As(err, &fe) || errors.Is(err, ErrDamaged) || !strings.Contains(err.Error(), "please report it") {
		t.Fatalf("a panic on a sound file: %v; want a fault of the program", err)
	}
	t.Run("and the store stays usable, its file lock let go", func(t *testing.T) {
		defer func(d time.Duration) { openTimeout = d }(openTimeout)
		openTimeout = time.Second
		mustCommit(t, s, entry("after", []byte("after the panic")))
		if !present(t, s, es[0]) {
			t.Error("an entry is gone after the panic")
		}
	})
}

func TestOurReadingOfTheFileAgreesWithBbolt(t *testing.T) {
	// The layout is read by our own code (fileformat.go, pagewalk.go) from bbolt's source;
	// bbolt itself is the outside check: the page count and transaction id it reports, and
	// the number of keys in each bucket.
	s, _ := fixtureStore(t)
	f, err := os.Open(s.Path())
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	fi, _ := f.Stat()
	l, err := checkLayout(f, fi.Size())
	if err != nil {
		t.Fatal(err)
	}
	if problems := checkStructure(f, l); len(problems) != 0 {
		t.Fatalf("a sound file has damaged pages: %v", problems)
	}
	inv := readInventory(f, fi.Size(), false)
	ours := map[string]int{"results": len(inv.results), "steps": len(inv.steps), "provenance": len(inv.prov), "runs": len(inv.runs)}
	err = s.withDB(true, func(db *bolt.DB) error {
		if got := db.Info().PageSize; int64(got) != l.pageSize {
			t.Errorf("page size %d, bbolt says %d", l.pageSize, got)
		}
		return db.View(func(tx *bolt.Tx) error {
			if int64(l.meta.hwm)*l.pageSize != tx.Size() || l.meta.txid != uint64(tx.ID()) {
				t.Errorf("pages %d × %d bytes, transaction %d; bbolt says %d bytes, transaction %d",
					l.meta.hwm, l.pageSize, l.meta.txid, tx.Size(), tx.ID())
			}
			for name, n := range ours {
				if want := tx.Bucket([]byte(name)).Stats().KeyN; n != want {
					t.Errorf("bucket %s: we read %d entries, bbolt counts %d", name, n, want)
				}
			}
			return nil
		})
	})
	if err != nil {
		t.Fatal(err)
	}
}

func TestSalvage(t *testing.T) {
	checkProv := func(k StepKey, rec []byte) error {
		if !strings.Contains(string(rec), k.String()) {
			return errors.New("it names another step key")
		}
		return nil
	}
	for _, tc := range []struct {
		name     string
		damage   func(t *testing.T, path string)
		lossless bool
		atLeast  int // results that must survive
	}{
		{"of a sound store keeps everything", func(*testing.T, string) {}, true, 300},
		{"after a flipped page id in the step keys' tree keeps every result", flipPage("steps", DamageID), false, 300},
		{"after a flipped page kind in the results' tree finds the results below it page by page", flipPage("results", DamageKind), false, 300},
		{"of a file cut to 60 % keeps what lies in the part left", cutTo(0.6), false, 100},
		{"of a file whose header was overwritten still finds results page by page", overwriteStart, false, 100},
	} {
		t.Run(tc.name, func(t *testing.T) {
			s, es := fixtureStore(t)
			if err := CorruptInPlaceForTest(s.Path(), es[5].Result); err != nil { // one damaged result too
				t.Fatal(err)
			}
			hurt := es[5]
			tc.damage(t, s.Path())
			before := fileDigest(t, s.Path())
			into := filepath.Join(t.TempDir(), "salvaged.db")
			rep, err := s.Salvage(into, SalvageOptions{CheckProvenance: checkProv})
			if err != nil {
				t.Fatal(err)
			}
			if fileDigest(t, s.Path()) != before {
				t.Error("the salvage changed the damaged file")
			}
			if rep.Lossless() {
				t.Error("the salvage calls lossless a store with a damaged result")
			}
			if tc.lossless && (len(rep.Damage) != 0 || len(rep.Dropped) != 3) {
				// the damaged result, its step key and its provenance
				t.Errorf("damage %v, dropped %v; want only the damaged result's three entries", rep.Damage, rep.Dropped)
			}
			if !tc.lossless && len(rep.Damage) == 0 {
				t.Error("the salvage reports no damage")
			}
			dropped := strings.Join(strings.Fields(fmt.Sprint(rep.Dropped)), " ")
			// The damaged result is listed, or, when its page was only found by the scan of
			// every page, the step key that pointed at it.
			if tc.atLeast == 300 && !strings.Contains(dropped, hurt.Result.String()+": its bytes no longer hash to its key") &&
				!strings.Contains(dropped, hurt.Step.String()+": its result") {
				t.Errorf("neither the damaged result nor its step key is listed as dropped: %s", clip(dropped))
			}
			if rep.Results < tc.atLeast-1 || rep.Results > 299 {
				t.Errorf("kept %d results, want between %d and 299", rep.Results, tc.atLeast-1)
			}
			fresh := &Store{path: into}
			vr, err := fresh.Verify()
			if err != nil || !vr.OK() || vr.Results != rep.Results {
				t.Errorf("the new store verifies as %+v, %v", vr, err)
			}
			if _, _, err := fresh.Lookup(hurt.Step); err != nil {
				t.Error(err)
			} else if rk, ok, _ := fresh.Lookup(hurt.Step); ok {
				t.Errorf("the damaged result's step key was kept, pointing at %s", rk.Short())
			}
			kept := 0
			for _, e := range es {
				if rk, ok, _ := fresh.Lookup(e.Step); ok {
					kept++
					if data, err := fresh.Get(rk); err != nil || ResultKeyOf(data) != e.Result {
						t.Errorf("kept step key %s maps to a result that does not read: %v", e.Step.Short(), err)
					}
				}
			}
			if kept+countDropped(rep, "step key")+lostSteps(rep) == 0 {
				t.Error("no step key accounted for")
			}
			if kept > rep.Results {
				t.Errorf("%d step keys kept but only %d results", kept, rep.Results)
			}
		})
	}
	t.Run("never overwrites a file", func(t *testing.T) {
		s, _ := fixtureStore(t)
		into := filepath.Join(t.TempDir(), "there.db")
		os.WriteFile(into, []byte("keep me"), 0o644)
		if _, err := s.Salvage(into, SalvageOptions{}); err == nil || !strings.Contains(err.Error(), "exists") {
			t.Errorf("salvage into an existing file: %v", err)
		}
		if b, _ := os.ReadFile(into); string(b) != "keep me" {
			t.Error("the existing file was changed")
		}
	})
}

func countDropped(rep SalvageReport, what string) (n int) {
	for _, d := range rep.Dropped {
		if d.What == what {
			n++
		}
	}
	return n
}

// lostSteps is 1 when a damaged page may have hidden step keys from the salvage.
func lostSteps(rep SalvageReport) int {
	if len(rep.Damage) > 0 {
		return 1
	}
	return 0
}

func TestABadRunRecordIsReportedAndSkipped(t *testing.T) {
	s, es := fixtureStore(t)
	// A record cut off mid-way (as a disk error might leave it) still names two keys.
	bad := fmt.Sprintf(`{"id":"run-bad","steps":[{"step_key":"%s","result_key":"%s"},{"step_key":"%s`,
		es[290].Step, es[290].Result, es[291].Step)
	if err := PutRawForTest(s.Path(), "runs", []byte("run-bad"), []byte(bad)); err != nil {
		t.Fatal(err)
	}
	if err := PutRawForTest(s.Path(), "runs", []byte("run-empty"), []byte(`{"steps":[{}]}`)); err != nil {
		t.Fatal(err)
	}
	runs, badRecs, err := s.RunRecords()
	if err != nil {
		t.Fatal(err)
	}
	t.Run("the other runs read", func(t *testing.T) {
		if len(runs) != 40 || len(badRecs) != 2 || badRecs[0].Key != "run-bad" || badRecs[1].Key != "run-empty" {
			t.Errorf("%d runs, bad records %v", len(runs), badRecs)
		}
		if r, err := s.FindRun(RefLatest); err != nil || r.ID != "run39" {
			t.Errorf("latest = %q, %v", r.ID, err)
		}
	})
	t.Run("naming the bad record says what is wrong", func(t *testing.T) {
		if _, err := s.FindRun("run-bad"); err == nil || !strings.Contains(err.Error(), "cannot be read") {
			t.Errorf("FindRun of the bad record: %v", err)
		}
	})
	t.Run("verify lists it", func(t *testing.T) {
		rep, err := s.Verify()
		if err != nil || rep.OK() || len(rep.BadRecords) != 2 {
			t.Errorf("Verify: %+v, %v", rep, err)
		}
	})
	t.Run("prune keeps it and the keys it still names", func(t *testing.T) {
		rep, err := s.Prune(PrunePolicy{Spare: 1})
		if err != nil {
			t.Fatal(err)
		}
		if len(rep.Unreadable) != 2 || len(rep.Dropped) != 39 {
			t.Errorf("unreadable %v, dropped %d runs", rep.Unreadable, len(rep.Dropped))
		}
		for _, e := range []Entry{es[290], es[291]} {
			if _, ok, _ := s.Lookup(e.Step); !ok {
				t.Errorf("step key %s, named in the bad record, was pruned", e.Step.Short())
			}
		}
		if _, ok, _ := s.Lookup(es[0].Step); ok {
			t.Error("a dropped run's step key survived the prune")
		}
	})
	t.Run("dropping damaged entries removes it", func(t *testing.T) {
		rep, _ := s.Verify()
		if n, err := s.DropDamaged(rep); err != nil || n != 2 {
			t.Errorf("DropDamaged = %d, %v", n, err)
		}
		if rep, err := s.Verify(); err != nil || !rep.OK() {
			t.Errorf("Verify afterwards: %+v, %v", rep, err)
		}
	})
}

func TestInterruptedRuns(t *testing.T) {
	now := t0.Add(30 * 24 * time.Hour)
	setup := func(t *testing.T, killedAgo time.Duration) (*Store, Entry, Entry) {
		s := newStore(t)
		old := entry("old", []byte("an old run's result"))
		putRun(t, s, "finished", now.Add(-20*24*time.Hour), old)
		// A run killed after storing one step: its start record and the line CommitStep added.
		killed := entry("partial", []byte("what the killed run stored"))
		if err := s.PutRun(Run{ID: "killed", Started: now.Add(-killedAgo), State: RunUnderWay, PID: 1}); err != nil {
			t.Fatal(err)
		}
		if err := s.CommitStep("killed", []RunStep{{Step: "fit.x", StepKey: killed.Step, ResultKey: killed.Result, Status: "computed"}}, killed); err != nil {
			t.Fatal(err)
		}
		return s, old, killed
	}
	t.Run("a recent one survives a prune that drops every run, with its results", func(t *testing.T) {
		s, old, killed := setup(t, 2*time.Hour)
		rep, err := s.Prune(PrunePolicy{Aged: time.Minute, SpareInterrupted: 14 * 24 * time.Hour, Now: now})
		if err != nil {
			t.Fatal(err)
		}
		if strings.Join(rep.Dropped, ",") != "finished" || strings.Join(rep.Spared, ",") != "killed" {
			t.Errorf("dropped %v, spared %v", rep.Dropped, rep.Spared)
		}
		if !present(t, s, killed) || present(t, s, old) {
			t.Errorf("killed run's result present=%v (want true), old run's %v (want false)", present(t, s, killed), present(t, s, old))
		}
	})
	t.Run("an old one is pruned like any run", func(t *testing.T) {
		s, _, killed := setup(t, 15*24*time.Hour)
		rep, err := s.Prune(PrunePolicy{Aged: time.Minute, SpareInterrupted: 14 * 24 * time.Hour, Now: now})
		if err != nil || len(rep.Dropped) != 2 || present(t, s, killed) {
			t.Errorf("dropped %v (%v); killed run's result present=%v", rep.Dropped, err, present(t, s, killed))
		}
	})
	t.Run("latest and previous skip it", func(t *testing.T) {
		s, _, _ := setup(t, time.Hour)
		if r, err := s.FindRun(RefLatest); err != nil || r.ID != "finished" {
			t.Errorf("latest = %q, %v", r.ID, err)
		}
		if r, err := s.FindRun("kil"); err != nil || r.ID != "killed" || len(r.Steps) != 1 {
			t.Errorf("by its id: %+v, %v", r, err)
		}
	})
}

func TestCommitStepAddsTheLineWithTheEntries(t *testing.T) {
	s := newStore(t)
	if err := s.CommitStep("nope", []RunStep{{Step: "a.b"}}); !errors.Is(err, ErrMissing) {
		t.Errorf("CommitStep without a run record: %v", err)
	}
	if err := s.PutRun(Run{ID: "r", Started: t0, State: RunUnderWay}); err != nil {
		t.Fatal(err)
	}
	a, b := entry("a", []byte("a")), entry("b", []byte("b"))
	for _, e := range []Entry{a, b, a} { // a twice: its line is replaced, not repeated
		line := RunStep{Step: "step." + string(e.Data), StepKey: e.Step, ResultKey: e.Result, Status: "computed"}
		if err := s.CommitStep("r", []RunStep{line}, e); err != nil {
			t.Fatal(err)
		}
	}
	r, err := s.FindRun("r")
	if err != nil || len(r.Steps) != 2 || r.Steps[0].Step != "step.b" || r.Steps[1].Step != "step.a" || r.HasEnded() {
		t.Errorf("record %+v, %v", r, err)
	}
	if !present(t, s, a) || !present(t, s, b) {
		t.Error("an entry committed with its line is missing")
	}
}

func TestLivenessTellsARunUnderWayFromAnInterruptedOne(t *testing.T) {
	s := newStore(t)
	host, _ := os.Hostname()
	ours := Run{ID: "ours", State: RunUnderWay, PID: os.Getpid(), Host: host}
	other := Run{ID: "other", State: RunUnderWay, PID: os.Getpid() + 1, Host: host}
	ended := Run{ID: "ended", State: RunEnded}
	if got := s.Liveness().StateOf(ours); got != RunInterrupted {
		t.Errorf("with the lock free, a run under way is %q, want interrupted", got)
	}
	lock, err := LockRun(s.Path(), 0, nil)
	if err != nil {
		t.Fatal(err)
	}
	defer lock.Release()
	live := s.Liveness()
	for _, tc := range []struct {
		r    Run
		want string
	}{{ours, RunUnderWay}, {other, RunInterrupted}, {ended, RunEnded}} {
		if got := live.StateOf(tc.r); got != tc.want {
			t.Errorf("with the lock held by this process, run %s is %q, want %q", tc.r.ID, got, tc.want)
		}
	}
}

// bigStore is a store of 64 results of 1 MB each (a survey shard's worth of light curves).
func bigStore(b *testing.B) *Store {
	b.Helper()
	s := newStore(b)
	for i := range 64 {
		mustCommit(b, s, entry(fmt.Sprint("big", i), blob(uint64(i+1), benchmarkMB)))
	}
	return s
}

// BenchmarkCheckPages64MB times the check of every page of the tree that Verify makes
// first and a panic's diagnosis makes (headers and element tables, no values).
func BenchmarkCheckPages64MB(b *testing.B) {
	s := bigStore(b)
	for b.Loop() {
		if err := s.CheckPages(); err != nil {
			b.Fatal(err)
		}
	}
}

// manyStore is a store of 50 000 results of 1 KiB each, with their step keys and
// provenance: a survey's worth of small entries, the most pages per byte a store has.
func manyStore(b *testing.B) *Store {
	b.Helper()
	s := newStore(b)
	for batch := range 10 {
		es := make([]Entry, 0, 5000)
		for i := range 5000 {
			n := batch*5000 + i
			es = append(es, entry(fmt.Sprint("small", n), blob(uint64(n+1), 1024)))
		}
		mustCommit(b, s, es...)
	}
	return s
}

// BenchmarkCheckPagesManyEntries times the page check a run makes before it starts, on
// the store of many small entries.
func BenchmarkCheckPagesManyEntries(b *testing.B) {
	s := manyStore(b)
	for b.Loop() {
		if err := s.CheckPages(); err != nil {
			b.Fatal(err)
		}
	}
	if fi, err := os.Stat(s.Path()); err == nil {
		b.ReportMetric(float64(fi.Size())/1e6, "MB-file")
	}
}

// BenchmarkBoltCheckManyEntries times bbolt's own consistency check (Tx.Check) on the same
// store, for comparison: it reads every page through the memory map, and a damaged page
// makes it panic rather than report.
func BenchmarkBoltCheckManyEntries(b *testing.B) {
	s := manyStore(b)
	for b.Loop() {
		err := s.view(func(tx *bolt.Tx) error {
			var first error
			for err := range tx.Check() { // drained, so bbolt's checker ends
				first = cmp.Or(first, err)
			}
			return first
		})
		if err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkVerifyManyEntries times a full verify of the same store (every value read and
// hashed), the check a run does not make.
func BenchmarkVerifyManyEntries(b *testing.B) {
	s := manyStore(b)
	for b.Loop() {
		if _, err := s.Verify(); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkSalvage64MB times a salvage of a sound 64 MB store (every value read and hashed
// twice, and written).
func BenchmarkSalvage64MB(b *testing.B) {
	s := bigStore(b)
	b.SetBytes(64 * benchmarkMB)
	dir := b.TempDir()
	for i := 0; b.Loop(); i++ {
		into := filepath.Join(dir, fmt.Sprint(i, ".db"))
		if rep, err := s.Salvage(into, SalvageOptions{}); err != nil || rep.Results != 64 {
			b.Fatal(rep.Results, err)
		}
		os.Remove(into)
	}
}

// TestASalvageDropsAMappingWhoseProvenanceIsLost: a step mapping whose result reads but
// whose provenance record is gone (cut away with its page, or never reaching the disk) is
// not kept: the next run would reuse the result and nothing would say how it was made.
// The step is dropped with the reason, so the next run computes it again (the engine's
// verify, which reads provenance, then finds nothing amiss: cmd/dipline's
// TestSalvageCommand).
func TestASalvageDropsAMappingWhoseProvenanceIsLost(t *testing.T) {
	s, es := fixtureStore(t)
	lost := es[7]
	if err := s.update(func(tx *bolt.Tx) error { return tx.Bucket(bucketProvenance).Delete(lost.Step[:]) }); err != nil {
		t.Fatal(err)
	}
	into := filepath.Join(t.TempDir(), "salvaged.db")
	rep, err := s.Salvage(into, SalvageOptions{})
	if err != nil {
		t.Fatal(err)
	}
	dropped := fmt.Sprint(rep.Dropped)
	if !strings.Contains(dropped, lost.Step.String()+": its provenance record was lost or does not read") {
		t.Errorf("the mapping without its provenance is not listed as dropped: %s", clip(dropped))
	}
	fresh := &Store{path: into}
	if _, ok, err := fresh.Lookup(lost.Step); err != nil || ok {
		t.Errorf("the salvaged store still maps the step whose provenance was lost (found %v, %v)", ok, err)
	}
	if _, ok, err := fresh.Lookup(es[8].Step); err != nil || !ok {
		t.Errorf("a sound step was not kept (found %v, %v)", ok, err)
	}
	if vr, err := fresh.Verify(); err != nil || !vr.OK() {
		t.Errorf("the salvaged store does not verify: %+v, %v", vr, err)
	}
}
