package workflow

import (
	"strings"
	"testing"

	"dipline/cache"
)

func pendingOf(t *testing.T, p *project) map[string]Verdict {
	t.Helper()
	w, err := p.load()
	if err != nil {
		t.Fatal(err)
	}
	store, _ := cache.Open(w.StorePath)
	vs, err := Pending(w, store)
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]Verdict{}
	for _, v := range vs {
		out[v.Step] = v
	}
	return out
}

func TestPendingSaysWhy(t *testing.T) {
	p := chainProject(t)
	if v := pendingOf(t, p)["source.a"]; v.State != PendingToCompute || !strings.Contains(strings.Join(v.Reasons, ";"), "no earlier run") {
		t.Fatalf("before any run: %+v", v)
	}
	p.run()
	for addr, v := range pendingOf(t, p) {
		if v.State != PendingStored {
			t.Errorf("after a run %s is %s: %v", addr, v.State, v.Reasons)
		}
	}
	p.write("analysis.hcl", strings.Replace(chain, `offset = "12 h"`, `offset = "1 d"`, 1))
	p.write("data/b.txt", "11\n")
	vs := pendingOf(t, p)
	if vs["source.a"].State != PendingStored || vs["floor.fa"].State != PendingStored {
		t.Errorf("unchanged steps are not stored: %+v %+v", vs["source.a"], vs["floor.fa"])
	}
	if why := strings.Join(vs["source.b"].Reasons, ";"); !strings.Contains(why, "the file data/b.txt changed: sha256") {
		t.Errorf("source.b reasons %q", why)
	}
	if vs["source.b"].State != PendingToCompute || vs["combine.sum"].State != PendingDepends {
		t.Errorf("source.b is %q and combine.sum %q, want %q and %q", vs["source.b"].State, vs["combine.sum"].State, PendingToCompute, PendingDepends)
	}
	why := strings.Join(vs["combine.sum"].Reasons, ";")
	if !strings.Contains(why, "it reads the result of source.b, which is to compute") {
		t.Errorf("combine.sum reasons %q do not say it waits on source.b", why)
	}
	if !strings.Contains(why, "offset changed: 0.5 d → 1 d") {
		t.Errorf("combine.sum reasons %q do not name its own change while it waits", why)
	}
}

func TestPendingNamesAttributeAndUpstreamResult(t *testing.T) {
	p := chainProject(t)
	p.run()
	p.write("analysis.hcl", strings.Replace(chain, `offset = "12 h"`, `offset = "1 d"`, 1))
	why := strings.Join(pendingOf(t, p)["combine.sum"].Reasons, ";")
	if !strings.Contains(why, "offset changed: 0.5 d → 1 d") {
		t.Errorf("reasons %q do not name the attribute change", why)
	}
	p.run()
	p.write("data/a.txt", "7\n")
	p.run()
	// Back to the first data: source.a's key is known again, floor.fa's result differs from
	// the last run's input, so combine.sum names the changed upstream result.
	p.write("data/a.txt", "1.25\n2.5\n")
	vs := pendingOf(t, p)
	if vs["source.a"].State != PendingStored || vs["floor.fa"].State != PendingStored {
		t.Fatalf("earlier results not stored: %+v", vs)
	}
	if why := strings.Join(vs["combine.sum"].Reasons, ";"); vs["combine.sum"].State != PendingStored && !strings.Contains(why, "the result of floor.fa changed") {
		t.Errorf("combine.sum reasons %q", why)
	}
}

func TestTraceReachesTheFiles(t *testing.T) {
	p := chainProject(t)
	p.run()
	w, _ := p.load()
	store, _ := cache.Open(w.StorePath)
	tr, err := Trace(store, toyRegistry(), "latest", "combine.sum/value")
	if err != nil {
		t.Fatal(err)
	}
	if tr.Figure == nil || tr.Figure.Value != 23.5 {
		t.Fatalf("figure %+v", tr.Figure)
	}
	var files []string
	var walk func(n *TraceNode)
	walk = func(n *TraceNode) {
		for _, f := range n.Provenance.Files {
			files = append(files, f.Path+"="+f.SHA256[:8])
		}
		for _, c := range n.Inputs {
			walk(c)
		}
	}
	walk(tr.Root)
	// SHA-256 of "1.25\n2.5\n" and "10\n", computed with coreutils sha256sum.
	want := []string{"data/a.txt=42c85881", "data/b.txt=917df332"}
	if strings.Join(files, " ") != strings.Join(want, " ") {
		t.Fatalf("trace reached %v, want %v", files, want)
	}
	if tr.Root.Provenance.Tool.Go == "" || tr.Root.Provenance.Tool.Revision == "" {
		t.Errorf("tool info missing: %+v", tr.Root.Provenance.Tool)
	}
	if _, err := Trace(store, toyRegistry(), "latest", "combine.sum/valeu"); err == nil || !strings.Contains(err.Error(), `"value"`) {
		t.Errorf("unknown figure error %v", err)
	}
}
