package ephemeris

import (
	"errors"
	"fmt"
	"math"

	"dipline/steps"
	"dipline/steps/internal/codec"
	"dipline/steps/internal/sky"
	"dipline/steps/internal/timescale"
)

// TimingTest says what the fit's transit times said about a linear ephemeris.
type TimingTest int64

// The outcomes of the timing test.
const (
	timingUntested     TimingTest = iota // too few timed transits (or none measured)
	timingPasses                         // χ² consistent with a strict period
	timingScatters                       // p < timingCautionP: σ widened by the O−C scatter
	timingScattersKept                   // p < timingCautionP, but timing_scatter = "never": σ left as the draws give it
	timingWritten                        // a written ephemeris: nothing to test
)

// Planet holds one planet's ephemeris and its predicted transits. Times are full BJD_TDB in
// days, durations and errors in days.
type Planet struct {
	Name string // the planet's letter
	// Draws is the number of posterior draws propagated (0 for a written ephemeris); ESS
	// the smaller effective sample size of the period and the mid-time (0 when unknown).
	Draws int64
	ESS   float64
	// The ephemeris used: the medians of the draws (or the written values), the standard
	// deviations and the covariance of T0 and P (0 for a written one).
	T0, SigmaT0, Period, SigmaPeriod, Cov float64
	Duration, SigmaDuration               float64 // NaN when unknown
	// The fit's test of its transit times about a linear ephemeris; NaN and 0 when untested.
	Timing     TimingTest
	TimingChi2 float64
	TimingDof  int64
	TimingP    float64
	// Scatter is the RMS of the fit's O−C residuals (days) added in quadrature to every σ
	// when the timing test fails; 0 otherwise.
	Scatter  float64
	Transits []Prediction
	// Baseline is the out-of-transit time (days) wanted either side of each transit and
	// Windows each transit seen from the site, one per Transits entry; both empty (0, nil)
	// without a site.
	Baseline float64
	Windows  []Window
}

// Count returns the transits judged observable and those partly seen.
func (p *Planet) Count() (observable, partial int) {
	for _, w := range p.Windows {
		switch w.Seen {
		case seenObservable:
			observable++
		case seenPartly:
			partial++
		}
	}
	return observable, partial
}

// Sigma is the quoted one-sigma error of transit i: from the draws, widened by the O−C
// scatter when the timing test failed.
func (p *Planet) Sigma(i int) float64 { return math.Hypot(p.Transits[i].Sigma, p.Scatter) }

// SigmaAnalytic is the analytic σ of transit i, widened in the same way.
func (p *Planet) SigmaAnalytic(i int) float64 {
	return math.Hypot(p.Transits[i].SigmaAnalytic, p.Scatter)
}

// Artifact is the ephemeris step's result.
type Artifact struct {
	From, To float64 // the range, BJD_TDB
	// Direction says the target's direction (RA, Dec in degrees) was given, so each
	// Prediction has its UTC.
	Direction bool
	RA, Dec   float64
	// PMRA and PMDec are the proper motion (mas/yr, μ_α cos δ and μ_δ) and PositionEpoch
	// the Julian year of RA and Dec; 0, 0 and 2000 for a fixed direction.
	PMRA, PMDec, PositionEpoch float64
	// StaleFrom is the earliest predicted UTC (JD) past the leap-second table's end, NaN
	// when none is.
	StaleFrom float64
	// Site says an observing site was given: its latitude, east longitude (degrees) and
	// height (m), the target's lowest altitude (degrees) and the darkness (a sky.Darkness);
	// NaN and 0 without one.
	Site                                        bool
	SiteLat, SiteLon, SiteHeight, AltitudeLimit float64
	Darkness                                    int64
	// Doubles lists the nights (Window.Night) holding two or more observable transits, in
	// order.
	Doubles []int64
	// Nights gives, for each night with a transit observable or partly seen, in order, the
	// part of it in which the site sees the target.
	Nights  []NightSpan
	Planets []Planet
}

