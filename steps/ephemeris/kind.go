// Package ephemeris is the ephemeris step kind: it predicts a planet's transit mid-times,
// ingresses and egresses over a date range written in the workflow (never the clock, so a
// re-run gives the same answer), with honest one-sigma errors. From a fit it propagates the
// posterior draws of each planet's period, mid-time and duration draw by draw, so their
// covariance is kept, and reports beside it the analytic propagation σ²(T_n) = σ²_T0 +
// n²σ²_P + 2n cov(T0, P) from the same draws; for a planet known elsewhere it takes a
// period and an epoch written as measurements. When the direction of the target is given,
// each mid-time is also given in UTC (steps/internal/timescale); when an observing site is
// given too, each transit is judged from there (window.go): observable when its whole window
// — the transit with a baseline either side, widened by the mid-time's σ — is dark with the
// target above a limit, partly seen, or not, with the Moon's distance and phase, and nights
// holding two or more observable transits are marked.
//
// Main entry point: Kind (register it with New); the numerical core is FromDraws and
// FromWritten in predict.go, which know nothing of workflows.
package ephemeris

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"maps"
	"math"
	"regexp"
	"slices"
	"strconv"
	"strings"

	"dipline/steps"
	"dipline/steps/fit"
	"dipline/steps/internal/sky"
	"dipline/steps/internal/timescale"
)

// Kind is the ephemeris step kind, written against its Config; New makes it the engine's.
type Kind struct{}

// New returns the ephemeris kind for the engine's registry.
func New() steps.Kind { return steps.Define[Config](Kind{}) }

var (
	_ steps.Typed[Config] = Kind{}
	_ steps.Artifact      = (*Artifact)(nil)
	_ steps.Cautioner     = (*Artifact)(nil)
)

// version is bumped whenever the numbers or the encoding change.
const version = 4

// Limits and rules, each with its reason.
const (
	// maxTransits bounds the transits predicted per planet: a range that holds more is a
	// mistake in from or to (ten thousand transits of a one-day planet are 27 years).
	maxTransits = 10000
	// timingCautionP is the p-value of the fit's χ² of transit times about a linear
	// ephemeris below which the predictions are cautioned and widened: 1 %, the fit's own
	// threshold for its timing caution (common practice for a single test).
	timingCautionP = 0.01
)

// Name is the block type.
func (Kind) Name() string { return "ephemeris" }

// Version is the kind's version.
func (Kind) Version() int { return version }

// Random is false: the predictions use the fit's draws as they are and draw nothing.
func (Kind) Random() bool { return false }

// Doc is one sentence for the kinds listing.
func (Kind) Doc() string {
	return "Predicts transit mid-times, ingresses and egresses over a written date range from a fit's posterior draws (covariance kept) or a written period and epoch, with one-sigma errors from the draws and from analytic propagation, in BJD_TDB and, given the target's direction, UTC; given a site too, judges each transit observable, partly seen or not from there and marks nights with two or more."
}

