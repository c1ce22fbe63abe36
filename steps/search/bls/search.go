package bls

import (
	"fmt"
	"math"
	"sync"

	"dipline/steps/internal/parallel"
)

// Options configure a search. Times are in days, the density in g/cm³.
type Options struct {
	Density              float64 // mean stellar density; sets the grid spacing and the durations
	PeriodMin, PeriodMax float64 // trial periods
	Oversampling         float64 // frequencies per drift of one duration over the span (Ofir 2014)
	MaxSignals           int     // the search stops after this many accepted signals
	SDEThreshold         float64 // a peak is accepted when its SDE reaches this; 0 for DefaultThreshold of the grid
	MaskFactor           float64 // points within MaskFactor·duration/2 of a found transit are left out of later passes
	Method               Method  // how the periodograms are computed (MethodAuto: the cheaper)
	// MinSNR is the signal-to-noise floor: a peak that reaches the SDE threshold and is
	// refined to a box whose SNR (Strength.SNR) is below it is set aside, not taken for a
	// signal, and the search stops there as for any refused peak; 0 for no floor.
	MinSNR float64
}

// Result is the outcome of a search: the grid, then one pass per periodogram computed.
type Result struct {
	Grid    Grid
	Cadence float64 // median spacing of the points, days
	// Method is the method that ran and Why says why, in a sentence for the user.
	Method Method
	Why    string
	// Threshold is the SDE a peak had to reach: the caller's, or DefaultThreshold's for the
	// grid.
	Threshold float64
	Passes    []Pass
	// Refused says, when the last pass's peak reached the threshold and yet gave no signal,
	// why, in words that follow "the peak (P d, SDE s)"; empty otherwise (the last pass's
	// Pass.Refused).
	Refused string
	// SetAside is the box the last pass's peak was refined to when the SNR floor
	// (Options.MinSNR) turned it down; nil otherwise.
	SetAside *Detection
}

// Pass is one periodogram over the points left after masking the signals found before it,
// and what became of its highest peak.
type Pass struct {
	// Power is, per grid frequency, the square root of the largest χ² improvement of a dip
	// box over a constant, maximised over box durations and phases.
	Power []float64
	// Duration is the length of that best box in days.
	Duration []float64
	// Peak is the index of the highest power above the spectrum's slow trend; SDE its
	// signal detection efficiency against the detrended spectrum (see detrendedSDE).
	Peak int
	SDE  float64

	// Found is the signal the peak gave, or nil when it stayed below the SDE threshold or
	// could not be refined.
	Found *Detection
	// Refused says, when the peak reached the threshold and yet gave no signal, why, in
	// words that follow "the peak (P d, SDE s)"; empty otherwise.
	Refused string
}

// Detection is one accepted periodic dip, grouped as when it happens (Timing), what it
// looks like (Shape), how strongly the data hold it (Strength), how it fares against half
// and twice its period (Rivals) and how it is shared among its transits (Spread).
type Detection struct {
	Timing   Timing
	Shape    Shape
	Strength Strength
	Rivals   Rivals
	Spread   Spread
}

// Timing is the linear ephemeris with one-sigma errors from the Δχ² = 1 region of the box
// model.
type Timing struct {
	Period, PeriodSigma float64 // days
	Epoch, EpochSigma   float64 // a mid-transit near the middle of the data, in the series' time
}

// Shape is the box: its length and the flux drop inside it.
type Shape struct {
	Duration, DurationSigma float64 // days, edge to edge of the best box
	Depth, DepthSigma       float64 // fractional, positive for a dip
	InTransitPoints         int
}

// Strength says how far the signal stands out.
type Strength struct {
	SDE         float64 // of the pass's periodogram peak, against the detrended spectrum
	SNR         float64 // depth/σ_T × sqrt(transits with data); see measureDip
	DeltaChi2   float64 // χ² improvement of the refined box over a constant
	BinnedNoise float64 // σ_T, out-of-transit scatter averaged over one duration (0 if too few bins)
	Transits    int     // transits with data
}

// minPoints is the fewest points a pass searches.
const minPoints = 20

