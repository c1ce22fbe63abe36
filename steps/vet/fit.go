package vet

import (
	"fmt"
	"math"

	"dipline/steps/internal/astro"
)

// planetDraws are one fitted planet's posterior draws, row by row.
type planetDraws struct {
	period, t0, k, b, aR []float64
	// e and omega (rad) are nil for a circular orbit.
	e, omega []float64
	// density is the fit's star_density column (g/cm³), nil when it has none.
	density   []float64
	eccentric bool
}

// n is the number of draws.
func (p *planetDraws) n() int { return len(p.period) }

// eccentricity returns draw i's e and ω (0, 0 on a circular orbit).
func (p *planetDraws) eccentricity(i int) (e, omega float64) {
	if !p.eccentric {
		return 0, 0
	}
	return p.e[i], p.omega[i]
}

// planetLetter is the fit's name of the j-th planet (steps/fit names them b, c, d in the
// search's order).
func planetLetter(j int) string {
	if j < 0 || j > 24 {
		return ""
	}
	return string(rune('b' + j))
}

// matchFit gives tg the fit's draws of the planet with its index when the fit has one and
// its period agrees with the signal's; otherwise it says why not.
func (v *vetter) matchFit(tg *target) {
	fit := v.d.Fit
	letter := planetLetter(tg.index)
	if tg.index >= fit.Planets() {
		tg.fitNote = fmt.Sprintf("the fit has %d planet(s), none for this signal; the tests that need a fit were not run for it", fit.Planets())
		return
	}
	col := func(name string) []float64 { return fit.Column(letter + "." + name) }
	p := &planetDraws{period: col("period"), t0: col("t0"), k: col("k"), b: col("b"), aR: col("a_over_rstar"),
		e: col("e"), omega: col("omega"), density: fit.Column("star_density")}
	n := len(p.period)
	for _, c := range []struct {
		v    []float64
		name string
	}{{p.period, "period"}, {p.t0, "t0"}, {p.k, "k"}, {p.b, "b"}, {p.aR, "a_over_rstar"}} {
		if len(c.v) == 0 || len(c.v) != n {
			tg.fitNote = fmt.Sprintf("the fit has no usable column %s.%s; the tests that need a fit were not run for this signal", letter, c.name)
			return
		}
	}
	if p.density != nil && len(p.density) != n {
		p.density = nil
	}
	if len(p.e) == n && len(p.omega) == n {
		p.eccentric = true
		for i := range p.omega {
			p.omega[i] *= math.Pi / 180 // the fit's column is in degrees
		}
	} else {
		p.e, p.omega = nil, nil
	}
	per, perSig, _ := oneSigma(finiteSorted(p.period))
	t0, _, _ := oneSigma(finiteSorted(p.t0))
	tol := v.periodTolerance(tg.sig.Duration)
	if d := math.Abs(per - tg.sig.Period); d > tol*tg.sig.Period+5*perSig {
		tg.fitNote = fmt.Sprintf("the fit's planet %s has period %.6g d, not this signal's %.6g d (they differ by more than %.2g %% plus 5 σ): the fit was not used for it", letter, per, tg.sig.Period, 100*tol)
		return
	}
	tg.planet, tg.post = letter, p
	tg.fitNote = fmt.Sprintf("planet %s of the fit (period %.6g d against the search's %.6g d); its period and mid-time place the transits", letter, per, tg.sig.Period)
	tg.eph.Period, tg.eph.Epoch = per, t0
	if t14 := p.totalDuration(); t14 > 0 && t14 < per/3 {
		tg.fitNote += fmt.Sprintf(", and its total duration T14 of %.3g h (median of its samples; the search's box was %.3g h) sets the windows of the tests on the light curve", t14*24, tg.sig.Duration*24)
		tg.eph.Duration = t14
	} else {
		tg.fitNote += fmt.Sprintf("; its samples give no usable total duration, so the search's box of %.3g h sets the windows of the tests on the light curve", tg.sig.Duration*24)
	}
}

// totalDuration is the median of the draws' first-to-last-contact durations T14 in days
// (contacts), NaN when no draw gives one. The vet masks and windows a fitted transit with
// it rather than with the search's box, which a search set for the wrong star can make
// much shorter than the transit: its edges then pass for dips beside it.
func (p *planetDraws) totalDuration() float64 {
	t14s := make([]float64, 0, p.n())
	for i := 0; i < p.n(); i++ {
		if t14, _, ok := p.contacts(i); ok {
			t14s = append(t14s, t14)
		}
	}
	med, _, _ := oneSigma(finiteSorted(t14s))
	return med
}

