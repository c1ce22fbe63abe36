package workflow

import (
	"context"
	"crypto/sha256"
	"encoding/json"
	"strings"
	"sync"
	"testing"

	"dipline/cache"
)

// TestPendingAndRunReadTheStoreAlike damages floor.fa's stored entry in each way a store
// can hold something unusable, then asks pending what a run would do and checks that the
// run does it: a stored step is reused, a step to compute is computed with pending's reason
// as its warning, and a step that depends is one or the other. Before pending and run
// shared findStored, pending called a result whose bytes check out but do not read
// ("another kind's bytes") stored while the run computed it, and a malformed mapping made
// pending fail and the run stop as a fault of the store.
func TestPendingAndRunReadTheStoreAlike(t *testing.T) {
	cases := []struct {
		name string
		// damage spoils the entry of step key sk, whose result is rk, in the store at path.
		damage func(t *testing.T, path string, sk cache.StepKey, rk cache.ResultKey)
		why    string // what pending and the run both say
	}{
		{"the result's bytes are gone", func(t *testing.T, path string, sk cache.StepKey, _ cache.ResultKey) {
			gone := sha256.Sum256([]byte("bytes never stored"))
			mustDo(t, cache.PutRawForTest(path, "steps", sk[:], gone[:]))
		}, "is missing"},
		{"the result's bytes fail their checksum", func(t *testing.T, path string, _ cache.StepKey, rk cache.ResultKey) {
			mustDo(t, cache.CorruptForTest(path, rk))
		}, "fails its checksum"},
		{"the result's bytes check out but are not a floor result", func(t *testing.T, path string, sk cache.StepKey, _ cache.ResultKey) {
			store, err := cache.Open(path)
			mustDo(t, err)
			other := []byte("bytes of another kind")
			mustDo(t, store.Commit(cache.Entry{Step: sk, Result: cache.ResultKeyOf(other), Data: other}))
		}, "does not read as a floor result"},
		{"the step key's entry is malformed", func(t *testing.T, path string, sk cache.StepKey, _ cache.ResultKey) {
			mustDo(t, cache.PutRawForTest(path, "steps", sk[:], []byte("short")))
		}, "is malformed"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := chainProject(t)
			_, first := p.run()
			fa := outcomeOf(t, first, "floor.fa")
			w, err := p.load()
			mustDo(t, err)
			c.damage(t, w.StorePath, fa.StepKey, fa.ResultKey)

			before := pendingOf(t, p)
			want := map[string]string{"source.a": PendingStored, "source.b": PendingStored,
				"floor.fa": PendingToCompute, "combine.sum": PendingDepends}
			for step, state := range want {
				if before[step].State != state {
					t.Errorf("pending: %s is %q (%v), want %q", step, before[step].State, before[step].Reasons, state)
				}
			}
			reason := strings.Join(before["floor.fa"].Reasons, "; ")
			if !strings.Contains(reason, c.why) {
				t.Errorf("pending gives floor.fa's reason as %q, which does not say %q", reason, c.why)
			}

			var mu sync.Mutex
			warnings := map[string]string{}
			rep, _, err := p.runWith(context.Background(), Options{OnEvent: func(ev Event) {
				mu.Lock()
				defer mu.Unlock()
				warnings[ev.Step] = ev.Warning
			}})
			if err != nil {
				t.Fatalf("the run failed: %v", err)
			}
			for _, o := range rep.Outcomes {
				v := before[o.Step.Addr]
				switch {
				case v.State == PendingStored && o.Status != StatusReused,
					v.State == PendingToCompute && o.Status != StatusComputed,
					v.State == PendingDepends && o.Status != StatusComputed && o.Status != StatusReused:
					t.Errorf("pending said %s is %q; the run %s it", o.Step.Addr, v.State, o.Status)
				}
			}
			if got := warnings["floor.fa"]; got != reason+"; computing it again" {
				t.Errorf("the run warns %q about floor.fa; pending said %q", got, reason)
			}
			if o := outcomeOf(t, rep, "floor.fa"); o.ResultKey != fa.ResultKey || o.Warning == "" {
				t.Errorf("floor.fa computed again gives %s (warning %q), want %s as before", o.ResultKey.Short(), o.Warning, fa.ResultKey.Short())
			}
			for step, v := range pendingOf(t, p) {
				if v.State != PendingStored {
					t.Errorf("after the run pending says %s is %q (%v): the entry was not mended", step, v.State, v.Reasons)
				}
			}
		})
	}
}