// Figures lists per planet the transits in range, the first one's mid-time with its σ and
// the largest σ in range.
func (a *Artifact) Figures() []steps.Figure {
	var figs []steps.Figure
	for _, p := range a.Planets {
		n := p.Name + "."
		figs = append(figs, steps.Figure{Name: n + "transits", Value: float64(len(p.Transits)),
			Doc: fmt.Sprintf("predicted transits with mid-times in BJD_TDB %.5f to %.5f", a.From, a.To)})
		first := steps.Figure{Name: n + "first_mid", Value: math.NaN(), Unit: "d",
			Reason: "no transit falls in the range"}
		largest := steps.Figure{Name: n + "largest_sigma", Value: math.NaN(), Unit: "min",
			Reason: "no transit falls in the range"}
		if len(p.Transits) > 0 {
			t := p.Transits[0]
			first.Value, first.Sigma = t.Mid, p.Sigma(0)
			first.Doc = fmt.Sprintf("mid-time of the first transit in range (transit %d from the reference), BJD_TDB", t.Epoch)
			if p.Draws > 0 {
				first.Doc += "; median of the draws, σ half the 16–84 % range"
				if p.Scatter == 0 {
					first.Lower, first.Upper = t.Lower, t.Upper
				}
				if p.ESS > 0 {
					// Monte Carlo error of a median: √(π/2) σ/√ESS (common practice).
					first.MCError = math.Sqrt(math.Pi/2) * t.Sigma / math.Sqrt(p.ESS)
				}
			}
			if p.Scatter > 0 {
				first.Doc += "; σ widened by the fit's O−C scatter"
			}
			worst := 0.0
			for i := range p.Transits {
				worst = math.Max(worst, p.Sigma(i))
			}
			largest.Value = worst * minutesPerDay
			largest.Doc = "largest one-sigma error of a predicted mid-time in range"
		}
		figs = append(figs, first, largest)
		if a.Site {
			obs, part := p.Count()
			figs = append(figs,
				steps.Figure{Name: n + "observable", Value: float64(obs), Doc: "transits whose whole window (baselines and one σ included) is dark with the target above the altitude limit at the site"},
				steps.Figure{Name: n + "partial", Value: float64(part), Doc: "transits of which only a part is seen from the site"})
		}
	}
	if a.Site {
		figs = append(figs, steps.Figure{Name: "double_nights", Value: float64(len(a.Doubles)),
			Doc: "nights at the site holding two or more observable transits, of one planet or several"})
	}
	return figs
}

// Cautions says what the predictions are not: always that a linear ephemeris ignores
// timing variations and that the observatory's rules and the observer's judgement come
// first; per planet when the fit's transit times scatter about the line; and when a UTC
// lies past the leap-second table's end.
func (a *Artifact) Cautions() []string {
	c := []string{"These transit times follow a linear ephemeris, which ignores transit-timing variations; " +
		"they are a guide for planning, and the observatory's rules and the observer's judgement come first."}
	for _, p := range a.Planets {
		scatter := fmt.Sprintf("Planet %s: the fit's transit times scatter about a linear ephemeris more than their errors allow "+
			"(χ² = %.4g for %d degrees of freedom, p = %.2g); ", p.Name, p.TimingChi2, p.TimingDof, p.TimingP)
		switch p.Timing {
		case timingScatters:
			c = append(c, scatter+fmt.Sprintf("every predicted σ has their O−C scatter (%.3g min RMS) added in quadrature, "+
				"but timing variations may move future transits further.", p.Scatter*minutesPerDay))
		case timingScattersKept:
			c = append(c, scatter+"timing_scatter = \"never\" leaves every predicted σ as the posterior draws give it, "+
				"which understates the error if the variations go on.")
		}
	}
	if a.Site {
		total := 0
		for i := range a.Planets {
			obs, _ := a.Planets[i].Count()
			total += obs
		}
		if total == 0 {
			c = append(c, fmt.Sprintf("No predicted transit in the range is observable from the site (latitude %.4g°, longitude %.4g°) "+
				"with the whole window dark (%s) and the target at least %.4g° high; widen the range or relax the limits.",
				a.SiteLat, a.SiteLon, sky.Darkness(a.Darkness), a.AltitudeLimit))
		}
	}
	if !math.IsNaN(a.StaleFrom) {
		c = append(c, fmt.Sprintf("UTC times from %s on: %s.", isoUTC(a.StaleFrom), timescale.StaleLeapTableNote))
	}
	return c
}