// Search runs the iterative box search over the series: a periodogram on the grid of
// Ofir (2014), its highest peak's SDE (against the spectrum's slow trend) against the
// threshold, refinement of an accepted peak, masking of its transits, and again, until a
// peak falls below the threshold or gives no signal (it cannot be refined, its box is
// less than three errors deep, or its SNR is below MinSNR), or MaxSignals signals are
// found. The periodograms are
// computed by the fast fold or by fold-and-scan (choose). par spreads fixed blocks of work
// over workers (nil: serial); progress, if not nil, is called as blocks end with the pass
// number (from 0) and how far the pass is, done of progressUnits.
func Search(s Series, o Options, par parallel.Func, progress func(pass, done, total int)) (*Result, error) {
	if err := s.Check(); err != nil {
		return nil, err
	}
	if len(s.Time) < minPoints {
		return nil, fmt.Errorf("%d points are too few to search (at least %d)", len(s.Time), minPoints)
	}
	switch {
	case o.MaxSignals < 1:
		return nil, fmt.Errorf("max signals %d is below 1", o.MaxSignals)
	case !(o.SDEThreshold >= 0):
		return nil, fmt.Errorf("SDE threshold %g is negative", o.SDEThreshold)
	case !(o.MaskFactor >= 1):
		return nil, fmt.Errorf("mask factor %g is below 1", o.MaskFactor)
	case !(o.MinSNR >= 0) || math.IsInf(o.MinSNR, 0):
		return nil, fmt.Errorf("SNR floor %g is not a non-negative number", o.MinSNR)
	}
	res := &Result{Cadence: s.Cadence()}
	baseline := s.Time[len(s.Time)-1] - s.Time[0]
	if o.PeriodMax > baseline {
		return nil, fmt.Errorf("the longest period %g d exceeds the data span %g d", o.PeriodMax, baseline)
	}
	if a := ScaledAxis(o.PeriodMin, o.Density); a <= 1 {
		return nil, fmt.Errorf("the shortest period %g d puts the orbit inside the star (a/R* = %.3g)", o.PeriodMin, a)
	}
	g, err := NewGrid(o.Density, baseline, o.PeriodMin, o.PeriodMax, o.Oversampling)
	if err != nil {
		return nil, err
	}
	res.Grid = g
	res.Threshold = o.SDEThreshold
	if res.Threshold == 0 {
		res.Threshold = DefaultThreshold(g.N)
	}
	keep := make([]bool, len(s.Time))
	for i := range keep {
		keep[i] = true
	}
	for pass := 0; ; pass++ {
		p := prepare(s, keep, res.Cadence)
		if len(p.t) < minPoints {
			break
		}
		if pass == 0 {
			res.Method, res.Why = choose(o.Method, p, g)
		}
		var tick func()
		if progress != nil {
			tick = passProgress(pass, p, g, res.Method, progress)
		}
		pr := wholePass(res.Method, p, g, par, tick)
		sp, score, peak := pr.sp, pr.score, pr.peak
		ps := Pass{Power: sp.power, Duration: sp.duration, Peak: peak, SDE: score}
		if score >= res.Threshold && sp.power[peak] > 0 {
			ps.Found, ps.Refused = detect(p, g, sp, peak, score, o.MaskFactor)
			if d := ps.Found; d != nil && o.MinSNR > 0 && !(d.Strength.SNR >= o.MinSNR) {
				ps.Found, ps.Refused = nil, lowSNR(d, o.MinSNR)
				res.SetAside = d
			}
			if d := ps.Found; d != nil {
				if k := samePeriod(res.Passes, d, baseline); k >= 0 {
					ps.Found, ps.Refused = nil, samePeriodNote(d, k, res.Passes[k].Found, baseline)
				}
			}
			res.Refused = ps.Refused
		}
		res.Passes = append(res.Passes, ps)
		if ps.Found == nil || pass+1 >= o.MaxSignals {
			break
		}
		sig := ps.Found.Timing
		half := o.MaskFactor * ps.Found.Shape.Duration / 2
		for i, t := range s.Time {
			x := (t - sig.Epoch) / sig.Period
			if math.Abs(x-math.Round(x))*sig.Period <= half {
				keep[i] = false
			}
		}
	}
	return res, nil
}

