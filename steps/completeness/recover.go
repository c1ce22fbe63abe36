package completeness

import (
	"errors"
	"fmt"
	"math"

	"dipline/steps"
	"dipline/steps/detrend"
	"dipline/steps/internal/astro"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/parallel"
	"dipline/steps/search"
	"dipline/steps/search/bls"
)

// Outcome is what became of one injection.
type Outcome struct {
	// Recovered says a signal found by the search matches the planet (see judge).
	Recovered bool
	// Harmonic says no signal matches the planet but one matches it at half or twice its
	// period.
	Harmonic bool
	// FoundPeriod, FoundEpoch and SDE describe the matching signal; with no match, the
	// first signal that counts; with none, the first pass's highest peak (its period and
	// SDE, FoundEpoch 0); all zero when no search ran. In a windowed search SDE is measured
	// against the full grid's noise (see reference).
	FoundPeriod, FoundEpoch, SDE float64
	// Windowed says the search ran over a window of periods around the planet's rather
	// than the full range; when the window held no period the full search would try, no
	// search ran and nothing was recovered.
	Windowed bool
}

// minRelativeTolerance is the floor of the period tolerance, relative to the period
// (our choice): a long transit in a short light curve would otherwise be allowed any
// period, a very short one none beyond rounding.
const minRelativeTolerance = 1e-4

// Recover injects d into raw, detrends the copy with dcfg (no transits masked), searches
// it with scfg and reports whether the search found the planet. The search stops after
// scfg.MaxSignals signals, as configured. pool spreads the detrend's and the search's
// blocks (nil: serial). The detrending is detrend.Flatten's: detrend.Detrend's light curve
// without its measurement of the star's periods.
//
// With window > 0 the search tries only periods in [P/(1 + window), P·(1 + window)],
// clipped to the range the full search would try (scfg.Periods, or its default from the
// data, the longest no beyond the data span), and its peaks are judged against the full
// grid's noise (see reference), which Recover measures first with a full search of raw;
// RunAll measures it once for all its injections. A window judges only its strongest
// peak (see windowed), and one narrower than a factor of two either side cannot hold half
// or twice the period, so Harmonic stays false. With window 0 the full range is searched
// and the search's own SDE threshold decides. Either way the search's SNR floor (min_snr)
// judges the refined box, as it does in the search step.
func Recover(raw *lightcurve.LightCurve, d Drawn, st Star, dcfg detrend.Config, scfg search.Config, window float64, pool *steps.Pool) (Outcome, error) {
	if !(window >= 0) || math.IsInf(window, 0) {
		return Outcome{}, fmt.Errorf("completeness: period window %v; give 0 (the full range) or a positive fraction", window)
	}
	if raw == nil {
		return Outcome{}, errors.New("completeness: no light curve to inject into")
	}
	if err := raw.Validate(); err != nil {
		return Outcome{}, fmt.Errorf("completeness: %w", err)
	}
	var ref *reference
	if window > 0 {
		var err error
		if ref, err = newReference(raw, dcfg, scfg, pool); err != nil {
			return Outcome{}, err
		}
	}
	return recoverWith(raw, d, st, dcfg, scfg, window, ref, pool)
}

// recoverWith is Recover with the full grid's noise already measured (nil when window is 0).
func recoverWith(raw *lightcurve.LightCurve, d Drawn, st Star, dcfg detrend.Config, scfg search.Config, window float64, ref *reference, pool *steps.Pool) (Outcome, error) {
	lc, err := Inject(raw, d.Injection, st)
	if err != nil {
		return Outcome{}, err
	}
	par := parFunc(pool)
	curve := detrend.Flatten(dcfg, lc, nil, pool)
	var out Outcome
	var sigs []found
	if window > 0 {
		out.Windowed = true
		lo, hi, ok := periodWindow(curve, scfg, d.Injection.Period, window)
		if !ok {
			return out, nil
		}
		sigs, out.FoundPeriod, out.SDE, err = windowed(curve, scfg, lo, hi, ref, par)
	} else {
		sigs, out.FoundPeriod, out.SDE, err = full(curve, scfg, par)
	}
	if err != nil {
		return Outcome{}, fmt.Errorf("completeness: searching injection %d of cell %d: %w", d.Index+1, d.Cell+1, err)
	}
	judge(&out, sigs, d.Injection, st, periodTolerance(d.Injection, st, curve.Baseline()))
	return out, nil
}

// parFunc is the pool's Parallel, or nil (serial) for a nil pool.
func parFunc(pool *steps.Pool) parallel.Func {
	if pool == nil {
		return nil
	}
	return pool.Parallel
}

