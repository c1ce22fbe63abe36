package photometry

import (
	"fmt"
	"slices"
	"strconv"

	"dipline/steps"
	"dipline/steps/internal/lightcurve"
)

// Present shows the light curve as read: one plot per segment of time against relative
// flux, a table of the segments (what each is, its cadence, exposure and the rows dropped),
// and the points as Data "lightcurve" with their errors and segment number. Nothing is
// computed here beyond counting; the time axis says the scale and zero point the light
// curve records, so that a plot copied elsewhere still says what its times are.
func (Kind) Present(c *Config, art steps.Artifact, in steps.Inputs) (steps.Presentation, error) {
	res, ok := art.(*Result)
	if !ok || res == nil || res.LC == nil {
		return steps.Presentation{}, fmt.Errorf("photometry: cannot show a %T", art)
	}
	lc := res.LC
	return steps.Presentation{
		Panels: []steps.Panel{lightCurvePanel(lc), segmentsPanel(res)},
		Data:   []steps.Data{lightCurveData(lc)},
	}, nil
}

// dataName is the stem of the CSV the light-curve plots draw.
const dataName = "lightcurve"

// timeLabel is the time axis of a light curve for people: "time (days since BJD_TDB
// 2460000.25)", the scale and zero point the light curve records.
func timeLabel(f lightcurve.Frame) string { return "time (" + f.Since() + ")" }

// fluxLabel is the axis of a flux normalised by photometry.
const fluxLabel = "relative flux (segment median = 1)"

func lightCurvePanel(lc *lightcurve.LightCurve) steps.Panel {
	p := steps.Panel{
		Title: "Light curve as read",
		Caption: fmt.Sprintf("Each segment's flux divided by its median, one point per kept row at mid-exposure, "+
			"%d points in %d segment(s). Times are %s. Errors are in the data file, not drawn.",
			lc.Len(), len(lc.Segments), lc.Frame().Since()),
		Columns: 1,
	}
	for i := range lc.Segments {
		s := &lc.Segments[i]
		p.Plots = append(p.Plots, &steps.Plot{
			Title:  segmentTitle(i, s),
			XLabel: timeLabel(lc.Frame()),
			YLabel: fluxLabel,
			Layers: []steps.Layer{{Label: "flux", Style: steps.Points, X: slices.Clone(s.Time), Y: slices.Clone(s.Flux)}},
			Data:   dataName,
		})
	}
	return p
}

// segmentTitle names segment i (0-based) as the data file numbers it, with what is known of it.
func segmentTitle(i int, s *lightcurve.Segment) string {
	t := fmt.Sprintf("Segment %d", i+1)
	if s.ID != strconv.Itoa(i+1) {
		t += " (" + s.ID + ")"
	}
	if s.Band != "" {
		t += ", band " + s.Band
	}
	if s.Instrument != "" {
		t += ", " + s.Instrument
	}
	return t
}

func segmentsPanel(res *Result) steps.Panel {
	tb := &steps.Table{Header: []string{"segment", "id", "band", "instrument", "points", "cadence (min)",
		"exposure (min)", "dropped: flag", "unusable", "bad error", "repeated time"}}
	for i := range res.LC.Segments {
		s := &res.LC.Segments[i]
		var st SegmentStats
		if i < len(res.Stats) {
			st = res.Stats[i]
		}
		tb.Rows = append(tb.Rows, []string{strconv.Itoa(i + 1), s.ID, orDash(s.Band), orDash(s.Instrument),
			strconv.Itoa(s.Len()), fmt.Sprintf("%.3g", st.Cadence*1440), fmt.Sprintf("%.3g", s.Exposure*1440),
			strconv.Itoa(st.Dropped.Flagged), strconv.Itoa(st.Dropped.Unusable), strconv.Itoa(st.Dropped.BadError),
			strconv.Itoa(st.Dropped.Duplicate)})
	}
	tb.Notes = []string{
		"Segments are numbered in time order, as in the data file's segment column; the id is the one the step gave (file order or the user's label).",
		"Cadence is the median time between kept points; exposure the integration time of one point.",
		"Dropped rows: a set quality flag under the mask; a missing or non-finite time, flux or error, or a flux no star gives (at or below zero, or over 100 times the median, when such rows are a few); an error of zero or less; or a time an earlier row of the same file already had.",
	}
	return steps.Panel{Title: "Segments", Caption: "What each segment is and what was left out on reading.", Table: tb}
}

func orDash(s string) string {
	if s == "" {
		return "–"
	}
	return s
}

// lightCurveData is every point of every segment in time order of the segments: time,
// relative flux and error, and the segment's number (from 1, as in the plots' titles).
func lightCurveData(lc *lightcurve.LightCurve) steps.Data {
	n := lc.Len()
	t, f, e, seg := make([]float64, 0, n), make([]float64, 0, n), make([]float64, 0, n), make([]float64, 0, n)
	for i := range lc.Segments {
		s := &lc.Segments[i]
		t = append(t, s.Time...)
		f = append(f, s.Flux...)
		e = append(e, s.Err...)
		for range s.Time {
			seg = append(seg, float64(i+1))
		}
	}
	return steps.Data{Name: dataName, Series: []steps.Series{
		{Name: "time_d", Values: t}, {Name: "flux", Values: f}, {Name: "flux_err", Values: e}, {Name: "segment", Values: seg},
	}}
}
