package detrend

import (
	"bytes"
	"errors"
	"fmt"

	"dipline/steps"
	"dipline/steps/detrend/robust"
	"dipline/steps/internal/codec"
	"dipline/steps/internal/lightcurve"
)

// Result is the detrend step's artifact: the detrended light curve, and for every input
// point the trend and what became of it.
type Result struct {
	// Curve is the detrended light curve: flux and error of every kept point divided by
	// the trend there. Flares and points without a trend are left out; masked (in-transit)
	// points stay. Segments match the input's one for one (same ids, band, exposure, …);
	// Dropped repeats the input's counts of rows dropped on reading.
	Curve *lightcurve.LightCurve
	// Trends has one entry per input segment.
	Trends []SegmentTrend
	// Estimator is "local-polynomial", "biweight", "robust-spline" or "running-median";
	// Degree the local polynomial's degree (0 for the others).
	Estimator string
	Degree    int
	// Scale is the time scale of the trend in days: the window span, or the knot spacing
	// of the spline.
	Scale float64
	// SplitAtGap is the gap threshold used, in days.
	SplitAtGap float64
	// Star is the star's own periodic variability, measured in the trend.
	Star lightcurve.Variability
	// Caution, when not empty, says why depths and signal to noise measured on Curve may be
	// biased (a masked pass's short or biased window; see maskedCaution), or that the star's
	// variability outlived its rotation model.
	Caution string
	// Rotation is the model of the star's rotation the trend includes (the trend is the
	// model times the window's trend), nil when none was used.
	Rotation *Rotation
}

// Rotation describes the rotation model divided out before the window (spin.go).
type Rotation struct {
	// Period is the rotation period, KnotSpacing the widest spacing of the coefficients'
	// knots, days.
	Period, KnotSpacing float64
	// Harmonics is the number of harmonics of the period in the model; Amplitudes their
	// semi-amplitudes relative to the star's level (medians over the knot intervals), and
	// PeakToPeak the modulation's full range likewise.
	Harmonics  int
	Amplitudes []float64
	PeakToPeak float64
	// Explained is the share of the star's variance above the white noise the model
	// removes; Noise the white noise of one point, relative flux.
	Explained, Noise float64
	// Excess is the scatter of the detrended light curve over the reference transit
	// duration against what its white noise gives (1: white noise only; 0: not measured).
	Excess float64
}

// Cautions implements steps.Cautioner.
func (r *Result) Cautions() []string {
	if r.Caution == "" {
		return nil
	}
	return []string{r.Caution}
}

// SegmentTrend is the trend of one input segment, point by point.
type SegmentTrend struct {
	// Trend at every input point; NaN where none could be estimated.
	Trend []float64
	// Marks says what became of every input point (robust.Kept, InTransit, Flare, …).
	Marks []robust.Mark
	// Pieces is the number of pieces the segment was split into at gaps.
	Pieces int
}

// LightCurve returns the detrended light curve, so that a search or another detrend can
// take this step as its input.
func (r *Result) LightCurve() *lightcurve.LightCurve { return r.Curve }

// Variability returns the star's own periods found in the trend, so that a vet step can
// tell a transit from what the detrend left of the star.
func (r *Result) Variability() lightcurve.Variability { return r.Star }

func newResult(lc *lightcurve.LightCurve, out []robust.Result, estimator string, scale, gap float64) *Result {
	res := &Result{
		Curve: &lightcurve.LightCurve{TimeScale: lc.TimeScale, RefInt: lc.RefInt, RefFrac: lc.RefFrac,
			Dropped: lc.Dropped},
		Trends:     make([]SegmentTrend, len(lc.Segments)),
		Estimator:  estimator,
		Scale:      scale,
		SplitAtGap: gap,
	}
	for i, s := range lc.Segments {
		o := out[i]
		res.Trends[i] = SegmentTrend{Trend: o.Trend, Marks: o.Marks, Pieces: o.Pieces}
		seg := lightcurve.Segment{ID: s.ID, Band: s.Band, Instrument: s.Instrument, Exposure: s.Exposure,
			CrowdingCorrected: s.CrowdingCorrected, Contamination: s.Contamination}
		n := 0
		for _, m := range o.Marks {
			if m == robust.Kept || m == robust.InTransit {
				n++
			}
		}
		seg.Time, seg.Flux, seg.Err = make([]float64, 0, n), make([]float64, 0, n), make([]float64, 0, n)
		for j, m := range o.Marks {
			if m != robust.Kept && m != robust.InTransit {
				continue
			}
			tr := o.Trend[j]
			seg.Time = append(seg.Time, s.Time[j])
			seg.Flux = append(seg.Flux, s.Flux[j]/tr)
			seg.Err = append(seg.Err, s.Err[j]/tr)
		}
		res.Curve.Segments = append(res.Curve.Segments, seg)
	}
	return res
}

