package main

import (
	"strings"
	"testing"
)

func TestKindsShowsEveryBlockWithDefaultsAsWritten(t *testing.T) {
	f := newFolder(t)
	code, out, errs := f.dipline("kinds")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	// Every block type a workflow may hold, the engine's own included.
	for _, name := range []string{"analysis", "catalogue", "photometry", "detrend", "search", "fit", "star",
		"companions", "dilution", "derive", "vet"} {
		if !strings.Contains(out, "\n"+name+"\n") && !strings.Contains(out, "\n"+name+" (") && !strings.HasPrefix(out, name+"\n") {
			t.Errorf("no %s block in the listing", name)
		}
	}
	// Defaults as a user writes them, with their units, not internal numbers.
	for _, want := range []string{`when not written: "2 R_jup"`, `when not written: "0.5 d"`,
		"when not written: 3\n", "when not written: true\n"} {
		if !strings.Contains(out, want) {
			t.Errorf("the listing lacks %q", want)
		}
	}
	for _, internal := range []string{"1.4097798243075252", "0.2055253701308035"} {
		if strings.Contains(out, internal) {
			t.Errorf("the listing shows the internal value %s", internal)
		}
	}
}

func TestKindsNamedShowsOneAndRefusesAnUnknownName(t *testing.T) {
	f := newFolder(t)
	code, out, _ := f.dipline("kinds", "detrend")
	if code != exitOK || !strings.HasPrefix(out, "detrend (step kind, version") || strings.Contains(out, "\nsearch (") {
		t.Fatalf("exit %d, listing:\n%s", code, out)
	}
	code, _, errs := f.dipline("kinds", "detrand")
	if code != exitBadUser || !strings.Contains(errs, `no block type "detrand"`) || !strings.Contains(errs, "detrend") {
		t.Fatalf("exit %d: %s", code, errs)
	}
}