// Config is what an ephemeris block may say.
type Config struct {
	Fit *steps.Ref `step:"fit" accepts:"fit" doc:"a fit step whose posterior draws of each planet's period, mid-time and duration are propagated; leave it out and write period and epoch instead"`
	// Period and Epoch are in days; Epoch is a full barycentric Julian date in TDB.
	Period   *steps.Measurement `step:"period" dim:"time" doc:"the period of a planet without a fit, as a measurement (\"3.7185 ± 0.0004 d\")"`
	Epoch    *steps.Measurement `step:"epoch" dim:"time" doc:"a mid-transit time of a planet without a fit, as a full BJD_TDB in days with its error (\"2460450.9146 ± 0.0005 d\")"`
	Duration *steps.Measurement `step:"duration" dim:"time" doc:"first-to-last-contact duration of a planet without a fit (\"2.1 ± 0.1 h\"), for its ingress and egress; left out, only mid-times are given"`
	From     string             `step:"from,required" doc:"start of the range: a UTC calendar date \"2027-01-01\" (from 0h of that day) or a full BJD_TDB as a quoted number \"2461406.5\""`
	To       string             `step:"to,required" doc:"end of the range, included: a UTC calendar date \"2027-06-30\" (to the end of that day) or a full BJD_TDB as a quoted number"`
	Planets  []string           `step:"planets" doc:"the planets to predict, by letter ([\"b\", \"c\"]); all of the fit's when left out; without a fit, the one letter of the written planet (b when left out)"`
	// RA and Dec are in arcseconds (the angle dimension's base unit).
	RA  *float64 `step:"ra" dim:"angle" doc:"right ascension of the target (ICRS, e.g. \"285.1234 deg\"); with dec, the predicted times are also given in UTC"`
	Dec *float64 `step:"dec" dim:"angle" doc:"declination of the target (ICRS, e.g. \"-12.5 deg\")"`
	// The target's proper motion (mas/yr) and the Julian year of ra and dec.
	PMRA          *float64 `step:"pm_ra" dim:"proper_motion" doc:"the target's proper motion in right ascension as catalogues give it, μ_α cos δ (\"-798.6 mas/yr\"); with pm_dec and position_epoch, the direction moves with it (a nearby fast star's barycentric correction shifts by up to half a second a decade)"`
	PMDec         *float64 `step:"pm_dec" dim:"proper_motion" doc:"the target's proper motion in declination (\"10328 mas/yr\")"`
	PositionEpoch *float64 `step:"position_epoch" doc:"the Julian year at which ra and dec hold, e.g. 2016.0 for a catalogue of that epoch; needed with a proper motion"`
	// The observing site and what counts as seen from it (angles in arcseconds, the
	// elevation in metres, the baseline in days).
	SiteLatitude  *float64 `step:"site_latitude" dim:"angle" doc:"geodetic latitude of an observing site (\"-30.2 deg\"); with site_longitude, ra and dec, each transit is judged observable, partly seen or not from there"`
	SiteLongitude *float64 `step:"site_longitude" dim:"angle" doc:"longitude of the site, east positive (\"-70.7 deg\")"`
	SiteElevation *float64 `step:"site_elevation" dim:"length" doc:"height of the site above the reference ellipsoid (\"2200 m\"); 0 when left out"`
	AltitudeLimit float64  `step:"altitude_limit" dim:"angle" default:"30 deg" doc:"lowest altitude of the target at which it counts as seen"`
	Darkness      string   `step:"darkness" choices:"civil|nautical|astronomical" default:"nautical" doc:"how dark the sky must be: the end of civil (Sun 6° down), nautical (12°) or astronomical (18°) twilight"`
	Baseline      *float64 `step:"baseline" dim:"time" doc:"out-of-transit time wanted before the ingress and after the egress (\"1.5 h\"); the larger of 1 h and half the duration when left out"`
	// TimingScatter says when the fit's O−C scatter widens the predicted errors.
	TimingScatter string `step:"timing_scatter" choices:"if_significant|always|never" default:"if_significant" doc:"when to add the RMS of the fit's O−C (its transit times less the linear ephemeris) in quadrature to every predicted σ: if_significant, when the times scatter more than their errors allow (p < 1 %); always; or never (the caution stays)"`

	from, to float64 // the range in BJD_TDB, set by Check
	utcFrom  bool    // from and to as written are UTC dates converted without the target's direction
}

// arcsecPerDeg converts the angle dimension's base unit to degrees.
const arcsecPerDeg = 3600

// site returns the observing site and whether one is given.
func (c *Config) site() (sky.Site, bool) {
	if c.SiteLatitude == nil || c.SiteLongitude == nil {
		return sky.Site{}, false
	}
	s := sky.Site{Lat: *c.SiteLatitude / arcsecPerDeg, Lon: *c.SiteLongitude / arcsecPerDeg}
	if c.SiteElevation != nil {
		s.Height = *c.SiteElevation
	}
	return s, true
}

// darknessOf reads the darkness choice.
func darknessOf(s string) sky.Darkness {
	switch s {
	case "civil":
		return sky.Civil
	case "astronomical":
		return sky.Astronomical
	}
	return sky.Nautical
}

// maxBaseline bounds a written baseline: half a day before and after a transit is more
// than any night holds.
const maxBaseline = 0.5