// progressUnits is the count each pass's progress runs to.
const progressUnits = 1000

// passProgress returns the tick a pass's blocks call as they end, reporting the pass's
// progress in progressUnits.
func passProgress(pass int, p *prepared, g Grid, m Method, progress func(pass, done, total int)) func() {
	var mu sync.Mutex // blocks end on several workers
	done := 0
	total := (g.N + freqBlock - 1) / freqBlock
	if m != MethodDirect {
		total = fastBlockCount(p, g)
	}
	return func() {
		mu.Lock()
		defer mu.Unlock()
		done++
		progress(pass, min(progressUnits*done/total, progressUnits), progressUnits)
	}
}

// minDepthSigmas is the three-sigma depth rule: a refined box is reported as a signal only
// when its depth is at least three times its error. A depth within three errors of zero
// does not show a dip at all (three standard errors, a one-sided chance of 0.13 % for one
// box measured alone; common practice). The SDE threshold guards the search as a whole
// against noise, but the SDE measures a peak against the rest of its spectrum, and on a
// spectrum with little power anywhere (a light curve whose remaining variability the
// detrend removed) a peak of small χ² improvement can reach it.
const minDepthSigmas = 3

// detect refines the peak and measures the dip. It returns nil, and why in words that
// follow "the peak (P d, SDE s)", when the refinement settles on no period near the peak
// or the box's depth fails the three-sigma depth rule (minDepthSigmas).
func detect(p *prepared, g Grid, sp spectrum, peak int, score, mask float64) (*Detection, string) {
	r, why := refine(p, g, peak, sp.centre[peak], sp.duration[peak])
	if why != "" {
		return nil, why
	}
	m := measureDip(p, r.freq, r.centre, r.dur, mask)
	if !(m.depth > 0) {
		return nil, noDip
	}
	if !(m.depth >= minDepthSigmas*m.depthSigma) {
		return nil, fmt.Sprintf("was refined to a box at %.4g d whose depth, %.3g ± %.2g ppm, is less than %d times its error, so it is not taken for a signal",
			1/r.freq, m.depth*1e6, m.depthSigma*1e6, minDepthSigmas)
	}
	per := 1 / r.freq
	rivals, spread := checkDetection(p, r.freq, r.centre, r.dur)
	return &Detection{
		Timing: Timing{
			Period: per, PeriodSigma: r.freqSigma * per * per,
			Epoch: p.t0 + r.centre, EpochSigma: r.centreSigma,
		},
		Shape: Shape{
			Duration: r.dur, DurationSigma: r.durSigma,
			Depth: m.depth, DepthSigma: m.depthSigma, InTransitPoints: m.inPoints,
		},
		Strength: Strength{
			SDE: score, SNR: m.snr, DeltaChi2: r.stat * p.sumW,
			BinnedNoise: m.binnedNoise, Transits: m.transits,
		},
		Rivals: rivals, Spread: spread,
	}, ""
}

// lowSNR says why a refined box d below the SNR floor is not a signal, in words that follow
// "the peak (P d, SDE s)". The search stops at such a peak rather than masking it and
// going on: it is the strongest peak left after the signals before it, and when it is no
// credible signal the pass has found nothing; masking it would cut data around transits
// that are not there (at a short period a large share of the points), and the weaker
// peaks after it would be tried against the same noise that made it.
func lowSNR(d *Detection, floor float64) string {
	return fmt.Sprintf("was refined to a box at %.4g d, %.3g ppm deep, whose SNR, %.2f, is below the floor of %g, so it is set aside, not taken for a signal",
		d.Timing.Period, d.Shape.Depth*1e6, d.Strength.SNR, floor)
}

// samePeriod is the pass whose signal has d's period, within the width of a periodogram
// peak, P·D/T (D the box's length, T the data's span: a period off by that much slides
// the transits by one duration over the data), or half its period with d's boxes half a
// period from its transits, so that every other one falls in its masked transits and the
// rest repeat at its period (an eclipsing binary's secondary eclipse comes back so); −1
// when none.
func samePeriod(passes []Pass, d *Detection, span float64) int {
	width := d.Timing.Period * d.Shape.Duration / span
	for k, p := range passes {
		if p.Found == nil {
			continue
		}
		prev := p.Found.Timing
		if math.Abs(prev.Period-d.Timing.Period) <= width {
			return k
		}
		if math.Abs(prev.Period-2*d.Timing.Period) <= 2*width && math.Abs(phaseFrom(d, prev)-0.5) < halfPhase {
			return k
		}
	}
	return -1
}