// target is the artifact's target with its proper motion.
func (a *Artifact) target() timescale.Target {
	return timescale.Target{RA: a.RA, Dec: a.Dec, PMRA: a.PMRA, PMDec: a.PMDec, Epoch: a.PositionEpoch}
}

// isoUTC writes a UTC Julian date as an ISO 8601 date and time to the minute,
// "2027-03-04T05:06Z"; "" for NaN.
func isoUTC(jd float64) string {
	if math.IsNaN(jd) {
		return ""
	}
	// Round to the minute first, so that 23:59:59.9 becomes the next day's 00:00.
	day := math.Floor(jd - 0.5)
	mins := math.Round((jd - 0.5 - day) * 1440)
	y, mo, d, _, err := timescale.Calendar(timescale.JD{Day: day + 0.5, Frac: mins / 1440})
	if err != nil {
		return ""
	}
	m := int(mins) % 1440
	return fmt.Sprintf("%04d-%02d-%02dT%02d:%02dZ", y, mo, d, m/60, m%60)
}

const (
	tag    = "ephemeris"
	format = 4
)

// Encode returns the canonical encoding.
func (a *Artifact) Encode() []byte {
	w := codec.NewWriter(tag, format)
	w.Floats([]float64{a.From, a.To, a.RA, a.Dec, a.StaleFrom, a.PMRA, a.PMDec, a.PositionEpoch})
	w.Bool(a.Direction)
	w.Bool(a.Site)
	w.Floats([]float64{a.SiteLat, a.SiteLon, a.SiteHeight, a.AltitudeLimit})
	w.Int(a.Darkness)
	w.Uint64(uint64(len(a.Doubles)))
	for _, n := range a.Doubles {
		w.Int(n)
	}
	w.Uint64(uint64(len(a.Nights)))
	for _, n := range a.Nights {
		w.Int(n.Night)
		w.Floats([]float64{n.Begin, n.End})
	}
	w.Uint64(uint64(len(a.Planets)))
	for _, p := range a.Planets {
		w.String(p.Name)
		w.Int(p.Draws)
		w.Floats([]float64{p.ESS, p.T0, p.SigmaT0, p.Period, p.SigmaPeriod, p.Cov, p.Duration, p.SigmaDuration,
			p.TimingChi2, p.TimingP, p.Scatter})
		w.Int(int64(p.Timing))
		w.Int(p.TimingDof)
		w.Uint64(uint64(len(p.Transits)))
		for _, t := range p.Transits {
			w.Int(t.Epoch)
			w.Floats([]float64{t.Mid, t.Lower, t.Upper, t.Sigma, t.SigmaAnalytic,
				t.Ingress, t.SigmaIngress, t.Egress, t.SigmaEgress, t.UTC})
		}
		w.Floats([]float64{p.Baseline})
		w.Uint64(uint64(len(p.Windows)))
		for _, x := range p.Windows {
			w.Int(int64(x.Seen))
			w.Int(x.Parts)
			w.Int(x.Night)
			w.Floats([]float64{x.Start, x.Ingress, x.Mid, x.Egress, x.End, x.MoonSep, x.MoonLit})
		}
	}
	return w.Bytes()
}

// Decode reads an artifact back; truncated, foreign or inconsistent bytes are an error.
func (Kind) Decode(b []byte) (steps.Artifact, error) { return steps.Decoded(Decode(b)) }

// maxPlanets bounds the planets a record may hold (b to z).
const maxPlanets = 25