// checkSite holds the site's attributes together and to the Earth.
func checkSite(c *Config) error {
	if (c.SiteLatitude == nil) != (c.SiteLongitude == nil) {
		if c.SiteLatitude == nil {
			return steps.Attrf("site_longitude", "is written without site_latitude; a site needs both")
		}
		return steps.Attrf("site_latitude", "is written without site_longitude; a site needs both")
	}
	s, ok := c.site()
	if !ok {
		for _, a := range []struct {
			name string
			set  bool
		}{{"site_elevation", c.SiteElevation != nil}, {"baseline", c.Baseline != nil}} {
			if a.set {
				return steps.Attrf(a.name, "is for observing windows from a site; write site_latitude and site_longitude too, or leave it out")
			}
		}
		return nil
	}
	var missing []string
	if c.RA == nil {
		missing = append(missing, "ra")
	}
	if c.Dec == nil {
		missing = append(missing, "dec")
	}
	if len(missing) > 0 {
		return steps.Attrf("site_latitude", "needs the target's direction to judge its altitude, and %s is missing; write ra and dec", strings.Join(missing, " and "))
	}
	if !(s.Lat >= -90 && s.Lat <= 90) {
		return steps.Attrf("site_latitude", "must lie in −90 to 90 deg, not %v deg", s.Lat)
	}
	if !(s.Lon >= -180 && s.Lon <= 360) {
		return steps.Attrf("site_longitude", "must lie in −180 to 360 deg (east positive), not %v deg", s.Lon)
	}
	if err := s.Check(); err != nil {
		return steps.Attrf("site_elevation", "%v", err)
	}
	if lim := c.AltitudeLimit / arcsecPerDeg; !(lim >= 0 && lim < 90) {
		return steps.Attrf("altitude_limit", "must lie in 0 to 90 deg, not %v deg", lim)
	}
	if b := c.Baseline; b != nil && !(*b >= 0 && *b <= maxBaseline) {
		return steps.Attrf("baseline", "must lie between 0 and 12 h, not %v h", *b*24)
	}
	if c.Fit == nil && c.Duration == nil {
		return steps.Attrf("duration", "is missing: observing windows from the site need the transit's first-to-last-contact duration (\"2.1 ± 0.1 h\")")
	}
	return nil
}

// direction returns RA and Dec in degrees and whether both are given.
func (c *Config) direction() (ra, dec float64, ok bool) {
	if c.RA == nil || c.Dec == nil {
		return 0, 0, false
	}
	return *c.RA / arcsecPerDeg, *c.Dec / arcsecPerDeg, true
}

// target returns the target's direction with its proper motion, when given.
func (c *Config) target() (timescale.Target, bool) {
	ra, dec, ok := c.direction()
	t := timescale.Fixed(ra, dec)
	if c.PMRA != nil && c.PMDec != nil && c.PositionEpoch != nil {
		t.PMRA, t.PMDec, t.Epoch = *c.PMRA, *c.PMDec, *c.PositionEpoch
	}
	return t, ok
}

// checkMotion holds the proper motion's attributes together and to a direction.
func checkMotion(c *Config) error {
	set := []struct {
		name string
		ok   bool
	}{{"pm_ra", c.PMRA != nil}, {"pm_dec", c.PMDec != nil}, {"position_epoch", c.PositionEpoch != nil}}
	n := 0
	for _, a := range set {
		if a.ok {
			n++
		}
	}
	if n == 0 {
		return nil
	}
	for _, a := range set {
		if !a.ok {
			return steps.Attrf(a.name, "is missing: a proper motion needs pm_ra, pm_dec and position_epoch together")
		}
	}
	if c.RA == nil {
		return steps.Attrf("pm_ra", "is written without ra and dec; a proper motion moves a written direction")
	}
	t, _ := c.target()
	if err := t.Check(); err != nil {
		attr := "pm_ra"
		if math.Abs(t.Epoch-2000) > 1000 || math.IsNaN(t.Epoch) {
			attr = "position_epoch"
		}
		return steps.Attrf(attr, "%v", err)
	}
	return nil
}

