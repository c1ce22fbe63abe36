package main

import (
	"fmt"
	"io"
	"os"
	"strings"
	"sync"
	"time"
	"unicode/utf8"
)

// How progress is shown while a run computes. It is only shown: it never reaches a result,
// a key, a record or the results file (workflow.Options.OnProgress).
const (
	// liveEvery is the least time between two redraws of the line on a terminal: ten a
	// second reads as smooth motion and costs the terminal nothing (our choice).
	liveEvery = 100 * time.Millisecond
	// plainEvery is the least time between two lines about one step when the output is not
	// a terminal (a pipe, a file, a CI log): a long fit stays visibly alive without filling
	// the log (our choice).
	plainEvery = 5 * time.Second
	// liveWidth bounds the line on a terminal to one row of an 80-column window: a carriage
	// return rewrites only the row the cursor is on, so a line that wrapped would leave its
	// first part behind.
	liveWidth = 79
)

// progressShow shows how far the computing steps are. On a terminal (live) it keeps one
// line, rewritten in place with a carriage return, naming every running step with its
// percentage ("fit.planets 41 % · search.dips 80 %"), redrawn at most every liveEvery and
// wiped before any other output. Elsewhere it writes a plain line about a step at most
// every plainEvery, and nothing about a step that finishes sooner. Steps run in parallel,
// so every method is safe for concurrent use.
type progressShow struct {
	mu    sync.Mutex
	w     io.Writer
	live  bool
	now   func() time.Time
	steps []*stepShown // the steps computing now, in the order they first reported
	// shown is the live line on screen and drawn the width it covers (0: nothing on
	// screen); lastDraw is when it was drawn.
	shown    string
	drawn    int
	lastDraw time.Time
	ended    map[string]bool // steps that finished: a late report about them is ignored
	closed   bool
}

// stepShown is one computing step's latest report.
type stepShown struct {
	name        string
	done, total int
	// since is when the step first reported, or was last written about (plain lines).
	since time.Time
}

// progressClock and progressOnTerminal are how a run's display reads the time and decides
// whether its output is a terminal; tests replace them.
var (
	progressClock      = time.Now
	progressOnTerminal = isTerminal
)

// newProgressShow returns a display writing to w: live when w is a terminal, plain
// otherwise; now gives the time (tests pass their own clock).
func newProgressShow(w io.Writer, live bool, now func() time.Time) *progressShow {
	return &progressShow{w: w, live: live, now: now, ended: map[string]bool{}}
}

// isTerminal reports whether w is a terminal (a character device), without any package
// beyond the standard library: a pipe, a file or a buffer is not.
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	if !ok {
		return false
	}
	st, err := f.Stat()
	return err == nil && st.Mode()&os.ModeCharDevice != 0
}

// update records that step has done done of total units of its work, and shows it when
// the rate allows. It fits workflow.Options.OnProgress.
func (p *progressShow) update(step string, done, total int) {
	if total <= 0 {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.closed || p.ended[step] {
		return
	}
	now := p.now()
	s := p.find(step)
	if s == nil {
		s = &stepShown{name: step, since: now}
		p.steps = append(p.steps, s)
	}
	s.done, s.total = min(max(done, 0), total), total
	if p.live {
		if p.drawn == 0 || now.Sub(p.lastDraw) >= liveEvery {
			p.draw(now)
		}
		return
	}
	if now.Sub(s.since) >= plainEvery {
		fmt.Fprintf(p.w, "  still computing %s: %s\n", s.name, percent(s.done, s.total))
		s.since = now
	}
}

// end takes a finished step (computed, failed or skipped) off the display.
func (p *progressShow) end(step string) {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.ended[step] = true
	for i, s := range p.steps {
		if s.name == step {
			p.steps = append(p.steps[:i], p.steps[i+1:]...)
			break
		}
	}
	if p.live && !p.closed {
		if len(p.steps) == 0 {
			p.wipe()
		} else {
			p.draw(p.now())
		}
	}
}

// close wipes the live line; nothing is shown afterwards.
func (p *progressShow) close() {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.wipe()
	p.closed = true
}

// find returns the step's entry, or nil.
func (p *progressShow) find(step string) *stepShown {
	for _, s := range p.steps {
		if s.name == step {
			return s
		}
	}
	return nil
}

// draw rewrites the live line with every computing step, as many as fit, and the count of
// the others.
func (p *progressShow) draw(now time.Time) {
	line := ""
	for i, s := range p.steps {
		part := s.name + " " + percent(s.done, s.total)
		if line != "" {
			part = " · " + part
		}
		more := ""
		if rest := len(p.steps) - i - 1; rest > 0 {
			more = fmt.Sprintf(" · %d more", rest)
		}
		if utf8.RuneCountInString(line+part+more) > liveWidth {
			if line == "" { // one step's name alone is too long: cut it
				line = string([]rune(part)[:liveWidth-1]) + "…"
				break
			}
			line += fmt.Sprintf(" · %d more", len(p.steps)-i)
			break
		}
		line += part
	}
	p.lastDraw = now
	if p.drawn > 0 && line == p.shown {
		return // the same line is on screen
	}
	width := utf8.RuneCountInString(line)
	pad := max(p.drawn-width, 0) // cover what is left of a longer line before
	fmt.Fprint(p.w, "\r"+line+strings.Repeat(" ", pad))
	p.shown, p.drawn = line, max(width+pad, 1)
}

// wipe blanks the live line and puts the cursor at its start, when one is shown.
func (p *progressShow) wipe() {
	if p.drawn == 0 {
		return
	}
	fmt.Fprint(p.w, "\r"+strings.Repeat(" ", p.drawn)+"\r")
	p.shown, p.drawn = "", 0
}

// percent writes done of total as a whole percentage, rounded down, so 100 % means done.
func percent(done, total int) string {
	return fmt.Sprintf("%d %%", int(int64(done)*100/int64(total)))
}

// before returns a writer that wipes the live line before each write to w, so that other
// output never lands in the middle of it; the line comes back with the next report.
func (p *progressShow) before(w io.Writer) io.Writer { return wipingWriter{p: p, w: w} }

type wipingWriter struct {
	p *progressShow
	w io.Writer
}

func (ww wipingWriter) Write(b []byte) (int, error) {
	ww.p.mu.Lock()
	defer ww.p.mu.Unlock()
	ww.p.wipe()
	return ww.w.Write(b)
}