// halfPhase is how near half a period from an earlier signal's transits a box must lie to
// be read as half a period from them: a twentieth of the period.
const halfPhase = 0.05

// phaseFrom is the phase of d's transits after those of the earlier signal prev, from 0 to 1.
func phaseFrom(d *Detection, prev Timing) float64 {
	phase := math.Mod((d.Timing.Epoch-prev.Epoch)/prev.Period, 1)
	if phase < 0 {
		phase++
	}
	return phase
}

// samePeriodNote says why a box at the period of an earlier signal k is not another
// signal: two planets do not share an orbital period, so it lies where a binary's
// secondary eclipse would when it is half a period from k's transits, or else it is what
// k's transits or the star's own variability at that period left in the light curve.
func samePeriodNote(d *Detection, k int, prev *Detection, span float64) string {
	phase := phaseFrom(d, prev.Timing)
	at := fmt.Sprintf("at the period of signal %d (%.6g d, within a peak's width P·D/T = %.2g d)", k+1, prev.Timing.Period, d.Timing.Period*d.Shape.Duration/span)
	if math.Abs(prev.Timing.Period-d.Timing.Period) > d.Timing.Period*d.Shape.Duration/span {
		at = fmt.Sprintf("at half the period of signal %d (%.6g d), every other box falling in its masked transits, so that the rest repeat at its period", k+1, prev.Timing.Period)
	}
	what := "what signal %d's transits, or the star's own variability at that period, left behind"
	if math.Abs(phase-0.5) < halfPhase {
		what = "half a period from signal %d's transits, where an eclipsing binary's secondary eclipse would lie (a spotted star's variability at that period can do the same)"
	}
	return fmt.Sprintf("was refined to a box at %.6g d, %.0f ppm deep, %s and %.2f of a period from its transits; two planets do not share a period, so it is not taken for another signal: it is "+what+". The search stopped there",
		d.Timing.Period, d.Shape.Depth*1e6, at, phase, k+1)
}

// DefaultThreshold returns the SDE a periodogram peak must reach to count as a signal on a
// grid of n frequencies, when the caller gives none. The highest SDE of a search over white
// noise is the largest of more draws on a bigger grid, so a fixed threshold lets more noise
// through on longer light curves (7.9 let through 5.4 % of one-year light curves around a
// red dwarf, 90,787 frequencies). For the largest of n Gaussian draws the typical maximum
// grows as √(2 ln n) (common practice), and the threshold follows that:
//
//	T(n) = thresholdBase + thresholdSlope·√(2 ln n),
//
// its slope fitted to the 99th percentiles of the highest SDE measured on white noise
// (the fast fold, the default period range, oversampling 3) from 2456 to 381,143
// frequencies (a 27-day to a four-year light curve), and its base raised until every
// measured percentile lies at or under it, so that noise reaches it on at most about 1 %
// of stars at every grid size measured (TestCalibrateSDEThreshold,
// TestCalibrateSDEWithGridSize; steps/search/BENCHMARKS.md). It is 7.06 at 2456
// frequencies, 8.08 at 20,588, 8.73 at 90,787, 9.03 at 186,590 and 9.32 at 381,143. Hippke & Heller
// (2019, A&A 623, A39) found SDE ≈ 7 for 1 % with their search; the value depends on the
// grid, the durations tried and how the spectrum is normalised, hence our own measurement.
// Red noise raises the rate: the SNR, which bins the noise to the transit duration, and
// the vetting step guard against it.
func DefaultThreshold(n int) float64 {
	if n < 2 {
		n = 2
	}
	t := thresholdBase + thresholdSlope*math.Sqrt(2*math.Log(float64(n)))
	return math.Ceil(t*100) / 100
}

// The default threshold's two constants (see DefaultThreshold).
const (
	thresholdBase  = -0.93
	thresholdSlope = 2.02
)
