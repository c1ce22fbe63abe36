// Package report writes a run's page: one self-contained HTML file with a section per step,
// in the workflow's order, and an appendix saying how every result was made. Plots are
// drawn as inline SVG with gonum/plot, tables as HTML tables; the page needs no script, no
// network and no other file. It knows no astronomy and no workflow language: the engine
// hands it Sections (each holding what a step's kind chose to show, a steps.Presentation)
// and an Appendix of plain strings, and Write turns them into bytes. The same document
// always gives the same bytes. The entry point is Write.
package report

import (
	"fmt"
	"io"
	"regexp"
	"strings"

	"dipline/steps"
)

// Document is everything the page shows.
type Document struct {
	// Title heads the page (the analysis's name); Subtitle is one line under it.
	Title    string
	Subtitle string
	Sections []Section
	Appendix Appendix
}

// Section is one step's part of the page.
type Section struct {
	// Step names the step as the workflow does (kind.label); Kind and Label are its parts.
	Step, Kind, Label string
	// Status is the step's state in the run (the engine's word); Finished says whether it
	// has a result.
	Status   string
	Finished bool
	StepKey  string
	// Made is the id of the step's entry in the appendix (see Anchor).
	Made string
	// Why says why a step has no result (failed or not run).
	Why          string
	Presentation steps.Presentation
	Figures      []Figure
	Cautions     []string
	Verdicts     []Verdict
	// Notes are sentences about the section itself: a presentation that could not be made,
	// data that could not be written.
	Notes []string
	// Files lists the files written beside the page for this step, as relative paths.
	Files []WrittenFile

	// panels are the presentation's panels as drawn, once Draw has drawn them (drawn).
	panels []renderedPanel
	drawn  bool
}

// Draw draws the section's plots now and lets go of its presentation, whose plots may
// hold every point of a long series: a page of many such sections then holds the drawn
// pictures (a few megabytes at most, see maxDrawn) and at most one section's series at a
// time, not all of them. Write draws the sections not drawn yet itself, with the same
// result; drawing a section twice changes nothing.
func (s *Section) Draw() {
	if s.drawn {
		return
	}
	s.panels, s.drawn = drawPanels(s.Presentation.Panels), true
	s.Presentation = steps.Presentation{}
}

// WrittenFile is one file written beside the page.
type WrittenFile struct {
	Path string // relative to the page
	What string // "2,400 rows", say
}

// Figure is one number of a step's, already formatted.
type Figure struct {
	Name, Value, Unit, Doc string
}

// Verdict is one test's judgement of one subject, as text.
type Verdict struct {
	Subject, Test, Verdict, Threshold, Reason string
}

// Appendix says how the results were made.
type Appendix struct {
	// Run lists facts about the run as a whole (run id, workflow file and its digest, seed,
	// program version and revision), in order.
	Run []Pair
	// Overrides are the settings given on the command line, or by a survey target's row
	// ("step.attribute", value); OverridesFrom heads them.
	Overrides     []Pair
	OverridesFrom string
	Steps         []Making
}

// Pair is a name and a value.
type Pair struct{ Name, Value string }

// Making is one step's entry in the appendix.
type Making struct {
	// ID is the entry's anchor (Section.Made).
	ID      string
	Step    string
	Version string
	StepKey string
	// ResultKey is "" when the step has no result.
	ResultKey string
	Seed      string
	Settings  []Pair
	Inputs    []Input
	Files     []File
	Rows      []Row
	Notes     []string
}

// Input is a step's result read by another step.
type Input struct{ Param, Step, ResultKey string }

// File is a file a step read.
type File struct{ Param, Path, SHA256, Bytes string }

// Row is a catalogue row a step read, with the values it read.
type Row struct {
	Param, Row, Place string
	Values            []Pair
	Overridden        []string
}

var unsafeID = regexp.MustCompile(`[^A-Za-z0-9_.-]`)

// Anchor makes an element id from a prefix and a name: letters, digits, '.', '-' and '_'
// are kept, anything else becomes '_'. Names that differ only in such characters would
// collide; step names are identifiers, so they do not.
func Anchor(prefix, name string) string {
	return prefix + "-" + unsafeID.ReplaceAllString(name, "_")
}

// Write renders the document as one HTML page. The page is written to w as it is made,
// never held whole: after an error w may hold part of a page, so a caller whose readers
// must never see half a page writes it through a temporary file, as the engine does.
func Write(w io.Writer, doc Document) error {
	pg := page{Document: doc}
	for i := range doc.Sections {
		pg.Rendered = append(pg.Rendered, renderSection(&doc.Sections[i]))
	}
	if err := pageTemplate.Execute(w, pg); err != nil {
		return fmt.Errorf("writing the report page: %w", err)
	}
	return nil
}

// clean removes from a string what must not reach an SVG: the characters our marks use to
// find their groups, and control characters XML does not allow. Escaping is the drawing
// backend's (it escapes every string it writes) or the template's.
func clean(s string) string {
	return strings.Map(func(r rune) rune {
		switch {
		case r == groupOpen || r == groupClose:
			return -1
		case r < 0x20 && r != '\n' && r != '\t':
			return -1
		case r == 0xFFFE || r == 0xFFFF:
			return -1
		}
		return r
	}, s)
}