// TestAStoreOfTheFirstFormatKeepsWorking reads a store as a dipline of store format 1 left
// it, its run and provenance records naming each step under "address": pending, trace,
// diff and verify's check of the records read it as before, and a run reuses its results.
func TestAStoreOfTheFirstFormatKeepsWorking(t *testing.T) {
	p := chainProject(t)
	_, first := p.run()
	p.write("data/a.txt", "1.25\n3.5\n") // floor.fa and combine.sum change
	_, second := p.run()
	w, err := p.load()
	mustDo(t, err)
	// Rewrite every record in the old form: "address" where the step's name is now "step".
	store, err := cache.Open(w.StorePath)
	mustDo(t, err)
	toV1 := func(b []byte) []byte { return []byte(strings.ReplaceAll(string(b), `"step":`, `"address":`)) }
	if b, _ := json.Marshal(first.Run); !strings.Contains(string(b), `"step":`) {
		t.Fatalf("a run record names its steps otherwise: %s", b)
	}
	for _, run := range []*Report{first, second} {
		b, err := json.Marshal(run.Run)
		mustDo(t, err)
		mustDo(t, cache.PutRawForTest(w.StorePath, "runs", []byte(run.Run.ID), toV1(b)))
		for _, rs := range run.Run.Steps {
			prov, ok, err := store.Provenance(rs.StepKey)
			mustDo(t, err)
			if ok {
				mustDo(t, cache.PutRawForTest(w.StorePath, "provenance", rs.StepKey[:], toV1(prov)))
			}
		}
	}
	mustDo(t, cache.PutRawForTest(w.StorePath, "meta", []byte("format"), []byte("dipline store 1")))
	if prov, _, _ := store.Provenance(second.Run.Steps[0].StepKey); !strings.Contains(string(prov), `"address":`) || strings.Contains(string(prov), `"step":`) {
		t.Fatalf("the records were not rewritten in the old form: %s", prov)
	}

	t.Run("trace follows the chain down to the files", func(t *testing.T) {
		tr, err := Trace(store, toyRegistry(), "", "combine.sum/value")
		mustDo(t, err)
		var steps []string
		var walk func(n *TraceNode)
		walk = func(n *TraceNode) {
			steps = append(steps, n.Provenance.Step)
			if n.Problem != "" {
				t.Errorf("%s: %s", n.Provenance.Step, n.Problem)
			}
			for _, c := range n.Inputs {
				walk(c)
			}
		}
		walk(tr.Root)
		if got := strings.Join(steps, " "); got != "combine.sum floor.fa source.a source.b" {
			t.Errorf("trace reached %q", got)
		}
	})
	t.Run("diff names the steps and what changed", func(t *testing.T) {
		d, err := Diff(store, toyRegistry(), first.Run.ID, second.Run.ID)
		mustDo(t, err)
		got := map[string]string{}
		for _, s := range d.Steps {
			got[s.Step] = s.State
			if s.Step == "source.a" && !strings.Contains(strings.Join(s.Why, ";"), "the file data/a.txt changed") {
				t.Errorf("source.a: %v", s.Why)
			}
		}
		want := map[string]string{"source.a": DiffNewResult, "source.b": DiffUnchanged, "floor.fa": DiffNewResult, "combine.sum": DiffNewResult}
		for step, state := range want {
			if got[step] != state {
				t.Errorf("diff: %s is %q, want %q", step, got[step], state)
			}
		}
	})
	t.Run("verify's check finds every record sound", func(t *testing.T) {
		bad, err := BadProvenance(store)
		if err != nil || len(bad) != 0 {
			t.Errorf("BadProvenance = %v, %v", bad, err)
		}
		a, err := StoreAgreement(store)
		if err != nil || len(a.Problems) != 0 {
			t.Errorf("StoreAgreement = %v, %v", a.Problems, err)
		}
	})
	t.Run("pending finds every step stored, and a run reuses them", func(t *testing.T) {
		for step, v := range pendingOf(t, p) {
			if v.State != PendingStored {
				t.Errorf("%s is %q (%v)", step, v.State, v.Reasons)
			}
		}
		st, _ := p.run()
		for step, s := range st {
			if s != StatusReused {
				t.Errorf("%s %s, want reused", step, s)
			}
		}
	})
}

func mustDo(t *testing.T, err error) {
	t.Helper()
	if err != nil {
		t.Fatal(err)
	}
}
