package main

import (
	"bytes"
	"fmt"
	"io"
	"strings"
	"sync"
	"testing"
	"time"
)

// fakeClock is a clock that moves on by step at every reading.
type fakeClock struct {
	mu   sync.Mutex
	t    time.Time
	step time.Duration
}

func (c *fakeClock) now() time.Time {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.t = c.t.Add(c.step)
	return c.t
}

func newClock(step time.Duration) *fakeClock {
	return &fakeClock{t: time.Date(2026, 3, 2, 21, 0, 0, 0, time.UTC), step: step}
}

// draws splits what a live display wrote into the lines it drew (each after a carriage
// return), leaving out the wipes (blank).
func draws(out string) []string {
	var lines []string
	for _, part := range strings.Split(out, "\r") {
		if strings.TrimSpace(part) != "" {
			lines = append(lines, strings.TrimRight(part, " "))
		}
	}
	return lines
}

func TestTheLiveLineIsRateLimitedAndWipedAtTheEnd(t *testing.T) {
	var out bytes.Buffer
	// 200 reports 10 ms apart: two seconds, so at most 21 draws at ten a second.
	p := newProgressShow(&out, true, newClock(10*time.Millisecond).now)
	for i := 1; i <= 200; i++ {
		p.update("fit.planets", i, 200)
	}
	p.close()
	got := draws(out.String())
	t.Run("the line is drawn at most ten times a second", func(t *testing.T) {
		if len(got) < 5 || len(got) > 21 {
			t.Errorf("%d draws in two seconds: %q", len(got), got)
		}
	})
	t.Run("each draw names the step and its percentage", func(t *testing.T) {
		for _, l := range got {
			if !strings.HasPrefix(l, "fit.planets ") || !strings.HasSuffix(l, " %") {
				t.Errorf("draw %q", l)
			}
		}
	})
	t.Run("closing wipes the line and returns to its start", func(t *testing.T) {
		s := out.String()
		end := strings.LastIndex(s, "\r"+strings.Repeat(" ", len(got[len(got)-1])))
		if end < 0 || !strings.HasSuffix(s, "\r") || strings.TrimSpace(s[end:]) != "" {
			t.Errorf("the output does not end with a wiped line: %q", s[max(0, len(s)-60):])
		}
	})
	t.Run("nothing is drawn after closing", func(t *testing.T) {
		n := out.Len()
		p.update("fit.planets", 200, 200)
		if out.Len() != n {
			t.Error("a report after closing was drawn")
		}
	})
}

func TestStepsRunningTogetherShareTheLine(t *testing.T) {
	var out bytes.Buffer
	p := newProgressShow(&out, true, newClock(time.Second).now)
	p.update("fit.planets", 41, 100)
	p.update("search.dips", 80, 100)
	got := draws(out.String())
	if want := "fit.planets 41 % · search.dips 80 %"; got[len(got)-1] != want {
		t.Errorf("line %q, want %q", got[len(got)-1], want)
	}
	t.Run("a finished step leaves the line", func(t *testing.T) {
		p.end("fit.planets")
		got := draws(out.String())
		if got[len(got)-1] != "search.dips 80 %" {
			t.Errorf("line %q after fit.planets ended", got[len(got)-1])
		}
		p.update("fit.planets", 90, 100) // a late report about a finished step
		if got := draws(out.String()); strings.Contains(got[len(got)-1], "fit.planets") {
			t.Errorf("a finished step came back: %q", got[len(got)-1])
		}
	})
	t.Run("many steps are cut to one row, with a count of the rest", func(t *testing.T) {
		for i := 0; i < 12; i++ {
			p.update(fmt.Sprintf("detrend.segment_%02d", i), i, 12)
		}
		got := draws(out.String())
		last := got[len(got)-1]
		if n := len([]rune(last)); n > liveWidth || !strings.HasSuffix(last, " more") {
			t.Errorf("line of %d runes: %q", n, last)
		}
	})
}

func TestOtherOutputWipesTheLineFirst(t *testing.T) {
	var term, other bytes.Buffer
	p := newProgressShow(&term, true, newClock(time.Second).now)
	p.update("search.dips", 5, 10)
	w := p.before(&term)
	fmt.Fprintln(w, "  computed  detrend.quiet")
	s := term.String()
	i := strings.Index(s, "  computed")
	if i < 0 || !strings.HasSuffix(s[:i], "\r") || strings.TrimSpace(s[strings.LastIndex(s[:i-1], "\r"):i]) != "" {
		t.Errorf("the step line was not preceded by a wipe: %q", s)
	}
	fmt.Fprintln(p.before(&other), "to another writer")
	if other.String() != "to another writer\n" {
		t.Errorf("other writer got %q", other.String())
	}
}