// Check holds the block to one source of ephemeris, reads the range and the direction.
func (Kind) Check(c *Config) error {
	written := c.Period != nil || c.Epoch != nil
	switch {
	case c.Fit != nil && written:
		a := "period"
		if c.Period == nil {
			a = "epoch"
		}
		return steps.Attrf(a, "is written beside fit; give either a fit step or a period and an epoch, not both")
	case c.Fit == nil && !written:
		return steps.Attrf("fit", "is missing: give a fit step, or a period and an epoch for a planet known elsewhere")
	case c.Fit == nil && c.Period == nil:
		return steps.Attrf("period", "is missing: an epoch alone does not fix the later transits; write period = \"3.7185 ± 0.0004 d\"")
	case c.Fit == nil && c.Epoch == nil:
		return steps.Attrf("epoch", "is missing: a period alone does not place the transits; write epoch = \"2460450.9146 ± 0.0005 d\" (a full BJD_TDB)")
	case c.Fit != nil && c.Duration != nil:
		return steps.Attrf("duration", "is for a planet without a fit; the fit's own durations are used")
	}
	if c.Period != nil && !(c.Period.Value > 0 && !math.IsInf(c.Period.Value, 0) && c.Period.Sigma < c.Period.Value) {
		return steps.Attrf("period", "must be positive, finite and larger than its error, not %v ± %v d", c.Period.Value, c.Period.Sigma)
	}
	if c.Epoch != nil && !(c.Epoch.Value > 2_000_000 && c.Epoch.Value < 3_000_000 && !math.IsInf(c.Epoch.Sigma, 0)) {
		return steps.Attrf("epoch", "must be a full barycentric Julian date in days (e.g. \"2460450.9146 ± 0.0005 d\"), not %v d", c.Epoch.Value)
	}
	if d := c.Duration; d != nil && !(d.Value > 0 && !math.IsInf(d.Value, 0) && !math.IsInf(d.Sigma, 0)) {
		return steps.Attrf("duration", "must be a positive, finite time, not %v ± %v d", d.Value, d.Sigma)
	}
	if err := checkPlanets(c); err != nil {
		return err
	}
	if (c.RA == nil) != (c.Dec == nil) {
		if c.RA == nil {
			return steps.Attrf("dec", "is written without ra; the direction needs both")
		}
		return steps.Attrf("ra", "is written without dec; the direction needs both")
	}
	ra, dec, dir := c.direction()
	if err := checkMotion(c); err != nil {
		return err
	}
	if dir {
		if !(ra >= 0 && ra < 360) {
			return steps.Attrf("ra", "must lie in 0–360 deg, not %v deg", ra)
		}
		if !(dec >= -90 && dec <= 90) {
			return steps.Attrf("dec", "must lie in −90 to 90 deg, not %v deg", dec)
		}
	}
	if err := checkSite(c); err != nil {
		return err
	}
	var err error
	var utcA, utcB bool
	tg, _ := c.target()
	if c.from, utcA, err = readBound("from", c.From, false, tg, dir); err != nil {
		return err
	}
	if c.to, utcB, err = readBound("to", c.To, true, tg, dir); err != nil {
		return err
	}
	c.utcFrom = (utcA || utcB) && !dir
	if !(c.to > c.from) {
		return steps.Attrf("to", "%q is not after from (%q); the range must run forward", c.To, c.From)
	}
	return nil
}

// checkPlanets refuses letters that cannot name a planet, repeats, and more than one
// letter for a written ephemeris.
func checkPlanets(c *Config) error {
	seen := map[string]bool{}
	for _, p := range c.Planets {
		if len(p) != 1 || p[0] < 'b' || p[0] > 'z' {
			return steps.Attrf("planets", "%q is not a planet's letter; write lower-case letters from b, e.g. [\"b\", \"c\"]", p)
		}
		if seen[p] {
			return steps.Attrf("planets", "lists %q twice", p)
		}
		seen[p] = true
	}
	if c.Fit == nil && len(c.Planets) > 1 {
		return steps.Attrf("planets", "lists %d planets, but a written period and epoch describe one; give one letter, or one ephemeris step per planet", len(c.Planets))
	}
	return nil
}

var calendarDate = regexp.MustCompile(`^(\d{4})-(\d{2})-(\d{2})$`)

