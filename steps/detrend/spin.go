package detrend

import (
	"fmt"
	"math"
	"strings"

	"dipline/steps/detrend/robust"
	"dipline/steps/detrend/rotation"
	"dipline/steps/internal/parallel"
)

// The star's rotation, divided out before the window when it turns too fast for a window
// that keeps a transit: see rotation (the model) and spinOf (the decision).

// The rotation settings written in a workflow.
const (
	rotationAuto = "auto"
	rotationOn   = "on"
	rotationOff  = "off"
)

// Constants of the decision and of the model, each with its reason.
const (
	// longestTransit is the longest transit the decision keeps in mind, unless a masked
	// one is longer: the 1–3 hours of a small planet on an orbit of a few days around the
	// small stars dipline is for (see spanReference), at its long end.
	longestTransit = 3.0 / 24
	// keptShare is the share of that transit's depth a window must keep for the decision:
	// the local quadratic keeps half of a transit of duration D in a window about 6·D wide
	// (robust.KeepingSpan). A window narrow enough to leave less halves the transits'
	// signal to noise, which costs a search more than the rotation model does: the model
	// takes in about the transits' duty cycle of their depth where the search's first
	// pass cannot leave them out (a few per cent; TestFastRotatorKeepsATransit).
	keptShare = 0.5
	// widestKnots and finestKnots bound the time over which the model lets the spots
	// change, in rotations: the knots start widestKnots turns apart and are halved while
	// finer ones fit significantly better (rotation.Fit), down to finestKnots. At 4 turns
	// a coefficient is still fitted from several turns, so a transit, which falls at a
	// rotation phase in one of them, moves it little; at 16 a month of data holds a few
	// knot intervals of a rotator of a day or less, and spots on such stars commonly live
	// for weeks (common practice).
	widestKnots = 16.0
	finestKnots = 4.0
	// leastKnotSpacing keeps the model's own slow level (its constant term, a cubic spline)
	// from bending into a transit: its knots are at least eight of the longest transits
	// apart, a day.
	leastKnotSpacing = 8 * longestTransit
	// dipBox is the sliding box by whose mean residual the model's fit finds the stretches
	// to leave out, half the reference transit: a 2-hour transit fills it, a 35-minute one
	// still shows at a third of its depth.
	dipBox = spanReference / 2
	// coherentShare is the least share of the star's variance above the white noise a
	// periodic model must remove for auto to use it: below it the star is not periodic
	// enough (spots changing within a few turns, red noise), and dividing by the model
	// would leave most of the variability to the window anyway.
	coherentShare = 0.9
	// spotLowShare is the least share of the rotation phase the modulation may spend in
	// its lower half (below half-way between its extremes), and 1 − spotLowShare the most,
	// for auto to take it for spots: one dark spot seen half the time spends 1/3 there
	// (|longitude| < 60° of a clipped cosine), one seen a third of the time 0.23, one seen
	// two thirds of the time 0.42, several spread more evenly about 1/2; a transit or an
	// eclipse spends about its duty cycle, and a periodic model would swallow it, and
	// folded flares, narrow bursts, nearly all of it.
	spotLowShare = 0.2
	// wellAbove is the ratio of the detrended light curve's scatter on the reference
	// transit's time scale to what its white noise gives, above which the run says the
	// star's variability has not all been removed: the estimate of that ratio on a month
	// of data carries about 7 % (the MAD of ~300 binned values, common practice), so a
	// quarter more is well beyond it.
	wellAbove = 1.25
)

// spun is a light curve with the star's rotation divided out.
type spun struct {
	series []robust.Series // the input series, flux and errors divided by factor
	factor [][]float64     // per series, the rotation model at every point (1 where none)
	info   Rotation
	doubt  string // a caution for the result: a forced model not shaped like spots
	// flares and flarePoints are the flares counted and the points set aside as lying in
	// flares above the model (rotation.Model), points the points fitted.
	flares, flarePoints, points int
}