func TestPlainLinesComeAtMostOncePerInterval(t *testing.T) {
	var out bytes.Buffer
	// A report every second for a minute, for two steps at once.
	p := newProgressShow(&out, false, newClock(500*time.Millisecond).now)
	for i := 1; i <= 60; i++ {
		p.update("fit.planets", i, 60)
		p.update("search.dips", i, 60)
	}
	p.end("fit.planets")
	p.end("search.dips")
	p.close()
	s := out.String()
	if strings.Contains(s, "\r") {
		t.Errorf("a plain display rewrote a line: %q", s)
	}
	for _, step := range []string{"fit.planets", "search.dips"} {
		n := strings.Count(s, "still computing "+step+":")
		// 60 s of reports: one line per 5 s at most, and at least some.
		if n == 0 || n > 12 {
			t.Errorf("%s: %d lines in 60 s:\n%s", step, n, s)
		}
	}
	t.Run("a step that ends sooner than the interval is not mentioned", func(t *testing.T) {
		var out bytes.Buffer
		p := newProgressShow(&out, false, newClock(100*time.Millisecond).now)
		for i := 1; i <= 10; i++ {
			p.update("detrend.quiet", i, 10)
		}
		p.end("detrend.quiet")
		p.close()
		if out.Len() != 0 {
			t.Errorf("wrote %q", out.String())
		}
	})
}

func TestProgressIsSafeFromManySteps(t *testing.T) {
	var out bytes.Buffer
	p := newProgressShow(&out, true, newClock(time.Millisecond).now)
	w := p.before(&out)
	var wg sync.WaitGroup
	for g := 0; g < 8; g++ {
		wg.Add(1)
		go func(g int) {
			defer wg.Done()
			step := fmt.Sprintf("search.part%d", g)
			for i := 0; i <= 500; i++ {
				p.update(step, i, 500)
				if i%100 == 0 {
					fmt.Fprintf(w, "note from %s\n", step)
				}
			}
			p.end(step)
		}(g)
	}
	wg.Wait()
	p.close()
	if strings.Count(out.String(), "note from") != 8*6 {
		t.Errorf("lost output: %d notes", strings.Count(out.String(), "note from"))
	}
}

// useProgress makes runs in this test show progress as if on a terminal (or not), with a
// clock that moves on by step at every reading.
func useProgress(t *testing.T, terminal bool, step time.Duration) {
	oldClock, oldTerm := progressClock, progressOnTerminal
	progressClock = newClock(step).now
	progressOnTerminal = func(io.Writer) bool { return terminal }
	t.Cleanup(func() { progressClock, progressOnTerminal = oldClock, oldTerm })
}

func TestRunShowsProgressUnlessQuiet(t *testing.T) {
	t.Run("a run not on a terminal writes plain lines about a long step", func(t *testing.T) {
		useProgress(t, false, 10*time.Second) // every report looks five seconds late
		f := newFolder(t)
		code, out, errs := f.dipline("run", "--workers", "2")
		if code != exitOK || !strings.Contains(errs, "still computing search.dips: ") {
			t.Errorf("exit %d; stderr lacks a progress line:\n%s\n%s", code, errs, out)
		}
		if strings.Contains(out, "still computing") || strings.Contains(errs+out, "\r") {
			t.Errorf("progress reached the standard output or rewrote a line:\n%q", out)
		}
	})
	t.Run("a run on a terminal draws the live line on the error output and wipes it", func(t *testing.T) {
		useProgress(t, true, time.Second)
		f := newFolder(t)
		code, out, errs := f.dipline("run", "--workers", "2")
		if code != exitOK || !strings.Contains(errs, "\rsearch.dips ") || !strings.HasSuffix(errs, "\r") {
			t.Errorf("exit %d; stderr %q", code, errs)
		}
		if !strings.Contains(out, "computed  search.dips") {
			t.Errorf("the step lines are missing:\n%s", out)
		}
	})
	for _, terminal := range []bool{false, true} {
		t.Run(fmt.Sprintf("--quiet shows nothing (terminal %v)", terminal), func(t *testing.T) {
			useProgress(t, terminal, 10*time.Second)
			f := newFolder(t)
			code, out, errs := f.dipline("run", "--quiet", "--workers", "2")
			if code != exitOK || errs != "" || strings.Contains(out, "still computing") || strings.Contains(out, "\r") {
				t.Errorf("exit %d; stderr %q; stdout:\n%s", code, errs, out)
			}
		})
	}
}