// readBound reads one end of the range: a calendar date (0h UTC of that day; for the end of
// the range, 0h of the day after, so the written day is included) converted to BJD_TDB, or
// a full BJD_TDB written as a number. Without the target's direction a date is converted to
// TDB at the geocentre (the Rømer delay left out, at most 8.3 min, which moves only a
// transit within minutes of the range's edge); utc says a date was read.
func readBound(attr, s string, end bool, tg timescale.Target, dir bool) (bjd float64, utc bool, err error) {
	s = strings.TrimSpace(s)
	if m := calendarDate.FindStringSubmatch(s); m != nil {
		y, _ := strconv.Atoi(m[1])
		mo, _ := strconv.Atoi(m[2])
		d, _ := strconv.Atoi(m[3])
		jd, err := timescale.CalendarJD(y, mo, d)
		if err != nil {
			return 0, false, steps.Attrf(attr, "%q is not a date: %v", s, err)
		}
		if end {
			jd++
		}
		at := timescale.FromJD(jd)
		var out timescale.JD
		if dir {
			out, err = timescale.BJDTDB(at, tg)
		} else {
			var tt timescale.JD
			tt, err = timescale.UTCToTT(at)
			out = tt.AddSeconds(timescale.TDBMinusTT(tt))
		}
		if err != nil {
			return 0, false, steps.Attrf(attr, "%q cannot be placed on the time scales: %v", s, err)
		}
		return out.Float(), true, nil
	}
	v, perr := strconv.ParseFloat(s, 64)
	if perr != nil {
		return 0, false, steps.Attrf(attr, "%q is neither a UTC calendar date (\"2027-01-01\") nor a full BJD_TDB (\"2461406.5\")", s)
	}
	if !(v > 2_000_000 && v < 3_000_000) {
		return 0, false, steps.Attrf(attr, "%q is not a full Julian date; write the whole BJD_TDB (\"2461406.5\") or a calendar date (\"2027-01-01\")", s)
	}
	return v, false, nil
}

// Run predicts the transits of every chosen planet over the range.
func (Kind) Run(ctx context.Context, cfg *Config, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	var (
		a   *Artifact
		err error
	)
	if cfg.Fit != nil {
		fa, ok := in.Ref("fit").(*fit.Artifact)
		if !ok || fa == nil {
			return nil, errors.New("ephemeris: fit does not refer to a fit step's result")
		}
		a, err = fromFit(cfg, fa)
	} else {
		a, err = fromWritten(cfg)
	}
	if err != nil {
		return nil, err
	}
	if cfg.utcFrom {
		env.Note("from/to: the calendar dates were converted to TDB at the geocentre, without the target's direction (at most 8.3 min off); give ra and dec for BJD_TDB")
	}
	if err := a.toUTC(cfg); err != nil {
		return nil, err
	}
	if err := a.windows(cfg, env); err != nil {
		return nil, err
	}
	if !a.Direction {
		env.Note("UTC: the predicted times are in BJD_TDB only; their UTC needs the target's direction (ra and dec)")
	}
	if cfg.Fit == nil {
		env.Note("period and epoch: taken as independent (no covariance written); σ(T_n)² = σ_epoch² + n²σ_period²")
	}
	for _, p := range a.Planets {
		if len(p.Transits) == 0 {
			env.Note("planet %s: no transit falls in the range", p.Name)
		}
		if p.Timing == timingUntested {
			env.Note("planet %s: the fit's transit times could not test the linear ephemeris (too few timed transits); timing variations would go unnoticed", p.Name)
		}
	}
	return a, ctx.Err()
}

// toUTC gives each mid-time its UTC when the direction is known and marks the first one
// past the leap-second table's end.
func (a *Artifact) toUTC(cfg *Config) error {
	tg, ok := cfg.target()
	a.Direction, a.RA, a.Dec = ok, tg.RA, tg.Dec
	a.PMRA, a.PMDec, a.PositionEpoch = tg.PMRA, tg.PMDec, tg.Epoch
	for i := range a.Planets {
		for j := range a.Planets[i].Transits {
			t := &a.Planets[i].Transits[j]
			t.UTC = math.NaN()
			if !ok {
				continue
			}
			u, err := timescale.UTCFromBJDTDB(timescale.FromJD(t.Mid), tg)
			if err != nil {
				return steps.Attrf("from", "transit %d of planet %s cannot be given in UTC: %v", t.Epoch, a.Planets[i].Name, err)
			}
			t.UTC = u.Float()
			if !timescale.LeapTableCovers(u) && (math.IsNaN(a.StaleFrom) || t.UTC < a.StaleFrom) {
				a.StaleFrom = t.UTC
			}
		}
	}
	return nil
}