// found is a signal that counts: its ephemeris and its SDE.
type found struct {
	timing bls.Timing
	sde    float64
}

// full searches curve over cfg's whole range: the signals it finds, in order, and its
// first pass's highest peak (period and SDE).
func full(curve *lightcurve.LightCurve, cfg search.Config, par parallel.Func) ([]found, float64, float64, error) {
	art, _, err := search.Search(cfg, curve, par, nil)
	if err != nil {
		return nil, 0, 0, err
	}
	var sigs []found
	for _, det := range art.Detections() {
		sigs = append(sigs, found{timing: det.Timing, sde: det.Strength.SDE})
	}
	if len(art.Passes) == 0 {
		return sigs, 0, 0, nil
	}
	p := art.Passes[0]
	return sigs, art.Grid.Period(p.Peak), p.SDE, nil
}

// windowFloor is the SDE threshold of a windowed search's second stage: low enough that
// its pass always refines a peak, the reference having decided already (any positive value below
// every peak's SDE, which is at least 0, would do; bls.Search needs it positive). The
// refined box must still pass the search's depth rule and SNR floor.
const windowFloor = 1e-9

// refineSteps is the half-width, in grid steps, of the second stage of a windowed search.
// It keeps that stage's grid below 4·trendBlocks frequencies, where the search takes no
// trend off its spectrum and so refines the highest power (our choice; any width from a
// few steps up to 127 would do).
const refineSteps = 8

// windowed searches curve over periods lo–hi in two stages and returns at most one signal,
// with the window's highest peak (period and SDE against ref). Stage one computes the
// window's periodogram alone (a threshold no peak reaches, so nothing is refined); its
// peak is the frequency of the highest SDE against the full
// grid's noise (reference), not the search's own choice, which a window's trend can move to
// a lesser peak. When that SDE reaches the threshold — cfg's, or by default the full
// grid's (bls.DefaultThreshold), since the peak is judged against its noise — stage two
// searches refineSteps
// grid steps either side of the peak to refine its ephemeris. cfg.MaxSignals is not used:
// a window a few tens of per cent wide holds the planet alone, so a window judges only its
// strongest peak.
func windowed(curve *lightcurve.LightCurve, cfg search.Config, lo, hi float64, ref *reference, par parallel.Func) ([]found, float64, float64, error) {
	threshold := bls.DefaultThreshold(ref.Grid().N)
	if cfg.SDEThreshold != nil {
		threshold = *cfg.SDEThreshold
	}
	never, floor := math.MaxFloat64, windowFloor // no peak reaches never: nothing is refined
	cfg.MaxSignals, cfg.SDEThreshold = 1, &never
	cfg.Periods = &[2]float64{lo, hi}
	art, _, err := search.Search(cfg, curve, par, nil)
	if err != nil {
		return nil, 0, 0, err
	}
	if len(art.Passes) == 0 {
		return nil, 0, 0, nil
	}
	g, power := art.Grid, art.Passes[0].Power
	best, sde := 0, math.Inf(-1)
	for j, p := range power {
		if s := ref.SDE(g.Freq(j), p); s > sde {
			best, sde = j, s
		}
	}
	if math.IsInf(sde, -1) {
		return nil, 0, 0, nil // no finite power in the window
	}
	if sde < threshold {
		return nil, g.Period(best), sde, nil
	}
	u := math.Cbrt(g.Freq(best))
	fLo, fHi := math.Pow(u-refineSteps*g.Step, 3), math.Pow(u+refineSteps*g.Step, 3)
	pHi := hi
	if fLo > 0 {
		pHi = math.Min(hi, 1/fLo)
	}
	cfg.Periods = &[2]float64{math.Max(lo, 1/fHi), pHi}
	cfg.SDEThreshold = &floor
	art, _, err = search.Search(cfg, curve, par, nil)
	if err != nil {
		return nil, 0, 0, err
	}
	if len(art.Passes) > 0 && art.Passes[0].Found != nil {
		det := art.Passes[0].Found
		return []found{{timing: det.Timing, sde: sde}}, g.Period(best), sde, nil
	}
	return nil, g.Period(best), sde, nil
}

// periodWindow returns the window of trial periods around period, clipped to the range
// search.Search would try on lc with cfg; false when nothing is left.
func periodWindow(lc *lightcurve.LightCurve, cfg search.Config, period, window float64) (lo, hi float64, ok bool) {
	lo, hi = search.PeriodRange(cfg, lc.Baseline())
	lo = math.Max(lo, period/(1+window))
	hi = math.Min(hi, period*(1+window))
	return lo, hi, hi > lo
}

