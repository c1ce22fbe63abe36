package report

import (
	"bytes"
	"strings"
	"testing"
)

// A section drawn as soon as it is made (Draw, as the engine does step by step) lets go of
// its presentation and still gives the page, byte for byte, that drawing it at the end gives.
func TestASectionDrawnEarlyGivesTheSamePageAndLetsGoOfItsSeries(t *testing.T) {
	late, _ := synthetic()
	want := render(t, late)

	early, _ := synthetic()
	for i := range early.Sections {
		s := &early.Sections[i]
		s.Draw()
		if s.Presentation.Panels != nil || s.Presentation.Data != nil {
			t.Errorf("%s still holds its presentation after it was drawn", s.Step)
		}
		s.Draw() // a second time changes nothing
	}
	if got := render(t, early); got != want {
		t.Error("the page of sections drawn early differs from the page drawn at the end")
	}
}

// writeSizes records the size of each write it is given.
type writeSizes struct {
	bytes.Buffer
	largest, calls int
}

func (w *writeSizes) Write(p []byte) (int, error) {
	w.calls++
	w.largest = max(w.largest, len(p))
	return w.Buffer.Write(p)
}

// The page goes to its writer as it is made, never held whole in a buffer of its own: no
// single write carries more than the largest of its plots.
func TestThePageIsWrittenAsItIsMade(t *testing.T) {
	doc, _ := synthetic()
	var w writeSizes
	if err := Write(&w, doc); err != nil {
		t.Fatal(err)
	}
	page := w.String()
	if page != render(t, doc) {
		t.Fatal("the page written as it is made differs from the page rendered whole")
	}
	largestPlot := 0
	for _, svg := range strings.Split(page, `<svg class="plot"`)[1:] {
		// A plot is written with the line end after it.
		largestPlot = max(largestPlot, len(`<svg class="plot"`)+strings.Index(svg, "</svg>")+len("</svg>\n"))
	}
	if w.largest > largestPlot {
		t.Errorf("the page of %d bytes came in %d writes, the largest %d bytes, more than its largest plot (%d): held whole before writing",
			len(page), w.calls, w.largest, largestPlot)
	}
}