// spinOf decides whether the star's rotation is to be divided out of series before the
// window, fits it when it is, and says why in notes. dur is the longest masked transit (0
// without a mask). With rotation = "auto" the model is used when the light curve has a
// period (FindPeriod) and the star's periods it shows leave, in the narrowest window that
// keeps half of the longest transit (the longer of longestTransit and dur), more than the
// white noise over that transit, and when the fitted model is coherent (it removes at least
// coherentShare of the star's variance above the white noise) and shaped like spots (at
// least spotLowShare of the phase in its lower half). With "on" it is used whenever it can
// be fitted; with "off", or when it is not used, spinOf returns nil.
func spinOf(cfg Config, series []robust.Series, gap, dur float64, par parallel.Func, notes *[]string) *spun {
	mode := cfg.rotation()
	if mode == rotationOff {
		return nil
	}
	say := func(format string, a ...any) { *notes = append(*notes, "rotation: "+fmt.Sprintf(format, a...)) }
	pieces, at := rotationPieces(series, gap)
	noise, ok := rotation.WhiteNoise(pieces)
	stated := medianError(series)
	if !ok && !(stated > 0) {
		say("not modelled: too few evenly spaced points to measure the white noise")
		return nil
	}
	noise = max(noise, stated)
	longest := max(longestTransit, dur)
	cadence := robust.MedianCadence(series)
	perTransit := noise * math.Sqrt(cadence/longest)

	period := 0.0
	if cfg.RotationPeriod != nil {
		period = *cfg.RotationPeriod
	}
	if mode == rotationAuto {
		rot, ok := tooFastToFollow(cfg, pieces, longest, perTransit, say)
		if !ok {
			return nil
		}
		if period == 0 {
			period = rot
		}
	}
	if period == 0 {
		rot, _, ok, err := rotation.FindPeriod(pieces)
		if err != nil || !ok {
			say("not modelled: rotation is \"on\" but no period stands out in the light curve; write rotation_period")
			return nil
		}
		period = rot
	}
	knots, finest := max(widestKnots*period, leastKnotSpacing), max(finestKnots*period, leastKnotSpacing)
	// The dip box holds at least three points (a 30-minute cadence widens it to 1.5 h).
	box := max(dipBox, 3*cadence)
	m, err := rotation.Fit(pieces, rotation.Options{Period: period, KnotSpacing: knots, MinKnotSpacing: finest,
		Halvings: int(math.Round(math.Log2(widestKnots / finestKnots))), DipBox: box, Noise: noise}, par)
	if err != nil {
		say("not modelled: %v", err)
		return nil
	}
	if m.Harmonics == 0 {
		say("not modelled: no harmonic of %.4g d passes its test (false-alarm probability under %g): the light holds nothing periodic at that period", period, rotation.DefaultFalseAlarm)
		return nil
	}
	finer := "the finest tried"
	if !math.IsNaN(m.FinerAlarm) {
		finer = fmt.Sprintf("knots half as far apart did not fit significantly better, false-alarm probability %.2g", m.FinerAlarm)
	}
	what := fmt.Sprintf("a series of %d harmonic(s) of %.5g d in the rotation phase (of up to %d, each kept when white noise would pass its test with a probability under %g), with coefficients varying smoothly in time over knots %.3g d apart (%.3g rotations; %s); peak to peak %.3g %%, the fundamental's semi-amplitude %.3g %%",
		m.Harmonics, m.Period, rotation.DefaultMaxHarmonics, rotation.DefaultFalseAlarm, m.KnotSpacing, m.KnotSpacing/m.Period, finer, 100*m.PeakToPeak, 100*m.Amplitudes[0])
	removes := fmt.Sprintf("it removes %.1f %% of the star's variance above the white noise (robust scatter %.0f ppm about the level alone, %.0f ppm about the model, white noise %.0f ppm per point)",
		100*m.Explained, m.Before*1e6, m.Residual*1e6, noise*1e6)
	shape := fmt.Sprintf("it spends %.0f %% of the phase in its lower half", 100*m.LowShare)
	if mode == rotationAuto {
		switch {
		case m.LowShare < spotLowShare:
			say("not modelled: %s; %s; %s, under the %.0f %% spots give: it dips narrowly, as a transit or an eclipse does, which a rotation model would remove; write rotation = \"on\" to model it anyway", what, removes, shape, 100*spotLowShare)
			return nil
		case m.LowShare > 1-spotLowShare:
			say("not modelled: %s; %s; %s, over the %.0f %% spots give: it rises in narrow bursts, as folded flares do, which are no rotation; write rotation = \"on\" to model it anyway", what, removes, shape, 100*(1-spotLowShare))
			return nil
		case m.Explained < coherentShare:
			say("not modelled: %s; %s; %s, under the %.0f %% a periodic model must remove to be used: the star's variability is not periodic enough", what, shape, removes, 100*coherentShare)
			return nil
		}
	}
	dips := ""
	if m.Dips > 0 {
		dips = fmt.Sprintf("; %d points in %d stretches lying below it (transits, eclipses) were left out of its fit", m.Dips, m.DipStretches)
	}
	if m.FlarePoints > 0 {
		dips += fmt.Sprintf("; %d points rising above it, in and just after %d flare(s) (%g robust standard deviations above it or more, at their peak %g or more), were set aside before its harmonics were chosen and fitted",
			m.FlarePoints, m.Flares, rotation.FlareSigma, rotation.FlarePeak)
	}
	skipped := ""
	if n := countFalse(m.Fitted); n > 0 {
		skipped = fmt.Sprintf("; %d piece(s) of the light curve spanning fewer than %g rotations were left to the window alone", n, rotation.MinCycles)
	}
	doubt := ""
	if mode == rotationOn && (m.LowShare < spotLowShare || m.LowShare > 1-spotLowShare) {
		doubt = fmt.Sprintf("The rotation model divided out at %.5g d (rotation = \"on\") is not shaped like spots: it spends %.0f %% of the phase in its lower half, where spots give %.0f–%.0f %%. A narrow dip at that period is more likely a transit or an eclipse, which the model has removed from the light curve.",
			m.Period, 100*m.LowShare, 100*spotLowShare, 100*(1-spotLowShare))
	}
	say("modelled and divided out before the window: %s; %s, and %s%s%s", what, removes, strings.TrimPrefix(shape, "it "), dips, skipped)

	return newSpun(m, series, at, noise, doubt)
}

