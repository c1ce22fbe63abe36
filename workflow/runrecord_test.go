package workflow

import (
	"bytes"
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"dipline/cache"
)

func TestARunIsRecordedFromItsStart(t *testing.T) {
	p := newProject(t, map[string]string{
		"analysis.hcl": "analysis \"toy\" { seed = 1 }\nsource \"a\" { files = \"x.txt\" }\ntrouble \"h\" {\n  mode  = \"hook\"\n  after = [source.a]\n}\n",
		"x.txt":        "3\n",
	})
	w, err := p.load()
	if err != nil {
		t.Fatal(err)
	}
	store, err := cache.Open(w.StorePath)
	if err != nil {
		t.Fatal(err)
	}
	// While trouble.h runs, source.a has finished: the record must be there, under way,
	// with source.a's line.
	var during []cache.Run
	troubleHook = func() { during, _ = store.Runs() }
	defer func() { troubleHook = nil }()
	if _, err := Run(context.Background(), w, store, Options{Workers: 2}); err != nil {
		t.Fatal(err)
	}
	if len(during) != 1 || during[0].State != cache.RunUnderWay || during[0].PID != os.Getpid() {
		t.Fatalf("records during the run: %+v", during)
	}
	if len(during[0].Steps) != 1 || during[0].Steps[0].Step != "source.a" || during[0].Steps[0].ResultKey.IsZero() {
		t.Errorf("the record under way lists %+v, want source.a with its result", during[0].Steps)
	}
	after, err := store.Runs()
	if err != nil || len(after) != 1 || after[0].State != cache.RunEnded || after[0].Ended.IsZero() || len(after[0].Steps) != 2 {
		t.Errorf("the record after the run: %+v, %v", after, err)
	}
}

func TestAPanicAroundAStepIsAFaultOfThatStepOnly(t *testing.T) {
	// A panic in the engine's own code in a step's goroutine (here: while it reports the
	// step's outcome) must not crash the run: that step fails as a fault of the program,
	// and the others finish.
	p := chainProject(t)
	onEvent := func(ev Event) {
		if ev.Step == "floor.fa" && ev.Status == StatusComputed {
			panic("a fault while reporting")
		}
	}
	rep, _, err := p.runWith(context.Background(), Options{OnEvent: onEvent})
	re := runError(t, err)
	if !re.Program() {
		t.Errorf("run error %v: want a fault of the program", err)
	}
	if o := outcomeOf(t, rep, "floor.fa"); o.Status != StatusFailed || o.Cause != CauseProgram || !strings.Contains(o.Message, "a fault in dipline") {
		t.Errorf("floor.fa: %s, %s, %q", o.Status, o.Cause, o.Message)
	}
	if o := outcomeOf(t, rep, "source.b"); o.Status != StatusComputed {
		t.Errorf("source.b: %s, want computed", o.Status)
	}
	if o := outcomeOf(t, rep, "combine.sum"); o.Status != StatusSkipped || o.Cause != CauseUpstream {
		t.Errorf("combine.sum: %s, %s; want skipped after floor.fa", o.Status, o.Cause)
	}
}

func TestARunOnADamagedStoreRunsNothingAndSaysSo(t *testing.T) {
	p := chainProject(t)
	p.run()
	w, _ := p.load()
	if err := os.Truncate(w.StorePath, 3*4096); err != nil {
		t.Fatal(err)
	}
	results := filepath.Join(p.dir, "results", "results.json")
	before, err := os.ReadFile(results)
	if err != nil {
		t.Fatal(err)
	}
	rep, err := p.start(context.Background(), Options{})
	if !errors.Is(err, cache.ErrDamaged) || !strings.Contains(err.Error(), "cut short") {
		t.Fatalf("run on a store cut short: %v", err)
	}
	// The store took no record of the run, so nothing ran, and the results of the run
	// before are left as they were rather than replaced by a run no store knows.
	if rep != nil {
		t.Errorf("a report of a run the store has no record of: %+v", rep.Run)
	}
	if after, err := os.ReadFile(results); err != nil || !bytes.Equal(after, before) {
		t.Errorf("the results file of the run before was replaced (%v)", err)
	}
	if ran := calls.reset(); len(ran) != 0 {
		t.Errorf("steps ran: %v", ran)
	}
}

func TestABadProvenanceRecordDoesNotStopTraceOrDiff(t *testing.T) {
	p := chainProject(t)
	_, first := p.run()
	p.write("data/a.txt", "1.25\n3.5\n") // floor.fa and combine.sum change
	_, second := p.run()
	w, _ := p.load()
	store, _ := cache.Open(w.StorePath)
	var badKey cache.StepKey
	for _, s := range second.Run.Steps {
		if s.Step == "source.a" {
			badKey = s.StepKey
		}
	}
	if err := cache.PutRawForTest(w.StorePath, "provenance", badKey[:], []byte(`{"step": "source.a", "kind`)); err != nil {
		t.Fatal(err)
	}
	t.Run("trace shows the others and says what is wrong with it", func(t *testing.T) {
		tr, err := Trace(store, toyRegistry(), "", "combine.sum")
		if err != nil {
			t.Fatal(err)
		}
		var bad *TraceNode
		var walk func(n *TraceNode)
		walk = func(n *TraceNode) {
			if n.Provenance.Step == "source.a" {
				bad = n
			}
			for _, c := range n.Inputs {
				walk(c)
			}
		}
		walk(tr.Root)
		if bad == nil || !strings.Contains(bad.Problem, "cannot be read") || bad.Provenance.StepKey != badKey.String() {
			t.Errorf("the node of the bad record: %+v", bad)
		}
		if len(tr.Root.Inputs) != 2 {
			t.Errorf("combine.sum has %d inputs traced, want 2", len(tr.Root.Inputs))
		}
	})
	t.Run("diff goes on and says why a cause cannot be shown", func(t *testing.T) {
		d, err := Diff(store, toyRegistry(), first.Run.ID, second.Run.ID)
		if err != nil {
			t.Fatal(err)
		}
		for _, s := range d.Steps {
			if s.Step == "source.a" && (s.State != DiffNewResult || !strings.Contains(strings.Join(s.Why, " "), "cannot be read")) {
				t.Errorf("source.a: %s %v", s.State, s.Why)
			}
		}
	})
	t.Run("verify's check of provenance records names it", func(t *testing.T) {
		bad, err := BadProvenance(store)
		if err != nil || len(bad) != 1 || bad[0].Key != badKey.String() {
			t.Errorf("BadProvenance = %v, %v", bad, err)
		}
	})
}
