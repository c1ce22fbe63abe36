package steps

// What a step shows of its result: panels for the report (plots and tables) and data
// written beside the results file as CSV. A kind written against its configuration C gives
// `Present(c *C, art Artifact, in Inputs) (Presentation, error)`; the engine calls it after
// a run for every finished step, with the artifacts the step read (as Run got them, files
// and rows included), and hands the result to the report. Presenting never enters a key or
// an artifact, and must be deterministic: the same artifact gives the same bytes.
//
// The types below describe what to draw, not how: the report decides sizes, colours and
// layout. This package knows nothing of HTML or plotting.

// Presenter is implemented by kinds whose results can be looked at.
type Presenter interface {
	Present(cfg any, art Artifact, in Inputs) (Presentation, error)
}

// Presentation is everything a step shows, in order.
type Presentation struct {
	Panels []Panel
	// Data are written as <output>/<kind>.<label>/<Name>.csv, one column per Series.
	Data []Data
	// Texts are written as <output>/<kind>.<label>/<Name> as they are (a LaTeX table, say).
	Texts []Text
}

// Text is a file of text a step writes beside its data, named with its extension
// ("planets.tex").
type Text struct {
	Name string
	Body string
}

// Panel is one titled part of a step's section: a plot, a grid of plots, or a table.
type Panel struct {
	// Title names the panel in a few words ("Light curve and trend").
	Title string
	// Caption says in a sentence or two what is shown and how to read it.
	Caption string
	// Plots are drawn in a grid of Columns plots per row (1 when 0); a nil plot leaves its
	// cell empty (the upper triangle of a corner plot).
	Plots   []*Plot
	Columns int
	// Table is shown when there are no plots.
	Table *Table
}

// Plot is one set of axes.
type Plot struct {
	Title          string
	XLabel, YLabel string
	// XReversed draws x growing to the left (magnitudes, say); LogX and LogY draw the axes in
	// logarithms.
	XReversed, LogX, LogY bool
	Layers                []Layer
	// HLines and VLines mark values across the plot: a threshold, a mid-transit.
	HLines, VLines []Mark
	// YTicks, when given, label the y axis at these values with these words in place of
	// numbers: the dates of a timeline's rows.
	YTicks []Mark
	// Data names the Data whose columns the layers draw, so that a reader (and a test) can
	// find the numbers behind the picture; "" when none.
	Data string
}

// LayerStyle says how a layer is drawn.
type LayerStyle int

// The layer styles. The report gives each its own look; a layer's Label goes into the
// legend when the plot has more than one layer.
const (
	Points     LayerStyle = iota // small markers, one per (X, Y)
	Emphasised                   // larger markers drawn above the rest: binned points, peaks
	ErrorBars                    // markers with vertical bars from YLo to YHi
	Line                         // a line through (X, Y) in X order
	Band                         // a filled band between YLo and YHi along X, with Y as its middle line
	Histogram                    // bars: X the bin centres, Y the counts or densities
	Spans                        // horizontal bars from XLo to XHi at height Y, with a tick at X when X is a number on the bar: intervals of time on a timeline; a plot's first spans are drawn pale, as the ground the others lie on
)

// Layer is one series of a plot.
type Layer struct {
	Label string
	Style LayerStyle
	X, Y  []float64
	// YLo and YHi are the band's or the error bars' ends (ErrorBars, Band).
	YLo, YHi []float64
	// XLo and XHi are the spans' ends (Spans).
	XLo, XHi []float64
}

// Mark is a value marked across a plot, with a short label.
type Mark struct {
	Value float64
	Label string
}

// Table is a small table for people: a header and rows of text, already formatted.
type Table struct {
	Header []string
	Rows   [][]string
	// Notes are sentences shown under the table (what a symbol means, where a value comes from).
	Notes []string
}

// Data is a table of numbers written out as CSV: one column per Series, of equal lengths.
type Data struct {
	// Name is the file's stem, in snake case ("detrended", "periodogram_pass1").
	Name   string
	Series []Series
}

// Series is one column of Data.
type Series struct {
	// Name is the column's header, with its unit after an underscore ("time_d", "flux").
	Name   string
	Values []float64
}

// PresentationOf returns what a step shows, or an empty Presentation when its kind shows
// nothing.
func PresentationOf(k Kind, cfg any, art Artifact, in Inputs) (Presentation, error) {
	if p, ok := k.(Presenter); ok {
		return p.Present(cfg, art, in)
	}
	return Presentation{}, nil
}
