package detrend

import (
	"fmt"
	"math"
	"strconv"

	"dipline/steps"
	"dipline/steps/detrend/robust"
	"dipline/steps/internal/lightcurve"
)

// Present shows what the detrend did, segment by segment: the input light curve with the
// trend drawn through it ("Light curve and trend"), the flux divided by the trend with the
// masked transits and the removed flares told apart ("Detrended"), and the star's own
// periods measured in the trend ("The star's own periods"). Data "detrended" holds every
// point shown, with its trend and what became of it as 0/1 columns.
//
// The artifact keeps the trend and the fate of every input point, but the input's times
// and fluxes only for the points it kept. With the input light curve among in (the engine
// hands it over as Run got it) every input point is shown, flares included; without it,
// only the kept points, their input flux recovered as flux × trend, and the captions say
// that the removed points are not shown.
func (Kind) Present(c *Config, art steps.Artifact, in steps.Inputs) (steps.Presentation, error) {
	res, ok := art.(*Result)
	if !ok || res == nil || res.Curve == nil {
		return steps.Presentation{}, fmt.Errorf("detrend: cannot show a %T", art)
	}
	pts := res.points(inputCurve(res, in))
	return steps.Presentation{
		Panels: []steps.Panel{pts.trendPanel(res), pts.detrendedPanel(res, c), starPanel(res.Star)},
		Data:   []steps.Data{pts.data()},
	}, nil
}

// detrendedData is the stem of the CSV the plots draw.
const detrendedData = "detrended"

// inputCurve returns the light curve the step read when in holds it and it matches the
// artifact point for point (same segments, as many points as marks); otherwise nil.
func inputCurve(res *Result, in steps.Inputs) *lightcurve.LightCurve {
	src, ok := in.Ref("light_curve").(lightcurve.Source)
	if !ok {
		return nil
	}
	lc := src.LightCurve()
	if lc == nil || len(lc.Segments) != len(res.Trends) {
		return nil
	}
	for i, s := range lc.Segments {
		if s.Len() != len(res.Trends[i].Marks) || len(s.Flux) != s.Len() || len(s.Err) != s.Len() {
			return nil
		}
	}
	return lc
}

// shown holds, per segment, the points a presentation shows: all input points when the
// input is at hand (full), else the kept ones.
type shown struct {
	frame lightcurve.Frame
	full  bool
	segs  []shownSegment
}

type shownSegment struct {
	id string
	// Per point: time, input flux and error, trend (NaN where none), and the mark.
	time, flux, err, trend []float64
	marks                  []robust.Mark
}

// points gathers the points to show from the artifact and, when not nil, its input.
func (r *Result) points(input *lightcurve.LightCurve) shown {
	sh := shown{frame: r.Curve.Frame(), full: input != nil}
	for i, tr := range r.Trends {
		out := r.Curve.Segments[i]
		ss := shownSegment{id: out.ID}
		if input != nil {
			s := input.Segments[i]
			ss.time, ss.flux, ss.err = s.Time, s.Flux, s.Err
			ss.trend, ss.marks = tr.Trend, tr.Marks
		} else {
			// The kept points, in order, are the output's; their input flux is the
			// output's times the trend (newResult divided it).
			k := 0
			for j, m := range tr.Marks {
				if m != robust.Kept && m != robust.InTransit {
					continue
				}
				ss.time = append(ss.time, out.Time[k])
				ss.flux = append(ss.flux, out.Flux[k]*tr.Trend[j])
				ss.err = append(ss.err, out.Err[k]*tr.Trend[j])
				ss.trend = append(ss.trend, tr.Trend[j])
				ss.marks = append(ss.marks, m)
				k++
			}
		}
		sh.segs = append(sh.segs, ss)
	}
	return sh
}

// count is the number of shown points with mark m.
func (sh shown) count(m robust.Mark) int {
	n := 0
	for _, s := range sh.segs {
		for _, x := range s.marks {
			if x == m {
				n++
			}
		}
	}
	return n
}