// count is the number of input points with mark m.
func (r *Result) count(m robust.Mark) int {
	n := 0
	for _, t := range r.Trends {
		for _, x := range t.Marks {
			if x == m {
				n++
			}
		}
	}
	return n
}

const (
	tag       = "detrend"
	formatVer = 3
	// formatRotation is formatVer's record followed by the rotation model: a result
	// without one keeps formatVer, so its bytes, and its key, are those of a detrend
	// that never looked at the rotation.
	formatRotation = 4
	// maxStarPeriods bounds the star's periods a decoder accepts.
	maxStarPeriods = 16
)

// Encode returns the canonical encoding.
func (r *Result) Encode() []byte {
	ver := uint32(formatVer)
	if r.Rotation != nil {
		ver = formatRotation
	}
	w := codec.NewWriter(tag, ver)
	w.String(r.Estimator)
	w.Int(int64(r.Degree))
	w.Float(r.Scale)
	w.Float(r.SplitAtGap)
	w.Floats(r.Star.Periods)
	w.Floats(r.Star.Amplitudes)
	w.String(r.Caution)
	r.Curve.Write(w)
	w.Uint64(uint64(len(r.Trends)))
	for _, t := range r.Trends {
		w.Int(int64(t.Pieces))
		w.Floats(t.Trend)
		marks := make([]byte, len(t.Marks))
		for i, m := range t.Marks {
			marks[i] = byte(m)
		}
		w.String(string(marks))
	}
	if ro := r.Rotation; ro != nil {
		w.Float(ro.Period)
		w.Float(ro.KnotSpacing)
		w.Int(int64(ro.Harmonics))
		w.Floats(ro.Amplitudes)
		w.Float(ro.PeakToPeak)
		w.Float(ro.Explained)
		w.Float(ro.Noise)
		w.Float(ro.Excess)
	}
	return w.Bytes()
}

// Decode reads a Result back from its encoding, rejecting truncated, foreign or
// inconsistent records.
func (Kind) Decode(b []byte) (steps.Artifact, error) { return steps.Decoded(Decode(b)) }

// Decode reads a Result back from its encoding.
func Decode(b []byte) (*Result, error) {
	ver := uint32(formatVer)
	if bytes.HasPrefix(b, codec.NewWriter(tag, formatRotation).Bytes()) {
		ver = formatRotation
	}
	rd := codec.NewReader(b, tag, ver)
	r := &Result{}
	r.Estimator = rd.String()
	r.Degree = int(rd.Int())
	r.Scale = rd.Float()
	r.SplitAtGap = rd.Float()
	r.Star.Periods = rd.Floats()
	r.Star.Amplitudes = rd.Floats()
	r.Caution = rd.String()
	r.Curve = lightcurve.Read(rd)
	n := rd.Uint64()
	if n != uint64(len(r.Curve.Segments)) {
		if err := rd.Err(); err != nil {
			return nil, fmt.Errorf("detrend: %w", err)
		}
		return nil, fmt.Errorf("detrend: record has %d trends for %d segments", n, len(r.Curve.Segments))
	}
	for i := uint64(0); i < n; i++ {
		var t SegmentTrend
		t.Pieces = int(rd.Int())
		t.Trend = rd.Floats()
		marks := rd.String()
		t.Marks = make([]robust.Mark, len(marks))
		for j := range marks {
			t.Marks[j] = robust.Mark(marks[j])
		}
		r.Trends = append(r.Trends, t)
	}
	if ver == formatRotation {
		ro := &Rotation{}
		ro.Period = rd.Float()
		ro.KnotSpacing = rd.Float()
		ro.Harmonics = int(rd.Int())
		ro.Amplitudes = rd.Floats()
		ro.PeakToPeak = rd.Float()
		ro.Explained = rd.Float()
		ro.Noise = rd.Float()
		ro.Excess = rd.Float()
		r.Rotation = ro
	}
	if err := rd.Err(); err != nil {
		return nil, fmt.Errorf("detrend: %w", err)
	}
	if err := r.check(); err != nil {
		return nil, fmt.Errorf("detrend: %w", err)
	}
	return r, nil
}