// chosen returns the letters to predict, in the fit's order, refusing one the fit lacks.
func chosen(cfg *Config, have []string) ([]string, error) {
	if len(cfg.Planets) == 0 {
		return have, nil
	}
	want := map[string]bool{}
	for _, p := range cfg.Planets {
		want[p] = true
	}
	var out []string
	for _, h := range have {
		if want[h] {
			out = append(out, h)
			delete(want, h)
		}
	}
	for _, p := range cfg.Planets {
		if want[p] {
			return nil, steps.Attrf("planets", "names planet %s, but the fit has %s", p, strings.Join(have, ", "))
		}
	}
	return out, nil
}

// fromFit predicts each chosen planet of the fit from its posterior draws.
func fromFit(cfg *Config, fa *fit.Artifact) (*Artifact, error) {
	if fa.Frame.TimeScale != "BJD_TDB" {
		return nil, steps.BadInputf("fit: its times are in %s; predictions are made in BJD_TDB, so the light curve must be in BJD_TDB", fa.Frame.TimeScale)
	}
	origin := float64(fa.Frame.RefInt) + fa.Frame.RefFrac
	names := fa.PlanetNames()
	letters, err := chosen(cfg, names)
	if err != nil {
		return nil, err
	}
	a := &Artifact{From: cfg.from, To: cfg.to, StaleFrom: math.NaN()}
	for _, name := range letters {
		j := slices.Index(names, name)
		t0, p, t14 := fa.Column(name+".t0"), fa.Column(name+".period"), fa.Column(name+".t14")
		if len(t0) == 0 || len(p) != len(t0) {
			return nil, steps.BadInputf("fit: planet %s has no draws of its period and mid-time", name)
		}
		if len(t14) != len(t0) {
			t14 = nil
		}
		pl := Planet{Name: name, Draws: int64(len(t0)), ESS: essOf(fa, name), Timing: timingUntested,
			TimingChi2: math.NaN(), TimingP: math.NaN()}
		mt, _, _ := Percentiles(t0)
		mp, _, _ := Percentiles(p)
		vt, vp, cv := Moments(t0, p)
		pl.T0, pl.Period = origin+mt, mp
		pl.SigmaT0, pl.SigmaPeriod, pl.Cov = math.Sqrt(vt), math.Sqrt(vp), cv
		pl.Duration, pl.SigmaDuration = math.NaN(), math.NaN()
		if t14 != nil {
			md, lo, hi := Percentiles(t14)
			pl.Duration, pl.SigmaDuration = md, (lo+hi)/2
		}
		first, last := Epochs(mt, mp, cfg.from-origin, cfg.to-origin)
		if last-first+1 > maxTransits {
			return nil, steps.Attrf("to", "the range holds %d transits of planet %s, more than %d; shorten it", last-first+1, name, maxTransits)
		}
		pl.Transits = FromDraws(t0, p, t14, first, last)
		for k := range pl.Transits {
			shift(&pl.Transits[k], origin)
		}
		if j < len(fa.Times) {
			timingOf(&pl, fa.Times[j], cfg.TimingScatter)
		}
		a.Planets = append(a.Planets, pl)
	}
	return a, nil
}

// shift moves a prediction's times from the fit's frame to full BJD_TDB.
func shift(p *Prediction, origin float64) {
	p.Mid += origin
	p.Ingress += origin
	p.Egress += origin
}