// tooFastToFollow finds the light curve's strongest period and tells whether the star's
// periods leave, in the narrowest window that keeps half of a transit of the longest
// duration, more than perTransit (the white noise over such a transit): only then is a
// rotation model worth its cost. It says what it found and weighed.
func tooFastToFollow(cfg Config, pieces []rotation.Series, longest, perTransit float64, say func(string, ...any)) (float64, bool) {
	rot, found, ok, err := rotation.FindPeriod(pieces)
	switch {
	case err != nil:
		say("not modelled: %v", err)
		return 0, false
	case !ok:
		say("not modelled: no period stands out in the light curve")
		return 0, false
	}
	deg := followDegree(cfg)
	w := robust.KeepingSpan(longest, keptShare, deg)
	var left float64
	var shown []string
	for _, p := range found {
		r := p.Amplitude * robust.Unfollowed(w, p.Period, deg)
		left += r * r / 2
		shown = append(shown, fmt.Sprintf("%.4g d (semi-amplitude %.3g %%)", p.Period, 100*p.Amplitude))
	}
	left = math.Sqrt(left)
	if !(left > perTransit) {
		say("not modelled: the light curve's periods, %s, are slow enough for a window to follow: the %.3g d window that keeps half of a %.3g-hour transit leaves %.0f ppm of them, under the %.0f ppm of white noise over such a transit",
			strings.Join(shown, ", "), w, longest*24, left*1e6, perTransit*1e6)
		return 0, false
	}
	say("the light curve's periods, %s, are too fast for a window to follow while keeping a transit: the %.3g d window that keeps half of a %.3g-hour transit leaves %.0f ppm of them, against %.0f ppm of white noise over such a transit",
		strings.Join(shown, ", "), w, longest*24, left*1e6, perTransit*1e6)
	return rot, true
}