// check verifies the invariants a decoded record must hold.
func (r *Result) check() error {
	switch r.Estimator {
	case estLocal, estBiweight, estSpline, estMedian:
	default:
		return fmt.Errorf("unknown estimator %q", r.Estimator)
	}
	if r.Degree < 0 || r.Degree > 2 || (r.Estimator != estLocal && r.Degree != 0) {
		return fmt.Errorf("degree %d for estimator %q", r.Degree, r.Estimator)
	}
	if len(r.Star.Periods) != len(r.Star.Amplitudes) || len(r.Star.Periods) > maxStarPeriods {
		return fmt.Errorf("%d star periods with %d amplitudes", len(r.Star.Periods), len(r.Star.Amplitudes))
	}
	if ro := r.Rotation; ro != nil {
		if !(ro.Period > 0) || !(ro.KnotSpacing > 0) || ro.Harmonics < 1 || len(ro.Amplitudes) != ro.Harmonics {
			return fmt.Errorf("rotation model of period %v d, knots %v d apart, with %d harmonics and %d amplitudes", ro.Period, ro.KnotSpacing, ro.Harmonics, len(ro.Amplitudes))
		}
	}
	if err := r.Curve.Validate(); err != nil {
		return err
	}
	for i, t := range r.Trends {
		if len(t.Trend) != len(t.Marks) {
			return fmt.Errorf("segment %d: %d trend values for %d marks", i+1, len(t.Trend), len(t.Marks))
		}
		if t.Pieces < 0 || t.Pieces > len(t.Marks) {
			return fmt.Errorf("segment %d: %d pieces for %d points", i+1, t.Pieces, len(t.Marks))
		}
		kept := 0
		for _, m := range t.Marks {
			if m >= robust.NumMarks {
				return errors.New("invalid point mark")
			}
			if m == robust.Kept || m == robust.InTransit {
				kept++
			}
		}
		if kept != r.Curve.Segments[i].Len() {
			return fmt.Errorf("segment %d: %d points kept but %d in the light curve", i+1, kept, r.Curve.Segments[i].Len())
		}
	}
	return nil
}

// Figures lists the counts, the scatter of the result and the scales used.
func (r *Result) Figures() []steps.Figure {
	in, pieces := 0, 0
	for _, t := range r.Trends {
		in += len(t.Marks)
		pieces += t.Pieces
	}
	figs := []steps.Figure{
		{Name: "points.in", Value: float64(in), Doc: "points read from the input light curve"},
		{Name: "points.out", Value: float64(r.Curve.Len()), Doc: "points in the detrended light curve"},
		{Name: "points.flares", Value: float64(r.count(robust.Flare)), Doc: "points removed as flares (above the trend by more than flare_sigma)"},
		{Name: "points.in_transit", Value: float64(r.count(robust.InTransit)), Doc: "points in masked transits: kept, but left out of the trend"},
		{Name: "points.without_trend", Value: float64(r.count(robust.NoTrend)), Doc: "points removed for too few neighbours to estimate a trend"},
		{Name: "points.non_finite", Value: float64(r.count(robust.NonFinite)), Doc: "points removed for a flux or error that is not finite"},
	}
	// The scatter of the detrended flux out of masked transits, normal-equivalent.
	var rest []float64
	for i, t := range r.Trends {
		k := 0
		for _, m := range t.Marks {
			switch m {
			case robust.Kept:
				rest = append(rest, r.Curve.Segments[i].Flux[k])
				k++
			case robust.InTransit:
				k++
			}
		}
	}
	if len(rest) > 0 {
		figs = append(figs, steps.Figure{Name: "scatter", Value: robust.RobustSigma(rest) * 1e6, Unit: "ppm",
			Doc: "robust scatter (1.4826 × MAD) of the detrended flux outside masked transits"})
	}
	scale := steps.Figure{Name: "span", Value: r.Scale, Unit: "d", Doc: "full width of the sliding window"}
	if r.Estimator == estSpline {
		scale = steps.Figure{Name: "knot_spacing", Value: r.Scale, Unit: "d", Doc: "spacing of the spline's knots"}
	}
	figs = append(figs, scale,
		steps.Figure{Name: "split_at_gap", Value: r.SplitAtGap, Unit: "d", Doc: "gaps longer than this split the light curve"},
		steps.Figure{Name: "pieces", Value: float64(pieces), Doc: "pieces detrended on their own after splitting at gaps"},
	)
	if ro := r.Rotation; ro != nil {
		figs = append(figs,
			steps.Figure{Name: "rotation.period", Value: ro.Period, Unit: "d", Doc: "rotation period of the model divided out before the window"},
			steps.Figure{Name: "rotation.harmonics", Value: float64(ro.Harmonics), Doc: "harmonics of the rotation period in the model"},
			steps.Figure{Name: "rotation.peak_to_peak", Value: ro.PeakToPeak * 1e6, Unit: "ppm", Doc: "full range of the rotation model's modulation (median over its knot intervals)"},
			steps.Figure{Name: "rotation.knot_spacing", Value: ro.KnotSpacing, Unit: "d", Doc: "time over which the model's coefficients change (spacing of their knots)"},
			steps.Figure{Name: "rotation.explained", Value: ro.Explained, Doc: "share of the star's variance above the white noise the model removes"},
		)
		if ro.Excess > 0 {
			figs = append(figs, steps.Figure{Name: "rotation.excess", Value: ro.Excess,
				Doc: "scatter of the detrended light curve over 2 hours against what its white noise gives (1: white noise only)"})
		}
	}
	return figs
}