// Decode reads an artifact written by Encode.
func Decode(b []byte) (*Artifact, error) {
	r := codec.NewReader(b, tag, format)
	a := &Artifact{}
	v := r.Floats()
	a.Direction = r.Bool()
	if len(v) != 8 {
		return nil, errDamaged(r, "its range")
	}
	a.From, a.To, a.RA, a.Dec, a.StaleFrom, a.PMRA, a.PMDec, a.PositionEpoch = v[0], v[1], v[2], v[3], v[4], v[5], v[6], v[7]
	a.Site = r.Bool()
	if v := r.Floats(); len(v) == 4 {
		a.SiteLat, a.SiteLon, a.SiteHeight, a.AltitudeLimit = v[0], v[1], v[2], v[3]
	} else {
		return nil, errDamaged(r, "its site")
	}
	a.Darkness = r.Int()
	nd := r.Uint64()
	if nd > maxTransits*maxPlanets {
		return nil, fmt.Errorf("ephemeris artifact: %d nights", nd)
	}
	for k := uint64(0); k < nd; k++ {
		a.Doubles = append(a.Doubles, r.Int())
	}
	nn := r.Uint64()
	if nn > maxTransits*maxPlanets {
		return nil, fmt.Errorf("ephemeris artifact: %d nights seen", nn)
	}
	for k := uint64(0); k < nn; k++ {
		n := NightSpan{Night: r.Int()}
		v := r.Floats()
		if len(v) != 2 {
			return nil, errDamaged(r, "a night")
		}
		n.Begin, n.End = v[0], v[1]
		a.Nights = append(a.Nights, n)
	}
	np := r.Uint64()
	if np > maxPlanets {
		return nil, fmt.Errorf("ephemeris artifact: %d planets", np)
	}
	for i := uint64(0); i < np; i++ {
		p := Planet{Name: r.String(), Draws: r.Int()}
		v := r.Floats()
		if len(v) != 11 {
			return nil, errDamaged(r, "a planet")
		}
		p.ESS, p.T0, p.SigmaT0, p.Period, p.SigmaPeriod, p.Cov, p.Duration, p.SigmaDuration, p.TimingChi2, p.TimingP, p.Scatter =
			v[0], v[1], v[2], v[3], v[4], v[5], v[6], v[7], v[8], v[9], v[10]
		p.Timing = TimingTest(r.Int())
		p.TimingDof = r.Int()
		nt := r.Uint64()
		if nt > maxTransits {
			return nil, fmt.Errorf("ephemeris artifact: %d transits", nt)
		}
		for k := uint64(0); k < nt; k++ {
			t := Prediction{Epoch: r.Int()}
			v := r.Floats()
			if len(v) != 10 {
				return nil, errDamaged(r, "a transit")
			}
			t.Mid, t.Lower, t.Upper, t.Sigma, t.SigmaAnalytic, t.Ingress, t.SigmaIngress, t.Egress, t.SigmaEgress, t.UTC =
				v[0], v[1], v[2], v[3], v[4], v[5], v[6], v[7], v[8], v[9]
			p.Transits = append(p.Transits, t)
		}
		v = r.Floats()
		if len(v) != 1 {
			return nil, errDamaged(r, "a planet's baseline")
		}
		p.Baseline = v[0]
		nw := r.Uint64()
		if nw != 0 && nw != nt {
			return nil, fmt.Errorf("ephemeris artifact: %d windows for %d transits", nw, nt)
		}
		for k := uint64(0); k < nw; k++ {
			x := Window{Seen: Seen(r.Int()), Parts: r.Int(), Night: r.Int()}
			v := r.Floats()
			if len(v) != 7 {
				return nil, errDamaged(r, "a window")
			}
			x.Start, x.Ingress, x.Mid, x.Egress, x.End, x.MoonSep, x.MoonLit = v[0], v[1], v[2], v[3], v[4], v[5], v[6]
			p.Windows = append(p.Windows, x)
		}
		a.Planets = append(a.Planets, p)
	}
	if err := r.Err(); err != nil {
		return nil, fmt.Errorf("ephemeris artifact: %w", err)
	}
	return a, nil
}

// errDamaged names the part of a record that did not read.
func errDamaged(r *codec.Reader, what string) error {
	if err := r.Err(); err != nil {
		return fmt.Errorf("ephemeris artifact: %s: %w", what, err)
	}
	return errors.New("ephemeris artifact: " + what + " is damaged")
}