// newSpun divides each series by the fitted model, where it was fitted, keeping the model
// to restore the star's whole light in the trend.
func newSpun(m rotation.Model, series []robust.Series, at []piecePlace, noise float64, doubt string) *spun {
	sp := &spun{doubt: doubt, flares: m.Flares, flarePoints: m.FlarePoints, points: m.Points, series: make([]robust.Series, len(series)), factor: make([][]float64, len(series)),
		info: Rotation{Period: m.Period, Harmonics: m.Harmonics, KnotSpacing: m.KnotSpacing, Amplitudes: m.Amplitudes,
			PeakToPeak: m.PeakToPeak, Explained: m.Explained, Noise: noise}}
	for i, s := range series {
		sp.factor[i] = make([]float64, len(s.Time))
		for j := range sp.factor[i] {
			sp.factor[i][j] = 1
		}
	}
	for p, pc := range at {
		if !m.Fitted[p] {
			continue
		}
		for j, v := range m.Values[p] {
			if !(v > 0) || math.IsInf(v, 0) {
				v = math.NaN() // a model that is not positive: the point gets no trend
			}
			sp.factor[pc.s][pc.from+j] = v
		}
	}
	for i, s := range series {
		d := s
		d.Flux, d.Err = make([]float64, len(s.Flux)), nil
		for j := range s.Flux {
			d.Flux[j] = s.Flux[j] / sp.factor[i][j]
		}
		if s.Err != nil {
			d.Err = make([]float64, len(s.Err))
			for j := range s.Err {
				d.Err[j] = s.Err[j] / sp.factor[i][j]
			}
		}
		sp.series[i] = d
	}
	return sp
}

// restore multiplies the filter's trends by the rotation model, so that the trend is the
// star's whole light, and gives a point whose product is not positive no trend.
func (sp *spun) restore(out []robust.Result) {
	for i := range out {
		for j, f := range sp.factor[i] {
			tr := &out[i].Trend[j]
			*tr *= f
			if m := &out[i].Marks[j]; !(*tr > 0) || math.IsInf(*tr, 0) {
				*tr = math.NaN()
				if *m == robust.Kept || *m == robust.InTransit {
					*m = robust.NoTrend
				}
			}
		}
	}
}

// tell keeps the model's description in the result, measures the scatter the detrended
// light curve is left with and says in notes, and in the result's caution when it is well
// above the white noise, what it found.
func (sp *spun) tell(res *Result, notes *[]string) {
	info := sp.info
	info.Excess = residualExcess(res, info.Noise)
	res.Rotation = &info
	if sp.doubt != "" {
		if res.Caution != "" {
			res.Caution += " "
		}
		res.Caution += sp.doubt
	}
	if info.Excess == 0 {
		return
	}
	msg := fmt.Sprintf("rotation: after the model and the window, the detrended light curve scatters %.2f times what its white noise gives over %.3g hours", info.Excess, spanReference*24)
	if info.Excess > wellAbove {
		why := "spots changing within a few rotations, or a second period"
		if sp.flaring() {
			why = fmt.Sprintf("most likely its flares: %d flares and %d points were set aside from the rotation model's fit, and the smaller flares and the tails of the larger ones remain; or spots changing within a few rotations, or a second period", sp.flares, sp.flarePoints)
		}
		c := fmt.Sprintf("the light curve still varies well above its white noise after the star's rotation was divided out: over %.3g hours it scatters %.2f times what the white noise gives. The star changes in ways the rotation model does not follow (%s), so a search on it meets more false alarms than its threshold allows for, and dips near the threshold may be the star's.",
			spanReference*24, info.Excess, why)
		if res.Caution != "" {
			res.Caution += " "
		}
		res.Caution += strings.ToUpper(c[:1]) + c[1:]
		msg += "; well above it"
	}
	*notes = append(*notes, msg)
}

// flaringShare is the share of the fitted points set aside as in flares above which, or
// flaringCount the flares, the run takes flares for the likely cause of an excess scatter:
// white noise puts 0.13 % of points 3 σ above the model (with their tails a few tenths of
// a per cent) and no point 5 σ above it (common practice); a flare every two days over a
// month is a flaring star.
const (
	flaringShare = 0.01
	flaringCount = 10
)