// pick returns the (x, y) of the points of s whose mark passes keep and whose y is finite.
func (s shownSegment) pick(keep func(robust.Mark) bool, y func(j int) float64) (xs, ys []float64) {
	xs, ys = []float64{}, []float64{}
	for j, m := range s.marks {
		if keep(m) {
			if v := y(j); !math.IsNaN(v) && !math.IsInf(v, 0) {
				xs = append(xs, s.time[j])
				ys = append(ys, v)
			}
		}
	}
	return xs, ys
}

func is(ms ...robust.Mark) func(robust.Mark) bool {
	return func(m robust.Mark) bool {
		for _, x := range ms {
			if m == x {
				return true
			}
		}
		return false
	}
}

func (s shownSegment) title(i int) string {
	t := fmt.Sprintf("Segment %d", i+1)
	if s.id != strconv.Itoa(i+1) {
		t += " (" + s.id + ")"
	}
	return t
}

func timeLabel(f lightcurve.Frame) string { return "time (" + f.Since() + ")" }

// estimatorWords says in a few words how the trend was estimated.
func estimatorWords(r *Result) string {
	scale := fmt.Sprintf("a window %.3g d wide", r.Scale)
	switch r.Estimator {
	case estLocal:
		return fmt.Sprintf("a robust local polynomial of degree %d in %s", r.Degree, scale)
	case estBiweight:
		return "the Tukey biweight location in " + scale
	case estSpline:
		return fmt.Sprintf("a robust cubic spline with knots %.3g d apart", r.Scale)
	case estMedian:
		return "the running median in " + scale
	}
	return r.Estimator
}

// trendWords says how the trend was made: estimatorWords, after the rotation model when
// there is one.
func trendWords(r *Result) string {
	w := estimatorWords(r)
	if ro := r.Rotation; ro != nil {
		w = fmt.Sprintf("a model of the star's rotation (%d harmonic(s) of %.4g d, coefficients changing over knots %.3g d apart) times %s", ro.Harmonics, ro.Period, ro.KnotSpacing, w)
	}
	return w
}

func (sh shown) trendPanel(r *Result) steps.Panel {
	p := steps.Panel{Title: "Light curve and trend", Columns: 1}
	words := fmt.Sprintf("The input light curve with the trend removed from it, %s, each piece between gaps longer than %.3g d on its own.",
		trendWords(r), r.SplitAtGap)
	if n := sh.count(robust.InTransit); n > 0 {
		words += fmt.Sprintf(" %d points in masked transits (drawn larger) were left out of the trend, which is carried across them from either side.", n)
	}
	if sh.full {
		if n := sh.count(robust.NoTrend); n > 0 {
			words += fmt.Sprintf(" %d points had no trend (too few neighbours) and have no line under them; they are not in the detrended light curve.", n)
		}
	} else {
		words += " The input light curve was not at hand: only the points kept are shown, their flux recovered as detrended flux × trend; removed points (flares, points without a trend) are not shown."
	}
	p.Caption = words
	for i, s := range sh.segs {
		flux := func(j int) float64 { return s.flux[j] }
		x, y := s.pick(is(robust.Kept, robust.Flare, robust.NoTrend), flux)
		layers := []steps.Layer{{Label: "flux", Style: steps.Points, X: x, Y: y}}
		if x, y := s.pick(is(robust.InTransit), flux); len(x) > 0 {
			layers = append(layers, steps.Layer{Label: "in a masked transit", Style: steps.Emphasised, X: x, Y: y})
		}
		tx, ty := s.pick(func(robust.Mark) bool { return true }, func(j int) float64 { return s.trend[j] })
		layers = append(layers, steps.Layer{Label: "trend", Style: steps.Line, X: tx, Y: ty})
		p.Plots = append(p.Plots, &steps.Plot{Title: s.title(i), XLabel: timeLabel(sh.frame),
			YLabel: "relative flux (as read)", Layers: layers, Data: detrendedData})
	}
	return p
}