// essOf is the smaller effective sample size of the planet's period and mid-time, for the
// Monte Carlo error of a median; 0 when the fit does not say.
func essOf(fa *fit.Artifact, name string) float64 {
	ess := math.Inf(1)
	for j, n := range fa.Names {
		if (n == name+".period" || n == name+".t0") && j < len(fa.Diag) {
			ess = math.Min(ess, fa.Diag[j].ESS)
		}
	}
	if math.IsInf(ess, 0) || !(ess > 0) {
		return 0
	}
	return ess
}

// timingOf reads the fit's test of the planet's transit times against a linear ephemeris.
// The rule (mode "if_significant"): when p < timingCautionP, every predicted σ is widened by
// the RMS of the O−C residuals in quadrature, σ² → σ² + rms(O−C)², since a future transit
// may be off the line by as much as past ones were. Mode "always" widens whatever p is;
// "never" widens nothing, and a significant scatter is still cautioned.
func timingOf(pl *Planet, pt fit.PlanetTimes, mode string) {
	e := pt.Ephemeris
	if pt.Err != "" || e.Dof <= 0 || math.IsNaN(e.PValue) {
		return
	}
	pl.Timing, pl.TimingChi2, pl.TimingDof, pl.TimingP = timingPasses, e.Chi2, int64(e.Dof), e.PValue
	significant := e.PValue < timingCautionP
	if significant {
		pl.Timing = timingScatters
		if mode == "never" {
			pl.Timing = timingScattersKept
		}
	}
	if mode == "always" || (significant && mode != "never") {
		oc := make([]float64, len(e.Rows))
		for i, r := range e.Rows {
			oc[i] = r.OC / minutesPerDay
		}
		pl.Scatter = Scatter(oc)
	}
}

// minutesPerDay converts the fit's O−C (minutes) to days.
const minutesPerDay = 1440

// fromWritten predicts the one planet of a written period and epoch.
func fromWritten(cfg *Config) (*Artifact, error) {
	name := "b"
	if len(cfg.Planets) == 1 {
		name = cfg.Planets[0]
	}
	// Count from the integer day of the epoch, so that the draws' digits stay small.
	origin := math.Floor(cfg.Epoch.Value)
	t0, p := cfg.Epoch.Value-origin, cfg.Period.Value
	pl := Planet{Name: name, T0: cfg.Epoch.Value, SigmaT0: cfg.Epoch.Sigma, Period: p, SigmaPeriod: cfg.Period.Sigma,
		Duration: math.NaN(), SigmaDuration: math.NaN(), Timing: timingUntested, TimingChi2: math.NaN(), TimingP: math.NaN()}
	t14, s14 := 0.0, 0.0
	if d := cfg.Duration; d != nil {
		t14, s14 = d.Value, d.Sigma
		pl.Duration, pl.SigmaDuration = t14, s14
	}
	first, last := Epochs(t0, p, cfg.from-origin, cfg.to-origin)
	if last-first+1 > maxTransits {
		return nil, steps.Attrf("to", "the range holds %d transits of planet %s, more than %d; shorten it", last-first+1, name, maxTransits)
	}
	pl.Transits = FromWritten(t0, cfg.Epoch.Sigma, p, cfg.Period.Sigma, t14, s14, first, last)
	for k := range pl.Transits {
		shift(&pl.Transits[k], origin)
	}
	pl.Timing = timingWritten
	return &Artifact{From: cfg.from, To: cfg.to, StaleFrom: math.NaN(), Planets: []Planet{pl}}, nil
}

// minBaseline is the shortest default baseline, 1 h (in days): less leaves too few
// out-of-transit points to fix the level on a short transit (common practice).
const minBaseline = 1.0 / 24