// duration is the planet's first-to-last-contact time T14 (Winn 2010 through astro), days.
func duration(inj Injection, st Star) float64 {
	aR := bls.ScaledAxis(inj.Period, st.Density)
	t, err := astro.TotalDuration(inj.Period, aR, inj.RadiusRatio, inj.Impact, 0, 0)
	if err != nil {
		return 0
	}
	return t
}

// periodTolerance is how far a found period may lie from the planet's and still match:
// the box search's period resolution |ΔP| ≤ P·T14/baseline, at which the folded transits
// at the two ends of the data drift apart by one duration (common practice), with a floor
// of minRelativeTolerance·P.
func periodTolerance(inj Injection, st Star, baseline float64) float64 {
	tol := minRelativeTolerance * inj.Period
	if baseline > 0 {
		tol = math.Max(tol, inj.Period*duration(inj, st)/baseline)
	}
	return tol
}

// judge fills out from the signals that count. A signal matches the planet (match) when
// |P_found − P| ≤ tol and its epoch lies within T14/2 of one of the planet's mid-transits
// (the distance taken modulo P). Failing that, it is a harmonic when it matches at P/2
// (tolerance tol/2, epoch within T14/2 modulo P/2) or at 2P (tolerance 2·tol, epoch within
// T14/2 modulo P: every transit of the doubled period is one of the planet's). The first
// signal in the search's order that matches wins; a harmonic counts only when none does.
// With no match the first signal is reported.
func judge(out *Outcome, sigs []found, inj Injection, st Star, tol float64) {
	half := duration(inj, st) / 2
	at := func(f found) {
		out.FoundPeriod, out.FoundEpoch, out.SDE = f.timing.Period, f.timing.Epoch, f.sde
	}
	for _, f := range sigs {
		if match(f.timing, inj.Period, inj.Epoch, tol, inj.Period, half) {
			out.Recovered = true
			at(f)
			return
		}
	}
	for _, f := range sigs {
		if match(f.timing, inj.Period/2, inj.Epoch, tol/2, inj.Period/2, half) ||
			match(f.timing, 2*inj.Period, inj.Epoch, 2*tol, inj.Period, half) {
			out.Harmonic = true
			at(f)
			return
		}
	}
	if len(sigs) > 0 {
		at(sigs[0])
	}
}

// match says a found ephemeris has period within tol of period and an epoch within half
// of a mid-transit epoch + n·every.
func match(found bls.Timing, period, epoch, tol, every, half float64) bool {
	if !(math.Abs(found.Period-period) <= tol) {
		return false
	}
	x := (found.Epoch - epoch) / every
	return math.Abs(x-math.Round(x))*every <= half
}

// FixSpan returns cfg with the span the detrend step would choose for raw written in,
// when cfg is the local polynomial's and leaves its span to the data; otherwise cfg as it
// is (detrend.WithChosenSpan). RunAll uses it so that the choice, which costs more than the
// filter, is made once on the light curve the workflow detrended rather than once per
// injection: an injected planet near the detection limit moves the choice little, and
// TestFixedSpanChangesLittle measures how little. pool spreads the work (nil: serially).
func FixSpan(cfg detrend.Config, raw *lightcurve.LightCurve, pool *steps.Pool) detrend.Config {
	return detrend.WithChosenSpan(cfg, raw, pool)
}

// reference is the noise of the full grid's periodogram, against which a windowed search's
// peaks are judged. A window of a few tens of per cent holds a few hundred trial
// frequencies, over which the search's own SDE is no measure of significance: the
// spectrum's slow trend, taken from the medians of stretches of so short a grid, follows
// the planet's own broad hump of power, and its spread is the planet's sidelobes, so a
// planet the full search finds at SDE 10–18 often scores 4–7 in its window
// (TestWindowedAgreesWithFull, with DIPLINE_LONG=1). Instead a peak scores against the
// background of the full search's first pass on the light curve without the planet
// (bls.Noise), which one planet hardly moves.
type reference = bls.Noise

// newReference detrends raw with dcfg, searches it over scfg's full range for one signal
// and measures the first pass's noise.
func newReference(raw *lightcurve.LightCurve, dcfg detrend.Config, scfg search.Config, pool *steps.Pool) (*reference, error) {
	par := parFunc(pool)
	scfg.MaxSignals = 1
	art, _, err := search.Search(scfg, detrend.Flatten(dcfg, raw, nil, pool), par, nil)
	if err != nil {
		return nil, fmt.Errorf("completeness: searching the light curve without injections: %w", err)
	}
	if len(art.Passes) == 0 {
		return nil, fmt.Errorf("completeness: the search of the light curve without injections made no periodogram")
	}
	ref := bls.NoiseOf(art.Grid, art.Passes[0].Power)
	return &ref, nil
}