func (sh shown) detrendedPanel(r *Result, c *Config) steps.Panel {
	p := steps.Panel{Title: "Detrended", Columns: 1}
	words := "Flux divided by the trend: what a search sees."
	if n := sh.count(robust.InTransit); n > 0 {
		words += fmt.Sprintf(" Points in masked transits (%d) are drawn larger.", n)
	}
	if sh.full {
		if n := sh.count(robust.Flare); n > 0 {
			cut := "the flare cut"
			if c != nil {
				cut = fmt.Sprintf("%g robust standard deviations", c.FlareSigma)
			}
			words += fmt.Sprintf(" %d points more than %s above the trend were removed as flares and are drawn apart; points below the trend are never removed.", n, cut)
		}
	} else if n := r.count(robust.Flare); n > 0 {
		words += fmt.Sprintf(" %d points were removed as flares; without the input light curve they cannot be shown.", n)
	}
	p.Caption = words
	for i, s := range sh.segs {
		rel := func(j int) float64 { return s.flux[j] / s.trend[j] }
		x, y := s.pick(is(robust.Kept), rel)
		layers := []steps.Layer{{Label: "detrended flux", Style: steps.Points, X: x, Y: y}}
		if x, y := s.pick(is(robust.InTransit), rel); len(x) > 0 {
			layers = append(layers, steps.Layer{Label: "in a masked transit", Style: steps.Emphasised, X: x, Y: y})
		}
		if x, y := s.pick(is(robust.Flare), rel); len(x) > 0 {
			layers = append(layers, steps.Layer{Label: "removed as a flare", Style: steps.Points, X: x, Y: y})
		}
		p.Plots = append(p.Plots, &steps.Plot{Title: s.title(i), XLabel: timeLabel(sh.frame),
			YLabel: "flux ÷ trend", Layers: layers, HLines: []steps.Mark{{Value: 1, Label: "trend"}}, Data: detrendedData})
	}
	return p
}

// data is every shown point: time, detrended flux and error (the input's over the trend,
// NaN where there is no trend), the trend, the input flux, the segment number (from 1) and
// one 0/1 column per fate.
func (sh shown) data() steps.Data {
	var t, f, e, tr, raw, seg, out, masked, flare, none, bad []float64
	b := func(ok bool) float64 {
		if ok {
			return 1
		}
		return 0
	}
	for i, s := range sh.segs {
		for j, m := range s.marks {
			t = append(t, s.time[j])
			f = append(f, s.flux[j]/s.trend[j])
			e = append(e, s.err[j]/s.trend[j])
			tr = append(tr, s.trend[j])
			raw = append(raw, s.flux[j])
			seg = append(seg, float64(i+1))
			out = append(out, b(m == robust.Kept || m == robust.InTransit))
			masked = append(masked, b(m == robust.InTransit))
			flare = append(flare, b(m == robust.Flare))
			none = append(none, b(m == robust.NoTrend))
			bad = append(bad, b(m == robust.NonFinite))
		}
	}
	return steps.Data{Name: detrendedData, Series: []steps.Series{
		{Name: "time_d", Values: t}, {Name: "flux", Values: f}, {Name: "flux_err", Values: e},
		{Name: "trend", Values: tr}, {Name: "flux_as_read", Values: raw}, {Name: "segment", Values: seg},
		{Name: "in_output", Values: out}, {Name: "in_masked_transit", Values: masked},
		{Name: "flare", Values: flare}, {Name: "no_trend", Values: none}, {Name: "not_finite", Values: bad},
	}}
}

// starPanel lists the star's own periods the detrend found in its trend.
func starPanel(v lightcurve.Variability) steps.Panel {
	tb := &steps.Table{Header: []string{"rank", "period (d)", "semi-amplitude (ppm)"}}
	for k, p := range v.Periods {
		amp := math.NaN()
		if k < len(v.Amplitudes) {
			amp = v.Amplitudes[k]
		}
		tb.Rows = append(tb.Rows, []string{strconv.Itoa(k + 1), fmt.Sprintf("%.4g", p), fmt.Sprintf("%.0f", amp*1e6)})
	}
	tb.Notes = []string{"Periods that stand out of the noise in the periodogram of the trend (generalised Lomb–Scargle, Zechmeister & Kürster 2009), strongest first: the star's rotation or pulsation as the trend followed it. A transit signal at one of these periods, or a small multiple or fraction of one, deserves suspicion."}
	if len(v.Periods) == 0 {
		tb.Notes = append(tb.Notes, "None stands out in this trend.")
	}
	return steps.Panel{Title: "The star's own periods", Caption: "Periodic variability measured in the trend the detrend removed.", Table: tb}
}