// windows judges every transit from the site, when one is given, and marks the nights
// holding two or more observable transits.
func (a *Artifact) windows(cfg *Config, env steps.Env) error {
	site, ok := cfg.site()
	a.Site, a.Doubles = ok, nil
	a.SiteLat, a.SiteLon, a.SiteHeight, a.AltitudeLimit, a.Darkness = math.NaN(), math.NaN(), math.NaN(), math.NaN(), 0
	if !ok {
		return nil
	}
	l := Lookout{Site: site, RA: a.RA, Dec: a.Dec, MinAlt: cfg.AltitudeLimit / arcsecPerDeg, Darkness: darknessOf(cfg.Darkness)}
	a.SiteLat, a.SiteLon, a.SiteHeight, a.AltitudeLimit, a.Darkness = site.Lat, site.Lon, site.Height, l.MinAlt, int64(l.Darkness)
	observable := map[int64]int{}
	for i := range a.Planets {
		p := &a.Planets[i]
		half := 0.0
		if !math.IsNaN(p.Duration) {
			half = p.Duration / 2
		}
		p.Baseline = math.Max(minBaseline, half)
		if cfg.Baseline != nil {
			p.Baseline = *cfg.Baseline
		}
		if math.IsNaN(p.Duration) {
			env.Note("planet %s: the fit gives no duration, so each window is the mid-time with its baselines either side", p.Name)
		}
		p.Windows = make([]Window, len(p.Transits))
		for j, t := range p.Transits {
			in, eg := t.Ingress, t.Egress
			if math.IsNaN(in) || math.IsNaN(eg) {
				in, eg = t.Mid, t.Mid
			}
			s := p.Sigma(j)
			bjd := []float64{in - p.Baseline - s, in, t.Mid, eg, eg + p.Baseline + s}
			utc := make([]float64, len(bjd))
			for k, b := range bjd {
				u, err := timescale.UTCFromBJDTDB(timescale.FromJD(b), a.target())
				if err != nil {
					return steps.Attrf("from", "transit %d of planet %s cannot be given in UTC: %v", t.Epoch, p.Name, err)
				}
				utc[k] = u.Float()
			}
			w := &p.Windows[j]
			w.Start, w.Ingress, w.Mid, w.Egress, w.End = utc[0], utc[1], utc[2], utc[3], utc[4]
			if err := l.Judge(w); err != nil {
				return steps.Attrf("site_latitude", "transit %d of planet %s cannot be judged from the site: %v", t.Epoch, p.Name, err)
			}
			if w.Seen == seenObservable {
				observable[w.Night]++
			}
		}
	}
	for n, k := range observable {
		if k >= 2 {
			a.Doubles = append(a.Doubles, n)
		}
	}
	slices.Sort(a.Doubles)
	for _, n := range a.Doubles {
		env.Note("%s", doubleNightLine(a, n))
	}
	return a.nightSpans(l)
}

// nightSpans finds, for every night with a transit seen, the part of it in which the site
// sees the target.
func (a *Artifact) nightSpans(l Lookout) error {
	seen := map[int64]bool{}
	for _, p := range a.Planets {
		for _, w := range p.Windows {
			if w.Seen != seenNone {
				seen[w.Night] = true
			}
		}
	}
	nights := slices.Sorted(maps.Keys(seen))
	a.Nights = make([]NightSpan, len(nights))
	for i, n := range nights {
		sp, err := l.Span(n)
		if err != nil {
			return steps.Attrf("site_latitude", "the night of Julian day %d cannot be judged from the site: %v", n, err)
		}
		a.Nights[i] = sp
	}
	return nil
}

// doubleNightLine says, for the run's summary, which observable transits a night with two
// or more holds: "two or more transits on the night of 2027-02-14: b mid 22:41 UTC (window
// 20:12–01:09), c mid 03:05 UTC (window 01:30–04:40)".
func doubleNightLine(a *Artifact, night int64) string {
	type event struct {
		mid  float64
		text string
	}
	var events []event
	hm := func(jd float64) string {
		if t := isoUTC(jd); len(t) == len("2006-01-02T15:04Z") {
			return t[11:16]
		}
		return "?"
	}
	for _, p := range a.Planets {
		for _, w := range p.Windows {
			if w.Night == night && w.Seen == seenObservable {
				events = append(events, event{w.Mid, fmt.Sprintf("%s mid %s UTC (window %s–%s)", p.Name, hm(w.Mid), hm(w.Start), hm(w.End))})
			}
		}
	}
	slices.SortFunc(events, func(x, y event) int { return cmp.Compare(x.mid, y.mid) })
	texts := make([]string, len(events))
	for i, e := range events {
		texts[i] = e.text
	}
	y, m, d := NightDate(night)
	return fmt.Sprintf("two or more transits on the night of %04d-%02d-%02d: %s", y, m, d, strings.Join(texts, ", "))
}