// periodTolerance is the relative tolerance of a period comparison for a signal of
// duration dur: dur/T over a baseline T. Two periods whose ratio is off an exact value by
// less than this put every transit within one duration of where the exact ratio puts it
// over the whole baseline, so the data cannot tell them apart; a box search's period error
// is about P·dur/(T·SNR) (the mid-time error, about a duration over the SNR, spread over
// T/P cycles; common practice), below this for any detected signal.
func (v *vetter) periodTolerance(dur float64) float64 {
	if v.o.RatioTolerance > 0 {
		return v.o.RatioTolerance
	}
	if !(v.baseline > 0) {
		return math.Inf(1)
	}
	return dur / v.baseline
}

// contacts returns draw i's total and full durations T14, T23 in days (Winn 2010 through
// astro); T23 is 0 for a grazing chord. ok is false when the draw's geometry is invalid.
func (p *planetDraws) contacts(i int) (t14, t23 float64, ok bool) {
	e, w := p.eccentricity(i)
	t14, err1 := astro.TotalDuration(p.period[i], p.aR[i], p.k[i], p.b[i], e, w)
	t23, err2 := astro.FullDuration(p.period[i], p.aR[i], p.k[i], p.b[i], e, w)
	return t14, t23, err1 == nil && err2 == nil && t14 > 0
}

// grazingShare is the share of draws with b + k > 1, and its binomial Monte Carlo error
// √(p(1−p)/n) treating the draws as independent.
func (p *planetDraws) grazingShare() (share, mc float64) {
	g := 0
	for i := range p.b {
		if p.b[i]+p.k[i] > 1 {
			g++
		}
	}
	n := float64(p.n())
	share = float64(g) / n
	return share, math.Sqrt(share * (1 - share) / n)
}

// transitDensity returns the draws of the star's density (g/cm³) the transit implies: the
// fit's star_density column, or from a/R* and the period by Kepler's third law (Seager &
// Mallén-Ornelas 2003, through astro) when it has none.
func (p *planetDraws) transitDensity() []float64 {
	if p.density != nil {
		return p.density
	}
	out := make([]float64, p.n())
	for i := range out {
		rho, err := astro.DensityFromScaledAxis(p.aR[i], p.period[i]*astro.Day)
		out[i] = rho / 1000
		if err != nil {
			out[i] = math.NaN()
		}
	}
	return out
}

// timingAlarm is the p-value of the transit times' χ² about one linear ephemeris below which
// the times are taken to vary: 0.0027, the two-sided normal tail beyond 3σ (common
// practice), stricter than the fit's own caution at 1 %.
const timingAlarm = 0.0027

// smearShare is the share of the fitted ingress the timing variations must be able to make
// before the shape is said to be smeared. Stacked on one period, transits that move by a
// scatter s about it spread every contact by s: a ramp of length T12 (variance T12²/12)
// convolved with that spread has the variance T12²/12 + s², so it reads as a ramp √12·s
// longer in quadrature. When √12·s reaches half the fitted T12, the spread alone makes at
// least a quarter of the fitted ingress's variance, and a V or a grazing chord may be its
// work rather than the transit's.
const smearShare = 0.5

// timingOf sets tg.ttv when the fit's transit times of its planet reject one linear
// ephemeris (p below timingAlarm) and their scatter beyond the errors is large enough to
// smear the stacked transit's ingress (smearShare).
func (v *vetter) timingOf(tg *target) {
	if tg.post == nil || tg.index >= len(v.d.Timing) {
		return
	}
	tm := v.d.Timing[tg.index]
	if tm.Dof < 1 || !(tm.PValue < timingAlarm) || !(tm.Scatter > 0) {
		return
	}
	p := tg.post
	ingress := make([]float64, 0, p.n())
	for i := 0; i < p.n(); i++ {
		if t14, t23, ok := p.contacts(i); ok {
			ingress = append(ingress, (t14-t23)/2)
		}
	}
	t12, _, _ := oneSigma(finiteSorted(ingress))
	if math.IsNaN(t12) || math.Sqrt(12)*tm.Scatter < smearShare*t12 {
		return
	}
	tg.ttv = fmt.Sprintf("the fit's transit times move about one period by %.1f min beyond their errors (χ² %.0f for %d degrees of freedom, p = %.2g), comparable with its ingress of %.0f min, so the transit stacked on one period is smeared",
		tm.Scatter*1440, tm.Chi2, tm.Dof, tm.PValue, t12*1440)
}

// timingCaveat is the clause a shape, density or radius verdict gets when tg's transit
// times smear the stacked transit, "" otherwise: the timing, then what it may have done.
func (tg *target) timingCaveat(what string) string {
	if tg.ttv == "" {
		return ""
	}
	return "; but " + tg.ttv + ": " + what + "; fit the transits with a mid-time each"
}