// flaring says whether many points were set aside as flares.
func (sp *spun) flaring() bool {
	return sp.flares >= flaringCount || sp.points > 0 && float64(sp.flarePoints) >= flaringShare*float64(sp.points+sp.flarePoints)
}

// followDegree is the degree of the local polynomial whose window the decision weighs: the
// configured one for local-polynomial, a location's (0) for the biweight and the running
// median, and a quadratic for the spline, whose cubic pieces follow a star about as one.
func followDegree(cfg Config) int {
	switch cfg.Estimator {
	case estLocal:
		return cfg.Degree
	case estBiweight, estMedian:
		return 0
	}
	return 2
}

// piecePlace is where a rotation piece lies in the series: series s, points from … .
type piecePlace struct{ s, from int }

// rotationPieces cuts the series at gaps longer than gap, as the filters do, into the
// rotation model's stretches (masked points left out of its fit).
func rotationPieces(series []robust.Series, gap float64) ([]rotation.Series, []piecePlace) {
	var out []rotation.Series
	var at []piecePlace
	for i, s := range series {
		start := 0
		for j := 1; j <= len(s.Time); j++ {
			if j < len(s.Time) && s.Time[j]-s.Time[j-1] <= gap {
				continue
			}
			p := rotation.Series{Time: s.Time[start:j], Flux: s.Flux[start:j]}
			if s.Err != nil {
				p.Err = s.Err[start:j]
			}
			if s.Mask != nil {
				p.Use = make([]bool, j-start)
				for k := range p.Use {
					p.Use[k] = !s.Mask[start+k]
				}
			}
			out = append(out, p)
			at = append(at, piecePlace{i, start})
			start = j
		}
	}
	return out, at
}

// medianError is the median stated error of the unmasked points relative to the median
// flux, or 0 without errors.
func medianError(series []robust.Series) float64 {
	var e, f []float64
	for _, s := range series {
		for j := range s.Time {
			if s.Mask != nil && s.Mask[j] || !finite(s.Flux[j]) {
				continue
			}
			f = append(f, s.Flux[j])
			if s.Err != nil && s.Err[j] > 0 && finite(s.Err[j]) {
				e = append(e, s.Err[j])
			}
		}
	}
	if len(e) == 0 || len(f) == 0 {
		return 0
	}
	me, mf := robust.MedianOf(e), robust.MedianOf(f)
	if !(mf > 0) {
		return 0
	}
	return me / mf
}

// residualExcess is the scatter of the detrended flux of the kept (unmasked) points of r
// in bins of the reference transit duration within each gap-free piece, against the
// scatter white noise of noise per point gives such bins: the bins' robust scatter times
// √(points per bin), over noise. 0 when there are fewer than 10 full bins.
func residualExcess(r *Result, noise float64) float64 {
	var z []float64
	for i, tr := range r.Trends {
		seg := r.Curve.Segments[i]
		k := 0
		var sum float64
		var n int
		var start, last float64 = math.NaN(), math.NaN()
		var counts []int
		var means []float64
		flush := func() {
			if n > 0 {
				counts, means = append(counts, n), append(means, sum/float64(n))
			}
			sum, n = 0, 0
		}
		for _, m := range tr.Marks {
			if m != robust.Kept && m != robust.InTransit {
				continue
			}
			t, f := seg.Time[k], seg.Flux[k]
			k++
			if m != robust.Kept {
				continue
			}
			if !math.IsNaN(last) && t-last > r.SplitAtGap || !math.IsNaN(start) && t-start >= spanReference {
				flush()
				start = math.NaN()
			}
			if math.IsNaN(start) {
				start = t
			}
			sum += f
			n++
			last = t
		}
		flush()
		full := 0
		for _, c := range counts {
			full = max(full, c)
		}
		for b, c := range counts {
			if 2*c >= full {
				z = append(z, (means[b]-1)*math.Sqrt(float64(c)))
			}
		}
	}
	if len(z) < 10 || !(noise > 0) {
		return 0
	}
	return robust.RobustSigma(z) / noise
}

func countFalse(b []bool) int {
	n := 0
	for _, x := range b {
		if !x {
			n++
		}
	}
	return n
}

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }
